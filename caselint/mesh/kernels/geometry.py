"""Compiled face and cell geometry (numba): area vectors, centroids, volumes.

The numpy reference is :mod:`caselint.mesh.geometry` (formulas and sources in its
docstring). These loops do the same arithmetic in the same order (sums taken one term at
a time in face order, as ``bincount`` does), so the results are equal to the bit.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit


@jit
def face_geometry(face_offsets, face_points, points, three_d, lo_face, hi_face, area, cent,
                  mean):
    """Area vectors, centroids and vertex means of faces ``lo_face`` .. ``hi_face - 1``,
    written into the (F, 3) arrays ``area``, ``cent``, ``mean``."""
    for f in range(lo_face, hi_face):
        lo, hi = face_offsets[f], face_offsets[f + 1]
        k = hi - lo
        if three_d and k >= 3:
            _polygon(face_points, points, lo, k, area, cent, mean, f)
        elif not three_d and k == 2:
            a, b = face_points[lo], face_points[lo + 1]
            xa, ya, xb, yb = points[a, 0], points[a, 1], points[b, 0], points[b, 1]
            area[f, 0], area[f, 1], area[f, 2] = yb - ya, xa - xb, 0.0
            cent[f, 0], cent[f, 1], cent[f, 2] = (xa + xb) * 0.5, (ya + yb) * 0.5, 0.0
            for c in range(3):
                mean[f, c] = cent[f, c]
        else:                        # a damaged face: no area, centroid at the vertex mean
            for c in range(3):
                s = 0.0
                for i in range(lo, hi):
                    s += points[face_points[i], c]
                area[f, c] = 0.0
                cent[f, c] = s / k
                mean[f, c] = s / k


@jit(inline="always")
def _polygon(face_points, points, lo, k, area, cent, mean, f):
    """Fan about the vertex mean: area vector, centroid and mean of one polygon."""
    m0 = m1 = m2 = 0.0
    for i in range(k):
        p = face_points[lo + i]
        m0 += points[p, 0]
        m1 += points[p, 1]
        m2 += points[p, 2]
    inv = 1.0 / k
    m0, m1, m2 = m0 * inv, m1 * inv, m2 * inv
    S0 = S1 = S2 = 0.0
    for i in range(k):
        p, q = face_points[lo + i], face_points[lo + i + 1 if i + 1 < k else lo]
        r0, r1, r2 = points[p, 0] - m0, points[p, 1] - m1, points[p, 2] - m2
        t0, t1, t2 = points[q, 0] - m0, points[q, 1] - m1, points[q, 2] - m2
        S0 += (r1 * t2 - r2 * t1) * 0.5
        S1 += (r2 * t0 - r0 * t2) * 0.5
        S2 += (r0 * t1 - r1 * t0) * 0.5
    wsum = a0 = a1 = a2 = 0.0
    for i in range(k):
        p, q = face_points[lo + i], face_points[lo + i + 1 if i + 1 < k else lo]
        r0, r1, r2 = points[p, 0] - m0, points[p, 1] - m1, points[p, 2] - m2
        t0, t1, t2 = points[q, 0] - m0, points[q, 1] - m1, points[q, 2] - m2
        w = (((r1 * t2 - r2 * t1) * 0.5) * S0 + ((r2 * t0 - r0 * t2) * 0.5) * S1
             + ((r0 * t1 - r1 * t0) * 0.5) * S2)
        wsum += w
        a0 += w * (points[p, 0] + points[q, 0] - 2.0 * m0)
        a1 += w * (points[p, 1] + points[q, 1] - 2.0 * m1)
        a2 += w * (points[p, 2] + points[q, 2] - 2.0 * m2)
    area[f, 0], area[f, 1], area[f, 2] = S0, S1, S2
    mean[f, 0], mean[f, 1], mean[f, 2] = m0, m1, m2
    ok = wsum > 0
    cent[f, 0] = m0 + (a0 / (3.0 * wsum) if ok else 0.0)
    cent[f, 1] = m1 + (a1 / (3.0 * wsum) if ok else 0.0)
    cent[f, 2] = m2 + (a2 / (3.0 * wsum) if ok else 0.0)


@jit
def face_mean_side(cells, n_cells, fmean):
    """(C, 3) sums of the face vertex means ``fmean`` of faces ``0 .. len(cells) - 1`` into
    the cell of each on one side, in face order, and (C,) how many each cell got."""
    total = np.zeros((n_cells, 3))
    count = np.zeros(n_cells, dtype=np.int64)
    for f in range(cells.shape[0]):
        c = cells[f]
        count[c] += 1
        for a in range(3):
            total[c, a] += fmean[f, a]
    return total, count


@jit
def face_mean_apex(owner_side, neighbour_side):
    """(C, 3) mean of each cell's face vertex means from the owner-side and neighbour-side
    sums of :func:`face_mean_side` (owner sums, then neighbour sums), in the owner's array."""
    so, n_own = owner_side
    sn, n_nbr = neighbour_side
    for c in range(so.shape[0]):
        d = max(float(n_own[c] + n_nbr[c]), 1.0)
        for a in range(3):
            so[c, a] = (so[c, a] + sn[c, a]) / d
    return so


