"""The face-based mesh folder (``constant/polyMesh``): its files read into arrays (the
``face-folder`` reader itself is :mod:`caselint.mesh.formats.face_folder_reader`).

The folder holds ``points`` (coordinates), ``faces`` (polygons), ``owner`` and
``neighbour`` (the cells on either side of each face; internal faces first, so
``neighbour`` lists only them) and ``boundary`` (named patches: a type, a first face and a
face count each, covering the boundary faces in order), optionally ``cellZones`` (named
cell lists). Face normals point out of the owner. The file layouts are read by
:mod:`caselint.mesh.formats.face_lists` (ASCII, binary, gzip, 32- and 64-bit labels).

``mesh.file`` may name the ``polyMesh`` folder, a case folder holding
``constant/polyMesh``, a case folder holding one ``constant/<region>/polyMesh`` per region
(``mesh.zone``, or the reader's ``zone`` option, picks the region), or a decomposed case
whose only mesh is in ``processor<N>`` folders (:mod:`caselint.mesh.formats.face_decomposed`).

What the reader gives:

- boundary groups: one per patch, with the patch type in ``MeshData.group_types`` (roles
  are derived from the types by :mod:`caselint.mesh.roles`);
- cell zones: ``cellZones`` as ``MeshData.cell_zone`` / ``zone_names`` (-1: no zone);
- the shape of every cell whose faces make a tetrahedron, hexahedron, wedge or pyramid
  (:mod:`caselint.mesh.shapes`), so shape metrics match an element file of the same mesh;
- a 2-D case (every cell one layer thick between two ``empty`` patches normal to z) as a
  2-D mesh in the x-y plane (:mod:`caselint.mesh.formats.one_cell_thick`).

Every count the files declare is checked: list sizes, the ``note`` of the owner file
(``nPoints``, ``nCells``, ``nFaces``, ``nInternalFaces``), the patch ranges.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.formats.face_dicts import read_dict_list
from caselint.mesh.formats.face_lists import (
    ListFile, find_file, list_head, open_list_file, open_list_head, read_faces, read_labels,
    read_points,
)
from caselint.mesh.kernels import compiled, side_by_side

#: The files that make the mesh of one folder, in the order they are read.
MESH_FILES = ("points", "faces", "owner", "neighbour", "boundary")
_PROCESSOR = re.compile(r"processor(\d+)$")


@dataclass(frozen=True)
class Patch:
    """A named range of boundary faces: ``start`` .. ``start + size - 1``."""

    name: str
    type: str
    start: int
    size: int
    #: For processor patches: the processor on the other side.
    neighbour_processor: int | None = None


@dataclass(eq=False)
class FolderMesh:
    """The arrays of one folder as read (face order of the file, boundary faces last)."""

    path: str
    points: np.ndarray
    face_offsets: np.ndarray
    face_points: np.ndarray
    owner: np.ndarray
    #: (F,) with -1 on boundary faces.
    neighbour: np.ndarray
    n_cells: int
    patches: list[Patch]
    zones: list[tuple[str, np.ndarray]] = field(default_factory=list)

    def groups(self) -> tuple[list[str], dict[str, str], np.ndarray]:
        """Group names, their patch types, and the group index of every face (-1: none)."""
        group = np.full(len(self.owner), -1, dtype=np.int32)
        for index, patch in enumerate(self.patches):
            group[patch.start:patch.start + patch.size] = index
        return [p.name for p in self.patches], {p.name: p.type for p in self.patches}, group


# -- finding the mesh ---------------------------------------------------------------------


def is_mesh_folder(folder: Path) -> bool:
    """Whether ``folder`` holds the files of a face-based mesh (plain or gzip)."""
    return all(find_file(folder, name) is not None for name in MESH_FILES)


def processor_folders(case: Path) -> list[Path]:
    """The ``processor<N>`` folders of a case, by number."""
    found = [(int(m.group(1)), p) for p in case.iterdir()
             if p.is_dir() and (m := _PROCESSOR.match(p.name))]
    return [p for _, p in sorted(found)]


def region_folders(case: Path) -> list[Path]:
    """``constant/<region>/polyMesh`` folders of a multi-region case, by region name."""
    constant = case / "constant"
    if not constant.is_dir():
        return []
    return sorted(p / "polyMesh" for p in constant.iterdir()
                  if p.is_dir() and is_mesh_folder(p / "polyMesh"))


def accepts(path: Path) -> bool:
    """Whether ``path`` is a mesh folder, or a case folder holding one (decomposed too)."""
    try:
        if is_mesh_folder(path) or is_mesh_folder(path / "constant" / "polyMesh"):
            return True
        if region_folders(path):
            return True
        return any(is_mesh_folder(p / "constant" / "polyMesh") for p in processor_folders(path))
    except OSError:
        return False


def mesh_folder(path: Path, zone: str | None) -> Path | None:
    """The single mesh folder that ``path`` names, or None for a decomposed case.

    :raises MeshReadError: a multi-region case without a region chosen, or an unknown one.
    """
    if is_mesh_folder(path):
        return path
    if is_mesh_folder(path / "constant" / "polyMesh"):
        return path / "constant" / "polyMesh"
    regions = region_folders(path)
    if regions:
        names = [p.parent.name for p in regions]
        if zone is None:
            raise MeshReadError(str(path), f"holds the meshes of {len(names)} regions "
                                           f"({', '.join(names)}): name one in mesh.zone, or "
                                           "point mesh.file at its constant/<region>/polyMesh")
        if zone not in names:
            raise MeshReadError(str(path), f"has no region {zone!r} (mesh.zone); regions are "
                                           f"{', '.join(names)}")
        return regions[names.index(zone)]
    return None


def input_files(path: Path) -> list[Path]:
    """The files a read of ``path`` may use, for the mesh's fingerprint (sorted)."""
    try:
        folder = mesh_folder(path, None)
    except MeshReadError:                    # several regions: all of them
        folders = region_folders(path)
    else:
        folders = [folder] if folder is not None else [
            p / "constant" / "polyMesh" for p in processor_folders(path)]
    out = []
    for one in folders:
        for name in (*MESH_FILES, "cellZones", "pointProcAddressing", "faceProcAddressing",
                     "cellProcAddressing"):
            found = find_file(one, name)
            if found is not None:
                out.append(found)
    return sorted(out)


