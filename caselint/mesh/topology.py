"""Connectivity derived from a :class:`~caselint.mesh.model.MeshData`: the faces of each
cell, the points of faces and cells, and faces that share one point set.

Plain functions of the mesh data (no state); :class:`caselint.mesh.analysis.Mesh` keeps
their results. Everything is vectorised over faces; the per-cell lists are built by one
stable sort of the face-cell incidences (cells are met in face order, so each cell's faces
come in ascending face id), or on large meshes by the compiled counting sort of
:mod:`caselint.mesh.kernels.face_checks` (the same lists).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.kernels import compiled, in_threads

if TYPE_CHECKING:
    from caselint.mesh.model import MeshData


@dataclass(frozen=True, eq=False)
class CellFaces:
    """The faces of every cell in CSR form: cell ``c`` has ``faces[offsets[c]:offsets[c+1]]``.

    ``owned[i]`` says whether the cell owns ``faces[i]`` (the face normal points out of it).
    """

    offsets: np.ndarray
    faces: np.ndarray
    owned: np.ndarray

    def counts(self) -> np.ndarray:
        """(C,) number of faces of each cell."""
        return np.diff(self.offsets)

    def of(self, cells: np.ndarray) -> np.ndarray:
        """The faces of ``cells``, cell after cell in the order given."""
        cells = np.asarray(cells)
        starts = self.offsets[cells]
        counts = self.offsets[cells + 1] - starts
        ends = np.cumsum(counts)
        total = int(ends[-1]) if ends.size else 0
        slots = np.repeat(starts - ends + counts, counts) + np.arange(total)
        return np.take(self.faces, slots)

    def table(self) -> np.ndarray:
        """(C, K) face ids of each cell, K its most faces, padded with -1 (read-only)."""
        counts = self.counts()
        width = int(counts.max(initial=0))
        if len(counts) and int(counts.min()) == width:
            # every cell has K faces (a mesh of one shape): the lists are the table, no copy
            table = self.faces.reshape(len(counts), width)
            table.flags.writeable = False
            return table
        out = np.full((len(counts), width), -1, dtype=self.faces.dtype)
        rank = np.arange(len(self.faces)) - np.repeat(self.offsets[:-1], counts)
        out[np.repeat(np.arange(len(counts)), counts), rank] = self.faces
        out.flags.writeable = False
        return out


def cell_faces(mesh: "MeshData") -> CellFaces:
    """Each cell's faces, ascending by face id, and whether the cell owns each."""
    n_int = mesh.n_internal
    dtype = np.int32 if mesh.n_faces < 2**31 else np.int64
    kernel = compiled("face_checks", mesh.n_cells)
    if kernel is not None:
        return CellFaces(*kernel.cell_faces(mesh.owner, mesh.neighbour, n_int, mesh.n_cells,
                                            np.empty(0, dtype=dtype)))
    cells = np.concatenate([mesh.owner, mesh.neighbour[:n_int]])
    ids = np.concatenate([np.arange(mesh.n_faces), np.arange(n_int)])
    order = np.argsort(cells, kind="stable")
    offsets = np.zeros(mesh.n_cells + 1, dtype=np.int64)
    np.cumsum(np.bincount(cells, minlength=mesh.n_cells), out=offsets[1:])
    return CellFaces(offsets, ids[order].astype(dtype), order < mesh.n_faces)


def face_point_table(mesh: "MeshData", faces: np.ndarray | None = None) -> np.ndarray:
    """(k, V) point ids of ``faces`` (all when None), V their most points; a shorter face
    repeats its last point (harmless for extents, minima and maxima)."""
    offsets = mesh.face_offsets
    if faces is None:
        faces = np.arange(mesh.n_faces)
    faces = np.asarray(faces, dtype=np.int64)
    start, size = offsets[faces], offsets[faces + 1] - offsets[faces]
    width = int(size.max(initial=1))
    slot = np.minimum(np.arange(width)[None, :], np.maximum(size, 1)[:, None] - 1)
    if not len(mesh.face_points):
        return np.zeros((len(faces), width), dtype=np.int64)
    return mesh.face_points[np.minimum(start[:, None] + slot, len(mesh.face_points) - 1)]


def face_point_mean(mesh: "MeshData", values: np.ndarray, faces: np.ndarray) -> np.ndarray:
    """Mean over each face's points of the per-point ``values`` (1-D or (P, k))."""
    offsets = mesh.face_offsets
    faces = np.asarray(faces, dtype=np.int64)
    size = offsets[faces + 1] - offsets[faces]
    if not len(faces):
        return np.asarray(values)[:0]
    starts = np.concatenate([[0], np.cumsum(size)[:-1]])
    gather = np.repeat(offsets[faces] - starts, size) + np.arange(int(size.sum()))
    picked = np.asarray(values)[mesh.face_points[gather]]
    total = np.add.reduceat(picked, starts, axis=0)
    return total / (size if picked.ndim == 1 else size[:, None])


def used_points(mesh: "MeshData") -> np.ndarray:
    """(P,) bool: which points lie on a face of some cell."""
    kernel = compiled("face_checks", mesh.n_cells)
    if kernel is not None:
        return kernel.used_points(mesh.face_points, mesh.n_points)
    used = np.zeros(mesh.n_points, dtype=bool)
    used[mesh.face_points] = True
    return used


