"""Compiled face and cell geometry (numba): area vectors, centroids, volumes.

The numpy reference is :mod:`caselint.mesh.geometry` (formulas and sources in its
docstring). These loops do the same arithmetic in the same order (sums taken one term at
a time in face order, as ``bincount`` does), so the results are equal to the bit. The
per-cell sums run cell by cell over each cell's face list (owner faces and neighbour
faces summed apart, each in ascending face id, as the two ``bincount`` passes add them),
so no (C, 5) table of sums is made.
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
def face_mean_apex(cf_offsets, cf_faces, cf_owned, fmean, shape, lo_cell, hi_cell, apex):
    """Rows ``lo_cell`` .. ``hi_cell - 1`` of ``apex`` for the cells of no known shape
    (``shape`` < 0; the others get their vertex mean, :func:`vertex_mean_apex`): the mean
    of each cell's face vertex means ``fmean``, as :func:`caselint.mesh.geometry._apex`
    sums them: the owner side and the neighbour side apart (each in ascending face id, as
    a cell's list holds them, and as a ``bincount`` adds them), then together, over the
    number of faces."""
    for c in range(lo_cell, hi_cell):
        if shape[c] >= 0:
            continue
        o0 = o1 = o2 = 0.0
        n0 = n1 = n2 = 0.0
        count = 0
        for i in range(cf_offsets[c], cf_offsets[c + 1]):
            f = cf_faces[i]
            count += 1
            if cf_owned[i]:
                o0 += fmean[f, 0]
                o1 += fmean[f, 1]
                o2 += fmean[f, 2]
            else:
                n0 += fmean[f, 0]
                n1 += fmean[f, 1]
                n2 += fmean[f, 2]
        d = max(float(count), 1.0)
        apex[c, 0] = (o0 + n0) / d
        apex[c, 1] = (o1 + n1) / d
        apex[c, 2] = (o2 + n2) / d


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
def cell_volumes_centroids(cf_offsets, cf_faces, cf_owned, signs, area, fcent, fmean, apex,
                           dim, lo_cell, hi_cell, volumes, cent):
    """Rows ``lo_cell`` .. ``hi_cell - 1`` of ``volumes`` and ``cent``: the face pyramids
    about each cell's apex, as :func:`caselint.mesh.geometry.compute_geometry` sums them
    (volume, volume-weighted centroid offset and sum of |volume|, the owner sides and the
    neighbour sides apart, each in ascending face id, the neighbour's area vectors times
    ``signs``), then the volume and the centroid from the two sums."""
    frac = dim / (dim + 1.0)
    own = np.empty(5)
    nbr = np.empty(5)
    for c in range(lo_cell, hi_cell):
        for j in range(5):
            own[j] = 0.0
            nbr[j] = 0.0
        for i in range(cf_offsets[c], cf_offsets[c + 1]):
            f = cf_faces[i]
            if cf_owned[i]:
                _add_pyramid(own, c, 1.0, area, fcent, fmean, apex, f, dim)
            else:
                _add_pyramid(nbr, c, signs[f], area, fcent, fmean, apex, f, dim)
        v = own[0] + nbr[0]
        volumes[c] = v
        good = abs(v) > 1e-12 * (own[4] + nbr[4])
        safe = v if good else 1.0
        for a in range(3):
            cent[c, a] = apex[c, a] + (frac * (own[a + 1] + nbr[a + 1]) / safe
                                       if good else 0.0)


@jit(inline="always")
def _add_pyramid(out, c, sign, area, fcent, fmean, apex, f, dim):
    x0, x1, x2 = apex[c, 0], apex[c, 1], apex[c, 2]
    v = ((area[f, 0] * sign) * (fmean[f, 0] - x0) + (area[f, 1] * sign) * (fmean[f, 1] - x1)
         + (area[f, 2] * sign) * (fmean[f, 2] - x2)) / dim
    out[0] += v
    out[1] += v * (fcent[f, 0] - x0)
    out[2] += v * (fcent[f, 1] - x1)
    out[3] += v * (fcent[f, 2] - x2)
    out[4] += abs(v)
