"""Which implementation of the mesh kernels runs: compiled (numba) or the numpy reference.

The walks, marches and per-face / per-cell passes of :mod:`caselint.mesh` each have a numpy
implementation (the reference, and the fallback) and, in the modules of this package, a
numba one that gives the same results. :func:`compiled` decides per mesh:

- ``CASELINT_KERNELS=numpy`` forces the numpy reference; ``numba`` forces the compiled
  kernels at every mesh size (tests use it); unset or ``auto``: compiled kernels for meshes
  of at least :data:`MIN_CELLS` cells, when numba is installed;
- numba is imported on first use only, so small cases and pre-commit hooks never pay its
  start-up.

Compiled kernels are kept in the *kernel cache*, ``kernels/`` under caselint's cache folder
(:func:`caselint.cachedir.cache_dir`, ``CASELINT_CACHE_DIR``), so that only the first run of an
installation compiles them. It belongs to the installation, not to a run: ``--no-cache``
turns off the analysed-mesh cache only, ``CASELINT_CACHE_DIR=off`` turns off both. Where no
writable folder exists, the kernels are compiled in memory for each process (numba's own
``cache=True`` would raise at import there).
"""

from __future__ import annotations

import contextlib
import functools
import importlib
import os
import tempfile
import threading
from pathlib import Path
from types import ModuleType
from typing import Callable

#: Environment variable choosing the kernels: ``numpy``, ``numba`` or ``auto`` (default).
ENV_KERNELS = "CASELINT_KERNELS"
MODES = ("auto", "numpy", "numba")

#: Smallest mesh (cells) for which ``auto`` uses the compiled kernels. numba's import and
#: the loading of the cached kernels take about 0.5 s a process (0.2 s import, 0.3 s for
#: the first kernel, 4 ms for each further one) on the 2-core benchmark machine. The whole
#: ``caselint check`` of the benchmark duct (shuffled hexahedra, rule set ``general``,
#: kernels cached), median of 3 fresh processes each way (benchmarks/bench_threshold.py,
#: 2026-12-02): 54,872 cells 1.06 s compiled / 0.99 s numpy, 97,336 cells 1.24 / 1.50 s;
#: the two cross at about 70,000 cells.
MIN_CELLS = 75_000


def mode() -> str:
    """The kernel choice of ``CASELINT_KERNELS`` (``auto`` when unset or unknown)."""
    value = os.environ.get(ENV_KERNELS, "auto").strip().lower()
    return value if value in MODES else "auto"


@functools.lru_cache(maxsize=1)
def numba_available() -> bool:
    """Whether numba can be imported (checked once; imports it)."""
    try:
        import numba  # noqa: F401
    except Exception:  # noqa: BLE001 - a broken install counts as absent: numpy runs
        return False
    return True


#: The decisions :func:`decided_for` holds, per thread (several partitions of a mesh may be
#: analysed at once on the threads of one Dask worker).
_HELD = threading.local()


@contextlib.contextmanager
def decided_for(n_cells: int):
    """Within the block, every mesh gets the kernels a mesh of ``n_cells`` cells gets: a
    partition of a large mesh (:mod:`caselint.partition`) must run the same arithmetic as
    the whole mesh, or its results could differ in the last bits (see the kernels'
    docstrings on ``arctan2``)."""
    held = _HELD.__dict__.setdefault("stack", [])
    held.append(_by_size(n_cells))
    try:
        yield
    finally:
        held.pop()


def use_compiled(n_cells: int) -> bool:
    """Whether a mesh of ``n_cells`` cells gets the compiled kernels (see the module doc)."""
    held = getattr(_HELD, "stack", None)
    return held[-1] if held else _by_size(n_cells)


def _by_size(n_cells: int) -> bool:
    choice = mode()
    if choice == "numpy" or (choice == "auto" and n_cells < MIN_CELLS):
        return False
    return numba_available()


def compiled(name: str, n_cells: int) -> ModuleType | None:
    """The kernel module ``caselint.mesh.kernels.<name>`` for a mesh of ``n_cells`` cells,
    or None when the numpy reference is to run."""
    if not use_compiled(n_cells):
        return None
    return importlib.import_module(f"{__name__}.{name}")


