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
from typing import Callable, Iterator, NamedTuple

import numpy as np

from caselint.mesh.kernels import compiled
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
    the lookups in the same ids; ``table`` the table when already made (by
    :func:`caselint.mesh.kernels.piece_cut.piece_ids`)."""

    def __init__(self, ids: np.ndarray, table: np.ndarray | None = None) -> None:
        self.low = int(ids[0]) if len(ids) else 0
        self.span = int(ids[-1]) - self.low + 1 if len(ids) else 0
        if table is None:
            table = np.zeros(self.span, dtype=np.int32 if len(ids) < 2**31 else np.int64)
            table[np.asarray(ids, dtype=np.int64) - self.low] = np.arange(len(ids),
                                                                          dtype=table.dtype)
        self.table = table

    def __call__(self, values: np.ndarray) -> np.ndarray:
        values = np.asarray(values)
        if not self.span:
            return np.zeros(values.shape, dtype=np.int64)
        at = values.astype(np.int64) - self.low
        np.clip(at, 0, self.span - 1, out=at)
        return self.table[at].astype(np.int64)


def block_rows(block: ShapeBlock, cells: np.ndarray, is_kept: np.ndarray | None
               ) -> np.ndarray:
    """The rows of ``block`` whose cell is one of ``cells`` (ascending; ``is_kept`` the
    same as a mark per cell of the mesh, needed only where the block's cells do not
    ascend), in row order. Where the block's cells ascend
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


class PieceIds(NamedTuple):
    """Which cells, faces and points of the whole mesh a piece holds and its local ids
    (:func:`piece_ids`); global ids ascend, a local id is the rank of its global one."""

    faces: np.ndarray          # the piece's faces (global ids)
    cells: np.ndarray          # its cells: owned, ring 1, ring 2
    complete: np.ndarray       # the cells with all their faces: owned and ring 1
    owned_cells: np.ndarray    # local ids of the owned cells
    owned_faces: np.ndarray    # local ids of the faces whose owner is owned
    owner: np.ndarray          # local owner of each face (the whole mesh's dtype)
    neighbour: np.ndarray      # local neighbour, -1 on boundary faces
    face_offsets: np.ndarray   # the faces' point lists (the whole mesh's dtypes)
    face_points: np.ndarray    # local point ids
    points: np.ndarray         # the points of the faces (global ids)
    in_cells: Positions        # local ids of global cell ids
    in_points: Positions       # local ids of global point ids


def piece_ids(data: MeshData, cf: CellFaces, owned: np.ndarray) -> PieceIds:
    """The ids of the piece of ``data`` for the partition owning the cells ``owned``
    (ascending), by the compiled kernel
    (:func:`caselint.mesh.kernels.piece_cut.piece_ids`) or by this numpy reference."""
    owned = np.asarray(owned, dtype=np.int64)
    kernel = compiled("piece_cut", data.n_cells)
    if kernel is not None:
        return _compiled_ids(kernel, data, cf, owned)
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
    return PieceIds(faces, cells, np.flatnonzero(complete), in_cells(owned),
                    np.flatnonzero(is_owned[data.owner[faces]]),
                    local_owner.astype(data.owner.dtype), local_nbr.astype(data.neighbour.dtype),
                    offsets, face_points, points, in_cells, in_points)


def _compiled_ids(kernel, data: MeshData, cf: CellFaces, owned: np.ndarray) -> PieceIds:
    """:func:`piece_ids` by the kernel, its marks zeroed arrays of the whole mesh's lengths
    (pages handed out as first touched) and its position tables as narrow as Positions'."""
    table = np.zeros(0, dtype=np.int32 if max(data.n_cells, data.n_points) < 2**31
                     else np.int64)
    marks = [np.zeros(n, dtype=np.uint8) for n in (data.n_cells, data.n_faces, data.n_points)]
    (faces, cells, complete, owned_cells, owned_faces, owner, neighbour, offsets, face_points,
     points, cell_table, point_table) = kernel.piece_ids(
        cf.offsets, cf.faces, data.owner, data.neighbour, data.face_offsets, data.face_points,
        owned, *marks, table)
    return PieceIds(faces, cells, complete, owned_cells, owned_faces, owner, neighbour,
                    offsets, face_points, points, Positions(cells, cell_table),
                    Positions(points, point_table))


def cut_piece(data: MeshData, cf: CellFaces, owned: np.ndarray, index: int = 0) -> Piece:
    """The piece of ``data`` for the partition owning the cells ``owned`` (ascending ids);
    ``cf`` the whole mesh's cell-face lists (:func:`caselint.mesh.topology.cell_faces`)."""
    ids = piece_ids(data, cf, owned)
    faces, cells, points = ids.faces, ids.cells, ids.points
    shapes = []
    kept = None                          # a mark per cell, made if a block needs it
    for block in data.shapes:
        if not block.cells_ascend and kept is None:
            kept = np.zeros(data.n_cells, dtype=bool)
            kept[ids.complete] = True
        rows = block_rows(block, ids.complete, kept)
        if not len(rows):
            continue
        conn = block.connectivity[rows]
        local_conn = ids.in_points(conn)
        if np.any(points[local_conn] != conn):
            raise ValueError(f"partition {index}: a {block.type} corner lies on none of the "
                             "cell's faces")
        shapes.append(ShapeBlock(block.type, ids.in_cells(block.cells[rows]),
                                 local_conn.astype(conn.dtype)))

    clash = data.report.clashing
    clash = clash[np.isin(clash, faces)] if len(clash) else clash
    local = MeshData(
        path=f"{data.path} [partition {index}]", dim=data.dim, points=data.points[points],
        face_offsets=ids.face_offsets, face_points=ids.face_points, owner=ids.owner,
        neighbour=ids.neighbour, n_cells=len(cells), face_group=data.face_group[faces],
        group_names=data.group_names, group_types=data.group_types, shapes=tuple(shapes),
        cell_zone=None if data.cell_zone is None else data.cell_zone[cells],
        zone_names=data.zone_names,
        report=ReadReport(clashing=np.searchsorted(faces, clash).astype(np.int64)),
    )
    return Piece(index, local, cells, faces, points, ids.owned_cells, ids.owned_faces,
                 data.n_cells)


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


__all__ = ["Piece", "PieceIds", "Pieces", "as_is", "ascending", "block_rows", "cells_across",
           "cut_here", "cut_piece", "faces_of", "piece_ids", "Positions"]
