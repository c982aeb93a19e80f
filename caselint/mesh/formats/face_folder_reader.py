"""The ``face-folder`` reader: a face-based mesh folder (``constant/polyMesh``), the case
folder holding it, or a case decomposed into ``processor<N>`` folders, read into mesh data
(see :mod:`caselint.mesh.formats.face_folder` for the folder's files and what is read).
"""

from __future__ import annotations

from pathlib import Path

from caselint.errors import MeshReadError
from caselint.mesh.build import mesh_from_faces
from caselint.mesh.formats.face_decomposed import read_decomposed
from caselint.mesh.formats.face_decomposed_disk import has_addressing, merged_on_disk
from caselint.mesh.formats.face_folder import (
    FolderMesh, accepts, input_files, mesh_folder, processor_folders, read_folder_mesh,
    zone_array,
)
from caselint.mesh.formats.face_folder_disk import read_on_disk
from caselint.mesh.formats.one_cell_thick import flat_case
from caselint.mesh.model import MeshData
from caselint.mesh.readers import MeshReader, ReadOptions, checked_points
from caselint.mesh.shapes import with_shapes


def folder_data(raw: FolderMesh, options: ReadOptions, *, path: str,
                notes: tuple[str, ...] = ()) -> MeshData:
    """The :class:`MeshData` of folder arrays: groups from patches, zones, shapes, 2-D
    (with ``options.scratch``, its large arrays moved there, and no memory check: the
    caller chose to stream)."""
    from caselint.mesh.limits import check_memory, face_mesh_counts

    if options.scratch is None:
        check_memory(path, face_mesh_counts(raw.n_cells, len(raw.owner)), "the cells read",
                     options.memory_limit, cells=raw.n_cells)
    points = checked_points(path, raw.points, options.scale_to_m)
    names, types, group = raw.groups()
    cell_zone, zone_names = zone_array(path, raw.zones, raw.n_cells)
    data = mesh_from_faces(
        path=path, points=points, dim=3, face_offsets=raw.face_offsets,
        face_points=raw.face_points, owner=raw.owner, neighbour=raw.neighbour,
        n_cells=raw.n_cells, face_group=group, group_names=tuple(names),
        group_types=types, cell_zone=cell_zone,
        zone_names=zone_names, notes=notes)
    flat = flat_case(data)
    if flat is not None and flat.dim == 2:
        data = flat
    else:
        data = with_shapes(flat or data)
    return data if options.scratch is None else options.scratch.keep_data(data)


def read_face_folder(path: Path, options: ReadOptions) -> MeshData:
    """Read a face-based mesh folder, or the case folder holding it (module docstring)."""
    from caselint.mesh.limits import check_folder_memory

    folder = mesh_folder(path, options.zone)
    name = str(path)
    if folder is None:
        folders = [p / "constant" / "polyMesh" for p in processor_folders(path)]
        if options.scratch is not None and has_addressing(folders):
            # streamed (caselint.partition.streaming): merged on disk, part by part
            raw = merged_on_disk(path, folders, options.scratch,
                                 getattr(options.scratch, "advance", None))
            return folder_data(raw, options, path=name)
        check_folder_memory(name, folders, options.memory_limit)
        raw, notes = read_decomposed(path, folders)
        return folder_data(raw, options, path=name, notes=notes)
    if options.scratch is not None:
        # streamed (caselint.partition.streaming): read on disk, one list file at a time
        raw = read_on_disk(folder, options.scratch, getattr(options.scratch, "advance", None))
    else:
        check_folder_memory(name, [folder], options.memory_limit)
        raw = read_folder_mesh(folder)
    try:
        return folder_data(raw, options, path=name)
    except ValueError as exc:               # MeshData's own consistency checks
        raise MeshReadError(name, str(exc)) from None


READER = MeshReader(
    name="face-folder",
    description="face-based mesh folder (constant/polyMesh: points, faces, owner, neighbour, "
                "boundary), ASCII, binary or gzip, also decomposed into processor folders",
    read=read_face_folder, folders=True, accepts=accepts, files=input_files)