def cell_point_table(mesh: "MeshData", faces_of_cells: CellFaces,
                     cells: np.ndarray) -> np.ndarray:
    """(k, W) point ids of ``cells`` through their faces (repeats allowed, padded with
    repeats), for extents and sets of a few cells at a time."""
    cells = np.asarray(cells, dtype=np.int64)
    off = faces_of_cells.offsets
    count = off[cells + 1] - off[cells]
    width = int(count.max(initial=1))
    slot = np.minimum(np.arange(width)[None, :], np.maximum(count, 1)[:, None] - 1)
    faces = faces_of_cells.faces[np.minimum(off[cells][:, None] + slot,
                                            max(len(faces_of_cells.faces) - 1, 0))]
    pts = face_point_table(mesh, faces.ravel())
    return pts.reshape(len(cells), -1)


def cells_of_points(mesh: "MeshData", marked: np.ndarray) -> np.ndarray:
    """Sorted ids of the cells with a face touching a point where ``marked`` (P,) is True."""
    hit = marked[mesh.face_points]
    faces = np.flatnonzero(np.logical_or.reduceat(hit, mesh.face_offsets[:-1])
                           if len(hit) else np.zeros(mesh.n_faces, dtype=bool))
    faces = faces[np.diff(mesh.face_offsets)[faces] > 0]
    cells = np.concatenate([mesh.owner[faces], mesh.neighbour[faces]])
    return np.unique(cells[cells >= 0]).astype(np.int64)


def duplicate_faces(mesh: "MeshData") -> np.ndarray:
    """Sorted ids of faces whose point set another face has too (a face shared by more
    than two cells, or listed twice); the reader's finding where it made the faces.

    Two passes keep the memory to a few numbers per face: a 64-bit key of each face's
    sorted points (made in chunks of :data:`KEY_CHUNK` faces), then the exact comparison
    of the point sets, only among the faces whose keys are equal (every duplicate is one
    of them, so the result is exact)."""
    known = mesh.report.nonmanifold
    if known is not None:
        return known
    keys = point_set_keys(mesh)
    # the keys that occur more than once, from a sorted copy (numpy sorts 64-bit keys
    # with SIMD: a tenth of the time of an argsort, and no array of face ids)
    sk = np.sort(keys)
    repeated = np.unique(sk[1:][sk[1:] == sk[:-1]])
    del sk
    candidates = np.flatnonzero(np.isin(keys, repeated)) if len(repeated) else \
        np.zeros(0, dtype=np.int64)
    del keys
    return _same_point_sets(mesh, candidates)


#: Faces per chunk of :func:`point_set_keys`.
KEY_CHUNK = 1 << 20


def point_set_keys(mesh: "MeshData") -> np.ndarray:
    """(F,) uint64: a key of each face's sorted point ids and size (equal point sets, equal
    keys), made in chunks of :data:`KEY_CHUNK` faces, or by the compiled kernel
    (:func:`caselint.mesh.kernels.face_checks.point_set_keys`) on threads."""
    keys = np.empty(mesh.n_faces, dtype=np.uint64)
    kernel = compiled("face_checks", mesh.n_cells)
    if kernel is not None:
        in_threads(lambda p: kernel.point_set_keys(mesh.face_offsets, mesh.face_points,
                                                   p.start, p.stop, keys), mesh.n_faces)
        return keys
    for start in range(0, mesh.n_faces, KEY_CHUNK):
        faces = np.arange(start, min(start + KEY_CHUNK, mesh.n_faces))
        keys[start:start + len(faces)] = _point_set_keys(mesh, faces)
    return keys


def _point_set_keys(mesh: "MeshData", faces: np.ndarray) -> np.ndarray:
    """A 64-bit key of the sorted point ids and the size of each of ``faces``."""
    sizes = mesh.face_offsets[faces + 1] - mesh.face_offsets[faces]
    out = np.empty(len(faces), dtype=np.uint64)
    for size in np.unique(sizes):
        pick = np.flatnonzero(sizes == size)
        rows = np.sort(face_point_table(mesh, faces[pick]), axis=1).astype(np.uint64)
        h = np.full(len(pick), np.uint64(size), dtype=np.uint64)
        for column in rows.T:
            h = _mixed(h * np.uint64(0x100000001B3) + column)
        out[pick] = h
    return out


def _mixed(h: np.ndarray) -> np.ndarray:
    """A 64-bit finaliser (splitmix64's): every input bit moves every output bit."""
    h = (h ^ (h >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    h = (h ^ (h >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return h ^ (h >> np.uint64(31))


def _same_point_sets(mesh: "MeshData", faces: np.ndarray) -> np.ndarray:
    """Those of ``faces`` whose point set another of them has (sorted ids)."""
    sizes = mesh.face_offsets[faces + 1] - mesh.face_offsets[faces]
    out = []
    for size in np.unique(sizes):
        group = faces[sizes == size]
        if len(group) < 2:
            continue
        keys = np.sort(face_point_table(mesh, group), axis=1)
        order = np.lexsort(keys.T[::-1])
        sk = keys[order]
        same = np.all(sk[1:] == sk[:-1], axis=1)
        flagged = np.zeros(len(group), dtype=bool)
        flagged[order[1:][same]] = True
        flagged[order[:-1][same]] = True
        out.append(group[flagged])
    return np.sort(np.concatenate(out)) if out else np.zeros(0, dtype=np.int64)