#: Items (rays, wall faces) below which a kernel runs on one thread.
THREADED_ITEMS = 4096


#: Threads per core for parts that mostly wait for the disk (:func:`in_threads`). Counted
#: on a 100M-cell streamed check (2 cores, a third of its arrays in memory): its ray count
#: within the boundary layer read 11-14 GB back from disk, a page at a time, in 67-94 s on
#: 2 threads, 56 s on 6; a walk whose pages stayed in memory took 24 s on 2, 26 on 6.
WAITING_THREADS_PER_CORE = 3


def in_threads(run: Callable[[slice], tuple], n: int, waits: bool = False) -> list[tuple]:
    """``run(part)`` over slices covering ``range(n)``, on up to one thread per core (the
    kernels release the interpreter lock), results in the order of the parts; ``waits``:
    the parts mostly wait for pages of arrays on disk (walks over a streamed mesh,
    :mod:`caselint.partition.streaming`), on :data:`WAITING_THREADS_PER_CORE` threads a
    core, so that some walk while others wait.

    The parts are independent (one wall face's walk, one ray, one face's metrics, written
    to its own rows), so the result is the same as one call over everything.
    """
    per_core = WAITING_THREADS_PER_CORE if waits else 1
    threads = min(per_core * (os.cpu_count() or 1), 8)
    if threads == 1 or n < THREADED_ITEMS:
        return [run(slice(0, n))]
    from concurrent.futures import ThreadPoolExecutor

    bounds = [n * i // (4 * threads) for i in range(4 * threads + 1)]   # 4 parts a thread
    with ThreadPoolExecutor(threads) as pool:
        return list(pool.map(run, [slice(a, b) for a, b in zip(bounds, bounds[1:])]))


def side_by_side(*calls: Callable[[], object]) -> list:
    """The results of the independent ``calls`` (compiled kernels, which release the
    interpreter lock), run on up to one thread each, in the order given."""
    threads = min(os.cpu_count() or 1, len(calls))
    if threads <= 1:
        return [call() for call in calls]
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(threads) as pool:
        return list(pool.map(lambda call: call(), calls))


def kernel_cache_dir() -> Path | None:
    """The writable kernel cache folder, or None (caches off, or nothing writable)."""
    from caselint.cachedir import cache_dir

    root = cache_dir()
    if root is None:
        return None
    folder = root / "kernels"
    try:
        folder.mkdir(parents=True, exist_ok=True)
        with tempfile.TemporaryFile(dir=folder):
            pass
    except OSError:
        return None
    return folder


@functools.lru_cache(maxsize=1)
def _cache_folder() -> Path | None:
    # fixed for the process: every kernel of a run is cached in one place, or in none
    return kernel_cache_dir()


def jit(func: Callable | None = None, **options) -> Callable:
    """``numba.njit`` for a kernel function (``@jit`` or ``@jit(inline="always")``), cached
    in the kernel cache when it is writable, compiled in memory otherwise. Only kernel
    modules call it (they import numba)."""
    if func is None:
        return functools.partial(jit, **options)
    import numba

    folder = _cache_folder()
    if folder is None:
        return numba.njit(cache=False, nogil=True, **options)(func)
    # numba's cache locator reads CACHE_DIR when the dispatcher is made: set it for that
    # moment only, so that other numba users of the process keep their own setting
    previous = numba.config.CACHE_DIR
    numba.config.CACHE_DIR = str(folder)
    try:
        return numba.njit(cache=True, nogil=True, **options)(func)
    finally:
        numba.config.CACHE_DIR = previous


def status() -> dict:
    """What runs here: the mode, whether numba is importable (imports it) and its version,
    the threshold, and the kernel cache folder (None: compiled in memory)."""
    info = {"mode": mode(), "min_cells": MIN_CELLS, "numba": None,
            "cache": None if _cache_folder() is None else str(_cache_folder())}
    if numba_available():
        import numba

        info["numba"] = numba.__version__
    return info