# -- reading one folder -------------------------------------------------------------------


#: Takes each large array of a folder as soon as its list is read: ``keep(name, array)``
#: returns the array to hold in its place (a streamed read puts it on disk,
#: :mod:`caselint.mesh.formats.face_folder_disk`).
Keep = Callable[[str, np.ndarray], np.ndarray]


def read_folder_mesh(folder: Path, keep: Keep | None = None) -> FolderMesh:
    """The arrays of one mesh folder, checked for consistency (see the module docstring).

    With ``keep`` the files are read one after the other, each let go (and its arrays
    handed to ``keep``) before the next is read, so that one list and its file are in
    memory at a time; without, points and faces are read side by side.
    """
    if keep is None:
        points_file, faces_file = open_list_file(folder, "points"), open_list_file(folder, "faces")
        kernel = _text_kernel(faces_file)
        points, (offsets, face_points) = _points_and_faces(points_file, faces_file, kernel)
        points_file, faces_file = _let_go(points_file), _let_go(faces_file)
    else:
        kernel = _text_kernel(open_list_head(folder, "faces"))
        points_file = open_list_file(folder, "points")
        points = keep("points", read_points(points_file, kernel=kernel))
        points_file = _let_go(points_file)
        faces_file = open_list_file(folder, "faces")
        offsets, face_points = read_faces(faces_file, kernel)
        faces_file = _let_go(faces_file)
        offsets, face_points = keep("face_offsets", offsets), keep("face_points", face_points)
    keep = keep or _as_read
    owner_file = open_list_file(folder, "owner")
    owner = keep("owner", read_labels(owner_file, owner_file.start, "owner", kernel)[0])
    owner_file = _let_go(owner_file)
    neighbour_file = open_list_file(folder, "neighbour")
    inner, _ = read_labels(neighbour_file, neighbour_file.start, "neighbour", kernel)
    neighbour_file = _let_go(neighbour_file)
    boundary_file = open_list_file(folder, "boundary")
    n_faces = len(offsets) - 1
    if len(owner) != n_faces:
        raise MeshReadError(owner_file.name, f"{len(owner)} owner entries for the "
                                             f"{n_faces} faces of {faces_file.path.name}")
    neighbour = keep("neighbour", _full_neighbour(neighbour_file, inner, n_faces))
    del inner
    n_internal = int(np.count_nonzero(neighbour >= 0))
    _check_ranges(points_file, faces_file, owner_file, neighbour_file, len(points),
                  face_points, owner, neighbour)
    n_cells = int(max(owner.max(initial=-1), neighbour.max(initial=-1))) + 1
    _check_note(owner_file, len(points), n_cells, n_faces, n_internal)
    patches = read_patches(boundary_file, n_internal, n_faces)
    zones_file = open_list_file(folder, "cellZones", required=False)
    zones = read_zones(zones_file, n_cells) if zones_file is not None else []
    zones = [(name, keep(f"zone.{name}", cells)) for name, cells in zones]
    return FolderMesh(str(folder), points, offsets, face_points, owner, neighbour, n_cells,
                      patches, zones)


