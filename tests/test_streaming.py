"""A mesh over the memory limit checked streamed (caselint.partition.streaming): the
decomposed case merged on disk folder by folder, analysed partition by partition, the
whole-mesh arrays memory-mapped in a scratch folder. The report must equal the one of the
whole-mesh check byte for byte (the JSON without run times), with the numpy and the
compiled kernels; the scratch folder goes, also after an error; nothing is written beside
the case; what cannot be streamed is refused with what would work.

The mesh is gmsh's prism-tet plate strip of the calibration corpus (not made for this
test), decomposed by the test writer into three slabs with addressing files.
"""

from __future__ import annotations

import dataclasses
import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import calibration
from mesh_writers import write_decomposed, write_face_folder, zone_file
from caselint.mesh.analysis import Mesh
from caselint.mesh.limits import STREAM_ADVICE
from caselint.mesh.reader import read_mesh
from caselint.partition import streaming
from caselint.partition.scratch import MIN_BYTES, PREFIX, Scratch, is_on_disk


def _case(folder: Path, mesh_name: str, sample_case: Path) -> Path:
    """The sample's case file beside ``folder``, reading the mesh ``mesh_name``."""
    text = sample_case.read_text().replace(f"file: {sample_case.with_suffix('.msh').name}",
                                           f"file: {mesh_name}")
    assert f"file: {mesh_name}" in text
    case = folder / f"{mesh_name}.caselint.yaml"
    case.write_text(text)
    return case


@pytest.fixture(scope="module")
def plate(tmp_path_factory):
    """(decomposed case file, plain mesh-folder case file, plate mesh data, the processor
    of each cell)."""
    folder = tmp_path_factory.mktemp("stream")
    sample = calibration.layer_growth(folder)
    data = read_mesh(sample.case.with_suffix(".msh")).data
    x = Mesh(data).cell_centroids[:, 0]
    part = np.searchsorted(np.quantile(x, [1 / 3, 2 / 3]), x)       # three slabs
    write_decomposed(folder / "plate", data, part, binary=True)
    write_decomposed(folder / "loose", data, part, binary=True, addressing=False)
    # single folders: binary (offsets + points), ASCII (a list of faces) with two cell
    # zones, gzip (ASCII offsets + points, 64-bit labels)
    halves = {"front": np.flatnonzero(x < np.median(x)), "back": np.flatnonzero(x >= np.median(x))}
    write_face_folder(folder / "single" / "constant" / "polyMesh", data, binary=True)
    write_face_folder(folder / "single-ascii" / "constant" / "polyMesh", data, zones=halves)
    write_face_folder(folder / "single-gz" / "constant" / "polyMesh", data, compact=True,
                      gz=True, labels=64)
    return {"decomposed": _case(folder, "plate", sample.case),
            "loose": _case(folder, "loose", sample.case),
            "single": _case(folder, "single", sample.case),
            "single-ascii": _case(folder, "single-ascii", sample.case),
            "single-gz": _case(folder, "single-gz", sample.case),
            "file": sample.case, "data": data, "part": part}


def _between(case: Path) -> str:
    """A limit between the streamed and the whole-mesh estimate of the case's mesh."""
    way = streaming.mesh_way(case.parent / "plate", (10**15, "test"))
    assert way.way == "whole" and way.streamed < way.need
    return str((way.need + way.streamed) // 2)


#: ``python -m caselint`` with the smallest part lowered to fit the plate (19k cells).
SMALL_PARTS = ("-c", "import caselint.mesh.limits as limits; limits.MIN_PIECE_CELLS = 2000; "
                     "from caselint.cli import main; raise SystemExit(main())")


def _run(case: Path, tmp: Path, *options, env=None, python=("-m", "caselint")):
    out = tmp / f"report-{len(list(tmp.iterdir()))}.json"
    done = subprocess.run([sys.executable, *python, "check", str(case), "--no-cache",
                           "--format", "json", "--output", str(out), *options],
                          capture_output=True, text=True, timeout=600,
                          env={**os.environ, **(env or {})})
    report = None
    if out.is_file():
        report = json.loads(out.read_text())
        for case_report in report["cases"]:
            case_report.pop("duration_s", None)
    return done, report


def _listing(folder: Path) -> list:
    return sorted((str(p.relative_to(folder)), p.stat().st_size) for p in folder.rglob("*"))


@pytest.mark.parametrize("kind", ["numpy", "numba"])
def test_streamed_check_gives_the_whole_mesh_report(plate, tmp_path, kind):
    case = plate["decomposed"]
    scratch_base = tmp_path / "tmp"
    scratch_base.mkdir()
    outputs = tmp_path / "out"
    outputs.mkdir()
    env = {"CASELINT_KERNELS": kind, "TMPDIR": str(scratch_base)}
    before = _listing(case.parent)
    done, whole = _run(case, outputs, "--memory-limit", "off", env=env)
    assert done.returncode in (0, 1), done.stderr
    assert whole["cases"][0]["findings"]                  # findings to compare
    assert "partition by partition" not in done.stderr
    done, streamed = _run(case, outputs, "--memory-limit", _between(case), env=env)
    assert done.returncode in (0, 1), done.stderr
    assert streamed == whole
    # said once, as a note; no progress bar when stderr is not a terminal
    assert done.stderr.count("caselint: note:") == 1
    assert "checked partition by partition with its whole-mesh arrays on disk" in done.stderr
    assert "is over the limit" in done.stderr
    assert list(scratch_base.iterdir()) == []             # scratch folder removed
    assert _listing(case.parent) == before                # nothing written beside the case


def test_workers_that_stream_have_their_note_told(plate, tmp_path):
    """With --jobs the cases are checked in worker processes, which cannot write to the
    terminal: each streamed case's note is told by the parent, once."""
    import shutil

    case = plate["decomposed"]
    copy = tmp_path / "twin"
    shutil.copytree(case.parent / "plate", copy / "plate2")
    twin = copy / "twin.caselint.yaml"
    twin.write_text(case.read_text().replace("file: plate", "file: plate2"))
    outputs = tmp_path / "out"
    outputs.mkdir()
    done = subprocess.run([sys.executable, "-m", "caselint", "check", str(case), str(twin),
                           "--no-cache", "--jobs", "2", "--memory-limit", _between(case),
                           "--format", "json", "--output", str(outputs / "r.json")],
                          capture_output=True, text=True, timeout=600,
                          env={**os.environ, "TMPDIR": str(tmp_path)})
    assert done.returncode in (0, 1), done.stderr
    notes = [line for line in done.stderr.splitlines() if line.startswith("caselint: note:")]
    assert len(notes) == 2, done.stderr
    assert {str(case.parent / "plate"), str(copy / "plate2")} == {
        line.split()[2].rstrip(":") for line in notes}
    assert all("checked partition by partition with its whole-mesh arrays on disk" in line
               for line in notes)
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(PREFIX)]


