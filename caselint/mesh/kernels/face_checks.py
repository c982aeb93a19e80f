"""Compiled per-face and per-cell passes (numba): the faces of each cell, face metrics,
face warp, cell sizes across faces, distinct points per face, cell closure, the points in use
and coincident points.

Each function computes what its numpy reference computes, with the same arithmetic in the
same order; the references are named in the docstrings. Angles go through ``arctan2``,
which numpy may evaluate with vector instructions: those agree with the C library to a few
units in the last place, not always to the bit.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit

_DEG = 180.0 / np.pi


@jit
def cell_faces(owner, neighbour, n_internal, n_cells, like):
    """Each cell's faces in ascending face id and whether the cell owns each (CSR), as
    :func:`caselint.mesh.topology.cell_faces` (a stable sort of owner then neighbour).
    The face ids take the dtype of the array ``like``."""
    n_faces = owner.shape[0]
    offsets = np.zeros(n_cells + 1, dtype=np.int64)
    for f in range(n_faces):
        offsets[owner[f] + 1] += 1
    for f in range(n_internal):
        offsets[neighbour[f] + 1] += 1
    for c in range(n_cells):
        offsets[c + 1] += offsets[c]
    cursor = offsets[:-1].copy()
    faces = np.empty(n_faces + n_internal, dtype=like.dtype)
    owned = np.empty(n_faces + n_internal, dtype=np.bool_)
    # a cell's owned faces come before its neighbour faces in the sorted order, each in
    # ascending id: owner pass first, then neighbour pass (what the stable sort gives)
    for f in range(n_faces):
        at = cursor[owner[f]]
        faces[at] = f
        owned[at] = True
        cursor[owner[f]] = at + 1
    for f in range(n_internal):
        at = cursor[neighbour[f]]
        faces[at] = f
        owned[at] = False
        cursor[neighbour[f]] = at + 1
    return offsets, faces, owned


_KEY_PRIME = np.uint64(0x100000001B3)
_MIX_1 = np.uint64(0xBF58476D1CE4E5B9)
_MIX_2 = np.uint64(0x94D049BB133111EB)


@jit
def point_set_keys(face_offsets, face_points, lo_face, hi_face, out):
    """The key of the sorted point ids and the size of faces ``lo_face`` .. ``hi_face - 1``
    into ``out`` (uint64), as :func:`caselint.mesh.topology._point_set_keys`: the size,
    then each id in ascending order, mixed in by a multiply-add and splitmix64's
    finaliser, all modulo 2**64. A face of no points mixes in the id its row would hold
    there (the reference's padded table)."""
    n_fp = face_points.shape[0]
    buffer = np.empty(64, dtype=np.int64)
    for f in range(lo_face, hi_face):
        lo, hi = face_offsets[f], face_offsets[f + 1]
        k = hi - lo
        if k == 0:
            k_row = 1
            buffer[0] = face_points[min(lo, n_fp - 1)] if n_fp > 0 else 0
        else:
            k_row = k
            if k > buffer.shape[0]:
                buffer = np.empty(2 * k, dtype=np.int64)
            for i in range(k):                       # insertion sort: faces are short
                v = face_points[lo + i]
                j = i
                while j > 0 and buffer[j - 1] > v:
                    buffer[j] = buffer[j - 1]
                    j -= 1
                buffer[j] = v
        h = np.uint64(k)
        for i in range(k_row):
            h = h * _KEY_PRIME + np.uint64(buffer[i])
            h = (h ^ (h >> np.uint64(30))) * _MIX_1
            h = (h ^ (h >> np.uint64(27))) * _MIX_2
            h = h ^ (h >> np.uint64(31))
        out[f] = h


@jit
def distinct_points(face_offsets, face_points):
    """(F,) number of distinct point ids of each face."""
    n = face_offsets.shape[0] - 1
    out = np.empty(n, dtype=np.int64)
    for f in range(n):
        lo, hi = face_offsets[f], face_offsets[f + 1]
        count = 0
        for i in range(lo, hi):
            seen = False
            for j in range(lo, i):
                if face_points[j] == face_points[i]:
                    seen = True
                    break
            if not seen:
                count += 1
        out[f] = count
    return out


@jit
def face_warp(face_offsets, face_points, points, lo_face, hi_face, out):
    """Largest angle (deg) between a fan triangle's normal and the face normal of faces
    ``lo_face`` .. ``hi_face - 1``, into ``out`` (zeros), as
    :func:`caselint.mesh.quality.face_warp_deg` (3-D faces of four or more points; two
    triangles within rounding of each other may give the other's angle, to 1e-15 deg)."""
    for f in range(lo_face, hi_face):
        lo, hi = face_offsets[f], face_offsets[f + 1]
        k = hi - lo
        if k < 4:
            continue
        m0 = m1 = m2 = 0.0
        for i in range(lo, hi):
            m0 += points[face_points[i], 0]
            m1 += points[face_points[i], 1]
            m2 += points[face_points[i], 2]
        inv = 1.0 / k
        m0, m1, m2 = m0 * inv, m1 * inv, m2 * inv
        S0 = S1 = S2 = 0.0
        for i in range(k):
            t0, t1, t2 = _fan_triangle(face_points, points, lo, k, i, m0, m1, m2)
            S0 += t0
            S1 += t1
            S2 += t2
        # the largest angle atan2(|t x S|, t . S) over the fan triangles t: angles in
        # [0, 180] compare by the sign of y1 x2 - x1 y2, so one arctan2 per face
        wy, wx = 0.0, 1.0                        # angle 0: a triangle of no area counts 0
        for i in range(k):
            t0, t1, t2 = _fan_triangle(face_points, points, lo, k, i, m0, m1, m2)
            if not np.sqrt(t0 * t0 + t1 * t1 + t2 * t2) > 0:
                continue
            c0, c1, c2 = t1 * S2 - t2 * S1, t2 * S0 - t0 * S2, t0 * S1 - t1 * S0
            y, x = np.sqrt(c0 * c0 + c1 * c1 + c2 * c2), t0 * S0 + t1 * S1 + t2 * S2
            turn = y * wx - x * wy
            if turn > 0 or (turn == 0 and x < wx):    # (x < wx: 180 against 0 degrees)
                wy, wx = y, x
        worst = np.arctan2(wy, wx) * _DEG
        out[f] = worst if np.sqrt(S0 * S0 + S1 * S1 + S2 * S2) > 0 else 0.0


@jit(inline="always")
def _fan_triangle(face_points, points, lo, k, i, m0, m1, m2):
    p, q = face_points[lo + i], face_points[lo + i + 1 if i + 1 < k else lo]
    r0, r1, r2 = points[p, 0] - m0, points[p, 1] - m1, points[p, 2] - m2
    t0, t1, t2 = points[q, 0] - m0, points[q, 1] - m1, points[q, 2] - m2
    return (r1 * t2 - r2 * t1) * 0.5, (r2 * t0 - r0 * t2) * 0.5, (r0 * t1 - r1 * t0) * 0.5


@jit
def face_metrics(owner, neighbour, area, fcent, ccent, degenerate, lo_face, hi_face, angle,
                 skew):
    """Non-orthogonality (deg) and skewness of faces ``lo_face`` .. ``hi_face - 1``, into
    ``angle`` and ``skew``, as :func:`caselint.mesh.quality._face_metrics`."""
    for f in range(lo_face, hi_face):
        S0, S1, S2 = area[f, 0], area[f, 1], area[f, 2]
        x0, x1, x2 = fcent[f, 0], fcent[f, 1], fcent[f, 2]
        p = owner[f]
        cp0, cp1, cp2 = ccent[p, 0], ccent[p, 1], ccent[p, 2]
        nb = neighbour[f]
        inner = nb >= 0
        if inner:
            cn0, cn1, cn2 = ccent[nb, 0], ccent[nb, 1], ccent[nb, 2]
        else:
            cn0, cn1, cn2 = x0, x1, x2
        d0, d1, d2 = cn0 - cp0, cn1 - cp1, cn2 - cp2
        sn = np.sqrt(S0 * S0 + S1 * S1 + S2 * S2)
        dn = np.sqrt(d0 * d0 + d1 * d1 + d2 * d2)
        dt = d0 * S0 + d1 * S1 + d2 * S2
        stuck = sn > 0 and dn <= 1e-12 * np.sqrt(sn)
        c0, c1, c2 = d1 * S2 - d2 * S1, d2 * S0 - d0 * S2, d0 * S1 - d1 * S0
        ang = np.arctan2(np.sqrt(c0 * c0 + c1 * c1 + c2 * c2), dt) * _DEG
        angle[f] = 90.0 if stuck else ang
        if stuck:
            dn = 0.0
        floor = 1e-12 * sn * dn
        if not abs(dt) >= floor:
            dt = floor
        ok = inner and sn > 0 and dn > 0
        o0, o1, o2 = x0 - cp0, x1 - cp1, x2 - cp2
        t = (S0 * o0 + S1 * o1 + S2 * o2) / (dt if ok else 1.0)
        g0, g1, g2 = o0 - t * d0, o1 - t * d1, o2 - t * d2
        gap = np.sqrt(g0 * g0 + g1 * g1 + g2 * g2)
        val = gap / (dn if ok else 1.0) if ok else 0.0
        if inner and stuck:
            val = degenerate
        skew[f] = min(val, degenerate)


@jit
def over_cell_size(owner, neighbour, ccent, spacing, degenerate, lo_face, hi_face, skew):
    """Internal faces ``lo_face`` .. ``hi_face - 1``: ``skew`` turned from |x_f - x_i| / |d|
    into |x_f - x_i| / max(|d|, the cells' mean size ``spacing``), in place, as
    :func:`caselint.mesh.quality._over_cell_size`."""
    for f in range(lo_face, hi_face):
        p, nb = owner[f], neighbour[f]
        d0 = ccent[nb, 0] - ccent[p, 0]
        d1 = ccent[nb, 1] - ccent[p, 1]
        d2 = ccent[nb, 2] - ccent[p, 2]
        dn = np.sqrt(d0 * d0 + d1 * d1 + d2 * d2)
        s, part = spacing[f], skew[f]
        if s > dn and dn > 0 and part < degenerate:
            skew[f] = part * (dn / s)


@jit
def cell_closure(cf_offsets, cf_faces, cf_owned, area, areas):
    """(C,) |sum of outward area vectors| / sum of face areas, as
    :func:`caselint.rules.mesh_integrity.cell_closure`: the owner and neighbour sums apart,
    each in ascending face id (a cell's list holds them so), as its two bincounts add them;
    no per-cell table of the sums."""
    n_cells = cf_offsets.shape[0] - 1
    out = np.empty(n_cells)
    for c in range(n_cells):
        own0, own1, own2, own3 = 0.0, 0.0, 0.0, 0.0
        nbr0, nbr1, nbr2, nbr3 = 0.0, 0.0, 0.0, 0.0
        for i in range(cf_offsets[c], cf_offsets[c + 1]):
            f = cf_faces[i]
            if cf_owned[i]:
                own0 += areas[f]
                own1 += area[f, 0]
                own2 += area[f, 1]
                own3 += area[f, 2]
            else:
                nbr0 += areas[f]
                nbr1 += area[f, 0]
                nbr2 += area[f, 1]
                nbr3 += area[f, 2]
        total = own0 + nbr0
        net = 0.0
        part = own1 - nbr1
        net += part * part
        part = own2 - nbr2
        net += part * part
        part = own3 - nbr3
        net += part * part
        out[c] = np.sqrt(net) / (total if total > 0 else 1.0)
    return out


@jit
def size_ratios(owner, neighbour, cf_offsets, cf_faces, face_offsets, face_points, points,
                area, areas, centroid, iso, lo_face, hi_face, growth, spacing):
    """Growth ratio (into ``growth``, ones) and mean size (into ``spacing``) of internal
    faces ``lo_face`` .. ``hi_face - 1``, as :func:`caselint.mesh.size_ratio._ratios`: a
    cell's size is ``iso[c]`` where that is a number (the root-mean-square edge of a
    tetrahedron, pyramid or triangle), else its thickness normal to the face (its
    vertices' largest distance from the face's plane), as
    :func:`caselint.mesh.size_ratio.sizes_across_faces` measures it."""
    for f in range(lo_face, hi_face):
        a = areas[f]
        scale = a if a > 0 else 1.0
        n0, n1, n2 = area[f, 0] / scale, area[f, 1] / scale, area[f, 2] / scale
        x0, x1, x2 = centroid[f, 0], centroid[f, 1], centroid[f, 2]
        own = _size(cf_offsets, cf_faces, face_offsets, face_points, points, iso,
                    owner[f], -1.0, n0, n1, n2, x0, x1, x2)
        nbr = _size(cf_offsets, cf_faces, face_offsets, face_points, points, iso,
                    neighbour[f], 1.0, n0, n1, n2, x0, x1, x2)
        if own > 0 and nbr > 0:
            growth[f] = max(own, nbr) / min(own, nbr)
        spacing[f] = 0.5 * (own + nbr)


@jit(inline="always")
def _size(cf_offsets, cf_faces, face_offsets, face_points, points, iso, cell, sign,
          n0, n1, n2, x0, x1, x2):
    if not np.isnan(iso[cell]):
        return iso[cell]
    best = -np.inf
    for i in range(cf_offsets[cell], cf_offsets[cell + 1]):
        g = cf_faces[i]
        for j in range(face_offsets[g], face_offsets[g + 1]):
            p = face_points[j]
            d = (points[p, 0] - x0) * n0 + (points[p, 1] - x1) * n1 + (points[p, 2] - x2) * n2
            if sign * d > best:
                best = sign * d
    return best if best > 0.0 else 0.0


@jit
def cell_pieces(owner, neighbour, n_internal, n_cells, like):
    """(C,) the lowest cell id of each cell's connected piece (joined through internal
    faces), as :func:`caselint.rules.mesh_integrity.cell_pieces`; dtype of ``like``."""
    parent = np.arange(n_cells).astype(like.dtype)
    for f in range(n_internal):
        a, b = _root(parent, owner[f]), _root(parent, neighbour[f])
        if a < b:
            parent[b] = a
        elif b < a:
            parent[a] = b
    for c in range(n_cells):
        parent[c] = parent[parent[c]]          # roots come first: one hop reaches them
    return parent


@jit(inline="always")
def _root(parent, c):
    while parent[c] != c:
        parent[c] = parent[parent[c]]           # path halving
        c = parent[c]
    return c


@jit
def used_points(face_points, n_points):
    """(P,) bool: the points some face lists (:func:`caselint.mesh.topology.used_points`)."""
    used = np.zeros(n_points, dtype=np.bool_)
    for i in range(face_points.shape[0]):
        used[face_points[i]] = True
    return used


@jit
def point_box(points, ids):
    """Smallest and largest coordinate of the points ``ids`` (non-empty), per axis."""
    lo = points[ids[0]].copy()
    hi = points[ids[0]].copy()
    for i in range(1, ids.shape[0]):
        for a in range(3):
            v = points[ids[i], a]
            if v < lo[a]:
                lo[a] = v
            if v > hi[a]:
                hi[a] = v
    return lo, hi


@jit
def quantized(points, ids, lo, step):
    """(n, 3) int64 keys ``floor((x - lo) / step + 0.5)`` of the points ``ids``, as the numpy
    reference in :func:`caselint.rules.mesh_integrity.coincident_points` computes them."""
    q = np.empty((ids.shape[0], 3), dtype=np.int64)
    for i in range(ids.shape[0]):
        for a in range(3):
            q[i, a] = np.int64(np.floor((points[ids[i], a] - lo[a]) / step + 0.5))
    return q


@jit
def coincident(q):
    """For the (n, 3) integer keys ``q``: which rows share their key with another row, and
    how many rows repeat an earlier key (hash table, open addressing)."""
    n = q.shape[0]
    size = 1
    while size < 2 * n:
        size *= 2
    table = np.full(size, -1, dtype=np.int64)
    flagged = np.zeros(n, dtype=np.bool_)
    copies = 0
    for i in range(n):
        slot = _mix(q[i, 0], q[i, 1], q[i, 2]) & np.uint64(size - 1)
        while True:
            j = table[slot]
            if j < 0:
                table[slot] = i
                break
            if q[j, 0] == q[i, 0] and q[j, 1] == q[i, 1] and q[j, 2] == q[i, 2]:
                flagged[i] = True
                flagged[j] = True
                copies += 1
                break
            slot = (slot + np.uint64(1)) & np.uint64(size - 1)
    return flagged, copies


@jit(inline="always")
def _mix(a, b, c):
    """A 64-bit hash of three integers (the finaliser of splitmix64 over their sum with
    odd multipliers): structured points, whose keys share their low bits, spread evenly."""
    h = (np.uint64(a) * np.uint64(0x9E3779B97F4A7C15)
         + np.uint64(b) * np.uint64(0xC2B2AE3D27D4EB4F)
         + np.uint64(c) * np.uint64(0x165667B19E3779F9))
    h = (h ^ (h >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    h = (h ^ (h >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return h ^ (h >> np.uint64(31))
