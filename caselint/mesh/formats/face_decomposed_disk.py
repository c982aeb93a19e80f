"""A decomposed case merged into whole-mesh arrays on disk, one processor folder at a time.

The same mesh as :func:`caselint.mesh.formats.face_decomposed.read_decomposed` with its
addressing files (the undecomposed mesh, array for array), for a case too large to hold
in memory: the merged arrays are made by ``scratch`` (a
:class:`caselint.partition.scratch.Scratch`: memory-mapped files) and filled part by part,
so that only two processor folders' arrays are in memory at a time: the one being placed
and the next, read meanwhile on a thread (:mod:`caselint.mesh.formats.read_ahead`; the
writes held, below, give up as much). The whole mesh's counts come first, from the
addressing files alone. Then two passes over the folders:

- the first reads each folder whole (:func:`caselint.mesh.formats.face_folder.read_folder_mesh`:
  every file, checked as a mesh folder) and its three addressing files, and places points,
  owner, neighbour and face sizes (whose running sum gives the face offsets); it keeps
  each folder's patches, and what the second pass checks its reads against
  (:class:`_FirstRead`);
- the second reads of each folder only its ``faces`` file, its point and face addressing,
  and, when the first read found cell zones, its ``cellZones`` and cell addressing (not
  its points, owner, neighbour or boundary), and places the face points, the patches (from
  the first pass) and the zones. What it reads again must be as first read (the length
  and CRC-32 of each array; face points within the folder's points): a folder changed in
  between is a :class:`~caselint.errors.MeshReadError`, not a mesh made of two.

The point and face addressing are thus read three times (counts, first and second
pass), the cell addressing twice (three times for a folder with zones): each read is of
one folder's files, so memory stays at one folder's worth (keeping them between reads
would hold the whole mesh's, about 2 GB at 100M cells).

Ids are stored in the narrowest type that holds them (as
:func:`caselint.mesh.build.mesh_from_faces` would make them), so that nothing is
converted afterwards.

Each processor folder's ids are spread over the whole numbering, so each folder writes
into nearly every page of the merged arrays; written folder by folder, every page was
dirtied, written back to disk and dirtied again by the next folder (a 100M-cell case in
64 folders wrote 0.5 TB in the first six minutes, for 14 GB of arrays). The writes are
therefore held in memory (:class:`Pending`) up to the scratch's :attr:`spare
<caselint.partition.scratch.Scratch.spare>` bytes (the memory of one part, which the
check holds later but not while it reads), and then made together, in the order of the
pages they fall on: each page is dirtied about once per batch of folders (that case: 0.13
TB written back by the merge instead of about 0.8 TB, 6.3 min instead of about 8.5).
Where several folders write the same entry (points on the boundary between processors)
the last folder's value is kept, as when they were written one after the other.

A case without addressing files is not merged this way (its parts are joined by matching
points across processor faces, which needs every part at once); it is read in memory or
refused (:func:`caselint.mesh.limits.check_folder_memory`).
"""

from __future__ import annotations

import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.build import index_dtype
from caselint.mesh.kernels import compiled
from caselint.mesh.formats.face_decomposed import (
    _addressing, _check_processor_patches, _patch_names, _ramp, _ranges, _zones,
)
from caselint.mesh.formats.face_folder import (
    FolderMesh, read_folder_faces, read_folder_mesh, read_zones,
)
from caselint.mesh.formats.face_lists import find_file, open_list_file, read_labels
from caselint.mesh.formats.read_ahead import read_ahead


def has_addressing(folders: list[Path]) -> bool:
    """Whether every processor folder has its three addressing files (plain or gzip)."""
    return all(find_file(folder, name) is not None for folder in folders
               for name in ("pointProcAddressing", "faceProcAddressing", "cellProcAddressing"))