def test_a_mesh_that_cannot_be_streamed_is_refused_with_what_would_work(plate, tmp_path):
    limit = _between(plate["decomposed"])
    done, report = _run(plate["loose"], tmp_path, "--memory-limit", limit)
    assert done.returncode == 2, done.stderr
    assert report is None
    assert "cannot read the mesh" in done.stderr and streaming.NO_ADDRESSING in done.stderr
    assert "Traceback" not in done.stderr
    # a mesh file of another format is read whole: refused, saying what would work
    done, report = _run(plate["file"], tmp_path, "--memory-limit", "50MB")
    assert done.returncode == 2, done.stderr
    assert report is None and "Traceback" not in done.stderr
    message = " ".join(done.stderr.split())
    assert "cannot read the mesh" in message and STREAM_ADVICE in message
    assert "a mesh file (gmsh, VTU, CGNS, SU2, ...) is read whole" in message


def test_refused_when_even_the_streamed_estimate_is_over_the_limit(plate, tmp_path):
    way = streaming.mesh_way(plate["decomposed"].parent / "plate", (10**15, "test"))
    done, _ = _run(plate["decomposed"], tmp_path, "--memory-limit", str(way.streamed - 1))
    assert done.returncode == 2
    assert "streamed, partition by partition, it would still need about" in done.stderr
    assert f"cells' share, with parts of {way.piece_cells:,} cells" in done.stderr
    assert "Raise it with --memory-limit" in done.stderr


def test_scratch_folder_goes_after_an_error(plate, tmp_path, monkeypatch):
    from caselint.batch import lint_batch
    from caselint.partition import measure

    monkeypatch.setenv("TMPDIR", str(tmp_path))
    import tempfile
    monkeypatch.setattr(tempfile, "tempdir", None)        # TMPDIR read again
    seen = []

    def failing(piece, names=None):
        seen.extend(tmp_path.glob(f"{PREFIX}*"))
        raise RuntimeError("stopped in the middle of a partition")

    monkeypatch.setattr(measure, "measure_piece", failing)
    limit = int(_between(plate["decomposed"]))
    with pytest.raises(RuntimeError, match="stopped in the middle"):
        lint_batch([str(plate["decomposed"])], memory_limit=(limit, "test"))
    assert len(seen) == 1 and seen[0].name.startswith(PREFIX)   # it was there, in TMPDIR
    assert list(tmp_path.glob(f"{PREFIX}*")) == []


#: ``caselint`` whose partitions each take a while (to be stopped in the middle of one).
SLOW_PARTS = ("-c", "import time; import caselint.partition.measure as m; "
                    "slow = m.measure_piece; "
                    "m.measure_piece = lambda *a, **k: (time.sleep(0.5), slow(*a, **k))[1]; "
                    "from caselint.cli import main; raise SystemExit(main())")


def test_a_terminated_check_removes_its_scratch_folder(plate, tmp_path):
    """SIGTERM (a CI job's time-out) in the middle of a streamed check: exit 143, said on
    stderr without a traceback, and the scratch folder gone."""
    import signal
    import time

    scratch_base = tmp_path / "tmp"
    scratch_base.mkdir()
    case = plate["decomposed"]
    child = subprocess.Popen([sys.executable, *SLOW_PARTS, "check", str(case), "--no-cache",
                              "--format", "json", "--output", str(tmp_path / "r.json"),
                              "--memory-limit", _between(case)],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                             env={**os.environ, "TMPDIR": str(scratch_base)})
    deadline = time.monotonic() + 120
    while not list(scratch_base.glob(f"{PREFIX}*")) and time.monotonic() < deadline:
        time.sleep(0.05)
    assert list(scratch_base.glob(f"{PREFIX}*")), "the check never made its scratch folder"
    time.sleep(1.0)                                       # into the partitions
    child.send_signal(signal.SIGTERM)
    _, err = child.communicate(timeout=120)
    assert child.returncode == 143, err
    assert "caselint: terminated" in err and "Traceback" not in err
    assert list(scratch_base.iterdir()) == []
    assert not (tmp_path / "r.json").exists()


