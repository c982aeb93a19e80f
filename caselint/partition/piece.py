"""One partition cut out of a mesh, with the neighbours its quantities need, as a mesh of
its own.

A piece holds the cells the partition owns, **ring 1** (every cell across a face of an
owned cell) and **ring 2** (every cell across a face of a ring-1 cell), and every face of
the owned and ring-1 cells. Then:

- every face of an owned or ring-1 cell is in the piece with both its cells, unchanged:
  internal faces stay internal with the same orientation, boundary faces keep their group;
  no face is turned round or cut (ring 2 is there for that: a face between ring 1 and the
  rest keeps its owner);
- the geometry of owned and ring-1 cells (volume, centroid, the points of their corners)
  is computed from the same faces, points and shapes as in the whole mesh, so it is equal
  to the bit: cells, faces and points keep their relative order (local ids ascend with the
  global ones), and the per-cell sums of :mod:`caselint.mesh.geometry` add the same terms
  in the same order;
- every per-face quantity of an owned face (non-orthogonality, skewness, size and volume
  ratio, warp) reads only its two cells, which are owned or in ring 1: equal to the bit.

Ring-2 cells are incomplete (only their faces towards ring 1): their own quantities are
never read. They carry no shape, so no per-shape metric is computed for them.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Iterator

import numpy as np

from caselint.mesh.model import MeshData, ReadReport, ShapeBlock
from caselint.mesh.topology import CellFaces


@dataclass(frozen=True, eq=False)
class Piece:
    """A partition's mesh (``data``, local ids) and where its cells and faces are in the
    whole mesh: ``cells`` / ``faces`` / ``points`` (global id of each local one,
    ascending); ``owned_cells`` / ``owned_faces``: local ids of the cells the partition
    owns and of the faces whose owner it owns (what it reports)."""

    index: int
    data: MeshData
    cells: np.ndarray
    faces: np.ndarray
    points: np.ndarray
    owned_cells: np.ndarray
    owned_faces: np.ndarray
    whole_cells: int               # cells of the whole mesh (for the choice of kernels)

    @property
    def nbytes(self) -> int:
        """Bytes of its arrays (about what it weighs when sent to a worker)."""
        arrays = [self.cells, self.faces, self.points, self.owned_cells, self.owned_faces]
        arrays += [v for v in vars(self.data).values() if isinstance(v, np.ndarray)]
        return int(sum(a.nbytes for a in arrays))


def faces_of(cf: CellFaces, cells: np.ndarray) -> np.ndarray:
    """All faces of ``cells`` (with repeats), from the whole mesh's cell-face lists."""
    return cf.of(cells).astype(np.int64)


def cells_across(data: MeshData, faces: np.ndarray) -> np.ndarray:
    """The cells on either side of ``faces`` (unique, ascending)."""
    nbr = data.neighbour[faces]
    return ascending([data.owner[faces], nbr[nbr >= 0]], data.n_cells)


class Positions:
    """Where values are in ``ids`` (distinct, ascending): what ``np.searchsorted(ids,
    values)`` gives for the values that are in ``ids``, read from a table over the span of
    ``ids`` instead of a binary search per value (on a piece's millions of face points the
    searches were half of cutting it). A value not in ``ids`` gets some position in
    0 .. len(ids) - 1: callers that may meet one check ``ids[result] == values``. The
    table is as long as the span of ``ids`` (at most the whole mesh's count, 4 bytes
    each; only its pages that ``ids`` touch are ever written), so it is made once for all
    the lookups in the same ids."""

    def __init__(self, ids: np.ndarray) -> None:
        self.low = int(ids[0]) if len(ids) else 0
        self.span = int(ids[-1]) - self.low + 1 if len(ids) else 0
        self.table = np.zeros(self.span, dtype=np.int32 if len(ids) < 2**31 else np.int64)
        self.table[np.asarray(ids, dtype=np.int64) - self.low] = np.arange(
            len(ids), dtype=self.table.dtype)

    def __call__(self, values: np.ndarray) -> np.ndarray:
        values = np.asarray(values)
        if not self.span:
            return np.zeros(values.shape, dtype=np.int64)
        at = values.astype(np.int64) - self.low
        np.clip(at, 0, self.span - 1, out=at)
        return self.table[at].astype(np.int64)


def block_rows(block: ShapeBlock, cells: np.ndarray, is_kept: np.ndarray) -> np.ndarray:
    """The rows of ``block`` whose cell is one of ``cells`` (ascending; ``is_kept`` the
    same as a mark per cell of the mesh), in row order. Where the block's cells ascend
    they are found by a search of ``cells`` in them, which reads a piece's share of a
    block kept on disk rather than all of it."""
    if block.cells_ascend:
        # the ids searched for in the block's own type: a wider one would copy the block
        at = np.searchsorted(block.cells, cells.astype(block.cells.dtype, copy=False))
        inside = at < len(block.cells)
        at, cells = at[inside], cells[inside]
        return at[block.cells[at] == cells]
    return np.flatnonzero(is_kept[block.cells])