def merged_on_disk(case: Path, folders: list[Path], scratch,
                   done: Callable[[int], None] | None = None) -> FolderMesh:
    """The whole mesh of the decomposed ``case`` (with addressing files) in arrays made by
    ``scratch`` (module docstring); ``done(n)`` is told of each folder read (two per
    folder)."""
    name = str(case)
    n_points, n_faces, n_cells = _sizes(folders)
    cell_dtype, point_dtype = index_dtype(max(n_cells, 1)), index_dtype(max(n_points, 1))
    # every face placed once and every point at least once (checked after the first
    # pass), so points and owner are written whole and need no filling
    points = scratch.empty("points", (n_points, 3), np.float64)
    owner = scratch.empty("owner", n_faces, cell_dtype)
    neighbour = scratch.full("neighbour", n_faces, -1, cell_dtype)
    offsets = scratch.empty("face_offsets", n_faces + 1, np.int64)
    sizes = offsets[1:]                         # sizes first, summed in place below
    placed_marks = Placed(n_faces, n_points)
    spare = getattr(scratch, "spare", None)
    budget = None if spare is None else max(spare - placed_marks.nbytes, 0)
    pending = Pending(budget)
    parts, firsts = [], []
    for folder, (part, (point_ids, face_ids, cell_ids)) in zip(
            folders, read_ahead(_first_read, folders)):
        # the next folder, read meanwhile, weighs about as much as this one
        pending.spare = _less(budget, part.points, part.face_offsets, part.face_points,
                              part.owner, part.neighbour, point_ids, face_ids, cell_ids)
        parts.append(_shell(part))
        firsts.append(_FirstRead.of(part, point_ids, face_ids, cell_ids))
        face, kept = np.abs(face_ids) - 1, face_ids > 0
        placed = face[kept]
        inside = kept & (part.neighbour >= 0)
        pending.put(points, point_ids, part.points)
        pending.put(owner, placed, cell_ids[part.owner[kept]])
        pending.put(neighbour, face[inside], cell_ids[part.neighbour[inside]])
        pending.put(neighbour, face[~kept], cell_ids[part.owner[~kept]])
        pending.put(sizes, placed, np.diff(part.face_offsets)[kept].astype(np.int32))
        placed_marks.add(placed, point_ids)
        del part, point_ids, face_ids, cell_ids, face, kept, inside, placed
        if done is not None:
            done(1)
    pending.flush()
    _check_processor_patches(case, parts)
    placed_marks.check(name)
    del placed_marks
    names = _patch_names(parts)
    offsets[0] = 0
    np.cumsum(sizes, out=sizes)
    face_points = scratch.empty("face_points", int(offsets[-1]), point_dtype)
    group = scratch.full("face_group", n_faces, -1, np.int32)
    zone_cells: dict[str, list[np.ndarray]] = {}
    again = read_ahead(_second_read, zip(folders, parts, firsts))
    for part, (local_offsets, local_points, point_ids, face_ids, zones) in zip(parts, again):
        pending.spare = _less(budget, local_offsets, local_points, point_ids, face_ids)
        pending.put(face_points, *face_point_writes(local_offsets, local_points, face_ids,
                                                    offsets, point_ids, point_dtype))
        for patch in part.patches:
            if patch.type != "processor":
                ids = face_ids[patch.start:patch.start + patch.size] - 1
                pending.put(group, ids, np.full(len(ids), names.index(patch.name), np.int32))
        for zone, cells in zones:
            zone_cells.setdefault(zone, []).append(cells)
        del local_offsets, local_points, point_ids, face_ids, zones
        if done is not None:
            done(1)
    pending.flush()
    return FolderMesh(name, points, offsets, face_points, owner, neighbour, n_cells,
                      _ranges(name, parts, names, group, neighbour), _zones(zone_cells))


