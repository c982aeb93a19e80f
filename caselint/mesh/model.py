"""The mesh as data: points, polygonal faces with owner and neighbour, groups and zones.

Every reader produces a :class:`MeshData`, whatever the file held: element files
(tetrahedra, hexahedra, ...) are converted to faces when read (:mod:`caselint.mesh.build`),
face-based files arrive in this form. It is immutable plain data; everything derived from
it (cell-face lists, geometry, metrics, wall layers) is computed by functions that take it
as input, and the :class:`~caselint.mesh.analysis.Mesh` that rules see keeps those results.

Conventions (all lengths in metres, scaled once when read):

- faces are polygons in CSR form: face ``f`` has points
  ``face_points[face_offsets[f]:face_offsets[f + 1]]``, ordered so that their right-hand
  normal points out of the owner cell (3-D); in 2-D a face is an edge of two points whose
  normal ``(dy, -dx)`` points out of the owner;
- internal faces come first: ``neighbour[f] >= 0`` exactly for ``f < n_internal``;
  boundary faces have ``neighbour == -1`` and a group index in ``face_group`` (-1: none);
- cells are numbered ``0 .. n_cells - 1`` and defined by their faces;
- where the file said a cell's shape (tetra, hexahedron, wedge, pyramid, triangle, quad),
  :attr:`MeshData.shapes` keeps its corner nodes in meshio/VTK order, for the metrics that
  are defined per shape; other cells are general polyhedra (polygons in 2-D).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from caselint.mesh.celltypes import CELL_TYPES, N_NODES, TYPE_INDEX
from caselint.mesh.geometry import chunks

#: ``MeshData.cell_shape`` of a cell whose shape is not one of ``CELL_TYPES``.
POLYHEDRON = -1


@dataclass(frozen=True, eq=False)
class ShapeBlock:
    """Cells of one known shape: their ids and corner nodes (meshio/VTK node order)."""

    type: str
    cells: np.ndarray
    connectivity: np.ndarray

    def __post_init__(self) -> None:
        if self.type not in TYPE_INDEX:
            raise ValueError(f"shape {self.type!r} is not one of {CELL_TYPES}")
        k = N_NODES[self.type]
        if self.connectivity.ndim != 2 or self.connectivity.shape[1] != k:
            raise ValueError(f"{self.type} corners must have shape (n, {k}), got "
                             f"{self.connectivity.shape}")
        if self.cells.shape != (len(self.connectivity),):
            raise ValueError(f"{self.type}: {len(self.cells)} cell ids for "
                             f"{len(self.connectivity)} cells")

    @cached_property
    def cells_ascend(self) -> bool:
        """Whether the cell ids ascend (one pass over them, the first time asked)."""
        return bool(np.all(self.cells[1:] > self.cells[:-1]))


@dataclass(frozen=True, eq=False)
class ReadReport:
    """What building the faces found about the file's consistency (not geometry).

    ``nonmanifold``: ids of faces whose point set is shared by more than two cells (each
    occurrence kept as a boundary face), or None when the reader did not look (face-based
    files: found on demand by :func:`caselint.mesh.topology.duplicate_faces`).
    ``clashing``: internal faces that both cells list the same way round (element files:
    one of the cells is inverted); the geometry gives each cell its own side.
    ``unmatched`` / ``internal``: per group, boundary elements of the file that lie on no
    cell face / on an internal face (non-zero counts only). ``multi_group``: faces named by
    more than one group (the first group name wins).
    """

    nonmanifold: np.ndarray | None = None
    clashing: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    unmatched: dict[str, int] = field(default_factory=dict)
    internal: dict[str, int] = field(default_factory=dict)
    multi_group: int = 0


#: Entries a range check takes at a time: its temporaries stay small, and the passes it
#: makes (least and greatest) read a part of a large array, perhaps on disk
#: (:mod:`caselint.partition.scratch`), once from memory rather than the whole twice.
CHECK_PART = 1 << 22


def value_span(values: np.ndarray) -> tuple[int, int]:
    """The least and the greatest of ``values`` (integers, at least one)."""
    spans = [(int(values[sl].min()), int(values[sl].max()))
             for sl in chunks(len(values), CHECK_PART)]
    return min(s[0] for s in spans), max(s[1] for s in spans)


def fewest_points(face_offsets: np.ndarray) -> tuple[int, int]:
    """The fewest points of any face and the first face with that few, from the face
    offsets (at least one face)."""
    fewest, face = None, -1
    for sl in chunks(len(face_offsets) - 1, CHECK_PART):
        sizes = np.diff(face_offsets[sl.start:sl.stop + 1])
        k = int(np.argmin(sizes))
        if fewest is None or int(sizes[k]) < fewest:
            fewest, face = int(sizes[k]), sl.start + k
    return fewest, face


@dataclass(frozen=True, eq=False)
class MeshData:
    """A face-based volume mesh (or planar 2-D mesh) in metres; see the module docstring."""

    path: str
    dim: int
    points: np.ndarray
    face_offsets: np.ndarray
    face_points: np.ndarray
    owner: np.ndarray
    neighbour: np.ndarray
    n_cells: int
    face_group: np.ndarray
    group_names: tuple[str, ...] = ()
    #: Patch or zone type the file declares per group (``wall``, ``symmetry``, ...), if any.
    group_types: dict[str, str] = field(default_factory=dict)
    shapes: tuple[ShapeBlock, ...] = ()
    #: (C,) int32 zone index of each cell into ``zone_names``, or None (one unnamed zone).
    cell_zone: np.ndarray | None = None
    zone_names: tuple[str, ...] = ()
    #: What the reader changed or left out, in plain words (higher-order cells, ...).
    notes: tuple[str, ...] = ()
    #: Numeric arrays per point / per cell from the file (e.g. a velocity field), as stored.
    point_data: dict[str, np.ndarray] = field(default_factory=dict)
    cell_data: dict[str, np.ndarray] = field(default_factory=dict)
    #: The file's id of each cell / point where caselint renumbered them, else None.
    file_cell_ids: np.ndarray | None = None
    file_point_ids: np.ndarray | None = None
    report: ReadReport = field(default_factory=ReadReport)

    def __post_init__(self) -> None:
        n_faces = len(self.owner)
        if self.dim not in (2, 3):
            raise ValueError(f"mesh dimension must be 2 or 3, got {self.dim}")
        if self.points.ndim != 2 or self.points.shape[1] != 3:
            raise ValueError(f"points must have shape (P, 3), got {self.points.shape}")
        if self.face_offsets.shape != (n_faces + 1,) or (n_faces and self.face_offsets[0] != 0):
            raise ValueError(f"face offsets must have {n_faces + 1} entries starting at 0, got "
                             f"shape {self.face_offsets.shape}")
        if int(self.face_offsets[-1]) != len(self.face_points):
            raise ValueError(f"face offsets end at {int(self.face_offsets[-1])} but there are "
                             f"{len(self.face_points)} face points")
        for name in ("neighbour", "face_group"):
            if getattr(self, name).shape != (n_faces,):
                raise ValueError(f"{name} has shape {getattr(self, name).shape} for {n_faces} "
                                 "faces")
        if list(self.group_names) != sorted(set(self.group_names)):
            raise ValueError(f"group names must be unique and sorted, got {self.group_names}")
        for kind, data, n in (("point", self.point_data, len(self.points)),
                              ("cell", self.cell_data, self.n_cells)):
            for name, values in data.items():
                if len(values) != n:
                    raise ValueError(f"{kind} data {name!r} has {len(values)} rows for "
                                     f"{n} {kind}s")
        for kind, ids, n in (("cell", self.file_cell_ids, self.n_cells),
                             ("point", self.file_point_ids, len(self.points))):
            if ids is not None and ids.shape != (n,):
                raise ValueError(f"file {kind} ids have shape {ids.shape} for {n} {kind}s")
        if self.cell_zone is not None and self.cell_zone.shape != (self.n_cells,):
            raise ValueError(f"cell zones have shape {self.cell_zone.shape} for "
                             f"{self.n_cells} cells")
        self._check_ranges(n_faces)

    def _check_ranges(self, n_faces: int) -> None:
        """Owner, neighbour and face points refer to existing cells and points; internal
        faces come first."""
        if not n_faces:
            return
        fewest, face = fewest_points(self.face_offsets)
        if fewest < 1:
            raise ValueError(f"face {face} has no points")
        n_int = sum(int(np.count_nonzero(self.neighbour[sl] >= 0))
                    for sl in chunks(n_faces, CHECK_PART))
        if n_int and value_span(self.neighbour[:n_int])[0] < 0:
            raise ValueError("internal faces (with a neighbour) must come before boundary faces")
        for name, values, lo, hi in (("owner", self.owner, 0, self.n_cells),
                                     ("neighbour", self.neighbour, -1, self.n_cells),
                                     ("face points", self.face_points, 0, self.n_points)):
            if not len(values):
                continue
            low, high = value_span(values)
            if low < lo or high >= hi:
                raise ValueError(f"{name} refer to {low if low < lo else high}; expected "
                                 f"{lo} .. {hi - 1}")

    @property
    def n_points(self) -> int:
        """Number of points."""
        return int(len(self.points))

    @property
    def n_faces(self) -> int:
        """Number of faces."""
        return int(len(self.owner))

    @cached_property
    def n_internal(self) -> int:
        """Number of internal faces (they come first)."""
        return int(np.count_nonzero(self.neighbour >= 0))

    def face_sizes(self) -> np.ndarray:
        """(F,) number of points of each face."""
        return np.diff(self.face_offsets)

    def cell_shape(self) -> np.ndarray:
        """(C,) int8 index of each cell's shape into ``CELL_TYPES``; :data:`POLYHEDRON` else."""
        out = np.full(self.n_cells, POLYHEDRON, dtype=np.int8)
        for block in self.shapes:
            out[block.cells] = TYPE_INDEX[block.type]
        return out

    def cell_counts(self) -> dict[str, int]:
        """Number of cells per shape name present (``polyhedron`` / ``polygon`` for the rest)."""
        counts: dict[str, int] = {}
        for block in self.shapes:
            counts[block.type] = counts.get(block.type, 0) + len(block.cells)
        rest = self.n_cells - sum(counts.values())
        if rest:
            counts["polyhedron" if self.dim == 3 else "polygon"] = rest
        return counts
