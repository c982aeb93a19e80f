"""A decomposed case of the face-based mesh folder format, read as one mesh.

A case run in parallel is split into ``processor<N>`` folders, each with its own mesh
folder (``processor<N>/constant/polyMesh``). Each holds its part of the cells with local
numbering; faces between two parts appear in both, in a patch of type ``processor``
whose ``neighbProcNo`` names the other part. Face ``i`` of one side's patch is face ``i``
of the other side's patch towards it, seen from the other cell.

With the addressing files the decomposition writes beside each part
(``pointProcAddressing``, ``faceProcAddressing``, ``cellProcAddressing``: the original id
of each local point, face and cell; a face's id is stored plus one, negative where the
part holds it turned round), the original numbering is recovered exactly and the mesh
equals the undecomposed one, array for array.

Without them, parts are joined in processor order: cells and points numbered part after
part, the faces of each processor patch pair matched by position, their points merged
with the points of the same coordinates on the other side's face (a face may be turned
round or start at another point there), the face kept from the lower-numbered part.
Counts, volumes, groups and rule values are those of the undecomposed mesh; cell and
point ids differ.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.formats.face_folder import FolderMesh, Patch, read_folder_mesh
from caselint.mesh.formats.face_lists import open_list_file, read_labels

_ADDRESSING = ("pointProcAddressing", "faceProcAddressing", "cellProcAddressing")


def read_decomposed(case: Path, folders: list[Path]) -> tuple[FolderMesh, tuple[str, ...]]:
    """The whole mesh of a decomposed case, and a note when its numbering is not the
    undecomposed mesh's (with the addressing files it is exactly that mesh: no note, so
    the two give the same report)."""
    parts = [read_folder_mesh(folder) for folder in folders]
    _check_processor_patches(case, parts)
    addressing = [_addressing(folder, part) for folder, part in zip(folders, parts)]
    if all(a is not None for a in addressing):
        return _renumbered(case, parts, addressing), ()
    mesh = _joined(case, parts)
    return mesh, (f"read from {len(parts)} processor folders with no addressing files, "
                  "numbered part after part: cell and point ids are not the undecomposed "
                  "mesh's",)


def _processor_patches(part: FolderMesh) -> list[Patch]:
    return [p for p in part.patches if p.type == "processor"]


def _check_processor_patches(case: Path, parts: list[FolderMesh]) -> None:
    """Every processor patch has a partner of the same size on the part it names."""
    sizes = {}
    for me, part in enumerate(parts):
        for patch in _processor_patches(part):
            other = patch.neighbour_processor
            if other is None or not 0 <= other < len(parts) or other == me:
                raise MeshReadError(part.path, f"processor patch {patch.name!r} names "
                                               f"processor {other}; the case has processor0 .. "
                                               f"processor{len(parts) - 1}")
            if (me, other) in sizes:
                raise MeshReadError(part.path, f"two processor patches towards processor {other}")
            sizes[(me, other)] = patch.size
    for (me, other), size in sizes.items():
        if sizes.get((other, me)) != size:
            raise MeshReadError(str(case), f"processor{me} has {size} faces towards "
                                           f"processor{other}, which has "
                                           f"{sizes.get((other, me), 0)} towards processor{me}")


def _addressing(folder: Path, part: FolderMesh) -> tuple[np.ndarray, ...] | None:
    """The part's point, face and cell addressing (0-based; faces signed, 1-based), or None
    when a file is missing."""
    files = [open_list_file(folder, name, required=False) for name in _ADDRESSING]
    if any(f is None for f in files):
        return None
    out = []
    for lf, n in zip(files, (len(part.points), len(part.owner), part.n_cells)):
        values, _ = read_labels(lf, lf.start, lf.path.name)
        if len(values) != n:
            raise MeshReadError(lf.name, f"{len(values)} entries for the {n} items of this part")
        out.append(values.astype(np.int64))
    return tuple(out)


def _renumbered(case: Path, parts, addressing) -> FolderMesh:
    """The mesh in its original numbering (module docstring)."""
    name = str(case)
    n_points = 1 + max(int(a[0].max(initial=-1)) for a in addressing)
    n_faces = max(int(np.abs(a[1]).max(initial=0)) for a in addressing)
    n_cells = 1 + max(int(a[2].max(initial=-1)) for a in addressing)
    points = np.full((n_points, 3), np.nan)
    owner = np.full(n_faces, -1, dtype=np.int64)
    neighbour = np.full(n_faces, -1, dtype=np.int64)
    sizes = np.zeros(n_faces, dtype=np.int64)
    seen = np.zeros(n_faces, dtype=np.int64)
    for part, (point_ids, face_ids, cell_ids) in zip(parts, addressing):
        points[point_ids] = part.points
        face = np.abs(face_ids) - 1
        turned = face_ids < 0
        if bool(np.any(face_ids == 0)):
            raise MeshReadError(part.path, "faceProcAddressing holds 0 (ids are stored plus one)")
        kept = ~turned
        owner[face[kept]] = cell_ids[part.owner[kept]]
        inside = kept & (part.neighbour >= 0)
        neighbour[face[inside]] = cell_ids[part.neighbour[inside]]
        neighbour[face[turned]] = cell_ids[part.owner[turned]]
        sizes[face[kept]] = np.diff(part.face_offsets)[kept]
        np.add.at(seen, face[kept], 1)
    if bool(np.any(seen != 1)) or bool(np.isnan(points).any()):
        what = ("face", int(np.argmax(seen != 1))) if bool(np.any(seen != 1)) else (
            "point", int(np.argmax(np.isnan(points).any(axis=1))))
        raise MeshReadError(name, f"the addressing files do not place {what[0]} {what[1]} of "
                                  "the undecomposed mesh exactly once")
    offsets = np.zeros(n_faces + 1, dtype=np.int64)
    np.cumsum(sizes, out=offsets[1:])
    face_points = np.zeros(int(offsets[-1]), dtype=np.int64)
    zone_cells: dict[str, list[np.ndarray]] = {}
    group = np.full(n_faces, -1, dtype=np.int64)
    names = _patch_names(parts)
    for part, (point_ids, face_ids, cell_ids) in zip(parts, addressing):
        kept = np.flatnonzero(face_ids > 0)
        face = face_ids[kept] - 1
        local_sizes = np.diff(part.face_offsets)[kept]
        src = np.repeat(part.face_offsets[kept], local_sizes) + _ramp(local_sizes)
        dst = np.repeat(offsets[face], local_sizes) + _ramp(local_sizes)
        face_points[dst] = point_ids[part.face_points[src]]
        for patch in part.patches:
            if patch.type != "processor":
                ids = face_ids[patch.start:patch.start + patch.size]
                group[ids - 1] = names.index(patch.name)
        for zone, cells in part.zones:
            zone_cells.setdefault(zone, []).append(cell_ids[cells])
    return FolderMesh(name, points, offsets, face_points, owner, neighbour, n_cells,
                      _ranges(name, parts, names, group, neighbour), _zones(zone_cells))


def _ramp(sizes: np.ndarray) -> np.ndarray:
    """0 .. size-1 for each size, concatenated."""
    return np.arange(int(sizes.sum())) - np.repeat(np.cumsum(sizes) - sizes, sizes)


def _patch_names(parts: list[FolderMesh]) -> list[str]:
    """Non-processor patch names in the order of the parts' boundary files."""
    names: list[str] = []
    for part in parts:
        names.extend(p.name for p in part.patches if p.type != "processor" and p.name not in names)
    return names


