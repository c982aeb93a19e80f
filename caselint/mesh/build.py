"""Building a :class:`~caselint.mesh.model.MeshData` from what readers find in a file.

Two ways in, one result:

- :func:`mesh_from_elements`: cells given as elements of known shapes (the meshio family
  of formats, SU2, CGNS element sections). Points and cells are renumbered along a Morton
  curve for memory locality (:mod:`caselint.mesh.ordering`), half-faces are paired into
  faces (:mod:`caselint.mesh.pairing`), the file's boundary elements name the exposed faces
  (:mod:`caselint.mesh.groups`), and the corner nodes of every cell are kept as its shape.
- :func:`mesh_from_faces`: faces given as polygons with owner and neighbour cells (the
  face-based solver formats). Internal faces are moved before boundary faces where the
  file interleaves them.

Both give faces in CSR form with internal faces first, each part in the order it came
(owner order for element meshes).
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from caselint.mesh.kernels import compiled
from caselint.mesh.groups import BoundaryElements, match_groups
from caselint.mesh.model import MeshData, ReadReport, ShapeBlock, fewest_points
from caselint.mesh.ordering import spatial_order
from caselint.mesh.orientation import oriented_blocks
from caselint.mesh.pairing import ElementBlock, pair_faces


def index_dtype(n: int) -> type:
    """int32 for ids below 2**31 (half the memory of int64), else int64."""
    return np.int32 if n < 2**31 else np.int64


def padded_to_csr(faces: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """CSR offsets and points of ``(F, w)`` faces whose short faces repeat vertices.

    Consecutive repeats (cyclically) are dropped: ``(a, b, c, c)`` is the triangle
    ``(a, b, c)``, a quadrilateral collapsed on one edge a triangle; a face whose
    vertices are all one point keeps one.
    """
    n, width = faces.shape
    offsets = np.zeros(n + 1, dtype=np.int64)
    if width == 2 or n == 0:
        offsets[1:] = width * np.arange(1, n + 1)
        return offsets, np.ascontiguousarray(faces).ravel()
    keep = faces != np.roll(faces, 1, axis=1)
    keep[:, 0] |= ~keep.any(axis=1)
    np.cumsum(np.count_nonzero(keep, axis=1), out=offsets[1:])
    return offsets, faces[keep]


def internal_first(neighbour: np.ndarray) -> np.ndarray | None:
    """Permutation putting faces with a neighbour first (each part in its order), or None
    when they already come first."""
    inner = neighbour >= 0
    n_int = int(np.count_nonzero(inner))
    if not n_int or bool(inner[:n_int].all()):
        return None
    return np.concatenate([np.flatnonzero(inner), np.flatnonzero(~inner)])


def _new_ids(order: np.ndarray | None, ids: np.ndarray) -> np.ndarray:
    """Ids of faces ``ids`` after the permutation ``order`` (new face i = old order[i])."""
    if order is None or len(ids) == 0:
        return np.asarray(ids, dtype=np.int64)
    where = np.empty(len(order), dtype=np.int64)
    where[order] = np.arange(len(order))
    return np.sort(where[ids])


def sorted_groups(names: Sequence[str], face_group: np.ndarray):
    """Group names sorted and made unique (equal names merge), and the group index of each
    face renumbered to match (-1 stays -1)."""
    unique = tuple(sorted(set(names)))
    remap = np.array([unique.index(n) for n in names] + [-1], dtype=np.int32)
    return unique, remap[np.where(face_group >= 0, face_group, len(names))]


def mesh_from_elements(
    *,
    path: str,
    points: np.ndarray,
    dim: int,
    blocks: Sequence[ElementBlock],
    boundary: BoundaryElements | None = None,
    group_names: tuple[str, ...] = (),
    group_types: dict[str, str] | None = None,
    notes: tuple[str, ...] = (),
    point_data: dict[str, np.ndarray] | None = None,
    cell_data: dict[str, np.ndarray] | None = None,
    cell_zone: np.ndarray | None = None,
    zone_names: tuple[str, ...] = (),
    renumber: bool = True,
) -> MeshData:
    """Faces, owner, neighbour and groups of an element mesh (see the module docstring).

    ``blocks`` number cells consecutively from 0; ``boundary`` vertices refer to ``points``;
    ``point_data``, ``cell_data`` and ``cell_zone`` are in the file's point and cell order.
    """
    expected = 0
    for block in blocks:
        if block.start != expected:
            raise ValueError(f"element blocks must number cells consecutively: block "
                             f"{block.type!r} starts at {block.start}, expected {expected}")
        expected = block.stop
    n_cells, n_points = expected, len(points)
    boundary = boundary or BoundaryElements.empty(4 if dim == 3 else 2)
    point_data, cell_data = dict(point_data or {}), dict(cell_data or {})
    file_cells = file_points = None
    if renumber and n_cells and n_points:
        r = spatial_order(points, blocks)
        points, blocks = np.take(points, r.point_order, axis=0), r.blocks
        boundary = BoundaryElements(np.take(r.new_point, boundary.vertices), boundary.element,
                                    boundary.group)
        point_data = {k: np.take(v, r.point_order, axis=0) for k, v in point_data.items()}
        cell_data = {k: np.take(v, r.cell_order, axis=0) for k, v in cell_data.items()}
        cell_zone = None if cell_zone is None else np.take(cell_zone, r.cell_order)
        file_cells = r.cell_order.astype(index_dtype(n_cells))
        file_points = r.point_order.astype(index_dtype(n_points))
    # A block written in the mirrored node order is read the other way round (with a note).
    # Voted on the renumbered cells, whose corners lie close in memory: the mirrored orders
    # keep node 0 first, so the renumbering is the same either way round.
    blocks, flipped = oriented_blocks(points, blocks, dim)
    notes = (*notes, *flipped)
    paired = pair_faces(blocks, n_points, dim)
    face_group, unmatched, internal, multi = match_groups(
        paired.faces, paired.neighbour, boundary, group_names, n_points)
    kernel = compiled("ordering", n_cells)
    owner, neighbour = paired.owner, paired.neighbour
    if kernel is not None:
        offsets, face_points, order, moved = kernel.faces_to_csr(paired.faces, neighbour)
        order = order if moved else None
    else:
        order = internal_first(neighbour)
    if order is not None:
        owner, neighbour, face_group = owner[order], neighbour[order], face_group[order]
    if kernel is None:
        offsets, face_points = padded_to_csr(paired.faces if order is None
                                             else paired.faces[order])
    cell_type = index_dtype(max(n_cells, 1))
    shapes = tuple(ShapeBlock(b.type, np.arange(b.start, b.stop, dtype=cell_type),
                              b.connectivity) for b in blocks if len(b.connectivity))
    report = ReadReport(nonmanifold=_new_ids(order, paired.nonmanifold),
                        clashing=_new_ids(order, paired.clashing), unmatched=unmatched,
                        internal=internal, multi_group=multi)
    return MeshData(
        path=path, dim=dim, points=points, face_offsets=offsets,
        face_points=face_points.astype(index_dtype(max(n_points, 1)), copy=False),
        owner=owner.astype(cell_type, copy=False), neighbour=neighbour.astype(cell_type),
        n_cells=n_cells, face_group=face_group, group_names=tuple(group_names),
        group_types=dict(group_types or {}), shapes=shapes, cell_zone=cell_zone,
        zone_names=tuple(zone_names), notes=tuple(notes), point_data=point_data,
        cell_data=cell_data, file_cell_ids=file_cells, file_point_ids=file_points,
        report=report)


def mesh_from_faces(
    *,
    path: str,
    points: np.ndarray,
    dim: int,
    face_offsets: np.ndarray,
    face_points: np.ndarray,
    owner: np.ndarray,
    neighbour: np.ndarray,
    n_cells: int | None = None,
    face_group: np.ndarray | None = None,
    group_names: tuple[str, ...] = (),
    group_types: dict[str, str] | None = None,
    shapes: tuple[ShapeBlock, ...] = (),
    notes: tuple[str, ...] = (),
    point_data: dict[str, np.ndarray] | None = None,
    cell_data: dict[str, np.ndarray] | None = None,
    cell_zone: np.ndarray | None = None,
    zone_names: tuple[str, ...] = (),
) -> MeshData:
    """A mesh from polygonal faces whose normals point out of their owner cell.

    ``neighbour`` is -1 on boundary faces; ``face_group`` indexes ``group_names`` (-1: no
    group; names need not be sorted, equal names are one group). ``n_cells`` defaults to one more than the largest cell id. Faces are reordered
    internal first where needed.

    :raises ValueError: arrays of inconsistent sizes or ids out of range (the reader turns
        it into a mesh-read error naming the file).
    """
    owner = np.asarray(owner)
    neighbour = np.asarray(neighbour)
    face_offsets = np.asarray(face_offsets, dtype=np.int64)
    n_faces = len(owner)
    if neighbour.shape != (n_faces,):
        raise ValueError(f"{len(neighbour)} neighbour entries for {n_faces} faces")
    if face_offsets.shape != (n_faces + 1,):
        raise ValueError(f"{len(face_offsets) - 1} faces listed for {n_faces} owner entries")
    if n_faces and (int(face_offsets[-1]) != len(face_points)
                    or fewest_points(face_offsets)[0] < 1):
        raise ValueError(f"face offsets must rise from 0 to the {len(face_points)} face "
                         f"points, got {int(face_offsets[0])} .. {int(face_offsets[-1])}")
    if n_cells is None:
        n_cells = int(max(owner.max(initial=-1), neighbour.max(initial=-1))) + 1
    if face_group is None:
        face_group = np.full(n_faces, -1, dtype=np.int32)
    group_names, face_group = sorted_groups(group_names, face_group)
    face_group = np.where(neighbour >= 0, -1, face_group).astype(np.int32)
    order = internal_first(neighbour)
    if order is not None:
        sizes = np.diff(face_offsets)[order]
        starts = face_offsets[:-1][order]
        new_offsets = np.zeros(n_faces + 1, dtype=np.int64)
        np.cumsum(sizes, out=new_offsets[1:])
        gather = np.repeat(starts - new_offsets[:-1], sizes) + np.arange(int(new_offsets[-1]))
        face_points, face_offsets = np.asarray(face_points)[gather], new_offsets
        owner, neighbour, face_group = owner[order], neighbour[order], face_group[order]
    cell_type = index_dtype(max(n_cells, 1))
    return MeshData(
        path=path, dim=dim, points=points, face_offsets=face_offsets,
        face_points=np.asarray(face_points).astype(index_dtype(max(len(points), 1)),
                                                   copy=False),
        owner=owner.astype(cell_type, copy=False), neighbour=neighbour.astype(cell_type),
        n_cells=n_cells, face_group=face_group, group_names=tuple(group_names),
        group_types=dict(group_types or {}), shapes=shapes, cell_zone=cell_zone,
        zone_names=tuple(zone_names), notes=tuple(notes), point_data=dict(point_data or {}),
        cell_data=dict(cell_data or {}))