def _scratch_in(tmp_path: Path, monkeypatch) -> None:
    """TMPDIR set to ``tmp_path`` for the checks run in this process."""
    import tempfile

    monkeypatch.setenv("TMPDIR", str(tmp_path))
    monkeypatch.setattr(tempfile, "tempdir", None)        # TMPDIR read again


def test_refused_up_front_when_the_scratch_disk_is_too_small(plate, tmp_path, monkeypatch):
    import shutil

    from caselint.mesh.limits import SCRATCH_BYTES_PER_CELL, format_size
    from test_cli import run_cli

    case = plate["decomposed"]
    limit = _between(case)
    data, part = plate["data"], plate["part"]
    # the processor folders' faces: each face once, those between two folders twice
    inner = data.neighbour >= 0
    faces = data.n_faces + int(np.count_nonzero(part[data.owner[inner]] !=
                                                 part[data.neighbour[inner]]))
    assert faces // 3 < data.n_cells                      # charged by its cells
    need = SCRATCH_BYTES_PER_CELL * data.n_cells
    _scratch_in(tmp_path, monkeypatch)
    usage = shutil.disk_usage(tmp_path)
    monkeypatch.setattr(shutil, "disk_usage", lambda path: usage._replace(free=need // 2))
    code, out, err = run_cli("check", str(case), "--no-cache", "--memory-limit", limit)
    assert code == 2 and out == ""
    assert f"cannot read the mesh: {case.parent / 'plate'}: no room in the scratch folder " \
           f"{tmp_path / PREFIX}" in err
    assert f"this check needs about {format_size(need)} there (about 700 bytes per cell, " \
           f"estimated from the mesh files), and {format_size(need // 2)} is free on its " \
           "disk; set TMPDIR to a folder on a disk with more room, or raise --memory-limit" in err
    whole = streaming.mesh_way(case.parent / "plate", (10**15, "test")).need
    assert f"to the whole-mesh estimate (about {format_size(whole)}) so that" in err
    assert "partition by partition" not in err            # refused before it began
    assert "Traceback" not in err
    assert list(tmp_path.iterdir()) == []                 # the scratch folder went
    # with room enough (the same estimate, one byte more free) it streams
    monkeypatch.setattr(shutil, "disk_usage", lambda path: usage._replace(free=need + 1))
    code, _, err = run_cli("check", str(case), "--no-cache", "--memory-limit", limit)
    assert code in (0, 1) and "checked partition by partition" in err, err
    assert list(tmp_path.iterdir()) == []


def test_a_disk_that_fills_during_the_check_stops_it_with_exit_2(plate, tmp_path, monkeypatch):
    import errno

    from test_cli import run_cli

    _scratch_in(tmp_path, monkeypatch)
    real = getattr(os, "posix_fallocate", lambda fd, offset, size: None)
    seen = []

    def filling(fd, offset, size):           # room for five arrays, then the disk is full
        seen.append((size, list(tmp_path.glob(f"{PREFIX}*"))))
        if len(seen) > 5:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        real(fd, offset, size)

    monkeypatch.setattr(os, "posix_fallocate", filling, raising=False)
    case = plate["decomposed"]
    code, out, err = run_cli("check", str(case), "--no-cache", "--memory-limit", _between(case))
    assert code == 2 and out == ""
    put = sum(size for size, _ in seen[:5])
    from caselint.mesh.limits import format_size

    assert f"no room in the scratch folder {seen[-1][1][0]}: an array of " \
           f"{format_size(seen[-1][0])} (" in err
    assert f") did not fit, after the {format_size(put)} this check had already put there, " \
           "and " in err and "set TMPDIR to a folder on a disk with more room" in err
    assert "Traceback" not in err
    assert len(seen) == 6 and len(seen[-1][1]) == 1       # it was there, in TMPDIR ...
    assert list(tmp_path.iterdir()) == []                 # ... and went with the error


def test_scratch_arrays_are_on_disk_and_the_folder_goes(tmp_path):
    scratch = Scratch(tmp_path)
    a = scratch.full("a", (1000, 3), -1.5, np.float64)
    kept = scratch.keep_large("b", np.arange(1 << 18, dtype=np.int64))   # 2 MiB
    small = scratch.keep_large("c", np.arange(10))
    assert is_on_disk(a) and is_on_disk(kept[5:]) and not is_on_disk(small)
    assert type(a) is np.ndarray and a.flags.writeable
    assert float(a.sum()) == -1.5 * 3000 and int(kept[-1]) == (1 << 18) - 1
    assert list(scratch.folder.iterdir()) == []           # unlinked once mapped
    assert scratch.bytes == 3000 * 8 + (1 << 21)
    scratch.close()
    assert not scratch.folder.exists() and scratch.closed
    assert float(a.sum()) == -4500.0                      # views stay readable


# writes made as read (None), held and flushed after every write (1), every folder or so,
# or once per pass
@pytest.mark.parametrize("spare", [None, 1, 3_000_000, 10**10])
def test_merge_on_disk_equals_the_merge_in_memory(plate, tmp_path, spare):
    from caselint.mesh.formats.face_decomposed import read_decomposed
    from caselint.mesh.formats.face_decomposed_disk import merged_on_disk
    from caselint.mesh.formats.face_folder import processor_folders

    case = plate["decomposed"].parent / "plate"
    folders = [p / "constant" / "polyMesh" for p in processor_folders(case)]
    steps = []
    with Scratch(tmp_path) as scratch:
        scratch.spare = spare
        disk = merged_on_disk(case, folders, scratch, steps.append)
        memory, notes = read_decomposed(case, folders)
        assert notes == () and len(steps) == 2 * len(folders)
        for name in ("points", "face_offsets", "face_points", "owner", "neighbour"):
            assert np.array_equal(getattr(disk, name), getattr(memory, name)), name
            assert is_on_disk(getattr(disk, name)), name
        assert disk.n_cells == memory.n_cells == plate["data"].n_cells
        assert disk.patches == memory.patches


@pytest.fixture(scope="module")
def zoned(plate, tmp_path_factory):
    """The plate decomposed with two cell zones (front and back halves, spread over the
    slabs), binary with addressing files."""
    data, part = plate["data"], plate["part"]
    x = Mesh(data).cell_centroids[:, 0]
    zone = (x >= np.median(x)).astype(np.int32)
    data = dataclasses.replace(data, cell_zone=zone, zone_names=("front", "back"))
    return write_decomposed(tmp_path_factory.mktemp("zoned") / "plate", data, part,
                            binary=True)


def _merge_reading(case: Path, folders: list[Path], tmp_path: Path, monkeypatch, between):
    """The merge on disk of ``case``, ``between()`` called once the first pass is done;
    and the files each pass read (folder name, file name)."""
    from caselint.mesh.formats import face_lists
    from caselint.mesh.formats.face_decomposed_disk import merged_on_disk

    reads: list[set] = [set(), set()]
    steps = []
    real = face_lists.read_bytes

    def read_bytes(path):
        reads[len(steps) >= len(folders)].add((path.parents[2].name, path.name))
        return real(path)

    def done(n):
        steps.append(n)
        if len(steps) == len(folders):
            between()

    monkeypatch.setattr(face_lists, "read_bytes", read_bytes)
    with Scratch(tmp_path / "scratch") as scratch:
        scratch.spare = 3_000_000
        mesh = merged_on_disk(case, folders, scratch, done)
        return mesh, reads


@pytest.mark.parametrize("zones", [False, True])
def test_the_second_pass_reads_only_the_faces_addressing_and_zones(plate, zoned, tmp_path,
                                                                   monkeypatch, zones):
    from caselint.mesh.formats.face_decomposed import read_decomposed
    from caselint.mesh.formats.face_folder import processor_folders

    case = tmp_path / "plate"
    shutil.copytree(zoned if zones else plate["decomposed"].parent / "plate", case)
    folders = [p / "constant" / "polyMesh" for p in processor_folders(case)]
    memory, _ = read_decomposed(case, folders)
    (tmp_path / "scratch").mkdir()

    def remove():                    # what the second pass must not read
        for folder in folders:
            for file in ("points", "owner", "neighbour", "boundary"):
                (folder / file).unlink()

    disk, reads = _merge_reading(case, folders, tmp_path, monkeypatch, remove)
    for name in ("points", "face_offsets", "face_points", "owner", "neighbour"):
        assert np.array_equal(getattr(disk, name), getattr(memory, name)), name
    assert disk.patches == memory.patches and disk.n_cells == memory.n_cells
    assert [z for z, _ in disk.zones] == [z for z, _ in memory.zones] == (
        ["front", "back"] if zones else [])
    assert all(np.array_equal(a, b) for (_, a), (_, b) in zip(disk.zones, memory.zones))
    again = {"faces", "pointProcAddressing", "faceProcAddressing"} | (
        {"cellZones", "cellProcAddressing"} if zones else set())
    assert reads[1] == {(f"processor{i}", file) for i in range(3) for file in again}
    assert ("processor2", "points") in reads[0]
    assert (("processor2", "cellZones") in reads[0]) == zones


def _set_label(folder: Path, file: str, list_index: int, item: int, value: int) -> None:
    """Item ``item`` of list ``list_index`` of a binary labels file set to ``value``."""
    from caselint.mesh.formats.face_lists import list_head, open_list_file, read_labels

    lf = open_list_file(folder, file)
    pos = lf.start
    for _ in range(list_index):
        pos = read_labels(lf, pos, file)[1]
    data = bytearray(lf.data)
    at = list_head(lf, pos, file)[2] + item * lf.label.itemsize
    data[at:at + lf.label.itemsize] = np.array([value], lf.label).tobytes()
    lf.path.write_bytes(bytes(data))


def _labels_of(folder: Path, file: str, list_index: int = 0) -> np.ndarray:
    from caselint.mesh.formats.face_lists import open_list_file, read_labels

    lf = open_list_file(folder, file)
    pos = lf.start
    for _ in range(list_index):
        pos = read_labels(lf, pos, file)[1]
    return read_labels(lf, pos, file)[0]


def _move_a_zone_cell(folder: Path) -> None:
    """The first cell of the first zone moved to the last zone, as a rewrite would."""
    from caselint.mesh.formats.face_folder import read_zones
    from caselint.mesh.formats.face_lists import open_list_file

    zones = dict(read_zones(open_list_file(folder, "cellZones"), 10**9))
    first, last = list(zones)[0], list(zones)[-1]
    zones[last] = np.r_[zones[first][:1], zones[last]]
    zones[first] = zones[first][1:]
    (folder / "cellZones").write_bytes(zone_file(zones, binary=True, labels=32, scalars=64))


def _swap_first_two(folder: Path, file: str) -> None:
    a, b = (int(v) for v in _labels_of(folder, file)[:2])
    _set_label(folder, file, 0, 0, b)
    _set_label(folder, file, 0, 1, a)


#: Changes made to processor1 between the passes, each well formed on its own: the file
#: the error names, and the change.
CHANGES = {
    # two faces placed the other way round (same ids, same count)
    "faces placed": ("faceProcAddressing", lambda f: _swap_first_two(f, "faceProcAddressing")),
    # two cells of the zones the other way round (read again for the zones only)
    "cells placed": ("cellProcAddressing", lambda f: _swap_first_two(f, "cellProcAddressing")),
    # the first face one point shorter, the second one longer: the same face points
    "face sizes": ("faces", lambda f: _set_label(f, "faces", 0, 1,
                                                 int(_labels_of(f, "faces")[1]) - 1)),
    # a face point beyond the folder's points (face sizes unchanged)
    "face point": ("faces", lambda f: _set_label(f, "faces", 1, 0,
                                                 len(_labels_of(f, "pointProcAddressing")))),
    # a cell moved from one zone to the other (the same zone names)
    "zone cells": ("cellZones", _move_a_zone_cell),
}


@pytest.mark.parametrize("change", sorted(CHANGES))
def test_a_folder_changed_between_the_passes_is_refused(zoned, tmp_path, monkeypatch, change):
    from caselint.errors import MeshReadError
    from caselint.mesh.formats.face_folder import processor_folders

    case = tmp_path / "plate"
    shutil.copytree(zoned, case)
    folders = [p / "constant" / "polyMesh" for p in processor_folders(case)]
    (tmp_path / "scratch").mkdir()
    with pytest.raises(MeshReadError) as error:
        _merge_reading(case, folders, tmp_path, monkeypatch,
                       lambda: CHANGES[change][1](folders[1]))
    assert error.value.file == str(folders[1])
    assert error.value.message.startswith(f"{CHANGES[change][0]} changed while the case was "
                                          "read (the merge on disk reads each processor folder "
                                          "twice): check the case again")


def test_held_writes_end_as_writes_one_after_the_other():
    from caselint.mesh.formats.face_decomposed_disk import Pending

    rng = np.random.default_rng(8)
    n = 200_000
    # ids repeat between writes; ascending runs (as a processor folder's), and ids in no
    # order (sorted by part first)
    writes = [(np.sort(rng.choice(n, 30_000, replace=False)), rng.random((30_000, 3)))
              for _ in range(3)]
    writes[1] = (np.r_[writes[1][0][15_000:], writes[1][0][:15_000]], writes[1][1])
    writes += [(rng.choice(n, 30_000, replace=False), rng.random((30_000, 3)))
               for _ in range(2)]
    # and 64-bit values (-1 among them) into a 32-bit target: held in its type
    labels = [(index, rng.integers(-1, 2**31 - 1, len(index))) for index, _ in writes]
    expected, expected_labels = np.zeros((n, 3)), np.zeros(n, np.int32)
    for (index, values), (_, ids) in zip(writes, labels):
        expected[index] = values
        expected_labels[index] = ids
    for spare in (None, 1, 2_000_000, 10**10):
        got, got_labels = np.zeros((n, 3)), np.zeros(n, np.int32)
        pending = Pending(spare)
        for (index, values), (_, ids) in zip(writes, labels):
            pending.put(got, index, values)
            pending.put(got_labels, index, ids)
        if spare == 10**10:              # all held: ids as 32 bits, labels in the target's
            held = [run for _, runs in pending.runs.values() for run in runs]
            assert {r[0].dtype for r in held} == {np.dtype(np.int32)}
            assert {r[1].dtype for r in held} == {np.dtype(np.float64), np.dtype(np.int32)}
        pending.flush()
        assert np.array_equal(got, expected) and np.array_equal(got_labels, expected_labels)
        assert pending.runs == {} and pending.bytes == 0


@pytest.mark.parametrize("kind", ["numpy", "numba"])
def test_runs_of_held_writes(kind, monkeypatch):
    # slice_runs (the numpy reference and the compiled kernel held_writes.slice_runs)
    # against runs cut by hand: where the 256th of the ids goes down, and where each 256th
    # starts in each run (a binary search of the run's 256ths)
    from caselint.mesh import kernels
    from caselint.mesh.formats.face_decomposed_disk import SLICES, slice_runs

    monkeypatch.setenv(kernels.ENV_KERNELS, kind)
    rng = np.random.default_rng(21)
    n = 100_000
    shift = (n - 1).bit_length() - 8
    ascending = np.sort(rng.choice(n, 5000, replace=False))
    cases = [ascending, np.r_[ascending[2500:], ascending[:2500], ascending[100:200]],
             np.zeros(0, np.int64), np.array([n - 1, 0]), np.arange(n)[::-1][:SLICES + 1],
             rng.integers(0, n, 3000).astype(np.int32)]
    for index in cases:
        got = slice_runs(index, n)
        part = index >> shift
        down = [0] + [i for i in range(1, len(index)) if part[i] < part[i - 1]] + [len(index)]
        if len(down) - 1 > SLICES:
            assert got is None
            continue
        bounds, starts = got
        assert list(bounds) == down
        for lo, hi, at in zip(down[:-1], down[1:], starts):
            run = part[lo:hi]
            assert [int(a) for a in at] == [int(np.sum(run < k)) for k in range(SLICES + 1)]


def test_compiled_face_point_writes_equal_the_numpy_reference(monkeypatch):
    # face_point_writes: the numpy reference (ramp, repeats, gather) and the compiled
    # kernel held_writes.face_point_writes, against writes made face by face by hand
    from caselint.mesh import kernels
    from caselint.mesh.formats.face_decomposed_disk import face_point_writes

    rng = np.random.default_rng(5)
    n_local, n_points, n_merged = 400, 300, 1000
    sizes = rng.integers(3, 9, n_local)                    # triangles to octagons
    local_offsets = np.r_[0, np.cumsum(sizes)]
    local_points = rng.integers(0, n_points, int(local_offsets[-1])).astype(np.int32)
    faces = rng.choice(n_merged, n_local, replace=False)
    face_ids = np.where(rng.random(n_local) < 0.8, faces + 1, -(faces + 1))  # some turned
    merged_sizes = rng.integers(3, 9, n_merged)
    merged_sizes[faces] = sizes
    offsets = np.r_[0, np.cumsum(merged_sizes)]
    point_ids = rng.permutation(5 * n_points)[:n_points].astype(np.int64)
    dst, values = [], []
    for f in np.flatnonzero(face_ids > 0):
        start = offsets[face_ids[f] - 1]
        dst += range(start, start + sizes[f])
        values += point_ids[local_points[local_offsets[f]:local_offsets[f + 1]]].tolist()
    for kind in ("numpy", "numba"):
        monkeypatch.setenv(kernels.ENV_KERNELS, kind)
        for point_dtype in (np.int32, np.int64):
            got_dst, got_values = face_point_writes(local_offsets, local_points, face_ids,
                                                    offsets, point_ids, point_dtype)
            assert got_dst.dtype == np.int32 and got_values.dtype == point_dtype, kind
            assert got_dst.tolist() == dst and got_values.tolist() == values, kind
        none = face_point_writes(local_offsets, local_points, -np.abs(face_ids), offsets,
                                 point_ids, np.int32)
        assert [len(a) for a in none] == [0, 0], kind       # no face kept


def test_addressing_that_misplaces_faces_or_points_is_refused():
    from caselint.errors import MeshReadError
    from caselint.mesh.formats.face_decomposed_disk import Placed

    def placed(faces, points, n_faces=6, n_points=4):
        marks = Placed(n_faces, n_points)
        for f, p in zip(faces, points):
            marks.add(np.array(f, dtype=np.int64), np.array(p, dtype=np.int64))
        marks.check("case")

    placed([[0, 1, 2], [3, 4, 5]], [[0, 1], [1, 2, 3]])            # each face once: fine
    with pytest.raises(MeshReadError, match="do not place face 4 "):
        placed([[0, 1, 2], [3, 5]], [[0, 1], [2, 3]])
    with pytest.raises(MeshReadError, match="place 7 faces for the 6 .* more than once"):
        placed([[0, 1, 2], [2, 3, 4, 5]], [[0, 1], [2, 3]])
    with pytest.raises(MeshReadError, match="do not place point 2 "):
        placed([[0, 1, 2], [3, 4, 5]], [[0, 1], [1, 3]])


def test_no_scratch_folder_inside_the_case(plate, tmp_path):
    case = plate["decomposed"]
    inside = case.parent / "plate" / "tmp-inside"
    inside.mkdir()
    try:
        before = _listing(case.parent)
        done, _ = _run(case, tmp_path, "--memory-limit", _between(case),
                       env={"TMPDIR": str(inside)})
        assert done.returncode == 2
        assert "inside the mesh's folder: set TMPDIR to a folder outside it" in done.stderr
        assert _listing(case.parent) == before
    finally:
        inside.rmdir()


def test_the_estimate_says_which_way_and_why(plate):
    folder = plate["decomposed"].parent / "plate"
    assert streaming.mesh_way(folder, (None, "off")).reason == "no memory limit"
    roomy = streaming.mesh_way(folder, (10**12, "test"))
    assert roomy.way == "whole" and "fits the limit 1 TB (test)" in roomy.reason
    way = streaming.mesh_way(folder, (int(_between(plate["decomposed"])), "test"))
    assert way.way == "stream" and way.streamed <= way.limit < way.need
    assert "is over the limit" in way.reason and "streamed, partition by partition" in way.reason
    # a mesh file is left to its reader, which checks the memory as before
    assert streaming.mesh_way(plate["decomposed"], (1, "test")).way == "whole"


def _json_report(case: Path, limit, on_stream=None) -> dict:
    """The JSON report of ``case`` checked in this process (run times removed)."""
    from caselint.pipeline import CheckOptions, run_check

    run = run_check(CheckOptions(paths=(str(case),), formats=("json",), use_cache=False,
                                 memory_limit=limit, on_stream=on_stream))
    assert not run.bad_input, run.messages
    report = json.loads(run.stdout[0])
    for case_report in report["cases"]:
        case_report.pop("duration_s", None)
    return report


def test_streamed_parts_are_runs_as_large_as_the_limit_leaves(plate, monkeypatch):
    import contextlib

    from caselint.mesh import limits

    case = plate["decomposed"]
    monkeypatch.setattr(limits, "MIN_PIECE_CELLS", 500)
    roomy = streaming.mesh_way(case.parent / "plate", (10**15, "test"))
    largest = roomy.piece_cells
    # room for a third of the largest folder once the whole mesh's share is counted
    limit = roomy.streamed - limits.STREAM_PIECE_BYTES_PER_CELL * (largest - largest // 3)
    way = streaming.mesh_way(case.parent / "plate", (limit, "test"))
    assert way.way == "stream" and way.piece_cells == largest // 3
    assert f"in parts of at most {largest // 3:,} cells" in way.reason
    told = []

    @contextlib.contextmanager
    def on_stream(note, steps):
        told.append((note, steps))
        yield lambda n: told.append(n)

    whole = _json_report(case, (None, "off"))
    assert _json_report(case, (limit, "test"), on_stream) == whole
    (note, steps), *advances = told
    assert "in parts of at most" in note
    n_cells = plate["data"].n_cells
    parts = -(-n_cells // (largest // 3))                 # runs of consecutive cell ids
    assert parts >= 9
    assert steps == 2 * 3 + parts                         # 3 folders read twice, the parts
    assert sum(advances) == steps


def test_streamed_parts_grow_to_the_room_the_limit_leaves(plate):
    """Parts larger than a folder where the limit leaves room for them (fewer parts, so
    less of the mesh analysed twice in their rings); the estimate of the streamed way stays
    that of parts of a folder's size, the least it needs."""
    from caselint.mesh import limits

    case = plate["decomposed"]
    roomy = streaming.mesh_way(case.parent / "plate", (10**15, "test"))
    largest = roomy.piece_cells
    assert roomy.part_cells == roomy.cells > 2 * largest         # the whole mesh at most
    limit = roomy.streamed + limits.STREAM_PIECE_BYTES_PER_CELL * largest
    way = streaming.mesh_way(case.parent / "plate", (limit, "test"))
    assert way.way == "stream" and way.piece_cells == largest
    assert way.part_cells == 2 * largest and way.streamed == roomy.streamed
    assert f"in parts of at most {2 * largest:,} cells, about {limits.format_size(limit)}" \
        in way.reason


# -- a single mesh folder, streamed ---------------------------------------------------------

SINGLES = ("single", "single-ascii", "single-gz")


def _single_between(case: Path, min_piece: int = 2000) -> int:
    """A limit between the streamed and the whole-mesh estimate of a single folder, with
    parts of at least ``min_piece`` cells (the plate is small for the default)."""
    from caselint.mesh import limits

    saved, limits.MIN_PIECE_CELLS = limits.MIN_PIECE_CELLS, min_piece
    try:
        folder = case.parent / case.name.removesuffix(".caselint.yaml")
        roomy = streaming.mesh_way(folder, (10**15, "test"))
        small = (roomy.streamed - limits.STREAM_PIECE_BYTES_PER_CELL * roomy.piece_cells
                 + limits.STREAM_PIECE_BYTES_PER_CELL * min_piece)     # the smallest parts
    finally:
        limits.MIN_PIECE_CELLS = saved
    assert roomy.way == "whole" and small < roomy.need
    return (roomy.need + small) // 2


def test_a_single_folder_streams_with_its_read_charged(plate, monkeypatch):
    from caselint.mesh import limits
    from caselint.mesh.formats.face_folder_disk import READ_BYTES_PER_CELL

    data = plate["data"]
    share = max(data.n_cells, data.n_faces // 3)        # the cells the estimate charges
    ways = {name: streaming.mesh_way(plate[name].parent / name, (10**15, "test"))
            for name in SINGLES}
    for name, way in ways.items():
        assert way.cells == data.n_cells and way.piece_cells == share, name
        read = READ_BYTES_PER_CELL["binary" if name == "single" else "ascii"]
        assert way.streamed == (limits.FIXED_BYTES
                                + (limits.STREAM_BYTES_PER_CELL + read) * share
                                + limits.STREAM_PIECE_BYTES_PER_CELL * share), name
    limit = _single_between(plate["single"])
    monkeypatch.setattr(limits, "MIN_PIECE_CELLS", 2000)
    way = streaming.mesh_way(plate["single"].parent / "single", (limit, "test"))
    assert way.way == "stream" and way.streamed <= limit < way.need
    assert 2000 <= way.piece_cells < data.n_cells and "in parts of at most" in way.reason


@pytest.mark.parametrize("kind", ["numpy", "numba"])
def test_a_single_folder_streamed_gives_the_whole_mesh_report(plate, tmp_path, kind):
    scratch_base = tmp_path / "tmp"
    scratch_base.mkdir()
    outputs = tmp_path / "out"
    outputs.mkdir()
    env = {"CASELINT_KERNELS": kind, "TMPDIR": str(scratch_base)}
    for name in SINGLES:
        case = plate[name]
        before = _listing(case.parent / name)
        done, whole = _run(case, outputs, "--memory-limit", "off", env=env)
        assert done.returncode in (0, 1), done.stderr
        assert whole["cases"][0]["findings"]                  # findings to compare
        assert "partition by partition" not in done.stderr
        done, streamed = _run(case, outputs, "--memory-limit", str(_single_between(case)),
                              env=env, python=SMALL_PARTS)
        assert done.returncode in (0, 1), (name, done.stderr)
        assert streamed == whole, name
        assert done.stderr.count("caselint: note:") == 1, name
        assert "checked partition by partition with its whole-mesh arrays on disk" in done.stderr
        assert "in parts of at most" in done.stderr
        assert list(scratch_base.iterdir()) == [], name        # scratch folder removed
        assert _listing(case.parent / name) == before, name    # nothing beside the mesh


def test_a_single_folder_read_on_disk_equals_the_read_in_memory(plate, tmp_path):
    from caselint.mesh.formats.face_folder import read_folder_mesh
    from caselint.mesh.formats.face_folder_disk import READ_STEPS, read_on_disk

    for name in SINGLES:
        folder = plate[name].parent / name
        polymesh = folder / "constant" / "polyMesh"
        steps = []
        with Scratch(tmp_path) as scratch:
            disk = read_on_disk(polymesh, scratch, steps.append)
            memory = read_folder_mesh(polymesh)
            assert steps == [1] * READ_STEPS
            for field in ("points", "face_offsets", "face_points", "owner", "neighbour"):
                a, b = getattr(disk, field), getattr(memory, field)
                assert np.array_equal(a, b), (name, field)
                assert is_on_disk(a) or a.nbytes < MIN_BYTES, (name, field)
            assert disk.face_points.dtype == disk.owner.dtype == np.int32
            assert disk.n_cells == memory.n_cells and disk.patches == memory.patches
            assert [z for z, _ in disk.zones] == [z for z, _ in memory.zones]
            assert all(np.array_equal(a, b) for (_, a), (_, b) in zip(disk.zones, memory.zones))
            # the mesh data the streamed check gets: the same, array for array and type
            streamed = read_mesh(folder, memory_limit=(None, "streamed"), scratch=scratch).data
            whole = read_mesh(folder).data
            for field in ("points", "face_offsets", "face_points", "owner", "neighbour",
                          "face_group", "cell_zone"):
                a, b = getattr(streamed, field), getattr(whole, field)
                assert (a is None and b is None) or (
                    a.dtype == b.dtype and np.array_equal(a, b)), (name, field)
            assert streamed.group_names == whole.group_names
            assert streamed.group_types == whole.group_types
            assert streamed.zone_names == whole.zone_names
            assert len(streamed.shapes) == len(whole.shapes) > 0
            for s, w in zip(streamed.shapes, whole.shapes):
                assert s.type == w.type and np.array_equal(s.cells, w.cells)
                assert np.array_equal(s.connectivity, w.connectivity)
    assert "front" in whole.zone_names or name != "single-ascii"


def test_a_single_folder_read_on_disk_holds_one_file_at_a_time(tmp_path, monkeypatch):
    """Allocations traced while reading a 97k-hexahedron binary folder: on disk, at most the
    faces file with its offsets (the largest list); in memory, points and faces at once."""
    import tracemalloc

    from caselint.mesh.blocks import structured_hex
    from caselint.mesh.formats.face_folder import read_folder_mesh
    from caselint.mesh.formats.face_folder_disk import read_on_disk
    from caselint.mesh.formats.meshio_files import mesh_from_meshio

    monkeypatch.setenv("CASELINT_KERNELS", "numpy")      # allocations tracemalloc sees
    axis = np.linspace(0.0, 1.0, 47)
    data = mesh_from_meshio(structured_hex(axis, axis, axis)).data
    folder = write_face_folder(tmp_path / "polyMesh", data, binary=True)
    size = {p.name: p.stat().st_size for p in folder.iterdir()}
    peaks = {}
    with Scratch(tmp_path) as scratch:
        for how, read in (("memory", read_folder_mesh),
                          ("disk", lambda f: read_on_disk(f, scratch))):
            tracemalloc.start()
            raw = read(folder)
            peaks[how] = tracemalloc.get_traced_memory()[1]
            tracemalloc.stop()
            del raw
    # the faces file, its offsets as int64 and the check that they rise (their int64
    # differences, a bool each)
    largest = size["faces"] + (8 + 8 + 1) * data.n_faces
    assert size["faces"] < peaks["disk"] < 1.05 * largest
    # in memory the points are read beside the faces (their arrays views of the files)
    assert peaks["memory"] - peaks["disk"] > 0.9 * size["points"]
