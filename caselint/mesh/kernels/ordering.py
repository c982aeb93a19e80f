"""Compiled passes of the read (numba): Morton codes, and the faces of an element mesh as
CSR polygons with internal faces first.

The numpy references are :func:`caselint.mesh.ordering.morton_codes` and
:func:`caselint.mesh.build.padded_to_csr` after :func:`caselint.mesh.build.internal_first`;
the results are the same arrays.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit


@jit(inline="always")
def _spread(q):
    v = q & np.uint64(0x1FFFFF)
    v = (v | (v << np.uint64(32))) & np.uint64(0x1F00000000FFFF)
    v = (v | (v << np.uint64(16))) & np.uint64(0x1F0000FF0000FF)
    v = (v | (v << np.uint64(8))) & np.uint64(0x100F00F00F00F00F)
    v = (v | (v << np.uint64(4))) & np.uint64(0x10C30C30C30C30C3)
    v = (v | (v << np.uint64(2))) & np.uint64(0x1249249249249249)
    return v


@jit
def morton_codes(points, lo, scale):
    """(P,) uint64 Morton code of each point, 21 bits an axis (``lo`` and ``scale`` per
    axis as the reference computes them)."""
    n = points.shape[0]
    code = np.zeros(n, dtype=np.uint64)
    for i in range(n):
        c = np.uint64(0)
        for a in range(3):
            q = np.uint64((points[i, a] - lo[a]) * scale[a])
            c |= _spread(q) << np.uint64(a)
        code[i] = c
    return code


@jit
def faces_to_csr(faces, neighbour):
    """CSR offsets and points of the padded ``faces`` (consecutive repeats, cyclically,
    dropped; a face of one repeated point keeps it), internal faces (``neighbour >= 0``)
    first, each part in its order; that order (new face i = old ``order[i]``) and whether
    it moved any face."""
    n, width = faces.shape
    order = np.empty(n, dtype=np.int64)
    at = 0
    moved = False
    for f in range(n):
        if neighbour[f] >= 0:
            moved = moved or at != f
            order[at] = f
            at += 1
    for f in range(n):
        if neighbour[f] < 0:
            order[at] = f
            at += 1
    offsets = np.zeros(n + 1, dtype=np.int64)
    for i in range(n):
        f = order[i]
        kept = 0
        if width == 2:
            kept = 2
        else:
            for j in range(width):
                if faces[f, j] != faces[f, j - 1 if j > 0 else width - 1]:
                    kept += 1
            kept = max(kept, 1)
        offsets[i + 1] = offsets[i] + kept
    points = np.empty(offsets[n], dtype=faces.dtype)
    for i in range(n):
        f = order[i]
        at = offsets[i]
        if width == 2 or offsets[i + 1] - at == 1:
            for j in range(offsets[i + 1] - at):
                points[at + j] = faces[f, j]
            continue
        for j in range(width):
            if faces[f, j] != faces[f, j - 1 if j > 0 else width - 1]:
                points[at] = faces[f, j]
                at += 1
    return offsets, points, order, moved
