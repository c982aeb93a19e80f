"""Whole-mesh arrays kept on disk while a mesh too large for memory is checked.

A streamed check (:func:`caselint.partition.streaming.streamed_mesh`) reads and
analyses a decomposed mesh one processor folder at a time, but the results are whole-mesh
arrays (the merged mesh, each per-cell and per-face quantity, the cell-face lists). A
:class:`Scratch` holds them as memory-mapped files: the operating system keeps in memory
the pages in use and writes the others back to the file, so they do not count against
the process's private (anonymous) memory, and a memory limit such as a cgroup's reclaims
them instead of killing the process.

Every array is handed out as a plain :class:`numpy.ndarray` view of its map (the compiled
kernels take it like any array). The file is unlinked as soon as it is mapped: the map
keeps its pages, the disk space is freed when the last view goes, and nothing is left
behind even when the process is killed. Before it is mapped, the file's disk blocks are
reserved (:func:`reserve`): writing into a map of a sparse file on a full disk kills the
process with SIGBUS, without a word; a reservation that does not fit raises
:class:`~caselint.errors.MeshReadError` instead, naming the folder and what would work
(:func:`room_advice`), and a streamed check compares its estimate with the free space
before it starts reading (:meth:`Scratch.check_room`). The folder itself (under the
system's temporary folder, or one the caller names; never beside the mesh) is removed by
:meth:`Scratch.close`, which the owner calls in a ``finally`` (also on Ctrl-C, and on a
full disk), and at interpreter exit.

Rejected: :func:`numpy.lib.format.open_memmap` (a ``.npy`` header for files nobody reads
back); an anonymous shared map (``mmap(-1)``), which is charged as shared memory, not
reclaimable without swap.
"""

from __future__ import annotations

import dataclasses
import errno
import mmap
import os
import shutil
import tempfile
import weakref
from pathlib import Path
from typing import TYPE_CHECKING, Callable

import numpy as np

if TYPE_CHECKING:
    from caselint.mesh.model import MeshData

#: Prefix of the scratch folder's name.
PREFIX = "caselint-scratch-"
#: Arrays smaller than this stay in memory (per-group and per-zone lists, small results).
MIN_BYTES = 1 << 20
#: errno of a full disk or quota: no room for the reservation.
NO_ROOM = (errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC))
#: errno of a file system that cannot reserve blocks (some network file systems): the file
#: stays sparse, as it would without :func:`reserve`.
CANNOT_RESERVE = (errno.EOPNOTSUPP, getattr(errno, "ENOTSUP", errno.EOPNOTSUPP), errno.EINVAL)