def _ranges(name: str, parts, names: list[str], group: np.ndarray,
            neighbour: np.ndarray) -> list[Patch]:
    """Patches over ``group`` (faces of a patch must be contiguous, in patch order)."""
    types = {}
    for part in parts:
        for p in part.patches:
            types.setdefault(p.name, p.type)
    n_internal = int(np.count_nonzero(neighbour >= 0))
    boundary = group[n_internal:]
    if bool(np.any(neighbour[n_internal:] >= 0)) or bool(np.any(boundary < 0)) or bool(
            np.any(np.diff(boundary) < 0)):
        raise MeshReadError(name, "the joined faces are not internal faces first and then "
                                  "the boundary patches in order")
    counts = np.bincount(boundary, minlength=len(names))
    starts = n_internal + np.concatenate([[0], np.cumsum(counts)[:-1]])
    return [Patch(n, types[n], int(s), int(c)) for n, s, c in zip(names, starts, counts)]


def _zones(zone_cells: dict[str, list[np.ndarray]]) -> list[tuple[str, np.ndarray]]:
    return [(zone, np.sort(np.concatenate(cells))) for zone, cells in zone_cells.items()]


# -- without addressing -------------------------------------------------------------------


def _joined(case: Path, parts: list[FolderMesh]) -> FolderMesh:
    """Parts joined in processor order (module docstring)."""
    name = str(case)
    point_base = np.concatenate([[0], np.cumsum([len(p.points) for p in parts])])
    cell_base = np.concatenate([[0], np.cumsum([p.n_cells for p in parts])])
    pairs: list[tuple[np.ndarray, np.ndarray]] = []     # points that are one
    pieces = []                          # (offsets, points, owner, neighbour, group) per part
    names = _patch_names(parts)
    for me, part in enumerate(parts):
        sizes = np.diff(part.face_offsets)
        keep = np.ones(len(part.owner), dtype=bool)
        owner = part.owner.astype(np.int64) + cell_base[me]
        neighbour = np.where(part.neighbour >= 0, part.neighbour + cell_base[me], -1)
        group = np.full(len(part.owner), -1, dtype=np.int64)
        for patch in part.patches:
            faces = np.arange(patch.start, patch.start + patch.size)
            if patch.type != "processor":
                group[faces] = names.index(patch.name)
                continue
            other = patch.neighbour_processor
            if other < me:                # the lower-numbered part keeps the face
                keep[faces] = False
                continue
            theirs = next(p for p in _processor_patches(parts[other])
                          if p.neighbour_processor == me)
            their_faces = np.arange(theirs.start, theirs.start + theirs.size)
            neighbour[faces] = parts[other].owner[their_faces] + cell_base[other]
            pairs.append(_equal_points(name, part, faces, point_base[me], parts[other],
                                       their_faces, point_base[other]))
        pieces.append((sizes[keep], part.face_points, part.face_offsets, keep,
                       owner[keep], neighbour[keep], group[keep], point_base[me]))
    root = _components(int(point_base[-1]), pairs)
    used, new_id = np.unique(root, return_inverse=True)
    points = np.concatenate([p.points for p in parts])[used]
    sizes = np.concatenate([p[0] for p in pieces])
    face_points = np.concatenate([
        new_id[p[1][np.repeat(p[2][:-1][p[3]], p[0]) + _ramp(p[0])] + p[7]] for p in pieces])
    owner = np.concatenate([p[4] for p in pieces])
    neighbour = np.concatenate([p[5] for p in pieces])
    group = np.concatenate([p[6] for p in pieces])
    order = np.lexsort((group, neighbour < 0))   # internal first, then patch by patch
    sizes, owner, neighbour, group = sizes[order], owner[order], neighbour[order], group[order]
    starts = np.concatenate([[0], np.cumsum(np.concatenate([p[0] for p in pieces]))])
    face_points = face_points[np.repeat(starts[:-1][order], sizes) + _ramp(sizes)]
    offsets = np.zeros(len(sizes) + 1, dtype=np.int64)
    np.cumsum(sizes, out=offsets[1:])
    zone_cells: dict[str, list[np.ndarray]] = {}
    for me, part in enumerate(parts):
        for zone, cells in part.zones:
            zone_cells.setdefault(zone, []).append(cells + cell_base[me])
    return FolderMesh(name, points, offsets, face_points, owner, neighbour, int(cell_base[-1]),
                      _ranges(name, parts, names, group, neighbour), _zones(zone_cells))


