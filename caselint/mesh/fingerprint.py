"""A fingerprint of the code that reads and analyses meshes, for the mesh cache's key.

A cached mesh holds arrays that this code computed (faces, geometry). When the code
changes, even without a new version number (a development install, a patched formula),
the old entries must not be served: the key includes the SHA-256 of every Python source
file of :mod:`caselint.mesh`, read once per process.
"""

from __future__ import annotations

import functools
import hashlib
from pathlib import Path

#: The package whose sources make the fingerprint.
MESH_PACKAGE = Path(__file__).resolve().parent


@functools.lru_cache(maxsize=4)
def code_fingerprint(root: Path = MESH_PACKAGE) -> str:
    """SHA-256 over the relative paths and bytes of the ``*.py`` files under ``root``."""
    digest = hashlib.sha256()
    for file in sorted(root.rglob("*.py")):
        digest.update(file.relative_to(root).as_posix().encode())
        digest.update(b"\0")
        digest.update(file.read_bytes())
        digest.update(b"\0")
    return digest.hexdigest()