@dataclass(frozen=True)
class _FirstRead:
    """What the second pass checks its reads of a folder against, from the first: the
    folder's point count, its zone names, and the length and CRC-32 of each array it reads
    again but its face points (face offsets, addressing, zone cells), so that a folder
    changed between the passes is refused rather than merged from two different meshes;
    its face points are only checked to lie within its points."""

    n_points: int
    zones: tuple[str, ...]
    sums: dict[str, tuple[int, int]]

    @classmethod
    def of(cls, part: FolderMesh, point_ids: np.ndarray, face_ids: np.ndarray,
           cell_ids: np.ndarray) -> _FirstRead:
        arrays = {"faces": part.face_offsets, "pointProcAddressing": point_ids,
                  "faceProcAddressing": face_ids}
        if part.zones:                           # cell ids: needed again for zones only
            arrays["cellProcAddressing"] = cell_ids
            arrays["cellZones"] = _joined_cells(part.zones)
        return cls(len(part.points), tuple(zone for zone, _ in part.zones),
                   {file: _sum(array) for file, array in arrays.items()})

    def check(self, folder: Path, file: str, array: np.ndarray) -> None:
        """Refuse ``array`` (read again from ``file``) unless it is as first read."""
        if _sum(array) != self.sums[file]:
            raise _changed(folder, file)

    def check_points(self, folder: Path, face_points: np.ndarray) -> None:
        """Refuse face points beyond the points of the folder as first read."""
        if len(face_points) and (int(face_points.min()) < 0
                                 or int(face_points.max()) >= self.n_points):
            raise _changed(folder, "faces")

    def again(self, folder: Path, file: str) -> np.ndarray:
        """The addressing ``file`` read again (0-based; faces signed, 1-based), checked to
        be as first read."""
        lf = open_list_file(folder, file, required=False)
        if lf is None:
            raise MeshReadError(str(folder), "an addressing file went missing while the case "
                                             "was read")
        values = read_labels(lf, lf.start, lf.path.name)[0].astype(np.int64)
        self.check(folder, file, values)
        return values

    def zones_again(self, folder: Path, n_cells: int) -> list[tuple[str, np.ndarray]]:
        """The folder's cell zones read again, their cells in the undecomposed numbering
        (none read when the first read found none)."""
        if not self.zones:
            return []
        lf = open_list_file(folder, "cellZones", required=False)
        zones = read_zones(lf, n_cells) if lf is not None else []
        if tuple(zone for zone, _ in zones) != self.zones:
            raise _changed(folder, "cellZones")
        self.check(folder, "cellZones", _joined_cells(zones))
        cell_ids = self.again(folder, "cellProcAddressing")
        return [(zone, cell_ids[cells]) for zone, cells in zones]


def _sum(array: np.ndarray) -> tuple[int, int]:
    """Length and CRC-32 of ``array``'s values as int64."""
    return len(array), zlib.crc32(np.ascontiguousarray(array, dtype=np.int64))


def _joined_cells(zones: list[tuple[str, np.ndarray]]) -> np.ndarray:
    return np.concatenate([cells for _, cells in zones])


def _changed(folder: Path, file: str) -> MeshReadError:
    return MeshReadError(str(folder), f"{file} changed while the case was read (the merge on "
                                      "disk reads each processor folder twice): check the "
                                      "case again once nothing writes to it")


class Placed:
    """Marks of the faces and points of the undecomposed mesh the addressing files place,
    in memory (a byte per face and per point): every face must be placed exactly once and
    every point at least once. Faces are marked and their placements counted: every face
    marked, with as many placements as faces, means none was placed twice."""

    def __init__(self, n_faces: int, n_points: int) -> None:
        self.faces = np.zeros(n_faces, dtype=bool)
        self.points = np.zeros(n_points, dtype=bool)
        self.placements = 0

    @property
    def nbytes(self) -> int:
        return self.faces.nbytes + self.points.nbytes

    def add(self, faces: np.ndarray, points: np.ndarray) -> None:
        """One folder's placed faces and points."""
        self.faces[faces] = True
        self.points[points] = True
        self.placements += len(faces)

    def check(self, name: str) -> None:
        """:raises MeshReadError: a face not placed, or placed twice, or a point not placed."""
        if not self.faces.all():
            missing = np.flatnonzero(~self.faces)[0]
            raise MeshReadError(name, f"the addressing files do not place face {missing} "
                                      "of the undecomposed mesh")
        if self.placements != len(self.faces):
            raise MeshReadError(name, f"the addressing files place {self.placements} faces for "
                                      f"the {len(self.faces)} of the undecomposed mesh: some "
                                      "face is placed more than once")
        if not self.points.all():
            missing = np.flatnonzero(~self.points)[0]
            raise MeshReadError(name, f"the addressing files do not place point {missing} "
                                      "of the undecomposed mesh")


