"""The mesh as rules see it: the read data plus everything derived from it, computed once.

A :class:`Mesh` wraps one immutable :class:`~caselint.mesh.model.MeshData` and computes
derived results on first use by calling the explicit functions of
:mod:`caselint.mesh.topology` and :mod:`caselint.mesh.geometry` (and, through
:meth:`Mesh.cached`, of :mod:`caselint.mesh.quality`, wall layers and rays). Results are
kept in the object's own memo; nothing writes into the data or into another object. A
mesh restored from the cache passes its stored geometry to the constructor.

All lengths are metres; cell ids, face ids and point ids are caselint's (see
:meth:`Mesh.file_cell_ids` for the ids of the file).
"""

from __future__ import annotations

import threading
from functools import cached_property
from typing import Any, Callable, TypeVar

import numpy as np

import caselint.mesh.topology as topology
from caselint.mesh.geometry import Geometry, compute_geometry
from caselint.mesh.model import MeshData

T = TypeVar("T")


class Mesh:
    """A read mesh with lazily derived topology and geometry (see the module docstring)."""

    def __init__(self, data: MeshData, *, geometry: Geometry | None = None,
                 known: dict[str, Any] | None = None,
                 keep: Callable[[str, Any], Any] | None = None, walks: Any = None) -> None:
        self.data = data
        # where kept results go: ``keep(key, value)`` returns what to hold (e.g. its arrays
        # moved to disk by a streamed check, caselint.partition.scratch); None: as they are
        self._keep = keep
        #: who walks across the mesh (gap rays, wall-layer stacks): None, the functions
        #: of :mod:`caselint.mesh.rays` and :mod:`caselint.mesh.wall_layers` on the whole
        #: mesh; else an object with their ``march``, ``cells_within`` and ``wall_layers``
        #: (and ``layer_cells`` of :mod:`caselint.rulekit.stacks`) that they call instead
        #: (:class:`caselint.partition.walks.PartitionWalks`)
        self.walks = walks
        # results computed elsewhere (e.g. partition by partition, caselint.partition),
        # under the keys the computing functions use
        self._memo: dict[str, Any] = dict(known or {})
        self._key_locks: dict[str, threading.RLock] = {}
        self._locks_lock = threading.Lock()
        if geometry is not None:
            if len(geometry.volumes) != data.n_cells or len(geometry.area_vectors) != data.n_faces:
                raise ValueError(f"geometry of {len(geometry.volumes)} cells and "
                                 f"{len(geometry.area_vectors)} faces for a mesh of "
                                 f"{data.n_cells} cells and {data.n_faces} faces")
            self._memo["geometry"] = geometry

    @property
    def on_disk(self) -> bool:
        """Whether its arrays are kept on disk (a streamed check): a walk over it waits
        for pages read back."""
        return self._keep is not None

    def __repr__(self) -> str:
        counts = ", ".join(f"{n} {t}" for t, n in self.cell_counts.items())
        return f"Mesh({self.path!r}, {self.dim}-D, {counts}, groups={list(self.group_names)})"

    # -- the data --------------------------------------------------------------------------
    path = property(lambda self: self.data.path, doc="The mesh file as named when read.")
    dim = property(lambda self: self.data.dim, doc="2 or 3.")
    points = property(lambda self: self.data.points, doc="(P, 3) coordinates (m).")
    owner = property(lambda self: self.data.owner,
                     doc="(F,) owner cell of each face (its normal points out of it).")
    neighbour = property(lambda self: self.data.neighbour,
                         doc="(F,) neighbour cell of each face, -1 on boundary faces.")
    face_offsets = property(lambda self: self.data.face_offsets, doc="(F + 1,) CSR offsets.")
    face_points = property(lambda self: self.data.face_points, doc="CSR point ids of faces.")
    face_group = property(lambda self: self.data.face_group,
                          doc="(F,) int32 index into ``group_names``; -1 internal or ungrouped.")
    group_names = property(lambda self: self.data.group_names, doc="Sorted group names.")
    notes = property(lambda self: self.data.notes, doc="What the reader changed, in words.")
    point_data = property(lambda self: self.data.point_data, doc="Per-point fields.")
    cell_data = property(lambda self: self.data.cell_data, doc="Per-cell fields.")
    n_cells = property(lambda self: self.data.n_cells, doc="Number of cells.")
    n_points = property(lambda self: self.data.n_points, doc="Number of points.")
    n_faces = property(lambda self: self.data.n_faces, doc="Number of faces.")
    n_internal = property(lambda self: self.data.n_internal,
                          doc="Number of internal faces (ids 0 .. n_internal - 1).")

    @property
    def cell_counts(self) -> dict[str, int]:
        """Number of cells per shape name (``polyhedron`` / ``polygon`` for general cells)."""
        return self.data.cell_counts()

    @cached_property
    def cell_shape(self) -> np.ndarray:
        """(C,) int8 index into ``CELL_TYPES`` where the shape is known, else -1."""
        return self.data.cell_shape()

    @cached_property
    def boundary_faces(self) -> np.ndarray:
        """(B,) int64 ids of faces with no neighbour (they follow the internal faces)."""
        return np.arange(self.n_internal, self.n_faces, dtype=np.int64)

    def group_faces(self, name: str) -> np.ndarray:
        """(k,) int64 ids of the faces of boundary group ``name``."""
        try:
            index = self.group_names.index(name)
        except ValueError:
            raise KeyError(f"{self.path}: no boundary group {name!r}; groups are "
                           f"{list(self.group_names)}") from None
        return np.flatnonzero(self.face_group == index)

    # -- ids of the file ----------------------------------------------------------------------
    def file_cell_ids(self, ids: np.ndarray | int | None = None) -> np.ndarray:
        """The ids the mesh file gives the cells ``ids`` (integers, int32 where the ids fit;
        same shape and order); all cells' when ``ids`` is None. Rules name cells to the user
        through this."""
        return _file_id(self.data.file_cell_ids, ids, self.n_cells)

    def file_point_ids(self, ids: np.ndarray | int | None = None) -> np.ndarray:
        """The ids the mesh file gives the points ``ids`` (integers, same shape and order)."""
        return _file_id(self.data.file_point_ids, ids, self.n_points)

    def in_file_order(self, values: np.ndarray, kind: str = "cell") -> np.ndarray:
        """Per-cell (or per-point) ``values`` rearranged so that row ``i`` belongs to the
        file's cell (point) ``i``: for comparing with other tools."""
        order = self.data.file_cell_ids if kind == "cell" else self.data.file_point_ids
        if order is None:
            return values
        out = np.empty_like(values)
        out[order] = values
        return out

    @property
    def renumbered(self) -> bool:
        """Whether cell or point ids differ from the file's (see :meth:`file_cell_ids`)."""
        return self.data.file_cell_ids is not None or self.data.file_point_ids is not None

    # -- what the reader found ----------------------------------------------------------
    @property
    def nonmanifold_faces(self) -> np.ndarray:
        """Ids of faces whose point set other faces have too (shared by more than two cells,
        or listed twice); each occurrence is kept as a separate face."""
        return self.cached("topology.duplicate_faces",
                           lambda: topology.duplicate_faces(self.data))

    @property
    def clashing_faces(self) -> np.ndarray:
        """Ids of internal faces that both cells list the same way round (element files)."""
        return self.data.report.clashing

    @property
    def unmatched_group_elements(self) -> dict[str, int]:
        """Per group, boundary elements of the file that match no cell face (non-zero only)."""
        return self.data.report.unmatched

    @property
    def internal_group_elements(self) -> dict[str, int]:
        """Per group, boundary elements lying on internal faces (non-zero only)."""
        return self.data.report.internal

    @property
    def multi_group_faces(self) -> int:
        """Number of faces named by more than one group (the first group name wins)."""
        return self.data.report.multi_group

    # -- derived connectivity --------------------------------------------------------------
    @property
    def cell_faces(self) -> topology.CellFaces:
        """The faces of every cell (CSR), see :func:`caselint.mesh.topology.cell_faces`."""
        return self.cached("topology.cell_faces", lambda: topology.cell_faces(self.data))

    def cell_face_table(self) -> np.ndarray:
        """(C, K) face ids of every cell, K the most faces of any cell, -1 padding."""
        return self.cached("topology.cell_face_table", lambda: self.cell_faces.table())

    def used_points(self) -> np.ndarray:
        """(P,) bool: which points lie on a face of some cell."""
        return self.cached("topology.used_points", lambda: topology.used_points(self.data))

    def face_point_table(self, faces: np.ndarray | None = None) -> np.ndarray:
        """(k, V) point ids of ``faces`` (all when None); shorter faces repeat their last."""
        return topology.face_point_table(self.data, faces)

    @cached_property
    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Minimum and maximum corner (m) of the points used by cells."""
        used = self.used_points() if self.n_faces else None
        # every point in use (the usual case): no gather of the points
        pts = self.points if used is None or used.all() else self.points[used]
        if not len(pts):
            pts = self.points
        return pts.min(axis=0), pts.max(axis=0)

    # -- geometry ------------------------------------------------------------------------
    @property
    def geometry(self) -> Geometry:
        """Face and cell geometry (:func:`caselint.mesh.geometry.compute_geometry`)."""
        return self.cached("geometry", lambda: compute_geometry(self.data, self.cell_faces))

    @property
    def face_area_vectors(self) -> np.ndarray:
        """(F, 3) area vectors (m^2; 2-D: edge length times unit depth) out of the owner."""
        return self.geometry.area_vectors

    @property
    def face_areas(self) -> np.ndarray:
        """(F,) face areas (m^2; 2-D: edge lengths, m, on unit depth)."""
        def compute() -> np.ndarray:
            s = self.face_area_vectors
            return np.sqrt(s[:, 0] ** 2 + s[:, 1] ** 2 + s[:, 2] ** 2)

        return self.cached("geometry.face_areas", compute)

    @property
    def face_centroids(self) -> np.ndarray:
        """(F, 3) face centroids (m)."""
        return self.geometry.face_centroids

    @property
    def cell_volumes(self) -> np.ndarray:
        """(C,) signed cell volumes (m^3; 2-D: areas, m^2); <= 0 when inverted or degenerate."""
        return self.geometry.volumes

    @property
    def cell_centroids(self) -> np.ndarray:
        """(C, 3) cell centroids (m); the pyramid apex where the volume vanishes."""
        return self.geometry.cell_centroids

    # -- memo ----------------------------------------------------------------------------
    def cached(self, key: str, compute: Callable[[], T]) -> T:
        """The value kept under ``key``, computed once with ``compute()``, also when
        several threads ask for it at once (the worker threads of a kernel may be the
        first to read the geometry): one computes, the others wait for its result."""
        memo = self._memo
        if key in memo:
            return memo[key]
        # one lock per key: a computation may start threads that ask for other keys
        with self._locks_lock:
            lock = self._key_locks.setdefault(key, threading.RLock())
        with lock:
            if key not in memo:
                value = compute()
                memo[key] = value if self._keep is None else self._keep(key, value)
        return memo[key]

    def provided(self, key: str, compute: Callable[[], T]) -> T:
        """The value given under ``key`` when the mesh was made (``known``), else
        ``compute()``, not kept: for results read once, too large to keep for nothing."""
        if key in self._memo:
            return self._memo[key]
        return compute()

    def has(self, key: str) -> bool:
        """Whether the value under ``key`` has been computed."""
        return key in self._memo


def _file_id(order: np.ndarray | None, ids, n: int) -> np.ndarray:
    if ids is None:
        return np.arange(n, dtype=np.int64) if order is None else order
    ids = np.asarray(ids, dtype=np.int64)
    return ids.copy() if order is None else np.take(order, ids)
