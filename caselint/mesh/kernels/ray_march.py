"""Compiled ray march: each ray walks from cell to cell on its own (numba).

The numpy reference is :func:`caselint.mesh.rays._march_chunk` (all rays in lock step); this
module computes the same thing ray by ray, with the same arithmetic in the same order, so
the results are equal to the bit: the exit face of a cell is, among the faces the ray
leaves through (``d . n_out > 1e-9``), the one whose plane it meets first (the first in the
cell's face order among equals), never the face it came in through; a ray is lost when a
cell has no exit, when it stalls for more than ``max_stalled`` cells, or at ``max_steps``.
Each ray goes on from a state (:class:`caselint.mesh.rays.RayState`: a ray starting at a
wall, or one handed over from another partition), and one entering a cell marked foreign
stops there with its state written back.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit

WALL, OPEN, LOST = 0, 1, 2


@jit(inline="always")
def _plane(area, centroid, f):
    """Unit normal and offset of face ``f``'s plane, as :func:`caselint.mesh.rays.face_planes`
    computes them (0 normal for a face of no area). Computed where a ray meets the face
    rather than stored for every face: a table of planes would hold 32 bytes a face."""
    s0, s1, s2 = area[f, 0], area[f, 1], area[f, 2]
    norm = np.sqrt(s0 * s0 + s1 * s1 + s2 * s2)
    if not norm > 0:
        norm = 1.0
    u0, u1, u2 = s0 / norm, s1 / norm, s2 / norm
    return u0, u1, u2, u0 * centroid[f, 0] + u1 * centroid[f, 1] + u2 * centroid[f, 2]


@jit(inline="always")
def exit_face(cf_offsets, cf_faces, owner, neighbour, area, centroid, c, e, o, d,
              parallel_eps):
    """Parameter, id and far cell of the face a ray (origin ``o``, direction ``d``) leaves
    cell ``c`` through, never ``e`` (the face it came in through); id -1 when none."""
    o0, o1, o2 = o[0], o[1], o[2]
    d0, d1, d2 = d[0], d[1], d[2]
    best_t = np.inf
    best_f = -1
    nxt = -1
    for i in range(cf_offsets[c], cf_offsets[c + 1]):
        f = cf_faces[i]
        if f == e:
            continue
        p0, p1, p2, p3 = _plane(area, centroid, f)
        dn = p0 * d0 + p1 * d1 + p2 * d2
        mine = owner[f] == c
        sign = 1.0 if mine else -1.0
        if dn * sign > parallel_eps:
            on = p0 * o0 + p1 * o1 + p2 * o2
            t = (p3 - on) / dn
            if t < best_t:
                best_t = t
                best_f = f
                nxt = neighbour[f] if mine else owner[f]
    return best_t, best_f, nxt


@jit(inline="always")
def advance(cf_offsets, cf_faces, owner, neighbour, area, centroid, cell, entry, t_now, stuck, b, o, d,
            max_stalled, parallel_eps):
    """The exit of the ray in slot ``b`` from its cell (parameter never behind ``t_now[b]``,
    face, cell beyond) and whether it is lost: no exit, or no advance for more than
    ``max_stalled`` cells in a row (``stuck[b]`` counts them)."""
    best_t, best_f, nxt = exit_face(cf_offsets, cf_faces, owner, neighbour, area, centroid, cell[b],
                                    entry[b], o, d, parallel_eps)
    if best_f < 0:
        return best_t, best_f, nxt, True
    stuck[b] = stuck[b] + 1 if best_t <= t_now[b] else 0
    return max(best_t, t_now[b]), best_f, nxt, stuck[b] > max_stalled


@jit(inline="always")
def depth(cf_offsets, cf_faces, face_offsets, face_points, points, cell, o, d):
    """Spread of ``cell``'s vertices along the direction ``d`` (m), as
    :func:`caselint.mesh.rays._depths` computes it."""
    low, high = np.inf, -np.inf
    for i in range(cf_offsets[cell], cf_offsets[cell + 1]):
        f = cf_faces[i]
        for j in range(face_offsets[f], face_offsets[f + 1]):
            p = face_points[j]
            a = ((points[p, 0] - o[0]) * d[0] + (points[p, 1] - o[1]) * d[1]
                 + (points[p, 2] - o[2]) * d[2])
            low = min(low, a)
            high = max(high, a)
    return high - low


#: Rays one thread marches in alternation: their memory reads overlap (the march waits on
#: memory, not arithmetic); each ray's own steps are unchanged.
BATCH = 16


@jit
def march(cf_offsets, cf_faces, owner, neighbour, area, centroid, wall, foreign, origin,
          direction, active, cell0, entry0, t0, count0, stuck0, steps0, max_steps,
          max_stalled, parallel_eps):
    """Hit face, status, width, cells crossed and whether it moved, of every ray marched
    on from its state (see the module docstring and :class:`caselint.mesh.rays.RayState`).

    ``cf_offsets`` / ``cf_faces``: the faces of every cell (CSR, ascending face id);
    ``area`` / ``centroid``: (F, 3) face area vectors and centroids (the planes of the faces
    met are computed from them); ``active``: rays that have a direction (the others stay
    lost with no cell counted); ``cell0`` ... ``steps0``: each ray's state, where a ray
    that enters a cell of ``foreign`` (C,) bool (none when empty) stops, moved, its state
    written back.
    """
    n = origin.shape[0]
    hit = np.full(n, -1, dtype=np.int64)
    status = np.full(n, LOST, dtype=np.int8)
    width = np.zeros(n)
    cells = np.zeros(n, dtype=np.int64)
    moved = np.zeros(n, dtype=np.bool_)
    handing = foreign.shape[0] > 0
    ray = np.full(BATCH, -1, dtype=np.int64)
    cell = np.zeros(BATCH, dtype=np.int64)
    entry = np.zeros(BATCH, dtype=np.int64)
    t_now = np.zeros(BATCH)
    count = np.zeros(BATCH, dtype=np.int64)
    stuck = np.zeros(BATCH, dtype=np.int64)
    steps = np.zeros(BATCH, dtype=np.int64)
    following = 0
    busy = True
    while busy:
        busy = False
        for b in range(BATCH):
            r = ray[b]
            if r < 0:                                  # start the next ray in this slot
                while following < n and not active[following]:
                    following += 1
                if following == n:
                    continue
                r = following
                following += 1
                ray[b], cell[b], entry[b], t_now[b] = r, cell0[r], entry0[r], t0[r]
                count[b], stuck[b], steps[b] = count0[r], stuck0[r], steps0[r]
            busy = True
            if steps[b] >= max_steps:
                cells[r] = count[b] - 1     # cells fully crossed before the step limit; LOST
                ray[b] = -1
                continue
            steps[b] += 1
            best_t, best_f, nxt, lost = advance(cf_offsets, cf_faces, owner, neighbour, area, centroid,
                                                cell, entry, t_now, stuck, b, origin[r],
                                                direction[r], max_stalled, parallel_eps)
            if lost:
                cells[r] = count[b]
                ray[b] = -1
                continue
            if nxt < 0:
                status[r] = WALL if wall[best_f] else OPEN
                hit[r] = best_f
                width[r] = best_t
                cells[r] = count[b]
                ray[b] = -1
                continue
            cell[b], entry[b], t_now[b] = nxt, best_f, best_t
            count[b] += 1
            if handing and foreign[nxt]:
                cell0[r], entry0[r], t0[r] = nxt, best_f, best_t
                count0[r], stuck0[r], steps0[r] = count[b], stuck[b], steps[b]
                moved[r] = True
                ray[b] = -1
    return hit, status, width, cells, moved


@jit
def march_within(cf_offsets, cf_faces, owner, neighbour, area, centroid, foreign, origin,
                 direction, active, limit, cell0, entry0, t0, cells, stuck0, steps0,
                 face_offsets, face_points, points, max_steps, max_stalled, parallel_eps):
    """Cells crossed within ``limit[r]`` of each ray's origin, added to ``cells`` (the
    state's count), how far the count went, whether the ray stopped short of its limit
    and whether it moved, as :func:`caselint.mesh.rays._within_chunk` computes them (see
    :func:`caselint.mesh.rays.cells_within` and :func:`march`)."""
    n = origin.shape[0]
    reached = np.zeros(n)
    short = limit > 0                                  # a zero limit is reached at once
    moved = np.zeros(n, dtype=np.bool_)
    handing = foreign.shape[0] > 0
    ray = np.full(BATCH, -1, dtype=np.int64)
    cell = np.zeros(BATCH, dtype=np.int64)
    entry = np.zeros(BATCH, dtype=np.int64)
    t_now = np.zeros(BATCH)
    stuck = np.zeros(BATCH, dtype=np.int64)
    steps = np.zeros(BATCH, dtype=np.int64)
    following = 0
    busy = True
    while busy:
        busy = False
        for b in range(BATCH):
            r = ray[b]
            if r < 0:                                  # start the next ray in this slot
                while following < n and not (active[following] and limit[following] > 0):
                    following += 1
                if following == n:
                    continue
                r = following
                following += 1
                ray[b], cell[b], entry[b], t_now[b] = r, cell0[r], entry0[r], t0[r]
                stuck[b], steps[b] = stuck0[r], steps0[r]
            busy = True
            if steps[b] >= max_steps:
                reached[r] = t_now[b]
                ray[b] = -1
                continue
            steps[b] += 1
            best_t, best_f, nxt, lost = advance(cf_offsets, cf_faces, owner, neighbour, area, centroid,
                                                cell, entry, t_now, stuck, b, origin[r],
                                                direction[r], max_stalled, parallel_eps)
            if lost:
                reached[r] = t_now[b]                  # the cells crossed so far
                ray[b] = -1
                continue
            cut = best_t >= limit[r]                   # the limit falls in this cell
            inside = (limit[r] if cut else best_t) - t_now[b]
            d = depth(cf_offsets, cf_faces, face_offsets, face_points, points, cell[b],
                      origin[r], direction[r])
            cells[r] += inside / d if d > 0 else 0.0
            if cut:
                reached[r] = limit[r]
                short[r] = False
                ray[b] = -1
                continue
            if nxt < 0:                                # on the boundary before the limit
                reached[r] = best_t
                ray[b] = -1
                continue
            cell[b], entry[b], t_now[b] = nxt, best_f, best_t
            if handing and foreign[nxt]:
                cell0[r], entry0[r], t0[r] = nxt, best_f, best_t
                stuck0[r], steps0[r] = stuck[b], steps[b]
                moved[r] = True
                ray[b] = -1
    return reached, short, moved
