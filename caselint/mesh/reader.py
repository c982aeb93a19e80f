"""Reading a mesh: choose the reader for the path, read, wrap the data for analysis."""

from __future__ import annotations

import os
from pathlib import Path
from typing import TYPE_CHECKING, Iterable

from caselint.mesh.analysis import Mesh
from caselint.mesh.formats.meshio_files import mesh_from_meshio
from caselint.mesh.formats import BUILTIN_READERS
from caselint.mesh.readers import MeshReader, ReadOptions, choose_reader

if TYPE_CHECKING:
    from caselint.mesh.limits import MemoryLimit

__all__ = ["mesh_from_meshio", "read_mesh"]


def read_mesh(
    path: str | os.PathLike[str],
    *,
    scale_to_m: float = 1.0,
    tag_array: str | None = None,
    tags: dict[int, str] | None = None,
    zone: str | None = None,
    memory_limit: "MemoryLimit | None" = None,
    readers: Iterable[MeshReader] | None = None,
) -> Mesh:
    """Read the mesh file or folder ``path`` with the reader that takes it; coordinates
    are multiplied by ``scale_to_m``. ``readers`` defaults to the built-in ones (a run
    passes those its plugins register).

    ``memory_limit`` is a :data:`caselint.mesh.limits.MemoryLimit` (None: the default share
    of the available memory).

    :raises MeshReadError: missing, unrecognised, unreadable or unusable mesh, or one whose
        check would pass the memory limit.
    """
    file = Path(path)
    reader = choose_reader(file, BUILTIN_READERS if readers is None else readers)
    options = ReadOptions(scale_to_m=scale_to_m, tag_array=tag_array, tags=dict(tags or {}),
                          zone=zone, memory_limit=memory_limit)
    return Mesh(reader.read(file, options))
