"""Compiled cell metrics of cells of known shape (numba): scaled Jacobian, minimum corner
Jacobian, edge ratio.

The numpy reference is :func:`caselint.mesh.quality._cell_metrics` (definitions and sources
in :mod:`caselint.mesh.quality`). This loop does the same arithmetic in the same order: each
edge vector is ``x_hi - x_lo`` for the edge's lower node first, with the corner's sign
applied to the determinant, so the values are equal to the bit.
"""

from __future__ import annotations

import math

import numpy as np

from caselint.mesh.kernels import jit

HEX, TET, WEDGE, PYRAMID, TRIANGLE, QUAD = 0, 1, 2, 3, 4, 5
_SQRT2 = math.sqrt(2.0)
_TWO_BY_SQRT3 = 2.0 / math.sqrt(3.0)
_TET_NODE_EDGES = np.array(((0, 2, 3), (0, 1, 4), (1, 2, 5), (3, 4, 5)))


@jit(inline="always")
def _vec(P, a, b):
    """Edge vector of nodes (a, b) stored lower node first, and the sign to apply."""
    lo, hi = min(a, b), max(a, b)
    return (P[hi, 0] - P[lo, 0], P[hi, 1] - P[lo, 1], P[hi, 2] - P[lo, 2],
            1.0 if a < b else -1.0)


@jit(inline="always")
def _length(P, a, b):
    x, y, z, _ = _vec(P, a, b)
    return np.sqrt(x * x + y * y + z * z)


@jit(inline="always")
def _det(u0, u1, u2, v0, v1, v2, w0, w1, w2):
    return u0 * (v1 * w2 - v2 * w1) + u1 * (v2 * w0 - v0 * w2) + u2 * (v0 * w1 - v1 * w0)


@jit(inline="always")
def _corner_det(P, o, a, b, c):
    """Determinant of the edge vectors o-a, o-b, o-c (each stored lower node first, the
    sign applied to the determinant)."""
    u0, u1, u2, su = _vec(P, o, a)
    v0, v1, v2, sv = _vec(P, o, b)
    w0, w1, w2, sw = _vec(P, o, c)
    det = _det(u0, u1, u2, v0, v1, v2, w0, w1, w2)
    return -det if su * sv * sw < 0 else det


@jit(inline="always")
def _corner_min(P, corners):
    best_n, best_d = np.inf, np.inf
    for k in range(corners.shape[0]):
        o, a, b, c = corners[k, 0], corners[k, 1], corners[k, 2], corners[k, 3]
        det = _corner_det(P, o, a, b, c)
        scale = _length(P, o, a) * _length(P, o, b) * _length(P, o, c)
        nrm = det / scale if scale > 0 else 0.0
        best_n = min(best_n, nrm)
        best_d = min(best_d, det)
    return best_n, best_d


@jit(inline="always")
def _tet(P, n0, n1, n2, n3, tet_edges):
    nodes = (n0, n1, n2, n3)
    e = np.empty(6)
    for k in range(6):
        e[k] = _length(P, nodes[tet_edges[k, 0]], nodes[tet_edges[k, 1]])
    det = _corner_det(P, n0, n1, n2, n3)
    product = -np.inf
    for k in range(4):
        i, j, m = _TET_NODE_EDGES[k, 0], _TET_NODE_EDGES[k, 1], _TET_NODE_EDGES[k, 2]
        product = max(product, e[i] * e[j] * e[m])
    product = max(product, abs(det))
    return (_SQRT2 * det / product if product > 0 else 0.0), det


@jit
def cell_metrics(conn, cells, points, shape, corners, edges, tet_edges, pyramid_tets, sj,
                 mj, er, degenerate):
    """Write the scaled Jacobian (clipped to [-1, 1]), minimum corner Jacobian and edge ratio
    of the cells ``cells`` (corner nodes ``conn``) of one ``shape`` into ``sj``, ``mj``,
    ``er``. ``corners``/``edges``/``tet_edges``/``pyramid_tets``: the shape's node tables
    (caselint.mesh.celltypes)."""
    k = conn.shape[1]
    P = np.empty((k, 3))
    for i in range(conn.shape[0]):
        for a in range(k):
            for c in range(3):
                P[a, c] = points[conn[i, a], c]
        if shape == HEX:
            nrm, det = _corner_min(P, corners)
            ax = np.empty((3, 3))
            for c in range(3):
                ax[0, c] = ((P[1, c] + P[2, c]) + P[5, c] + P[6, c]) - (
                    (P[0, c] + P[3, c]) + P[4, c] + P[7, c])
                ax[1, c] = ((P[2, c] + P[3, c]) + P[6, c] + P[7, c]) - (
                    (P[0, c] + P[1, c]) + P[4, c] + P[5, c])
                ax[2, c] = ((P[4, c] + P[5, c]) + P[6, c] + P[7, c]) - (
                    (P[0, c] + P[1, c]) + P[2, c] + P[3, c])
            d = _det(ax[0, 0], ax[0, 1], ax[0, 2], ax[1, 0], ax[1, 1], ax[1, 2],
                     ax[2, 0], ax[2, 1], ax[2, 2])
            scale = 1.0
            for r in range(3):
                scale_r = np.sqrt(ax[r, 0] * ax[r, 0] + ax[r, 1] * ax[r, 1]
                                  + ax[r, 2] * ax[r, 2])
                scale = scale_r if r == 0 else scale * scale_r
            centre = d / scale if scale > 0 else 0.0
            value = min(nrm, centre)
        elif shape == WEDGE:
            nrm, det = _corner_min(P, corners)
            value = nrm * _TWO_BY_SQRT3
        elif shape == TET:
            value, det = _tet(P, 0, 1, 2, 3, tet_edges)
        elif shape == PYRAMID:
            low, det = np.inf, np.inf
            for t in range(pyramid_tets.shape[0]):
                s, dt = _tet(P, pyramid_tets[t, 0], pyramid_tets[t, 1], pyramid_tets[t, 2],
                             pyramid_tets[t, 3], tet_edges)
                low = min(low, s)
                det = min(det, dt)
            low = low * _SQRT2
            value = 2.0 - low if low > 1.0 else low
        else:
            value, det = np.inf, np.inf
            largest = -np.inf
            first = 0.0
            for r in range(corners.shape[0]):
                o, a, b = corners[r, 0], corners[r, 1], corners[r, 2]
                u0, u1, u2 = P[a, 0] - P[o, 0], P[a, 1] - P[o, 1], P[a, 2] - P[o, 2]
                v0, v1, v2 = P[b, 0] - P[o, 0], P[b, 1] - P[o, 1], P[b, 2] - P[o, 2]
                dt = u0 * v1 - u1 * v0
                n = np.sqrt(u0 * u0 + u1 * u1 + u2 * u2) * np.sqrt(v0 * v0 + v1 * v1
                                                                   + v2 * v2)
                if r == 0:
                    first = dt
                det = min(det, dt)
                largest = max(largest, n)
                value = min(value, dt / n if n > 0 else 0.0)
            if shape == TRIANGLE:
                value = _TWO_BY_SQRT3 * first / largest if largest > 0 else 0.0
                det = first
        out = cells[i]
        sj[out] = min(max(value, -1.0), 1.0)
        mj[out] = det
        longest, shortest = -np.inf, np.inf
        for e in range(edges.shape[0]):
            length = _length(P, edges[e, 0], edges[e, 1])
            longest = max(longest, length)
            shortest = min(shortest, length)
        er[out] = min(longest / shortest, degenerate) if shortest > 0 else degenerate
