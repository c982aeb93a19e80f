"""Renumbering cells and points along a Morton (Z-order) curve, for memory locality.

An unstructured export often numbers cells and points in an order unrelated to where they
lie; every later gather (a cell's corners, a face's cells, a cell's faces) then jumps
across memory, and on a million cells the cache misses cost about a third of a check.
Sorting points by their Morton code, and each block's cells by the new number of their
first corner, puts neighbours next to each other in memory.

Reports must still speak in the file's numbering: the mesh keeps the file's id of every
renumbered cell and point (``Mesh.file_cell_ids``, ``Mesh.file_point_ids``), and rules name
cells and points through them. Cells stay in their blocks (cell types keep their id
ranges); boundary elements keep their file order. Element meshes are renumbered before
their faces are built (:mod:`caselint.mesh.build`). On large meshes the codes and sorts
are computed by a compiled loop (:mod:`caselint.mesh.kernels.ordering`: the same codes;
numpy's sorts were as fast as a compiled radix sort here).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Sequence

import numpy as np

from caselint.mesh.kernels import compiled

if TYPE_CHECKING:
    from caselint.mesh.pairing import ElementBlock

#: Bits per axis of the Morton code (three axes fit in 63 bits).
BITS = 21


def _spread(q: np.ndarray) -> np.ndarray:
    """Spread the low 21 bits of ``q`` so that two zero bits follow each bit."""
    v = q & np.uint64(0x1FFFFF)
    for shift, mask in ((32, 0x1F00000000FFFF), (16, 0x1F0000FF0000FF),
                        (8, 0x100F00F00F00F00F), (4, 0x10C30C30C30C30C3),
                        (2, 0x1249249249249249)):
        v = (v | (v << np.uint64(shift))) & np.uint64(mask)
    return v


def morton_codes(points: np.ndarray, kernel=None) -> np.ndarray:
    """(P,) uint64 Morton code of each point in the points' bounding box (21 bits an axis);
    ``kernel``: the compiled :mod:`caselint.mesh.kernels.ordering`, or None for numpy."""
    lo = points.min(axis=0)
    span = points.max(axis=0) - lo
    scale = np.where(span > 0, (2**BITS - 1) / np.where(span > 0, span, 1.0), 0.0)
    if kernel is not None:
        return kernel.morton_codes(points, lo, scale)
    code = np.zeros(len(points), dtype=np.uint64)
    for axis in range(3):
        q = ((points[:, axis] - lo[axis]) * scale[axis]).astype(np.uint64)
        code |= _spread(q) << np.uint64(axis)
    return code


def _sorted_order(codes: np.ndarray) -> np.ndarray:
    """``argsort(codes, kind="stable")``, faster: numpy's default sort (which is not stable,
    and differs between processors), then equal codes (points closer than 2**-21 of the
    extent: coincident ones) put back in index order. The same order on every machine."""
    order = np.argsort(codes)
    ordered = codes[order]
    tied = np.flatnonzero(ordered[1:] == ordered[:-1])
    if tied.size:
        members = np.unique(np.concatenate([tied, tied + 1]))
        order[members] = order[members][np.lexsort((order[members], ordered[members]))]
    return order


@dataclass(frozen=True, eq=False)
class Renumbering:
    """Element blocks renumbered along a Morton curve, and the maps back to the input ids.

    ``point_order[i]`` / ``cell_order[i]`` is the input id of new point / cell ``i``;
    ``new_point[j]`` is the new id of input point ``j``.
    """

    blocks: tuple["ElementBlock", ...]
    point_order: np.ndarray
    new_point: np.ndarray
    cell_order: np.ndarray


def spatial_order(points: np.ndarray, blocks: Sequence["ElementBlock"]) -> Renumbering:
    """Points sorted by Morton code; each block's cells by the new number of their first
    corner (cells stay in their blocks, so cell types keep their id ranges)."""
    from caselint.mesh.pairing import ElementBlock

    kernel = compiled("ordering", sum(len(b.connectivity) for b in blocks))
    codes = morton_codes(points, kernel)
    point_order = _sorted_order(codes)
    index_type = np.result_type(*[b.connectivity.dtype for b in blocks])
    new_point = np.empty(len(points), dtype=index_type)
    new_point[point_order] = np.arange(len(points), dtype=index_type)
    out, cell_order = [], []
    for block in blocks:
        conn = np.take(new_point, block.connectivity)
        # Unique keys (first corner, then file order), so that numpy's fastest sort,
        # which is not stable and differs between processors, gives one order everywhere.
        n = len(conn)
        key = conn[:, 0].astype(np.int64) * n + np.arange(n)
        order = np.argsort(key)
        out.append(ElementBlock(block.type, np.take(conn, order, axis=0), block.start))
        cell_order.append(order + block.start)
    cells = np.concatenate(cell_order) if cell_order else np.zeros(0, dtype=np.int64)
    return Renumbering(tuple(out), point_order, new_point, cells)
