"""Compiled wall-layer walk: each wall face's stack walked on its own (numba).

The numpy reference is :func:`caselint.mesh.stack_walk.walk_lockstep` (all stacks in lock step,
one vectorised step per layer); this module walks one stack at a time with the same
arithmetic in the same order, so the results are equal to the bit. Each walk goes on from a
state (:class:`caselint.mesh.stack_walk.StackState`: a walk starting at its wall, or one
handed over from another partition). See :mod:`caselint.mesh.wall_layers` for what a stack
is and when it ends.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit

# end codes, as in caselint.mesh.stack_walk
NO_STACK, END_CORE, END_TURN, END_BOUNDARY, END_LIMIT, END_DEGENERATE, END_SHRINK = range(7)
_BIG = np.finfo(np.float64).max


@jit(inline="always")
def extent(cf_offsets, cf_faces, face_offsets, face_points, points, cell, o, nrm):
    """Largest distance of ``cell``'s vertices from ``o`` along unit ``nrm`` (m)."""
    best = -np.inf
    for i in range(cf_offsets[cell], cf_offsets[cell + 1]):
        f = cf_faces[i]
        for j in range(face_offsets[f], face_offsets[f + 1]):
            p = face_points[j]
            d = ((points[p, 0] - o[0]) * nrm[0] + (points[p, 1] - o[1]) * nrm[1]
                 + (points[p, 2] - o[2]) * nrm[2])
            if d > best:
                best = d
    return best


@jit(inline="always")
def _shares_point(face_offsets, face_points, f, g):
    for i in range(face_offsets[f], face_offsets[f + 1]):
        p = face_points[i]
        for j in range(face_offsets[g], face_offsets[g + 1]):
            if face_points[j] == p:
                return True
    return False


@jit(inline="always")
def opposite(cf_offsets, cf_faces, face_offsets, face_points, owner, area, centroid, cell,
             entry, x_in, n_in):
    """The face of ``cell`` opposite ``entry`` and whether it has one, as
    :func:`caselint.mesh.stack_walk.opposite` chooses it (first slot among equal scores)."""
    lo, hi = cf_offsets[cell], cf_offsets[cell + 1]
    best_j, best, nan_j = -1, np.inf, -1
    best_cand = False
    for j in range(lo, hi):
        f = cf_faces[j]
        score = np.inf
        cand = False
        if f != entry and not _shares_point(face_offsets, face_points, f, entry):
            cand = True
            sg = 1.0 if owner[f] == cell else -1.0
            s0, s1, s2 = area[f, 0], area[f, 1], area[f, 2]
            dn = (s0 * n_in[0] + s1 * n_in[1] + s2 * n_in[2]) * sg
            reach = (s0 * (centroid[f, 0] - x_in[0]) + s1 * (centroid[f, 1] - x_in[1])
                     + s2 * (centroid[f, 2] - x_in[2])) * sg
            if dn > 0:
                score = reach / dn
            else:
                score = _BIG
        if np.isnan(score):
            if nan_j < 0:
                nan_j = j
        elif best_j < 0 or score < best:
            best_j, best, best_cand = j, score, cand
    if nan_j >= 0:
        return cf_faces[nan_j], True
    if best_j < 0 or not best_cand:
        return entry, False
    return cf_faces[best_j], True


#: Stacks one thread walks in alternation: their memory reads overlap (a walk waits on
#: memory, not arithmetic); each stack's own steps are unchanged.
BATCH = 16