class Pending:
    """Writes into arrays on disk held until they weigh ``spare`` bytes, then made together
    in page order (module docstring); ``spare`` None: each write made at once.

    Each write is kept as runs whose ids go through a target's 256ths (:data:`SLICES`) in
    order, with where each 256th starts in the run: a processor folder's ids are a few
    ascending runs (its internal faces, each boundary group, its points), found in one
    pass; ids in no useful order are sorted by 256th first (a stable radix sort). A flush
    then writes, for each 256th of a target, its share of every run in the order they
    came: page after page, and an entry that two writes set ends with the later value, as
    when written one after the other. A flush holds nothing more than the writes, so they
    may weigh all of ``spare``."""

    def __init__(self, spare: int | None) -> None:
        self.spare = spare
        self.runs: dict[int, tuple[np.ndarray, list]] = {}
        self.bytes = 0

    def put(self, target: np.ndarray, index: np.ndarray, values: np.ndarray) -> None:
        """``target[index] = values``, now or at a later :meth:`flush`. Held as narrow
        as they will be written: ``index`` as 32-bit ids where the target is short enough,
        ``values`` in the target's type where it is narrower (as the write would cast
        them). A third less to hold at 100M cells, so a third fewer flushes, each of which
        writes every page of its targets back."""
        if self.spare is None:
            target[index] = values
            return
        if len(target) <= np.iinfo(np.int32).max:
            index = index.astype(np.int32, copy=False)
        if values.dtype.itemsize > target.dtype.itemsize:
            values = values.astype(target.dtype)
        runs = self.runs.setdefault(id(target), (target, []))[1]
        sliced = slice_runs(index, len(target))
        if sliced is None:                   # no useful order: sorted by 256th first
            key = _slice_of(index, len(target))
            order = np.argsort(key, kind="stable")
            index, values = index[order], values[order]
            sliced = [0, len(index)], [np.searchsorted(key[order], np.arange(SLICES + 1))]
        bounds, starts = sliced
        for lo, hi, at in zip(bounds[:-1], bounds[1:], starts):
            runs.append((index[lo:hi], values[lo:hi], at))
        self.bytes += index.nbytes + values.nbytes
        if self.bytes > self.spare:
            self.flush()

    def flush(self) -> None:
        """Make the writes held, target by target, 256th by 256th."""
        held, self.runs, self.bytes = self.runs, {}, 0
        while held:
            target, runs = held.pop(next(iter(held)))
            for k in range(SLICES):
                for index, values, starts in runs:
                    lo, hi = starts[k], starts[k + 1]
                    if hi > lo:
                        target[index[lo:hi]] = values[lo:hi]
            del runs


#: The parts of a target a flush writes one after the other (:class:`Pending`). Each is
#: far smaller than the dirty pages the kernel lets a process hold before it makes it wait
#: for their writing back (by default a fifth of the memory), so each page of the target
#: is written back about once per flush.
SLICES = 256


def _shift(n: int) -> int:
    """The shift of an id in ``0 .. n`` that gives its 256th (:data:`SLICES`)."""
    return max(0, (max(n, 1) - 1).bit_length() - 8)


def _slice_of(index: np.ndarray, n: int) -> np.ndarray:
    """Which of the :data:`SLICES` parts of ``0 .. n`` each of ``index`` falls in."""
    return (index >> _shift(n)).astype(np.int16)


def slice_runs(index: np.ndarray, n: int) -> tuple[list, list] | None:
    """``index`` (ids in ``0 .. n``) cut where the 256th (:data:`SLICES`) they fall in goes
    down: the bounds of the runs, and for each run where each 256th starts in it (positions
    from the run's start, :data:`SLICES` + 1 of them); None when there are more than
    :data:`SLICES` runs. By the compiled kernel
    (:func:`caselint.mesh.kernels.held_writes.slice_runs`) or this numpy reference."""
    kernel = compiled("held_writes", n)
    if kernel is not None:
        bounds, starts = kernel.slice_runs(index, _shift(n), SLICES)
        return None if len(bounds) == 0 else (list(bounds), list(starts))
    key = _slice_of(index, n)
    breaks = np.flatnonzero(np.diff(key) < 0) + 1
    if len(breaks) >= SLICES:
        return None
    bounds = [0, *breaks.tolist(), len(index)]
    return bounds, [np.searchsorted(key[lo:hi], np.arange(SLICES + 1))
                    for lo, hi in zip(bounds[:-1], bounds[1:])]


