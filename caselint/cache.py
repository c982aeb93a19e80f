"""The mesh cache: analysed meshes (topology and geometry included) kept on disk by file hash.

A parameter sweep checks hundreds of case files that share a few meshes. Each mesh is read
and analysed once: the arrays of the analysed :class:`~caselint.mesh.analysis.Mesh` are
written as an ``.npz`` file (:mod:`caselint.mesh.arrays`; read back without pickle) named
by a key of the mesh file's SHA-256, the read settings (scale, tag array, tag names),
caselint's version and a fingerprint of the mesh code that computed the entry (so a
changed formula never serves old geometry). A later run, or another process of the same
batch, reads that file instead of the mesh.

- Folder: :func:`caselint.cachedir.cache_dir` (``CASELINT_CACHE_DIR``, else
  ``~/.cache/caselint``; ``off`` turns every on-disk cache of caselint off).
- Entries are written to a temporary file in the folder and renamed into place, so a
  process never sees half an entry; an unreadable entry is ignored and rebuilt.
- Meshes below :data:`MIN_CELLS` cells are not cached (reading them is quicker than the
  cache's disk traffic), and the folder is trimmed to ``CASELINT_CACHE_MAX_GB`` (default
  :data:`MAX_GB`), oldest entries first.
- Only caselint's own files (``mesh-*.npz``) are ever read or removed; failures to write
  (a full disk, a read-only folder) leave the run as it would be without a cache.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from caselint import __version__
from caselint.files import file_sha256

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh
    from caselint.partition.runners import PartitionRequest
    from caselint.partition.streaming import OnStream

#: Environment variable with the most the folder may hold, in GB.
ENV_MAX_GB = "CASELINT_CACHE_MAX_GB"
#: Smallest mesh (cells) worth caching.
MIN_CELLS = 100_000
#: Default size limit of the cache folder (GB).
MAX_GB = 10.0


def mesh_key(mesh_sha256: str, scale_to_m: float, tag_array: str | None,
             tags: dict[int, str] | None, zone: str | None = None) -> str:
    """Cache key of a mesh file read with these settings by this caselint version and this
    mesh code (:func:`caselint.mesh.fingerprint.code_fingerprint`)."""
    from caselint.mesh.arrays import FORMAT
    from caselint.mesh.fingerprint import code_fingerprint

    settings = {"sha256": mesh_sha256, "scale_to_m": repr(float(scale_to_m)),
                "tag_array": tag_array, "tags": sorted((int(k), str(v)) for k, v in
                                                       (tags or {}).items()),
                "zone": zone,
                "caselint": __version__, "format": FORMAT, "code": code_fingerprint()}
    return hashlib.sha256(json.dumps(settings, sort_keys=True).encode()).hexdigest()


@dataclass
class MeshCache:
    """Analysed meshes in ``folder`` (see the module docstring)."""

    folder: Path
    min_cells: int = field(default_factory=lambda: MIN_CELLS)
    max_bytes: int = field(default_factory=lambda: int(
        float(os.environ.get(ENV_MAX_GB) or MAX_GB) * 1e9))

    def entry(self, key: str) -> Path:
        """The file of ``key``."""
        return self.folder / f"mesh-{key}.npz"

    def load(self, key: str, path: str) -> "Mesh | None":
        """The cached mesh of ``key`` (named ``path``), or None when absent or unreadable."""
        import numpy as np

        from caselint.mesh.arrays import mesh_from_arrays

        file = self.entry(key)
        try:
            with np.load(file, allow_pickle=False) as arrays:
                mesh = mesh_from_arrays(arrays, path=path)
            os.utime(file)          # recently used: trimmed last
            return mesh
        except FileNotFoundError:
            return None
        except Exception:  # noqa: BLE001 - a damaged or partial entry is rebuilt
            with contextlib.suppress(OSError):
                file.unlink()
            return None

    def store(self, key: str, mesh: "Mesh") -> bool:
        """Write ``mesh`` under ``key`` (atomically); False when it was not written."""
        import numpy as np

        from caselint.mesh.arrays import mesh_to_arrays

        if mesh.n_cells < self.min_cells:
            return False
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(prefix=".mesh-", suffix=".npz.tmp", dir=self.folder)
        except OSError:
            return False
        try:
            with os.fdopen(fd, "wb") as handle:
                np.savez(handle, **mesh_to_arrays(mesh))
            os.replace(tmp, self.entry(key))
        except OSError:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
            return False
        self.trim()
        return True

    def trim(self) -> None:
        """Remove the least recently used entries until the folder is within its limit."""
        entries = []
        for file in self.folder.glob("mesh-*.npz"):
            with contextlib.suppress(OSError):
                st = file.stat()
                entries.append((st.st_mtime, st.st_size, file))
        total = sum(size for _, size, _ in entries)
        for _, size, file in sorted(entries, key=lambda e: (e[0], e[2].name)):
            if total <= self.max_bytes:
                break
            with contextlib.suppress(OSError):
                file.unlink()
                total -= size


class MeshStore:
    """The meshes of one batch worker: each read (or taken from the cache) once.

    :meth:`read` has the signature of :func:`caselint.mesh.read_mesh` and is what the
    worker passes to :func:`caselint.api.lint_case` as its mesh reader; every mesh is read
    under ``memory_limit`` (None: the reader's default). :meth:`save` writes the meshes this
    store read from their files to the cache, once their cases have run (so that their
    topology and geometry are in the entry).
    """

    def __init__(self, cache: MeshCache | None = None,
                 memory_limit: tuple[int | None, str] | None = None,
                 partitions: "PartitionRequest | None" = None,
                 on_stream: "OnStream | None" = None) -> None:
        self.cache = cache
        self.memory_limit = memory_limit
        self.partitions = partitions
        self.on_stream = on_stream
        self._run = None                       # the partitions' runner, made on first use
        self._scratch: list = []               # streamed meshes' arrays on disk
        self._meshes: dict[tuple, Mesh] = {}
        self._fresh: dict[tuple, str] = {}      # read from file: settings -> cache key

    def read(self, path, *, scale_to_m: float = 1.0, tag_array: str | None = None,
             tags: dict[int, str] | None = None, zone: str | None = None,
             readers=None) -> "Mesh":
        """The mesh of ``path`` read with these settings; raises MeshReadError like read_mesh."""
        from caselint.mesh import read_mesh

        settings = (os.path.abspath(path), repr(float(scale_to_m)), tag_array,
                    tuple(sorted((tags or {}).items())), zone)
        if settings in self._meshes:
            return self._meshes[settings]
        key = mesh = None
        if self.cache is not None and os.path.isfile(path):
            key = mesh_key(file_sha256(Path(path)), scale_to_m, tag_array, tags, zone)
            mesh = self.cache.load(key, str(path))
        if mesh is None:
            mesh = self._streamed(path, scale_to_m, zone, readers)
        if mesh is None:
            mesh = read_mesh(path, scale_to_m=scale_to_m, tag_array=tag_array, tags=tags,
                             zone=zone, readers=readers, memory_limit=self.memory_limit)
            if self.partitions is not None:
                mesh = self._in_partitions(path, mesh, scale_to_m, zone)
            if key is not None:
                self._fresh[settings] = key
        self._meshes[settings] = mesh
        return mesh

    def _streamed(self, path, scale_to_m: float, zone: str | None, readers) -> "Mesh | None":
        """The mesh read and analysed streamed when it does not fit the memory limit but
        can be streamed (:mod:`caselint.partition.streaming`), else None; raises
        MeshReadError when it fits neither way."""
        from caselint.partition.scratch import Scratch
        from caselint.partition.streaming import mesh_way, streamed_mesh

        way = mesh_way(path, self.memory_limit, zone)
        if way.way != "stream":
            return None
        scratch = Scratch(outside=path if os.path.isdir(path) else os.path.dirname(path))
        self._scratch.append(scratch)
        if self._run is None and self.partitions is not None:
            self._run = self.partitions.runner()
        return streamed_mesh(path, way, scratch, scale_to_m=scale_to_m, zone=zone,
                             readers=readers, request=self.partitions, run=self._run,
                             on_stream=self.on_stream)

    def _in_partitions(self, path, mesh: "Mesh", scale_to_m: float, zone: str | None) -> "Mesh":
        """``mesh`` with its geometry, metrics and walks computed partition by partition;
        on a cluster the tasks read their pieces from a decomposed case's processor folders
        themselves where they can (:mod:`caselint.partition.stored`)."""
        from caselint.mesh import kernels
        from caselint.mesh.topology import cell_faces
        from caselint.partition.measure import analysed_in_partitions
        from caselint.partition.stored import stored_pieces

        if self._run is None:
            self._run = self.partitions.runner()
        split = self.partitions.plan(path, mesh.n_cells)
        with kernels.decided_for(mesh.n_cells):
            cf = cell_faces(mesh.data)
        # the workers of a cluster read their pieces themselves where they can; here, the
        # pieces are cut from the mesh in memory (quicker than reading the folders again)
        pieces = None
        if self.partitions.scheduler is not None and zone is None:
            pieces = stored_pieces(path, mesh.data, split, cf, scale_to_m)
        return analysed_in_partitions(mesh.data, split, self._run, pieces=pieces, cf=cf)

    def close(self) -> None:
        """Let go of the partitions' runner (a Dask client) and remove the streamed
        meshes' scratch folders (their arrays go with the last view of them)."""
        self._meshes.clear()
        for scratch in self._scratch:
            scratch.close()
        self._scratch.clear()
        if self._run is not None:
            from caselint.partition.runners import close_runner

            close_runner(self._run)
            self._run = None

    def save(self) -> None:
        """Write the meshes read from files to the cache (no-op without a cache)."""
        if self.cache is not None:
            for settings, key in self._fresh.items():
                self.cache.store(key, self._meshes[settings])
        self._fresh.clear()
