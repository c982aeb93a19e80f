"""A decomposed case merged into whole-mesh arrays on disk, one processor folder at a time.

The same mesh as :func:`caselint.mesh.formats.face_decomposed.read_decomposed` with its
addressing files (the undecomposed mesh, array for array), for a case too large to hold
in memory: the merged arrays are made by ``scratch`` (a
:class:`caselint.partition.scratch.Scratch`: memory-mapped files) and filled part by part,
so that only one processor folder's arrays are in memory at a time. Two passes over the
folders: the first places points, owner, neighbour and face sizes (whose running sum
gives the face offsets), the second the face points and patches. Ids are stored in the
narrowest type that holds them (as :func:`caselint.mesh.build.mesh_from_faces` would make
them), so that nothing is converted afterwards.

A case without addressing files is not merged this way (its parts are joined by matching
points across processor faces, which needs every part at once); it is read in memory or
refused (:func:`caselint.mesh.limits.check_folder_memory`).
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.build import index_dtype
from caselint.mesh.formats.face_decomposed import (
    _addressing, _check_processor_patches, _patch_names, _ramp, _ranges, _zones,
)
from caselint.mesh.formats.face_folder import FolderMesh, read_folder_mesh
from caselint.mesh.formats.face_lists import find_file, open_list_file, read_labels


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
    points = scratch.full("points", (n_points, 3), np.nan, np.float64)
    owner = scratch.full("owner", n_faces, -1, cell_dtype)
    neighbour = scratch.full("neighbour", n_faces, -1, cell_dtype)
    offsets = scratch.empty("face_offsets", n_faces + 1, np.int64)
    seen = scratch.empty("seen", n_faces, np.uint8)
    sizes = offsets[1:]                         # sizes first, summed in place below
    parts = []
    for folder in folders:
        part = read_folder_mesh(folder)
        parts.append(_shell(part))
        point_ids, face_ids, cell_ids = _checked_addressing(folder, part)
        points[point_ids] = part.points
        face, kept = np.abs(face_ids) - 1, face_ids > 0
        owner[face[kept]] = cell_ids[part.owner[kept]]
        inside = kept & (part.neighbour >= 0)
        neighbour[face[inside]] = cell_ids[part.neighbour[inside]]
        neighbour[face[~kept]] = cell_ids[part.owner[~kept]]
        sizes[face[kept]] = np.diff(part.face_offsets)[kept]
        np.add.at(seen, face[kept], 1)       # uint8: a face placed 256 times shows as 0
        del part, point_ids, face_ids, cell_ids, face, kept, inside
        if done is not None:
            done(1)
    _check_processor_patches(case, parts)
    _check_placed(name, seen, points)
    names = _patch_names(parts)
    offsets[0] = 0
    np.cumsum(sizes, out=sizes)
    face_points = scratch.empty("face_points", int(offsets[-1]), point_dtype)
    group = scratch.full("face_group", n_faces, -1, np.int32)
    zone_cells: dict[str, list[np.ndarray]] = {}
    for folder in folders:
        part = read_folder_mesh(folder)
        point_ids, face_ids, cell_ids = _checked_addressing(folder, part)
        kept = np.flatnonzero(face_ids > 0)
        local_sizes = np.diff(part.face_offsets)[kept]
        ramp = _ramp(local_sizes)
        src = np.repeat(part.face_offsets[kept], local_sizes) + ramp
        dst = np.repeat(offsets[face_ids[kept] - 1], local_sizes) + ramp
        face_points[dst] = point_ids[part.face_points[src]]
        for patch in part.patches:
            if patch.type != "processor":
                group[face_ids[patch.start:patch.start + patch.size] - 1] = names.index(patch.name)
        for zone, cells in part.zones:
            zone_cells.setdefault(zone, []).append(cell_ids[cells])
        del part, point_ids, face_ids, cell_ids, kept, src, dst, ramp
        if done is not None:
            done(1)
    return FolderMesh(name, points, offsets, face_points, owner, neighbour, n_cells,
                      _ranges(name, parts, names, group, neighbour), _zones(zone_cells))


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


def _check_placed(name: str, seen: np.ndarray, points: np.ndarray) -> None:
    """Every face placed once and every point at least once (in chunks: no full-length
    temporaries)."""
    step = 1 << 22
    for start in range(0, len(seen), step):
        bad = np.flatnonzero(seen[start:start + step] != 1)
        if len(bad):
            raise MeshReadError(name, f"the addressing files do not place face {start + bad[0]} "
                                      "of the undecomposed mesh exactly once")
    for start in range(0, len(points), step):
        bad = np.flatnonzero(np.isnan(points[start:start + step]).any(axis=1))
        if len(bad):
            raise MeshReadError(name, f"the addressing files do not place point "
                                      f"{start + bad[0]} of the undecomposed mesh exactly once")


__all__ = ["has_addressing", "merged_on_disk"]