def face_point_writes(local_offsets: np.ndarray, local_points: np.ndarray,
                      face_ids: np.ndarray, offsets: np.ndarray, point_ids: np.ndarray,
                      point_dtype) -> tuple[np.ndarray, np.ndarray]:
    """A folder's writes of face points into the merged ``face_points``: ``(dst, values)``,
    the points of each kept face (``face_ids`` > 0, 1-based) in order, placed from the
    face's merged offset (``offsets``), in the undecomposed numbering (``point_ids`` of
    ``local_points``, as ``point_dtype``); ``dst`` 32-bit where the merged face points are
    short enough, as :class:`Pending` holds it. By the compiled kernel
    (:func:`caselint.mesh.kernels.held_writes.face_point_writes`) or this numpy
    reference. The folder's arrays are checked first: face points within its points, face
    ids within the merged faces."""
    sizes = np.diff(local_offsets)
    kept = face_ids > 0
    short = int(offsets[-1]) <= np.iinfo(np.int32).max
    dst_dtype = np.int32 if short else np.int64
    kernel = compiled("held_writes", len(offsets) - 1)
    if kernel is not None:
        n = int(sizes[kept].sum())
        dst, values = np.empty(n, dtype=dst_dtype), np.empty(n, dtype=point_dtype)
        written = kernel.face_point_writes(local_offsets, local_points, face_ids, offsets,
                                           point_ids, dst, values)
        if written != n:                # the same sum, counted twice: never, unless a bug
            raise RuntimeError(f"face point writes: {written} made for {n} counted")
        return dst, values
    src = np.repeat(kept, sizes)                # the kept faces' points, in order
    sizes = sizes[kept]
    dst = np.repeat(offsets[face_ids[kept] - 1], sizes) + _ramp(sizes)
    return dst.astype(dst_dtype), point_ids.astype(point_dtype)[local_points[src]]


def _first_read(folder: Path) -> tuple[FolderMesh, tuple[np.ndarray, ...]]:
    """What the first pass reads of a folder: its mesh and its addressing."""
    part = read_folder_mesh(folder)
    return part, _checked_addressing(folder, part)


def _second_read(item: tuple[Path, FolderMesh, _FirstRead]) -> tuple:
    """What the second pass reads of a folder (``item``: the folder, its shell and first
    read), checked against the first read: its face offsets and points, point and face
    addressing, and its zones' cells in the undecomposed numbering."""
    folder, part, first = item
    local_offsets, local_points = read_folder_faces(folder)
    first.check(folder, "faces", local_offsets)
    first.check_points(folder, local_points)
    point_ids = first.again(folder, "pointProcAddressing")
    face_ids = first.again(folder, "faceProcAddressing")
    return (local_offsets, local_points, point_ids, face_ids,
            first.zones_again(folder, part.n_cells))


def _less(budget: int | None, *arrays: np.ndarray) -> int | None:
    """The held writes' budget less the bytes of a folder's ``arrays`` as read:
    :func:`~caselint.mesh.formats.read_ahead.read_ahead` holds the next folder's, about
    as many, while this one is placed."""
    if budget is None:
        return None
    return max(budget - sum(a.nbytes for a in arrays), 0)


def _sizes(folders: list[Path]) -> tuple[int, int, int]:
    """The whole mesh's point, face and cell counts, from the addressing files alone."""
    n_points = n_faces = n_cells = 0
    for folder in folders:
        n_points = max(n_points, 1 + int(_labels(folder, "pointProcAddressing").max(initial=-1)))
        n_faces = max(n_faces, int(np.abs(_labels(folder, "faceProcAddressing")).max(initial=0)))
        n_cells = max(n_cells, 1 + int(_labels(folder, "cellProcAddressing").max(initial=-1)))
    return n_points, n_faces, n_cells


def _shell(part: FolderMesh) -> FolderMesh:
    """The part's patches without its arrays (what the merge needs of it to the end)."""
    none = np.zeros(0, np.int64)
    return FolderMesh(part.path, np.zeros((0, 3)), np.zeros(1, np.int64), none, none, none,
                      part.n_cells, part.patches)


def _labels(folder: Path, name: str) -> np.ndarray:
    lf = open_list_file(folder, name)
    return read_labels(lf, lf.start, lf.path.name)[0]


def _checked_addressing(folder: Path, part: FolderMesh) -> tuple[np.ndarray, ...]:
    found = _addressing(folder, part)
    if found is None:
        raise MeshReadError(str(folder), "an addressing file went missing while the case was read")
    if bool(np.any(found[1] == 0)):
        raise MeshReadError(part.path, "faceProcAddressing holds 0 (ids are stored plus one)")
    return found


__all__ = ["Pending", "Placed", "has_addressing", "merged_on_disk", "slice_runs"]