def _equal_points(name, mine: FolderMesh, my_faces, my_base, theirs: FolderMesh,
                  their_faces, their_base) -> tuple[np.ndarray, np.ndarray]:
    """(left, right) joined point ids that are one point: those of paired faces with
    equal coordinates."""
    my_sizes = np.diff(mine.face_offsets)[my_faces]
    their_sizes = np.diff(theirs.face_offsets)[their_faces]
    if not np.array_equal(my_sizes, their_sizes):
        bad = int(np.argmax(my_sizes != their_sizes))
        raise MeshReadError(name, f"processor face {bad} of {mine.path} has {my_sizes[bad]} "
                                  f"points, its partner in {theirs.path} {their_sizes[bad]}")
    left, right = [], []
    for k in np.unique(my_sizes):
        rows = np.flatnonzero(my_sizes == k)
        a = mine.face_points[mine.face_offsets[my_faces[rows]][:, None] + np.arange(k)]
        b = theirs.face_points[theirs.face_offsets[their_faces[rows]][:, None] + np.arange(k)]
        pa, pb = mine.points[a], theirs.points[b]              # (n, k, 3)
        dist = np.linalg.norm(pa[:, :, None, :] - pb[:, None, :, :], axis=3)
        match = np.argmin(dist, axis=2)
        edge = np.linalg.norm(pa - np.roll(pa, 1, axis=1), axis=2).max(axis=1)
        gap = np.take_along_axis(dist, match[:, :, None], axis=2)[..., 0].max(axis=1)
        if bool(np.any(gap > 1e-6 * edge)):
            bad = int(rows[np.argmax(gap > 1e-6 * edge)])
            raise MeshReadError(name, f"processor face {bad} of {mine.path} does not lie on its "
                                      f"partner in {theirs.path} (points {gap.max():.3g} m apart)")
        left.append((a + my_base).ravel())
        right.append((np.take_along_axis(b, match, axis=1) + their_base).ravel())
    if not left:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    return np.concatenate(left), np.concatenate(right)


