"""Batches of case files: ``--jobs N``, ``--scheduler`` (Dask) and meshes read once.

The reference is the serial run: a parallel or distributed run of the same case files
must write byte-identical JSON, print the same messages and exit with the same code.
"""

from __future__ import annotations

import contextlib
import io
import sys

import numpy as np
import pytest

import caselint.mesh
from caselint import batch
from caselint.cli import main
from caselint.mesh.blocks import graded, structured_hex, write_gmsh22

CASE = """caselint: 1
case:
  name: sweep-{n}
  safety: none
mesh:
  file: {mesh}
  units: {units}
  boundaries: {{xmin: inlet, xmax: outlet, ymin: wall, ymax: wall, zmin: wall, zmax: wall}}
physics:
  fluid: {{density: 1.2 kg/m^3, viscosity: 1.8e-5 Pa*s}}
  flow: {{kind: internal, velocity: {u} m/s, direction: [1, 0, 0], length: 0.2 m}}
  turbulence: {{model: k-omega-sst, wall_treatment: resolved}}
time:
  mode: steady
checks:
  rule_sets: [general]
"""


def run_cli(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


@pytest.fixture()
def sweep(tmp_path):
    """Six case files on two meshes (a velocity sweep), and one broken case file."""
    wall = graded(0.0, 0.1, 5, 1.2)
    axis = np.concatenate([wall, 0.2 - wall[-2::-1]])
    write_gmsh22(structured_hex(np.linspace(0, 1, 11), axis, axis), tmp_path / "duct.msh",
                 binary=True)
    write_gmsh22(structured_hex(np.linspace(0, 1, 6), axis, axis), tmp_path / "coarse.msh",
                 binary=True)
    paths = []
    for n, (mesh, u) in enumerate([("duct.msh", 1), ("coarse.msh", 1), ("duct.msh", 2),
                                   ("duct.msh", 4), ("coarse.msh", 2), ("duct.msh", 8)]):
        path = tmp_path / f"case{n}.caselint.yaml"
        path.write_text(CASE.format(n=n, mesh=mesh, u=u, units="m"))
        paths.append(str(path))
    bad = tmp_path / "broken.caselint.yaml"
    bad.write_text("caselint: 1\ncase: [\n")
    paths.insert(3, str(bad))
    return tmp_path, paths


def _json_run(folder, paths, *extra):
    target = folder / f"report{len(list(folder.glob('report*')))}.json"
    code, out, err = run_cli("check", *paths, "--format", "json", "-o", str(target), "--no-cache",
                             *extra)
    return code, err, target.read_bytes()


def test_parallel_processes_write_byte_identical_json(sweep):
    folder, paths = sweep
    serial = _json_run(folder, paths)
    assert serial[0] == 2 and "broken.caselint.yaml" in serial[1]   # bad input still reported
    assert serial[2].count(b'"name": "sweep-') == 6
    assert _json_run(folder, paths, "--jobs", "2") == serial
    assert _json_run(folder, paths, "--jobs", "3") == serial


def test_dask_cluster_writes_byte_identical_json(sweep):
    import distributed  # a test dependency: the cluster path must really run
    folder, paths = sweep
    serial = _json_run(folder, paths)
    with distributed.LocalCluster(processes=False, n_workers=2, threads_per_worker=2,
                                  dashboard_address=None) as cluster:
        assert _json_run(folder, paths, "--scheduler", cluster.scheduler_address) == serial


def test_each_mesh_is_read_once_per_batch(sweep, monkeypatch):
    folder, paths = sweep
    reads = []
    real = caselint.mesh.read_mesh

    def counting(path, **kwargs):
        reads.append(str(path))
        return real(path, **kwargs)

    monkeypatch.setattr(caselint.mesh, "read_mesh", counting)
    outcomes = batch.lint_batch(paths)
    assert sorted(reads) == sorted({str(folder / "duct.msh"), str(folder / "coarse.msh")})
    assert [o.path for o in outcomes] == paths                          # order as given
    assert [o.error is not None for o in outcomes] == [p.endswith("broken.caselint.yaml")
                                                       for p in paths]


def test_mesh_cache_gives_the_same_report(sweep, tmp_path, monkeypatch):
    folder, paths = sweep
    monkeypatch.setenv("CASELINT_CACHE_DIR", str(tmp_path / "cache"))
    monkeypatch.setattr("caselint.cache.MIN_CELLS", 0)
    target = tmp_path / "cached.json"
    uncached = _json_run(folder, paths)
    for _ in range(2):                          # the first run fills the cache, the next reads it
        code, _, err = run_cli("check", *paths, "--format", "json", "-o", str(target))
        assert (code, err, target.read_bytes()) == uncached
    assert len(list((tmp_path / "cache").glob("mesh-*.npz"))) == 2


def test_unusable_options_and_schedulers_exit_2(sweep, monkeypatch):
    _, paths = sweep
    code, _, err = run_cli("check", paths[0], "--jobs", "0")
    assert code == 2 and "--jobs must be at least 1" in err
    code, _, err = run_cli("check", paths[0], "--jobs", "2", "--scheduler", "tcp://127.0.0.1:1")
    assert code == 2 and "either --jobs or --scheduler" in err
    monkeypatch.setattr(batch, "CONNECT_TIMEOUT", "0.5s")
    code, _, err = run_cli("check", paths[0], "--scheduler", "tcp://127.0.0.1:1")
    assert code == 2 and "cannot reach the Dask scheduler at tcp://127.0.0.1:1" in err
    monkeypatch.setitem(sys.modules, "distributed", None)           # not installed
    code, _, err = run_cli("check", paths[0], "--scheduler", "tcp://127.0.0.1:1")
    assert code == 2 and "pip install 'dask[distributed]'" in err
    assert "Traceback" not in err
