"""Compiled signs of cell volumes as written (numba), for the node-order vote of the read.

The numpy reference is :func:`caselint.mesh.orientation.volume_signs` (the formula is in
:mod:`caselint.mesh.orientation`): the same sums in the same order, so the same signs.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit


@jit
def volume_signs(conn, points, far, dim):
    """(n,) int8 sign (1, -1, 0) of each cell's volume (area in 2-D); ``far``: the (m, 3)
    surface triangles away from node 0 (3-D)."""
    n, k = conn.shape
    out = np.empty(n, dtype=np.int8)
    rel = np.empty((k, 3))
    for i in range(n):
        p0 = conn[i, 0]
        for j in range(k):
            for c in range(dim):
                rel[j, c] = points[conn[i, j], c] - points[p0, c]
        signed = 0.0
        if dim == 2:
            for j in range(1, k - 1):
                signed += rel[j, 0] * rel[j + 1, 1] - rel[j + 1, 0] * rel[j, 1]
        else:
            for t in range(far.shape[0]):
                a, b, d = far[t, 0], far[t, 1], far[t, 2]
                ax, ay, az = rel[a, 0], rel[a, 1], rel[a, 2]
                bx, by, bz = rel[b, 0], rel[b, 1], rel[b, 2]
                dx, dy, dz = rel[d, 0], rel[d, 1], rel[d, 2]
                signed += (ax * (by * dz - bz * dy) + ay * (bz * dx - bx * dz)
                           + az * (bx * dy - by * dx))
        size = 0.0
        for j in (1, k - 1):
            for c in range(dim):
                size += abs(rel[j, c])
        size = size ** float(dim)
        # round-off on a flat cell: below 1e-12 of (two edges' length) cubed counts as zero
        if abs(signed) <= 1e-12 * size:
            out[i] = 0
        else:
            out[i] = 1 if signed > 0 else -1
    return out