class Scratch:
    """A folder of memory-mapped arrays (see the module docstring); ``base`` is the
    folder to make it in (None: the system's temporary folder, ``TMPDIR``), never inside
    ``outside`` (the mesh's folder, which messages name).

    :raises MeshReadError: ``base`` lies inside ``outside``.
    """

    def __init__(self, base: str | os.PathLike[str] | None = None,
                 outside: str | os.PathLike[str] | None = None) -> None:
        where = Path(base if base is not None else tempfile.gettempdir()).resolve()
        if outside is not None and where.is_relative_to(Path(outside).resolve()):
            from caselint.errors import MeshReadError

            raise MeshReadError(str(outside), f"the scratch folder would be made in {where}, "
                                              "inside the mesh's folder: set TMPDIR to a "
                                              "folder outside it (caselint never writes "
                                              "beside a mesh)")
        self.folder = Path(tempfile.mkdtemp(prefix=PREFIX, dir=where))
        self.mesh = str(outside if outside is not None else self.folder)   # for messages
        self.bytes = 0                    # mapped so far
        self.arrays: dict[str, int] = {}  # name -> bytes, for the memory breakdown
        self._count = 0
        #: told of each step of work done into this scratch (a progress bar), if set
        self.advance: Callable[[int], None] | None = None
        #: private memory (bytes) a reader filling arrays of this scratch may hold in
        #: writes it makes together (:class:`caselint.mesh.formats.face_decomposed_disk.
        #: Pending`); None: it writes as it reads
        self.spare: int | None = None
        self._cleanup = weakref.finalize(self, shutil.rmtree, str(self.folder), True)

    def __enter__(self) -> "Scratch":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def empty(self, name: str, shape, dtype) -> np.ndarray:
        """A new array of ``shape`` and ``dtype`` on disk (zero-filled, as a new file is),
        its blocks reserved (module docstring).

        :raises MeshReadError: the folder's disk (or the user's quota) has no room for it.
        """
        dtype = np.dtype(dtype)
        shape = tuple(int(s) for s in np.atleast_1d(shape))
        size = int(np.prod(shape, dtype=np.int64)) * dtype.itemsize
        if size == 0:
            return np.zeros(shape, dtype=dtype)
        self._count += 1
        path = self.folder / f"{self._count:04d}-{name}.bin"
        try:
            mapped = _mapped(path, size)
        except OSError as exc:
            if exc.errno not in NO_ROOM:
                raise
            raise self._no_room(f"an array of {_size(size)} ({name}) did not fit, after the "
                                f"{_size(self.bytes)} this check had already put there",
                                free_bytes(self.folder)) from exc
        self.bytes += size
        self.arrays[name] = self.arrays.get(name, 0) + size
        return np.frombuffer(mapped, dtype=dtype).reshape(shape)

    def full(self, name: str, shape, value, dtype) -> np.ndarray:
        """A new array on disk with every entry ``value``."""
        out = self.empty(name, shape, dtype)
        if value != 0:
            out.fill(value)
        return out

    def keep(self, name: str, array: np.ndarray) -> np.ndarray:
        """A copy of ``array`` on disk (the caller drops the original)."""
        array = np.asarray(array)
        out = self.empty(name, array.shape, array.dtype)
        if out.size:
            out[...] = array
        return out

    def keep_large(self, name: str, value):
        """``value`` with its arrays of :data:`MIN_BYTES` or more on disk (an array, or a
        tuple or dataclass of arrays; other values as they are); arrays already on disk
        stay where they are."""
        if isinstance(value, np.ndarray):
            if value.nbytes < MIN_BYTES or is_on_disk(value):
                return value
            return self.keep(name, value)
        if isinstance(value, tuple) and not hasattr(value, "_fields"):
            return tuple(self.keep_large(f"{name}.{i}", v) for i, v in enumerate(value))
        if dataclasses.is_dataclass(value) and not isinstance(value, type):
            changes = {f.name: self.keep_large(f"{name}.{f.name}", getattr(value, f.name))
                       for f in dataclasses.fields(value) if f.init}
            changed = {k: v for k, v in changes.items() if v is not getattr(value, k)}
            return dataclasses.replace(value, **changed) if changed else value
        return value

    def keep_data(self, data: "MeshData") -> "MeshData":
        """``data`` with its large arrays (points, faces, owner, neighbour, groups, shapes,
        zones) on disk."""
        shapes = tuple(self.keep_large(f"shape.{b.type}", b) for b in data.shapes)
        moved = {name: self.keep_large(name, getattr(data, name))
                 for name in ("points", "face_offsets", "face_points", "owner", "neighbour",
                              "face_group", "cell_zone", "file_cell_ids", "file_point_ids")}
        return dataclasses.replace(data, shapes=shapes, **moved)

    def check_room(self, need: int, what: str, whole_bytes: int | None = None) -> None:
        """Refuse up front when ``need`` bytes (``what``: how they were estimated) are more
        than the free space of the folder's disk; ``whole_bytes``: see :func:`room_advice`.

        :raises MeshReadError: they are.
        """
        free = free_bytes(self.folder)
        if need > free:
            raise self._no_room(f"this check needs about {_size(need)} there ({what})", free,
                                whole_bytes)

    def _no_room(self, what: str, free: int, whole_bytes: int | None = None) -> Exception:
        from caselint.errors import MeshReadError

        return MeshReadError(self.mesh, f"no room in the scratch folder {self.folder}: {what}, "
                                        f"and {_size(free)} is free on its disk; "
                                        + room_advice(whole_bytes))

    def close(self) -> None:
        """Remove the folder (the arrays stay readable while views of them are held)."""
        self._cleanup()

    @property
    def closed(self) -> bool:
        """Whether the folder has been removed."""
        return not self._cleanup.alive


def _mapped(path: Path, size: int) -> mmap.mmap:
    """A map of a new file ``path`` of ``size`` bytes, its blocks reserved; the file is
    unlinked (the map holds the pages: module docstring), also when this fails."""
    try:
        with open(path, "w+b") as handle:
            handle.truncate(size)
            reserve(handle.fileno(), size)
            return mmap.mmap(handle.fileno(), size)
    finally:
        path.unlink(missing_ok=True)


def reserve(fd: int, size: int) -> bool:
    """Reserve ``size`` bytes of disk blocks for the open file ``fd`` (``posix_fallocate``),
    so that writing into a map of it cannot fail for want of room; False where the platform
    or the file system cannot (:data:`CANNOT_RESERVE`: the file stays sparse).

    :raises OSError: no room (:data:`NO_ROOM`), or another failure of the file system.
    """
    allocate = getattr(os, "posix_fallocate", None)
    if allocate is None:
        return False
    try:
        allocate(fd, 0, size)
    except OSError as exc:
        if exc.errno in CANNOT_RESERVE:
            return False
        raise
    return True


def free_bytes(folder: str | os.PathLike[str]) -> int:
    """Bytes free to this user on the file system of ``folder``."""
    return shutil.disk_usage(folder).free


def room_advice(whole_bytes: int | None = None) -> str:
    """What would work when the scratch folder's disk is too small (the end of the
    message); ``whole_bytes`` the memory estimate of the whole-mesh check, when known."""
    estimate = f" (about {_size(whole_bytes)})" if whole_bytes else ""
    return ("set TMPDIR to a folder on a disk with more room, or raise --memory-limit (or "
            f"CASELINT_MEMORY_LIMIT) to the whole-mesh estimate{estimate} so that the mesh is "
            "checked in memory, without a scratch folder")


def _size(size: int) -> str:
    from caselint.mesh.limits import format_size

    return format_size(size)


def is_on_disk(array: np.ndarray) -> bool:
    """Whether ``array`` is a view of a :class:`Scratch` map."""
    base = array
    while isinstance(base, np.ndarray) and base.base is not None:
        base = base.base
    return isinstance(base, mmap.mmap) or isinstance(getattr(base, "obj", None), mmap.mmap)


__all__ = ["CANNOT_RESERVE", "NO_ROOM", "PREFIX", "Scratch", "free_bytes", "is_on_disk",
           "reserve", "room_advice"]
