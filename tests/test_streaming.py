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

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import calibration
from mesh_writers import write_decomposed, write_face_folder
from caselint.mesh.analysis import Mesh
from caselint.mesh.reader import read_mesh
from caselint.partition import streaming
from caselint.partition.scratch import PREFIX, Scratch, is_on_disk


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
    write_face_folder(folder / "single" / "constant" / "polyMesh", data, binary=True)
    return {"decomposed": _case(folder, "plate", sample.case),
            "loose": _case(folder, "loose", sample.case),
            "single": _case(folder, "single", sample.case), "data": data, "part": part}


def _between(case: Path) -> str:
    """A limit between the streamed and the whole-mesh estimate of the case's mesh."""
    way = streaming.mesh_way(case.parent / "plate", (10**15, "test"))
    assert way.way == "whole" and way.streamed < way.need
    return str((way.need + way.streamed) // 2)


def _run(case: Path, tmp: Path, *options, env=None):
    out = tmp / f"report-{len(list(tmp.iterdir()))}.json"
    done = subprocess.run([sys.executable, "-m", "caselint", "check", str(case), "--no-cache",
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
    for name, reason in (("single", streaming.NOT_DECOMPOSED),
                         ("loose", streaming.NO_ADDRESSING)):
        done, report = _run(plate[name], tmp_path, "--memory-limit", limit)
        assert done.returncode == 2, done.stderr
        assert report is None
        assert "cannot read the mesh" in done.stderr and reason in done.stderr
        assert "Traceback" not in done.stderr


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


def test_merge_on_disk_equals_the_merge_in_memory(plate, tmp_path):
    from caselint.mesh.formats.face_decomposed import read_decomposed
    from caselint.mesh.formats.face_decomposed_disk import merged_on_disk
    from caselint.mesh.formats.face_folder import processor_folders

    case = plate["decomposed"].parent / "plate"
    folders = [p / "constant" / "polyMesh" for p in processor_folders(case)]
    steps = []
    with Scratch(tmp_path) as scratch:
        disk = merged_on_disk(case, folders, scratch, steps.append)
        memory, notes = read_decomposed(case, folders)
        assert notes == () and len(steps) == 2 * len(folders)
        for name in ("points", "face_offsets", "face_points", "owner", "neighbour"):
            assert np.array_equal(getattr(disk, name), getattr(memory, name)), name
            assert is_on_disk(getattr(disk, name)), name
        assert disk.n_cells == memory.n_cells == plate["data"].n_cells
        assert disk.patches == memory.patches


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


def test_processor_folders_too_large_for_the_limit_are_cut_into_parts(plate, monkeypatch):
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
