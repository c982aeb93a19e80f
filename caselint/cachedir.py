"""Where caselint keeps its on-disk caches (a leaf module: the setting, nothing else).

``CASELINT_CACHE_DIR`` names the folder, else ``$XDG_CACHE_HOME/caselint`` or
``~/.cache/caselint``; ``CASELINT_CACHE_DIR=off`` turns every on-disk cache of caselint
off (the mesh cache of :mod:`caselint.cache`, the parsed unit definitions of
:mod:`caselint.manifest.units` and the compiled kernels of :mod:`caselint.mesh.kernels`).
"""

from __future__ import annotations

import os
from pathlib import Path

#: Environment variable naming the cache folder.
ENV_DIR = "CASELINT_CACHE_DIR"
#: Value of ``CASELINT_CACHE_DIR`` (any case) that turns caselint's on-disk caches off.
OFF = "off"


def default_cache_dir() -> Path:
    """``CASELINT_CACHE_DIR``, else ``$XDG_CACHE_HOME/caselint`` or ``~/.cache/caselint``."""
    if os.environ.get(ENV_DIR):
        return Path(os.environ[ENV_DIR]).expanduser()
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "caselint"


def cache_dir() -> Path | None:
    """The folder of caselint's on-disk caches, or None when ``CASELINT_CACHE_DIR`` is ``off``."""
    if os.environ.get(ENV_DIR, "").strip().lower() == OFF:
        return None
    return default_cache_dir()