def read_folder_faces(folder: Path) -> tuple[np.ndarray, np.ndarray]:
    """The face offsets and face points of one mesh folder, read as
    :func:`read_folder_mesh` reads them (the same arrays), without opening its other files;
    checked only as a list (the counts and ids that hold across files are the caller's to
    check)."""
    faces_file = open_list_file(folder, "faces")
    return read_faces(faces_file, _text_kernel(faces_file))


def _as_read(name: str, array: np.ndarray) -> np.ndarray:
    """The array itself (a read in memory keeps what it reads)."""
    return array


def _let_go(lf: ListFile) -> ListFile:
    """``lf`` without its bytes, once its lists are read (its name and header stay, for
    the checks across files)."""
    return dataclasses.replace(lf, data=b"")


def _text_kernel(faces_file: ListFile):
    """The compiled parser of ASCII lists for the folder's size, or None (numpy reads).

    Chosen before the lists are read, by the faces the face list declares: about three a
    cell (hexahedra; fewer cells a face for tetrahedra and polyhedra). A head the reference
    would refuse leaves the choice to numpy, which names the fault.
    """
    try:
        n_faces = list_head(faces_file, faces_file.start, "faces")[0]
    except MeshReadError:
        return None
    return compiled("text_lists", n_faces // 3)


def _points_and_faces(points_file: ListFile, faces_file: ListFile, kernel):
    """The points and the faces; with the compiled parser on two threads at once (its
    kernels release the interpreter lock). A fault in the points is named first, as when
    the two are read one after the other."""
    if kernel is None:
        return read_points(points_file), read_faces(faces_file)

    def outcome(read, lf):
        try:
            return read(lf, kernel=kernel), None
        except MeshReadError as exc:
            return None, exc

    done = side_by_side(lambda: outcome(read_points, points_file),
                                lambda: outcome(read_faces, faces_file))
    for _, error in done:
        if error is not None:
            raise error
    return done[0][0], done[1][0]


def _full_neighbour(lf: ListFile, inner: np.ndarray, n_faces: int) -> np.ndarray:
    """(F,) neighbours with -1 on boundary faces; the file lists the internal faces only
    (or, in some writers, every face with -1 on the boundary)."""
    if len(inner) > n_faces:
        raise MeshReadError(lf.name, f"{len(inner)} neighbour entries for {n_faces} faces")
    out = np.full(n_faces, -1, dtype=inner.dtype)
    out[:len(inner)] = inner
    boundary = out < 0
    n_internal = int(np.count_nonzero(~boundary))
    if n_internal and bool(boundary[:n_internal].any()):
        raise MeshReadError(lf.name, "internal faces must come first: a face without a "
                                     f"neighbour comes before face {n_internal - 1}, which has one")
    return out


def _check_ranges(points_file, faces_file, owner_file, neighbour_file, n_points,
                  face_points, owner, neighbour) -> None:
    """Point ids within the points, cell ids non-negative."""
    if len(face_points) and (int(face_points.min()) < 0 or int(face_points.max()) >= n_points):
        bad = int(face_points.min()) if int(face_points.min()) < 0 else int(face_points.max())
        raise MeshReadError(faces_file.name, f"a face refers to point {bad}; "
                                             f"{points_file.path.name} holds {n_points} points "
                                             f"(0 .. {n_points - 1})")
    if len(owner) and int(owner.min()) < 0:
        raise MeshReadError(owner_file.name, f"owner {int(owner.min())} is not a cell id")
    if not len(owner):
        raise MeshReadError(faces_file.name, "the mesh has no faces")


def _check_note(lf: ListFile, n_points: int, n_cells: int, n_faces: int,
                n_internal: int) -> None:
    """The counts the owner file's ``note`` declares match what was read."""
    note = lf.header.get("note", "")
    found = {"nPoints": n_points, "nCells": n_cells, "nFaces": n_faces,
             "nInternalFaces": n_internal}
    for key, value in re.findall(r"(nPoints|nCells|nFaces|nInternalFaces)\s*:\s*(\d+)", note):
        if int(value) != found[key]:
            raise MeshReadError(lf.name, f"the header note declares {key} {value} but the mesh "
                                         f"files hold {found[key]}")


def read_patches(lf: ListFile, n_internal: int, n_faces: int) -> list[Patch]:
    """The patches of a ``boundary`` file, checked to cover the boundary faces in order."""
    patches = []
    expected = n_internal
    for name, entries, offset in read_dict_list(lf, "boundary"):
        try:
            kind = entries["type"].words[0]
            start = int(entries["startFace"].words[0])
            size = int(entries["nFaces"].words[0])
        except (KeyError, IndexError, ValueError):
            raise lf.fail(offset, f"patch {name!r} needs type, startFace and nFaces") from None
        if size and start != expected:
            raise lf.fail(offset, f"patch {name!r} starts at face {start}, expected {expected} "
                                  "(patches cover the boundary faces in order after the "
                                  f"{n_internal} internal faces)")
        expected = start + size if size else expected
        other = entries.get("neighbProcNo")
        patches.append(Patch(name, kind, start, size,
                             int(other.words[0]) if other is not None else None))
    if expected != n_faces:
        raise MeshReadError(lf.name, f"the patches cover faces {n_internal} .. {expected - 1} but "
                                     f"the boundary faces run to {n_faces - 1}")
    return patches


def read_zones(lf: ListFile, n_cells: int) -> list[tuple[str, np.ndarray]]:
    """(name, cell ids) of each zone of a ``cellZones`` file."""
    zones = []
    for name, entries, offset in read_dict_list(lf, "cellZones"):
        labels = entries.get("cellLabels")
        if labels is None or labels.labels is None:
            raise lf.fail(offset, f"cell zone {name!r} has no cellLabels list")
        cells = labels.labels.astype(np.int64)
        if len(cells) and (int(cells.min()) < 0 or int(cells.max()) >= n_cells):
            raise lf.fail(offset, f"cell zone {name!r} names cell {int(cells.max())}; the mesh "
                                  f"has {n_cells} cells")
        zones.append((name, cells))
    return zones


# -- the mesh ----------------------------------------------------------------------------


def zone_array(path: str, zones: list[tuple[str, np.ndarray]],
               n_cells: int) -> tuple[np.ndarray | None, tuple[str, ...]]:
    """``cell_zone`` (-1: no zone) and ``zone_names`` of named cell lists.

    :raises MeshReadError: a cell in two zones.
    """
    if not zones:
        return None, ()
    out = np.full(n_cells, -1, dtype=np.int32)
    for index, (name, cells) in enumerate(zones):
        taken = out[cells] >= 0
        if taken.any():
            cell = int(cells[np.argmax(taken)])
            raise MeshReadError(path, f"cell {cell} is in two cell zones: "
                                      f"{zones[out[cell]][0]!r} and {name!r}")
        out[cells] = index
    return out, tuple(name for name, _ in zones)
