"""Reading a mesh: choose the reader for the path, read, wrap the data for analysis; and
the files a mesh folder is read from, for its fingerprint."""

from __future__ import annotations

import os
from pathlib import Path
from typing import TYPE_CHECKING, Iterable

from caselint.errors import MeshReadError
from caselint.mesh.analysis import Mesh
from caselint.mesh.formats import BUILTIN_READERS
from caselint.mesh.formats.meshio_files import mesh_from_meshio
from caselint.mesh.readers import MeshReader, ReadOptions, choose_reader

if TYPE_CHECKING:
    from caselint.mesh.limits import MemoryLimit

__all__ = ["mesh_files", "mesh_from_meshio", "mesh_sha256", "read_mesh"]


def read_mesh(
    path: str | os.PathLike[str],
    *,
    scale_to_m: float = 1.0,
    tag_array: str | None = None,
    tags: dict[int, str] | None = None,
    zone: str | None = None,
    memory_limit: "MemoryLimit | None" = None,
    readers: Iterable[MeshReader] | None = None,
    scratch=None,
) -> Mesh:
    """Read the mesh file or folder ``path`` with the reader that takes it; coordinates
    are multiplied by ``scale_to_m``. ``readers`` defaults to the built-in ones (a run
    passes those its plugins register).

    ``memory_limit`` is a :data:`caselint.mesh.limits.MemoryLimit` (None: the default share
    of the available memory). ``scratch`` (a :class:`caselint.partition.scratch.Scratch`)
    has a reader that can put the mesh's arrays on disk, unchecked (a streamed check).

    :raises MeshReadError: missing, unrecognised, unreadable or unusable mesh, or one whose
        check would pass the memory limit.
    """
    file = Path(path)
    reader = choose_reader(file, BUILTIN_READERS if readers is None else readers)
    options = ReadOptions(scale_to_m=scale_to_m, tag_array=tag_array, tags=dict(tags or {}),
                          zone=zone, memory_limit=memory_limit, scratch=scratch)
    return Mesh(reader.read(file, options))


def mesh_files(path: Path, readers: Iterable[MeshReader] | None = None) -> list[Path]:
    """The files a read of the mesh folder ``path`` uses (its reader's ``files``), sorted;
    [] when no reader takes it or the reader does not list them."""
    try:
        reader = choose_reader(path, BUILTIN_READERS if readers is None else readers)
    except MeshReadError:
        return []
    return sorted(reader.files(path)) if reader.files is not None else []


def mesh_sha256(path: Path, readers: Iterable[MeshReader] | None = None) -> str:
    """SHA-256 of a mesh file's bytes; for a mesh folder, over the relative path and the
    bytes of each file its reader reads (``MeshReader.files``), in name order; "" when
    that reader does not list them."""
    import hashlib

    path = Path(path)
    digest = hashlib.sha256()
    if path.is_dir():
        files = mesh_files(path, readers)
        if not files:
            return ""
        for file in files:
            name = file.relative_to(path).as_posix()
            digest.update(f"{name}\0{file.stat().st_size}\0".encode())
            _update(digest, file)
        return digest.hexdigest()
    _update(digest, path)
    return digest.hexdigest()


def _update(digest, file: Path) -> None:
    with open(file, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