@jit
def vertex_mean_apex(connectivity, cells, points, apex):
    """Write the vertex mean of each cell of known shape into ``apex``."""
    k = connectivity.shape[1]
    for i in range(cells.shape[0]):
        for a in range(3):
            s = points[connectivity[i, 0], a]
            for j in range(1, k):
                s = s + points[connectivity[i, j], a]
            apex[cells[i], a] = s / k


@jit
def pyramid_side(cells, signs, area, fcent, fmean, apex, dim):
    """(C, 5) per cell: volume, volume-weighted centroid offset (x, y, z) and sum of |volume|
    of the face pyramids about the apex, from faces ``0 .. len(cells) - 1`` on the side of
    ``cells`` (area vectors times ``signs``, or as they are when ``signs`` is empty), summed
    in face order. The owner sides and the neighbour sides are two calls (two threads)."""
    out = np.zeros((apex.shape[0], 5))
    signed = signs.shape[0] > 0
    for f in range(cells.shape[0]):
        _add_pyramid(out, cells[f], signs[f] if signed else 1.0, area, fcent, fmean, apex, f,
                     dim)
    return out


@jit
def cell_volumes_centroids(own, nbr, apex, dim):
    """Volumes and centroids from the owner-side and neighbour-side sums, as
    :func:`caselint.mesh.geometry.compute_geometry` derives them from their sum."""
    n_cells = apex.shape[0]
    volumes = np.empty(n_cells)
    cent = np.empty((n_cells, 3))
    frac = dim / (dim + 1.0)
    for c in range(n_cells):
        v = own[c, 0] + nbr[c, 0]
        volumes[c] = v
        good = abs(v) > 1e-12 * (own[c, 4] + nbr[c, 4])
        safe = v if good else 1.0
        for a in range(3):
            cent[c, a] = apex[c, a] + (frac * (own[c, a + 1] + nbr[c, a + 1]) / safe
                                       if good else 0.0)
    return volumes, cent


@jit(inline="always")
def _add_pyramid(out, c, sign, area, fcent, fmean, apex, f, dim):
    x0, x1, x2 = apex[c, 0], apex[c, 1], apex[c, 2]
    v = ((area[f, 0] * sign) * (fmean[f, 0] - x0) + (area[f, 1] * sign) * (fmean[f, 1] - x1)
         + (area[f, 2] * sign) * (fmean[f, 2] - x2)) / dim
    out[c, 0] += v
    out[c, 1] += v * (fcent[f, 0] - x0)
    out[c, 2] += v * (fcent[f, 1] - x1)
    out[c, 3] += v * (fcent[f, 2] - x2)
    out[c, 4] += abs(v)