def _components(n: int, pairs: list[tuple[np.ndarray, np.ndarray]]) -> np.ndarray:
    """(n,) the lowest id of each id's class, the classes joined by ``pairs`` (label
    propagation with pointer jumping; a few rounds, as a point lies on few parts)."""
    label = np.arange(n)
    if not pairs:
        return label
    left = np.concatenate([p[0] for p in pairs])
    right = np.concatenate([p[1] for p in pairs])
    while True:
        low = np.minimum(label[left], label[right])
        before = label.copy()
        np.minimum.at(label, left, low)
        np.minimum.at(label, right, low)
        label = label[label]
        if np.array_equal(label, before):
            return label


def cell_processors(case: Path) -> np.ndarray:
    """(C,) the processor each cell of the decomposed ``case`` came from, in the numbering
    :func:`read_decomposed` gives the whole mesh: the cells' original ids where every part
    has its ``cellProcAddressing``, else part after part."""
    from caselint.mesh.formats.face_folder import processor_folders

    folders = [p / "constant" / "polyMesh" for p in processor_folders(case)]
    if not folders:
        raise MeshReadError(str(case), "no processor<N> folders: not a decomposed case")
    files = [open_list_file(folder, "cellProcAddressing", required=False) for folder in folders]
    if all(f is not None for f in files):
        cells = [read_labels(lf, lf.start, lf.path.name)[0].astype(np.int64) for lf in files]
        labels = np.full(sum(len(c) for c in cells), -1, dtype=np.int32)
        for k, ids in enumerate(cells):
            if len(ids) and (ids.min() < 0 or ids.max() >= len(labels)):
                raise MeshReadError(files[k].name, f"cell ids {ids.min()} .. {ids.max()} for a "
                                                   f"mesh of {len(labels)} cells")
            labels[ids] = k
        if np.any(labels < 0):
            raise MeshReadError(str(case), "the cellProcAddressing files do not cover every "
                                           "cell exactly once")
        return labels
    counts = [read_folder_mesh(folder).n_cells for folder in folders]
    return np.repeat(np.arange(len(counts), dtype=np.int32), counts)
