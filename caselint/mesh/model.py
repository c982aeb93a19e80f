"""The mesh as caselint's rules see it: volume cells, boundary groups, and lazily built
topology and geometry shared through one cached object.

All lengths are metres: coordinates are scaled once, when the :class:`Mesh` is built.
Topology (unique faces, owner and neighbour) is built on first access of any topology
attribute, geometry on first access of any geometry attribute; quality metrics are
memoised through :meth:`Mesh.cached`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import Any, Callable, TypeVar

import numpy as np

from caselint.mesh.celltypes import CELL_TYPES, TYPE_INDEX

T = TypeVar("T")


@dataclass(frozen=True)
class CellBlock:
    """Cells of one type; cell id = ``start`` + row of ``connectivity``."""

    type: str
    connectivity: np.ndarray
    start: int

    def __post_init__(self) -> None:
        if self.type not in TYPE_INDEX:
            raise ValueError(f"cell block type {self.type!r} is not one of {CELL_TYPES}")
        if self.connectivity.ndim != 2:
            raise ValueError(
                f"cell block {self.type!r}: connectivity must be 2-D, got shape "
                f"{self.connectivity.shape}"
            )

    @property
    def stop(self) -> int:
        """One past the last cell id of the block."""
        return self.start + len(self.connectivity)


@dataclass(frozen=True)
class BoundaryElements:
    """Boundary elements read from the file and the groups they belong to.

    ``vertices`` is ``(E, 4)`` with triangles repeating their last vertex (3-D), or
    ``(E, 2)`` edges (2-D). Group membership is a list of pairs: element ``element[i]``
    belongs to group ``group[i]`` (an index into ``Mesh.group_names``).
    """

    vertices: np.ndarray
    element: np.ndarray
    group: np.ndarray

    @classmethod
    def empty(cls, width: int) -> "BoundaryElements":
        """No boundary elements."""
        none = np.zeros(0, dtype=np.int64)
        return cls(np.zeros((0, width), dtype=np.int64), none, none.astype(np.int32))


class Mesh:
    """A volume mesh (or planar 2-D mesh) in metres, with lazy topology and geometry."""

    def __init__(
        self,
        *,
        path: str,
        points: np.ndarray,
        dim: int,
        cell_blocks: tuple[CellBlock, ...],
        group_names: tuple[str, ...] = (),
        boundary: BoundaryElements | None = None,
        notes: tuple[str, ...] = (),
        point_data: dict[str, np.ndarray] | None = None,
        cell_data: dict[str, np.ndarray] | None = None,
        file_cell_ids: np.ndarray | None = None,
        file_point_ids: np.ndarray | None = None,
    ) -> None:
        if dim not in (2, 3):
            raise ValueError(f"mesh dimension must be 2 or 3, got {dim}")
        if points.ndim != 2 or points.shape[1] != 3:
            raise ValueError(f"points must have shape (P, 3), got {points.shape}")
        expected = 0
        for block in cell_blocks:
            if block.start != expected:
                raise ValueError(
                    f"cell blocks must number cells consecutively: block {block.type!r} "
                    f"starts at {block.start}, expected {expected}"
                )
            expected = block.stop
        if list(group_names) != sorted(set(group_names)):
            raise ValueError(f"group names must be unique and sorted, got {group_names}")
        self.path = path
        self.points = points
        self.dim = dim
        self.cell_blocks = tuple(cell_blocks)
        self.group_names = tuple(group_names)
        self.boundary = boundary or BoundaryElements.empty(4 if dim == 3 else 2)
        #: What the reader changed or left out, in plain words (higher-order cells, ...).
        self.notes = tuple(notes)
        self.n_points = int(len(points))
        self.n_cells = int(expected)
        #: Numeric arrays the file carries per point, (P, ...) each, e.g. a velocity field
        #: from an earlier solution; values as stored (only coordinates are scaled).
        self.point_data = dict(point_data or {})
        #: Numeric arrays the file carries per volume cell, (C, ...) each in cell-id order.
        self.cell_data = dict(cell_data or {})
        for kind, data, n in (("point", self.point_data, self.n_points),
                              ("cell", self.cell_data, self.n_cells)):
            for name, values in data.items():
                if len(values) != n:
                    raise ValueError(f"{kind} data {name!r} has {len(values)} rows for "
                                     f"{n} {kind}s")
        # The file's id of each cell and point when they were renumbered
        # (:mod:`caselint.mesh.ordering`); None when the ids are the file's own.
        self._file_ids = {"cell": file_cell_ids, "point": file_point_ids}
        for kind, ids, n in (("cell", file_cell_ids, self.n_cells),
                             ("point", file_point_ids, self.n_points)):
            if ids is not None and ids.shape != (n,):
                raise ValueError(f"file {kind} ids have shape {ids.shape} for {n} {kind}s")
        self._memo: dict[str, Any] = {}

    def __repr__(self) -> str:
        counts = ", ".join(f"{n} {t}" for t, n in self.cell_counts.items())
        return f"Mesh({self.path!r}, {self.dim}-D, {counts}, groups={list(self.group_names)})"

    # -- cells ---------------------------------------------------------------
    @cached_property
    def cell_type(self) -> np.ndarray:
        """(C,) int8 index of each cell's type into ``CELL_TYPES``."""
        out = np.empty(self.n_cells, dtype=np.int8)
        for block in self.cell_blocks:
            out[block.start : block.stop] = TYPE_INDEX[block.type]
        return out

    def file_cell_ids(self, ids: np.ndarray | int | None = None) -> np.ndarray:
        """The ids the mesh file gives the cells ``ids`` (int64, same shape and order);
        all cells' when ``ids`` is None.

        Rules name cells to the user through this: caselint may renumber cells for speed.
        """
        return self._file_id("cell", ids, self.n_cells)

    def file_point_ids(self, ids: np.ndarray | int | None = None) -> np.ndarray:
        """The ids the mesh file gives the points ``ids`` (int64, same shape and order)."""
        return self._file_id("point", ids, self.n_points)

    def _file_id(self, kind: str, ids, n: int) -> np.ndarray:
        order = self._file_ids[kind]
        if ids is None:
            return np.arange(n, dtype=np.int64) if order is None else order
        ids = np.asarray(ids, dtype=np.int64)
        return ids.copy() if order is None else np.take(order, ids)

    def in_file_order(self, values: np.ndarray, kind: str = "cell") -> np.ndarray:
        """Per-cell (``kind="cell"``) or per-point ``values`` rearranged so that row ``i``
        belongs to the file's cell (point) ``i``: for comparing with other tools."""
        order = self._file_ids[kind]
        if order is None:
            return values
        out = np.empty_like(values)
        out[order] = values
        return out

    @property
    def renumbered(self) -> bool:
        """Whether cell or point ids differ from the file's (see :meth:`file_cell_ids`)."""
        return any(v is not None for v in self._file_ids.values())

    @property
    def cell_counts(self) -> dict[str, int]:
        """Number of cells per type name present."""
        counts: dict[str, int] = {}
        for block in self.cell_blocks:
            counts[block.type] = counts.get(block.type, 0) + len(block.connectivity)
        return counts

    @cached_property
    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Minimum and maximum corner (m) of the points used by cells."""
        used = np.zeros(self.n_points, dtype=bool)
        for block in self.cell_blocks:
            used[block.connectivity.ravel()] = True
        pts = self.points[used] if used.any() else self.points
        return pts.min(axis=0), pts.max(axis=0)

    # -- topology ------------------------------------------------------------
    @cached_property
    def _topology(self) -> Any:
        from caselint.mesh.topology import build_topology

        return build_topology(self)

    @property
    def faces(self) -> np.ndarray:
        """(F, 4) int64 face vertices oriented out of the owner; (F, 2) edges in 2-D."""
        return self._topology.faces

    @property
    def owner(self) -> np.ndarray:
        """(F,) int64 owner cell of each face (the lower cell id on internal faces)."""
        return self._topology.owner

    @property
    def neighbour(self) -> np.ndarray:
        """(F,) int64 neighbour cell of each face, -1 on boundary faces."""
        return self._topology.neighbour

    @property
    def n_faces(self) -> int:
        """Number of unique faces."""
        return int(len(self._topology.owner))

    @cached_property
    def boundary_faces(self) -> np.ndarray:
        """(B,) int64 ids of faces with no neighbour."""
        return np.flatnonzero(self.neighbour < 0)

    @property
    def nonmanifold_faces(self) -> np.ndarray:
        """Ids of faces whose vertex set is shared by more than two cells (or twice by one).

        Each such occurrence is kept as a separate face with no neighbour.
        """
        return self._topology.nonmanifold

    @property
    def clashing_faces(self) -> np.ndarray:
        """Ids of internal faces that both cells list the same way round.

        A consistent mesh lists a shared face in opposite directions from its two cells;
        a clash means one of the cells is inverted (or a cell is duplicated).
        """
        return self._topology.clashing

    @property
    def cell_faces(self) -> np.ndarray:
        """(C, K) face ids of each cell in template order (``celltypes.FACES``), -1 padding.

        K is the most faces of any cell type present; int32 below 2**31 faces.
        """
        return self._topology.cell_faces

    @property
    def face_group(self) -> np.ndarray:
        """(F,) int32 index into ``group_names``; -1 for internal faces and ungrouped ones."""
        return self._topology.face_group

    def group_faces(self, name: str) -> np.ndarray:
        """(k,) int64 ids of the faces of boundary group ``name``."""
        try:
            index = self.group_names.index(name)
        except ValueError:
            raise KeyError(
                f"{self.path}: no boundary group {name!r}; groups are {list(self.group_names)}"
            ) from None
        return np.flatnonzero(self.face_group == index)

    @property
    def unmatched_group_elements(self) -> dict[str, int]:
        """Per group, boundary elements of the file that match no cell face (non-zero only)."""
        return self._topology.unmatched

    @property
    def internal_group_elements(self) -> dict[str, int]:
        """Per group, boundary elements lying on internal faces (non-zero only)."""
        return self._topology.internal

    @property
    def multi_group_faces(self) -> int:
        """Number of faces named by more than one group (the first group name wins)."""
        return self._topology.multi_group

    # -- geometry ------------------------------------------------------------
    @cached_property
    def _geometry(self) -> Any:
        from caselint.mesh.geometry import compute_geometry

        return compute_geometry(self)

    @property
    def face_area_vectors(self) -> np.ndarray:
        """(F, 3) area vectors (m^2; in 2-D edge length times unit depth) out of the owner."""
        return self._geometry.area_vectors

    @cached_property
    def face_areas(self) -> np.ndarray:
        """(F,) face areas (m^2; 2-D: edge lengths, m, on unit depth)."""
        s = self.face_area_vectors
        return np.sqrt(s[:, 0] ** 2 + s[:, 1] ** 2 + s[:, 2] ** 2)

    @property
    def face_centroids(self) -> np.ndarray:
        """(F, 3) face centroids (m)."""
        return self._geometry.face_centroids

    @property
    def cell_volumes(self) -> np.ndarray:
        """(C,) signed cell volumes (m^3; 2-D: areas, m^2); <= 0 when inverted or degenerate."""
        return self._geometry.volumes

    @property
    def cell_centroids(self) -> np.ndarray:
        """(C,) cell centroids (m); the vertex mean where the volume vanishes."""
        return self._geometry.cell_centroids

    @property
    def cell_vertex_means(self) -> np.ndarray:
        """(C, 3) mean of each cell's vertices (m)."""
        return self._geometry.vertex_means

    # -- plain arrays (the mesh cache) ----------------------------------------
    def to_arrays(self) -> dict[str, np.ndarray]:
        """The mesh, and its topology and geometry when computed, as plain numpy arrays."""
        from caselint.mesh.arrays import mesh_to_arrays

        return mesh_to_arrays(self)

    @classmethod
    def from_arrays(cls, arrays, *, path: str | None = None) -> "Mesh":
        """The mesh of :meth:`to_arrays` (a dict or an open ``.npz``); ValueError if unusable."""
        from caselint.mesh.arrays import mesh_from_arrays

        return mesh_from_arrays(arrays, path=path)

    # -- memo ----------------------------------------------------------------
    def cached(self, key: str, compute: Callable[[], T]) -> T:
        """Return the value memoised under ``key``, computing it once with ``compute()``."""
        if key not in self._memo:
            self._memo[key] = compute()
        return self._memo[key]