@jit
def walk(cf_offsets, cf_faces, face_offsets, face_points, points, owner, neighbour, area,
         areas, centroid, walled, foreign, cell_ids,
         n_wall, centre, first, layered, n_layers, n_walked, end, core_cell, core_origin,
         core_normal, facing, jump_at, jump_cell, jump_origin, jump_normal,
         cell0, entry0, x_in0, nin0, a_in0, top0, h_last0, in_stack0,
         max_aspect, min_ratio, jump_ratio, cos_turn, max_cells, reach_m, three_d):
    """Walk every stack on from its state (the arrays ``n_wall`` ... ``in_stack0``, the
    fields of :class:`caselint.mesh.stack_walk.StackState` in order, updated in place).

    A walk entering a cell of ``foreign`` (C,) bool (none when empty) stops there, its
    place written back; core and jump cells are recorded as ``cell_ids[cell]`` (the
    cell's own id when empty). Returns the (n, most cells walked) heights of the cells
    walked here (0 elsewhere) and which walks moved.
    """
    n = cell0.shape[0]
    uneven = 1.0 / min_ratio
    heights = np.zeros((n, 16))
    widest = 0
    moved = np.zeros(n, dtype=np.bool_)
    handing = foreign.shape[0] > 0
    naming = cell_ids.shape[0] > 0
    # the state of the stack in each slot; the entry face's centroid and width carry over
    row = np.full(BATCH, -1, dtype=np.int64)
    cell = np.zeros(BATCH, dtype=np.int64)
    entry = np.zeros(BATCH, dtype=np.int64)
    step = np.zeros(BATCH, dtype=np.int64)
    x_in = np.zeros((BATCH, 3))
    nin = np.zeros((BATCH, 3))
    a_in = np.zeros(BATCH)
    top = np.zeros(BATCH)
    h_last = np.zeros(BATCH)
    in_stack = np.zeros(BATCH, dtype=np.bool_)
    nout = np.empty(3)
    following = 0
    busy = True
    while busy:
        busy = False
        for b in range(BATCH):
            i = row[b]
            if i < 0:                                  # start the next stack in this slot
                if following == n:
                    continue
                i = following
                following += 1
                row[b], cell[b], entry[b], step[b] = i, cell0[i], entry0[i], n_walked[i]
                for k in range(3):
                    x_in[b, k] = x_in0[i, k]
                    nin[b, k] = nin0[i, k]
                a_in[b], top[b], h_last[b] = a_in0[i], top0[i], h_last0[i]
                in_stack[b] = in_stack0[i]
            busy = True
            if step[b] >= max_cells:
                row[b] = -1
                continue
            c = cell[b]
            opp, shaped = opposite(cf_offsets, cf_faces, face_offsets, face_points, owner,
                                   area, centroid, c, entry[b], x_in[b], nin[b])
            mine = owner[opp] == c
            a_out = areas[opp]
            sg = (1.0 if mine else -1.0) / (a_out if a_out > 0 else 1.0)
            for k in range(3):
                nout[k] = area[opp, k] * sg
            h = ((centroid[opp, 0] - x_in[b, 0]) * nin[b, 0]
                 + (centroid[opp, 1] - x_in[b, 1]) * nin[b, 1]
                 + (centroid[opp, 2] - x_in[b, 2]) * nin[b, 2])
            straight = (nout[0] * n_wall[i, 0] + nout[1] * n_wall[i, 1]
                        + nout[2] * n_wall[i, 2]) >= cos_turn
            ok = shaped and straight and h > 0
            width = np.sqrt(a_in[b]) if three_d else a_in[b]
            flat = ok and h < max_aspect * width
            grows = step[b] == 0 or h >= min_ratio * h_last[b]
            thin = flat and grows
            named = cell_ids[c] if naming else c
            if ok:
                if step[b] == 0:
                    first[i] = h
                    layered[i] = True
                k = n_walked[i]
                if k >= heights.shape[1]:
                    grown = np.zeros((n, max(2 * heights.shape[1], k + 1)))
                    grown[:, :heights.shape[1]] = heights
                    heights = grown
                heights[i, k] = h
                n_walked[i] = k + 1
                widest = max(widest, k + 1)
            stacking = in_stack[b]
            if stacking:
                if thin:
                    if step[b] > 0:
                        q = h / h_last[b]
                        if q > jump_ratio:
                            jump_at[i] = n_layers[i]
                            jump_cell[i] = named
                            for k in range(3):
                                jump_origin[i, k] = x_in[b, k]
                                jump_normal[i, k] = nin[b, k]
                        elif q > uneven:
                            jump_at[i] = -1
                    n_layers[i] += 1
                    h_last[b] = h
                else:
                    if step[b] == 0:
                        reason = NO_STACK
                    elif not shaped or (ok and not flat):
                        reason = END_CORE
                    elif ok:
                        reason = END_SHRINK
                    elif not straight:
                        reason = END_TURN
                    else:
                        reason = END_DEGENERATE
                    end[i] = reason
                    if reason == END_CORE:
                        core_cell[i] = named
                        for k in range(3):
                            core_origin[i, k] = x_in[b, k]
                            core_normal[i, k] = nin[b, k]
                    in_stack[b] = False
            on_boundary = ok and neighbour[opp] < 0
            if stacking and thin and on_boundary:
                end[i] = END_BOUNDARY
                facing[i] = walled[opp]
                in_stack[b] = False
            if ok:
                top[b] += h
            if not (ok and not on_boundary and (in_stack[b] or top[b] < reach_m)):
                row[b] = -1
                continue
            cell[b] = neighbour[opp] if mine else owner[opp]
            entry[b] = opp
            for k in range(3):
                nin[b, k] = nout[k]
                x_in[b, k] = centroid[opp, k]
            a_in[b] = a_out
            step[b] += 1
            if handing and foreign[cell[b]]:
                cell0[i], entry0[i], a_in0[i] = cell[b], opp, a_out
                top0[i], h_last0[i], in_stack0[i] = top[b], h_last[b], in_stack[b]
                for k in range(3):
                    nin0[i, k] = nout[k]
                    x_in0[i, k] = centroid[opp, k]
                moved[i] = True
                row[b] = -1
    return heights[:, :widest].copy(), moved


@jit
def extents(cf_offsets, cf_faces, face_offsets, face_points, points, cells, origin, normal):
    """:func:`extent` of each of ``cells`` from its own origin along its own normal."""
    out = np.empty(cells.shape[0])
    for i in range(cells.shape[0]):
        out[i] = extent(cf_offsets, cf_faces, face_offsets, face_points, points, cells[i],
                        origin[i], normal[i])
    return out
