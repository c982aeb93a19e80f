"""Compiled wall-layer walk: each wall face's stack walked on its own (numba).

The numpy reference is :func:`caselint.mesh.stack_walk.walk_lockstep` (all stacks in lock step,
one vectorised step per layer); this module walks one stack at a time with the same
arithmetic in the same order, so the results are equal to the bit. See
:mod:`caselint.mesh.wall_layers` for what a stack is and when it ends.
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
         areas, centroid, cell_centroids, faces, walled, max_aspect, min_ratio, jump_ratio,
         cos_turn, max_cells, reach_m, three_d):
    """Walk the stack above every boundary face of ``faces``.

    Returns per face: wall normal (n, 3), centre distance, first height, layered first,
    layers, cells walked, end code, core cell, core origin (n, 3), core normal (n, 3),
    whether the stack ended on a face of ``walled`` (a facing wall), the last jump's layer,
    cell, origin (n, 3) and normal (n, 3), and the (n, most cells walked) heights of the
    walked cells (0 beyond ``n_walked``).
    """
    n = faces.shape[0]
    n_wall = np.empty((n, 3))
    centre = np.empty(n)
    first = np.empty(n)
    layered = np.zeros(n, dtype=np.bool_)
    n_layers = np.zeros(n, dtype=np.int64)
    n_walked = np.zeros(n, dtype=np.int64)
    end = np.full(n, END_LIMIT, dtype=np.int8)
    core_cell = np.full(n, -1, dtype=np.int64)
    core_origin = np.zeros((n, 3))
    core_normal = np.zeros((n, 3))
    facing = np.zeros(n, dtype=np.bool_)
    jump_at = np.full(n, -1, dtype=np.int64)
    jump_cell = np.full(n, -1, dtype=np.int64)
    jump_origin = np.zeros((n, 3))
    jump_normal = np.zeros((n, 3))
    uneven = 1.0 / min_ratio
    heights = np.zeros((n, 16))
    widest = 0
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
                face = faces[i]
                a = areas[face]
                scale = -1.0 / (a if a > 0 else 1.0)   # area vectors point out of the domain
                for k in range(3):
                    n_wall[i, k] = area[face, k] * scale
                c0 = owner[face]
                centre[i] = ((cell_centroids[c0, 0] - centroid[face, 0]) * n_wall[i, 0]
                             + (cell_centroids[c0, 1] - centroid[face, 1]) * n_wall[i, 1]
                             + (cell_centroids[c0, 2] - centroid[face, 2]) * n_wall[i, 2])
                for k in range(3):
                    x_in[b, k] = centroid[face, k]
                    nin[b, k] = n_wall[i, k]
                first[i] = extent(cf_offsets, cf_faces, face_offsets, face_points, points, c0,
                                  x_in[b], nin[b])
                row[b], cell[b], entry[b], step[b] = i, c0, face, 0
                a_in[b], top[b], in_stack[b] = a, 0.0, True
            busy = True
            if step[b] == max_cells:
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
            if ok:
                if step[b] == 0:
                    first[i] = h
                    layered[i] = True
                k = n_walked[i]
                if k == heights.shape[1]:
                    grown = np.zeros((n, 2 * k))
                    grown[:, :k] = heights
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
                            jump_cell[i] = c
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
                        core_cell[i] = c
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
    return (n_wall, centre, first, layered, n_layers, n_walked, end, core_cell, core_origin,
            core_normal, facing, jump_at, jump_cell, jump_origin, jump_normal,
            heights[:, :widest].copy())


@jit
def extents(cf_offsets, cf_faces, face_offsets, face_points, points, cells, origin, normal):
    """:func:`extent` of each of ``cells`` from its own origin along its own normal."""
    out = np.empty(cells.shape[0])
    for i in range(cells.shape[0]):
        out[i] = extent(cf_offsets, cf_faces, face_offsets, face_points, points, cells[i],
                        origin[i], normal[i])
    return out
