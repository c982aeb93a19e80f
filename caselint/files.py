"""File fingerprints and atomic writes: the two things caselint does to files as files.

A leaf module (it imports nothing of caselint but :mod:`caselint.errors`), so that the
mesh cache, the report pipeline and the API can all use it without importing each other.
"""

from __future__ import annotations

import contextlib
import functools
import hashlib
import os
import tempfile
from pathlib import Path

from caselint.errors import UsageError


def file_sha256(path: str | os.PathLike[str]) -> str:
    """SHA-256 of a file's bytes, read in blocks (meshes can be large).

    A file is hashed once per process while it keeps its size, modification time and inode:
    a batch checking many cases on one mesh reads the mesh's bytes once for its fingerprint.
    """
    st = os.stat(path)
    return _sha256(os.path.realpath(path), st.st_size, st.st_mtime_ns, st.st_ino)


@functools.lru_cache(maxsize=256)
def _sha256(real_path: str, size: int, mtime_ns: int, inode: int) -> str:
    digest = hashlib.sha256()
    with open(real_path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def write_atomically(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file in the same folder and a rename.

    A reader never sees a half-written report, and an interrupted run leaves the old file.
    :raises UsageError: the folder is missing, the path is a folder, or the write failed.
    """
    path = Path(path)
    if not path.parent.is_dir():
        raise UsageError(f"cannot write {path}: folder {path.parent} does not exist")
    if path.is_dir():
        raise UsageError(f"cannot write {path}: it is a folder")
    umask = os.umask(0)
    os.umask(umask)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    except OSError as exc:
        raise UsageError(f"cannot write {path}: {exc.strerror}") from exc
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; a report is an ordinary file
        os.replace(tmp, path)
    except BaseException as exc:
        # Whatever stopped the write (a full disk, Ctrl-C, text that cannot be encoded),
        # no temporary file is left beside the report.
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(exc, OSError):
            raise UsageError(f"cannot write {path}: {exc.strerror or exc}") from exc
        raise
