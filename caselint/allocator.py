"""Memory-allocator settings for a caselint process: big arrays without slow first touches.

A check allocates and frees arrays of tens of megabytes many times (keys, orders and
gathers over millions of faces). Three defaults make each fresh allocation cost more than
the arithmetic done in it on Linux, or keep memory resident that is not used:

- numpy asks the kernel for transparent huge pages on large arrays (``madvise``); where the
  kernel compacts memory to find them on first touch (``defrag`` = ``madvise``, a common
  default), touching new memory runs at about 1 GB/s instead of 3 GB/s;
- glibc gives freed blocks back to the kernel (and serves each block above its adaptive
  threshold by a fresh ``mmap``), so the next array of the same size faults its pages
  in again;
- glibc gives each thread that allocates its own arena: an array made on a kernel's
  worker thread (the wall walk's threads are the first to ask for the geometry) cannot
  reuse the memory the read freed in the main arena, so the resident set grows by it.

:func:`tune_allocator` turns numpy's huge-page advice off (the setting the documented
``NUMPY_MADVISE_HUGEPAGE=0`` makes) and asks glibc, through ``mallopt``, to serve blocks
up to 32 MiB from its heap and keep up to 1 GiB of freed memory for reuse. Measured on
the 1M shuffled-hexahedra benchmark (three alternating pairs of fresh processes): a check
8.1-8.7 s without, 6.7-7.0 s with; the peak resident set about the same (0.87-0.93 GB).
It also keeps glibc to one arena for all threads (``M_ARENA_MAX``): two pairs on the same
case, peak 1.04-1.05 GB with an arena per thread, 0.90 GB with one, 6.0 s either way; at
5M cells 3.88 GB against 3.60 GB.
Only the command line and its worker processes call it: a library must not change the
process of the program that imports it. ``CASELINT_ALLOCATOR=default`` leaves these
settings alone.
"""

from __future__ import annotations

import ctypes
import os

#: mallopt parameters (glibc's malloc.h).
_M_TRIM_THRESHOLD, _M_TOP_PAD, _M_MMAP_THRESHOLD, _M_ARENA_MAX = -1, -2, -3, -8
#: Largest block glibc serves from its heap (its own upper limit on 64-bit systems).
MMAP_THRESHOLD = 32 * 2**20
#: Freed memory kept for reuse before glibc trims its heap, and the step it grows by.
TRIM_THRESHOLD = 2**30
TOP_PAD = 64 * 2**20
#: Arenas glibc may create: one, shared by every thread.
ARENA_MAX = 1

_done: dict[str, bool] = {}


def tune_allocator() -> dict[str, bool]:
    """Apply the settings above once per process; return which of them took effect."""
    if _done or os.environ.get("CASELINT_ALLOCATOR", "").strip().lower() == "default":
        return dict(_done)
    _done["numpy_hugepage_off"] = _numpy_hugepage_off()
    _done["glibc_heap"] = _glibc_heap()
    return dict(_done)


def _numpy_hugepage_off() -> bool:
    try:
        from numpy._core import multiarray           # numpy 2
    except ImportError:                                # numpy 1.x
        from numpy.core import multiarray              # type: ignore[no-redef]
    setter = getattr(multiarray, "_set_madvise_hugepage", None)
    if setter is None:
        return False
    setter(False)
    return True


#: Under a streamed check (:mod:`caselint.partition.streaming`) the process must stay under
#: its memory limit: little freed heap is kept (the heap is trimmed when 32 MiB are free at
#: its top, and grows by no more than asked), and blocks above 32 MiB come from ``mmap``
#: and go back to the kernel when freed. Blocks from 1 MiB were served by ``mmap`` too
#: until measured: every page of each was faulted in afresh (the streamed 4M-cell
#: benchmark case under 1.2 GB, one run each while another check ran: 9.3M minor faults,
#: 17 s of system time, 51 s; from the heap 2.4M, 6.5 s, 41 s; private memory's peak
#: 887 MiB against 923 MiB).
STREAMING = ((_M_MMAP_THRESHOLD, MMAP_THRESHOLD), (_M_TRIM_THRESHOLD, 32 * 2**20), (_M_TOP_PAD, 0))


def tune_for_streaming() -> bool:
    """Give freed memory back to the kernel from now on (a streamed check; see
    :data:`STREAMING`), and what is free now; whether it took effect."""
    if os.environ.get("CASELINT_ALLOCATOR", "").strip().lower() == "default":
        return False
    done = _glibc_heap(STREAMING)
    if done:
        libc = ctypes.CDLL(None)
        libc.malloc_trim.argtypes, libc.malloc_trim.restype = [ctypes.c_size_t], ctypes.c_int
        libc.malloc_trim(0)
    return done


def _glibc_heap(settings=((_M_MMAP_THRESHOLD, MMAP_THRESHOLD), (_M_TRIM_THRESHOLD, TRIM_THRESHOLD),
                          (_M_TOP_PAD, TOP_PAD), (_M_ARENA_MAX, ARENA_MAX))) -> bool:
    try:
        if not (os.confstr("CS_GNU_LIBC_VERSION") or "").startswith("glibc"):
            return False
    except (AttributeError, ValueError, OSError):     # not glibc (macOS, Windows, musl)
        return False
    try:
        libc = ctypes.CDLL(None)
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes, mallopt.restype = [ctypes.c_int, ctypes.c_int], ctypes.c_int
    return all(mallopt(param, value) == 1 for param, value in settings)
