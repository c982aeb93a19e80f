"""Disk room of the scratch arrays (caselint.partition.scratch): each file's blocks are
reserved before it is mapped, so a full disk is a MeshReadError with the numbers and what
would work, not a SIGBUS part-way; a file system that cannot reserve keeps the sparse
file. The checks streamed through the command line are in test_streaming.py.
"""

from __future__ import annotations

import errno
import os
import shutil

import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.partition.scratch import Scratch, is_on_disk, reserve

MiB = 1 << 20


def _failing(monkeypatch, code: int, after: int = 0) -> list[int]:
    """Make ``os.posix_fallocate`` reserve ``after`` times, then fail with ``code``; the
    sizes it was asked for."""
    real = getattr(os, "posix_fallocate", lambda fd, offset, size: None)
    calls = []

    def allocate(fd, offset, size):
        calls.append(size)
        if len(calls) > after:
            raise OSError(code, os.strerror(code))
        real(fd, offset, size)

    monkeypatch.setattr(os, "posix_fallocate", allocate, raising=False)
    return calls


@pytest.mark.parametrize("code", [errno.ENOSPC, errno.EDQUOT])
def test_a_full_disk_is_a_mesh_read_error_with_the_numbers(tmp_path, monkeypatch, code):
    calls = _failing(monkeypatch, code, after=1)
    usage = shutil.disk_usage(tmp_path)
    monkeypatch.setattr(shutil, "disk_usage", lambda path: usage._replace(free=3_456_789))
    mesh = tmp_path / "case"
    with Scratch(tmp_path, outside=mesh) as scratch:
        points = scratch.full("points", (MiB // 4,), 7, np.int64)          # 2 MiB
        with pytest.raises(MeshReadError) as caught:
            scratch.empty("face_centroids", (1_000_000,), np.float64)       # 8 MB
        error = caught.value
        assert error.file == str(mesh)
        assert error.message == (
            f"no room in the scratch folder {scratch.folder}: an array of 8 MB "
            "(face_centroids) did not fit, after the 2.1 MB this check had already put "
            "there, and 3.46 MB is free on its disk; set TMPDIR to a folder on a disk with "
            "more room, or raise --memory-limit (or CASELINT_MEMORY_LIMIT) to the whole-mesh "
            "estimate so that the mesh is checked in memory, without a scratch folder")
        assert calls == [2 * MiB, 8_000_000]
        assert list(scratch.folder.iterdir()) == []       # the refused file is gone
        assert scratch.bytes == 2 * MiB and list(scratch.arrays) == ["points"]
        assert int(points.sum()) == 7 * MiB // 4          # what fitted stays usable
    assert not scratch.folder.exists()


def test_refused_up_front_when_the_estimate_is_over_the_free_space(tmp_path, monkeypatch):
    usage = shutil.disk_usage(tmp_path)
    monkeypatch.setattr(shutil, "disk_usage", lambda path: usage._replace(free=60 * 10**9))
    with Scratch(tmp_path) as scratch:
        scratch.check_room(60 * 10**9, "as estimated")    # just fits
        with pytest.raises(MeshReadError) as caught:
            scratch.check_room(70 * 10**9 + 1, "700 bytes per cell", 90 * 10**9)
        assert caught.value.file == str(scratch.folder)   # no mesh named: the folder
        assert caught.value.message.startswith(
            f"no room in the scratch folder {scratch.folder}: this check needs about 70 GB "
            "there (700 bytes per cell), and 60 GB is free on its disk; set TMPDIR to a "
            "folder on a disk with more room, or raise --memory-limit (or "
            "CASELINT_MEMORY_LIMIT) to the whole-mesh estimate (about 90 GB) so that")
        assert scratch.bytes == 0 and list(scratch.folder.iterdir()) == []


@pytest.mark.parametrize("code", [errno.EOPNOTSUPP, errno.EINVAL])
def test_a_file_system_that_cannot_reserve_keeps_the_sparse_file(tmp_path, monkeypatch, code):
    calls = _failing(monkeypatch, code)
    with Scratch(tmp_path) as scratch:
        a = scratch.full("a", (1000, 3), -1.5, np.float64)
        assert calls == [24_000] and is_on_disk(a) and float(a.sum()) == -4500.0
        assert scratch.bytes == 24_000


def test_a_platform_without_fallocate_keeps_the_sparse_file(tmp_path, monkeypatch):
    monkeypatch.delattr(os, "posix_fallocate", raising=False)
    assert reserve(0, 1) is False
    with Scratch(tmp_path) as scratch:
        a = scratch.full("a", (1000,), 2, np.int32)
        assert is_on_disk(a) and int(a.sum()) == 2000


def test_other_failures_of_the_file_system_are_not_taken_for_a_full_disk(tmp_path, monkeypatch):
    _failing(monkeypatch, errno.EIO)
    with Scratch(tmp_path) as scratch:
        with pytest.raises(OSError) as caught:
            scratch.empty("a", (1000,), np.float64)
        assert caught.value.errno == errno.EIO and not isinstance(caught.value, MeshReadError)
        assert list(scratch.folder.iterdir()) == []


@pytest.mark.skipif(not hasattr(os, "posix_fallocate"), reason="no posix_fallocate here")
def test_the_blocks_are_really_reserved(tmp_path, monkeypatch):
    size = 64 * MiB
    probe = tmp_path / "probe.bin"
    with open(probe, "w+b") as handle:
        handle.truncate(size)
        sparse = os.fstat(handle.fileno()).st_blocks * 512
        if not reserve(handle.fileno(), size):
            pytest.skip("the file system of the test folder cannot reserve blocks")
    probe.unlink()
    assert sparse < MiB                                   # without: no blocks (the control)
    real = os.posix_fallocate
    held = []

    def allocate(fd, offset, length):     # the real call, and the blocks the file then has
        real(fd, offset, length)
        held.append(os.fstat(fd).st_blocks * 512)

    monkeypatch.setattr(os, "posix_fallocate", allocate)
    with Scratch(tmp_path) as scratch:
        a = scratch.empty("a", (size // 8,), np.float64)
        assert len(held) == 1 and held[0] >= size
        a[::4096] = 1.0                   # written into the reserved pages
        assert float(a.sum()) == size // 8 // 4096