def ascending(ids: list[np.ndarray], n: int) -> np.ndarray:
    """The distinct ids (each in 0 .. n-1) of ``ids``, ascending (int64): a mark per id and
    one pass over the marks, several times quicker than sorting the ids."""
    seen = np.zeros(n, dtype=bool)
    for part in ids:
        seen[part] = True
    return np.flatnonzero(seen)


def cut_piece(data: MeshData, cf: CellFaces, owned: np.ndarray, index: int = 0) -> Piece:
    """The piece of ``data`` for the partition owning the cells ``owned`` (ascending ids);
    ``cf`` the whole mesh's cell-face lists (:func:`caselint.mesh.topology.cell_faces`)."""
    owned = np.asarray(owned, dtype=np.int64)
    own_faces = faces_of(cf, owned)
    complete = np.zeros(data.n_cells, dtype=bool)           # cells with all their faces
    complete[owned] = True
    is_owned = complete.copy()
    ring1 = cells_across(data, own_faces)
    ring1 = ring1[~is_owned[ring1]]
    complete[ring1] = True
    faces = ascending([own_faces, faces_of(cf, ring1)], data.n_faces)
    cells = cells_across(data, faces)                       # owned, ring 1 and ring 2
    in_cells = Positions(cells)
    local_owner = in_cells(data.owner[faces])
    nbr = data.neighbour[faces]
    local_nbr = np.where(nbr >= 0, in_cells(nbr), -1)

    start, stop = data.face_offsets[faces], data.face_offsets[faces + 1]
    size = stop - start
    offsets = np.zeros(len(faces) + 1, dtype=data.face_offsets.dtype)
    np.cumsum(size, out=offsets[1:])
    base = np.repeat(start - offsets[:-1], size)
    global_fp = data.face_points[base + np.arange(int(offsets[-1]))]
    points = ascending([global_fp], data.n_points)
    in_points = Positions(points)
    face_points = in_points(global_fp).astype(data.face_points.dtype)

    shapes = []
    complete_cells = np.flatnonzero(complete)
    for block in data.shapes:
        rows = block_rows(block, complete_cells, complete)
        if not len(rows):
            continue
        conn = block.connectivity[rows]
        local_conn = in_points(conn)
        if np.any(points[local_conn] != conn):
            raise ValueError(f"partition {index}: a {block.type} corner lies on none of the "
                             "cell's faces")
        shapes.append(ShapeBlock(block.type, in_cells(block.cells[rows]),
                                 local_conn.astype(conn.dtype)))

    clash = data.report.clashing
    clash = clash[np.isin(clash, faces)] if len(clash) else clash
    local = MeshData(
        path=f"{data.path} [partition {index}]", dim=data.dim, points=data.points[points],
        face_offsets=offsets, face_points=face_points,
        owner=local_owner.astype(data.owner.dtype),
        neighbour=local_nbr.astype(data.neighbour.dtype),
        n_cells=len(cells), face_group=data.face_group[faces], group_names=data.group_names,
        group_types=data.group_types, shapes=tuple(shapes),
        cell_zone=None if data.cell_zone is None else data.cell_zone[cells],
        zone_names=data.zone_names,
        report=ReadReport(clashing=np.searchsorted(faces, clash).astype(np.int64)),
    )
    owned_local = in_cells(owned)
    owned_faces = np.flatnonzero(is_owned[data.owner[faces]])
    return Piece(index, local, cells, faces, points, owned_local, owned_faces, data.n_cells)


@dataclass(frozen=True)
class Pieces:
    """How the tasks of a plan get their pieces: ``items()`` one item per partition, in
    order, each sent to a task, and ``make(item)``, run in the task, the piece (a
    module-level function, so that it travels to a cluster's workers)."""

    items: Callable[[], Iterator]
    make: Callable[[object], Piece]


def as_is(piece: Piece) -> Piece:
    """The piece sent (cut by the client)."""
    return piece


def cut_here(data: MeshData, cf: CellFaces, plan) -> Pieces:
    """Pieces cut from ``data`` by the client as the tasks start (one at a time when run
    here) and sent to them; ``plan`` a :class:`~caselint.partition.plan.Plan`."""
    return Pieces(lambda: (cut_piece(data, cf, plan.cells(k), k) for k in range(plan.n_parts)),
                  as_is)


__all__ = ["Piece", "Pieces", "as_is", "ascending", "block_rows", "cells_across", "cut_here",
           "cut_piece", "faces_of", "Positions"]
