"""Safety of caselint itself: no code from inputs, no network, atomic reports, inputs left
untouched, and several processes checking the same cases (sharing the mesh cache) at once.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import socket
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import caselint.engine.plugins as plugins
from caselint import hookimpl
from caselint.demo import demo_case_path
from caselint.mesh.blocks import structured_hex, write_gmsh22
from caselint.model import CaseSection
from caselint.report.base import Reporter
from fuzz_properties import strict_json
from test_cli import run_cli

ROOT = Path(__file__).resolve().parents[1]
CASE = ("caselint: 1\ncase: {{name: Invented kiln {name}}}\nmesh:\n  file: {mesh}\n"
        "  boundaries: {{xmin: inlet, xmax: outlet, ymin: wall, ymax: wall, zmin: wall, "
        "zmax: wall}}\n{extra}")


def write_block(folder: Path, name: str = "kiln", n: int = 4, extra: str = "") -> Path:
    """An n x n x n hexahedral block of 1 m with named sides, and a case file for it."""
    axis = np.linspace(0.0, 1.0, n + 1)
    write_gmsh22(structured_hex(axis, axis, axis), folder / f"{name}.msh")
    case = folder / f"{name}.yaml"
    case.write_text(CASE.format(name=name, mesh=f"{name}.msh", extra=extra), encoding="utf-8")
    return case


def with_plugin(monkeypatch, *plugin_objects) -> None:
    """Every plugin manager the CLI builds also registers ``plugin_objects``."""
    original = plugins.get_plugin_manager

    def patched(**kwargs):
        pm = original(**kwargs)
        for i, plugin in enumerate(plugin_objects):
            pm.register(plugin, name=f"test-safety-{i}")
        return pm

    monkeypatch.setattr(plugins, "get_plugin_manager", patched)


def fingerprint(folder: Path) -> dict[str, tuple]:
    """Every file under ``folder``: SHA-256, size, modification time and mode."""
    out = {}
    for path in sorted(folder.rglob("*")):
        if path.is_file():
            st = path.stat()
            out[str(path.relative_to(folder))] = (
                hashlib.sha256(path.read_bytes()).hexdigest(), st.st_size, st.st_mtime_ns,
                st.st_mode)
    return out


# -- no code from inputs ---------------------------------------------------------------------


@pytest.mark.parametrize("tag", ["!!python/object/apply:os.system ['touch {flag}']",
                                 "!!python/object/new:os.system ['touch {flag}']",
                                 "!!python/name:os.system"])
def test_python_tags_in_a_case_file_are_refused_and_never_run(tmp_path, tag):
    flag = tmp_path / "ran"
    case = write_block(tmp_path, extra=f"review:\n  prepared_by: {tag.format(flag=flag)}\n")
    code, out, err = run_cli("check", str(case))
    assert (code, out) == (2, "")
    assert f"{case}:7:16: [review.prepared_by] unsupported tag" in err
    assert not flag.exists()


def test_python_tags_in_a_rule_set_are_refused_and_never_run(tmp_path, monkeypatch):
    flag = tmp_path / "ran"
    rule_set = tmp_path / "evil.yaml"
    rule_set.write_text(f"description: !!python/object/apply:os.system ['touch {flag}']\n"
                        "rules: {}\n", encoding="utf-8")

    class Sets:
        @hookimpl
        def caselint_register_rule_sets(self):
            return [rule_set]

    with_plugin(monkeypatch, Sets())
    case = write_block(tmp_path, extra="checks: {rule_sets: [evil]}\n")
    code, _, err = run_cli("check", str(case))
    assert code == 2 and f"{rule_set}:1:14: [description] unsupported tag" in err
    assert not flag.exists()


def test_a_case_file_cannot_name_code_to_load(tmp_path, monkeypatch):
    """Module names in a case file are data: nothing is imported because of them."""
    import importlib

    imported = []
    real = importlib.import_module
    monkeypatch.setattr(importlib, "import_module",
                        lambda name, *a, **k: imported.append(name) or real(name, *a, **k))
    case = write_block(tmp_path, extra="plugins: [os, subprocess]\n")
    code, _, err = run_cli("check", str(case))
    assert code == 2 and "unknown key 'plugins'" in err
    case = write_block(tmp_path, extra="checks: {rule_sets: [os.path]}\n")
    code, _, err = run_cli("check", str(case), "--no-plugin", "subprocess")
    assert code == 2 and "unknown rule set 'os.path'" in err
    # only caselint's own built-in plugin modules were imported
    assert all(name.startswith("caselint.") for name in imported), imported


def test_plugins_come_only_from_installed_distributions(monkeypatch):
    """Autoload reads the entry points of installed distributions and nothing else."""
    import importlib.metadata

    asked = []
    monkeypatch.delenv(plugins.DISABLE_AUTOLOAD_ENV, raising=False)
    monkeypatch.setattr(importlib.metadata, "entry_points",
                        lambda **kw: asked.append(kw) or [])
    pm = plugins.get_plugin_manager()
    assert asked == [{"group": "caselint"}]
    assert sorted(name for name, _ in pm.list_name_plugin()) == sorted(plugins.BUILTIN_PLUGINS)


def test_a_poisoned_cache_entry_is_not_unpickled(tmp_path, monkeypatch):
    """The mesh cache is read with allow_pickle=False: an entry holding a pickled object
    (which could run code) is discarded and rebuilt, never loaded."""
    import caselint.cache as cache

    monkeypatch.setattr(cache, "MIN_CELLS", 0)
    folder = tmp_path / "cache"
    monkeypatch.setenv("CASELINT_CACHE_DIR", str(folder))
    case = write_block(tmp_path)
    assert run_cli("check", str(case), "--format", "json")[0] in (0, 1)
    (entry,) = folder.glob("mesh-*.npz")
    flag = tmp_path / "ran"

    class Payload:
        def __reduce__(self):
            return (os.system, (f"touch {flag}",))

    with open(entry, "wb") as handle:
        np.savez(handle, points=np.array([Payload()], dtype=object))
    code, out, err = run_cli("check", str(case), "--format", "json")
    assert code in (0, 1) and err == ""
    assert not flag.exists()
    (rebuilt,) = folder.glob("mesh-*.npz")
    with np.load(rebuilt, allow_pickle=False) as arrays:
        assert arrays["points"].dtype == np.float64


# -- no network --------------------------------------------------------------------------------


@pytest.fixture
def no_network(monkeypatch):
    """Any attempt to resolve a name or open a connection is recorded and refused."""
    attempts = []

    def refuse(*args, **kwargs):
        attempts.append(args)
        raise OSError("network access attempted during a test")

    for name in ("connect", "connect_ex", "sendto"):
        monkeypatch.setattr(socket.socket, name, refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)
    monkeypatch.setattr(socket, "getaddrinfo", refuse)
    return attempts


@pytest.mark.parametrize("fmt", ["text", "json", "sarif", "junit", "markdown", "html"])
def test_demo_runs_offline_in_every_format(no_network, fmt):
    code, out, err = run_cli("demo", "--format", fmt)
    assert code == 0 and out and no_network == []


class _SectionPack:
    """A rule pack whose case-file section refers to caselint's definitions by $ref."""

    def __init__(self, ref: str) -> None:
        self.ref = ref

    @hookimpl
    def caselint_register_case_sections(self):
        return [CaseSection("kiln", {"type": "object", "properties": {
            "firing_length": {"$ref": self.ref}}})]


def test_schema_references_resolve_locally(tmp_path, monkeypatch, no_network):
    with_plugin(monkeypatch, _SectionPack("urn:caselint:schema:case-v1#/$defs/length"))
    case = write_block(tmp_path, extra="kiln: {firing_length: '40 mm'}\n")
    code, out, _ = run_cli("check", str(case), "--format", "json")
    assert code in (0, 1) and strict_json(out)["cases"][0]["name"] == "Invented kiln kiln"
    case.write_text(case.read_text() .replace("'40 mm'", "[1, 2]"), encoding="utf-8")
    code, _, err = run_cli("check", str(case))
    assert code == 2 and "[kiln.firing_length]" in err
    assert no_network == []


def test_a_remote_schema_reference_is_refused_not_fetched(tmp_path, monkeypatch, no_network):
    with_plugin(monkeypatch, _SectionPack("https://schemas.example.invalid/length.json"))
    case = write_block(tmp_path, extra="kiln: {firing_length: 2}\n")
    code, _, err = run_cli("check", str(case))
    assert code == 2 and "cannot be resolved offline" in err
    assert no_network == []


# -- reports written atomically ----------------------------------------------------------------


class _Exploding:
    @hookimpl
    def caselint_register_reporters(self):
        def render(report, options):
            raise RuntimeError("reporter failed half-way")
        return [Reporter(name="exploding", description="fails", render=render, suffix=".txt")]


def test_a_failing_reporter_leaves_the_previous_report(tmp_path, monkeypatch):
    with_plugin(monkeypatch, _Exploding())
    case = write_block(tmp_path)
    out_dir = tmp_path / "reports"
    out_dir.mkdir()
    report = out_dir / "report.json"
    report.write_text("previous report\n", encoding="utf-8")
    code, _, err = run_cli("check", str(case), "--format", "json", "--output", str(report),
                           "--format", "exploding", "--output", str(out_dir / "x.txt"))
    assert code == 3 and "RuntimeError: reporter failed half-way" in err
    assert report.read_text(encoding="utf-8") == "previous report\n"   # json was not written
    assert sorted(p.name for p in out_dir.iterdir()) == ["report.json"]


@pytest.mark.parametrize("failure", [OSError(28, "No space left on device"),
                                     KeyboardInterrupt()])
def test_an_interrupted_write_leaves_the_previous_report_and_no_temporary(tmp_path, monkeypatch,
                                                                         failure):
    case = write_block(tmp_path)
    out_dir = tmp_path / "reports"
    out_dir.mkdir()
    report = out_dir / "report.json"
    report.write_text("previous report\n", encoding="utf-8")

    def fail(*args, **kwargs):
        raise failure

    monkeypatch.setattr(os, "fsync", fail)               # after the text, before the rename
    code, _, err = run_cli("check", str(case), "--format", "json", "--output", str(report))
    if isinstance(failure, OSError):
        assert code == 2 and f"cannot write {report}: No space left on device" in err
    else:
        assert code == 130 and "interrupted" in err
    assert report.read_text(encoding="utf-8") == "previous report\n"
    assert sorted(p.name for p in out_dir.iterdir()) == ["report.json"]
    monkeypatch.undo()
    code, _, _ = run_cli("check", str(case), "--format", "json", "--output", str(report))
    assert strict_json(report.read_text(encoding="utf-8"))["format"] == "caselint-report"


# -- inputs never modified ---------------------------------------------------------------------


def test_checking_never_modifies_the_inputs(tmp_path, monkeypatch):
    """SHA-256, size, time and mode of every input file, and the folders' contents, are the
    same after checks in every format, with the mesh cache on, of a good case, a case
    with a damaged mesh and a case whose mesh cannot be read."""
    import caselint.cache as cache

    inputs = tmp_path / "inputs"
    shutil.copytree(demo_case_path().parent, inputs / "demo")
    damaged = inputs / "damaged"
    damaged.mkdir()
    case = write_block(damaged, "dup")
    mesh = damaged / "dup.msh"
    text = mesh.read_text()                              # node 2 twice: an unused duplicate
    mesh.write_text(text.replace("$EndNodes", "126 0.25 0 0\n$EndNodes")
                    .replace("$Nodes\n125\n", "$Nodes\n126\n"), encoding="ascii")
    broken = damaged / "broken.yaml"
    (damaged / "broken.msh").write_text(text[: len(text) // 2], encoding="ascii")
    broken.write_text(CASE.format(name="broken", mesh="broken.msh", extra=""), encoding="utf-8")
    monkeypatch.setattr(cache, "MIN_CELLS", 0)
    monkeypatch.setenv("CASELINT_CACHE_DIR", str(tmp_path / "cache"))
    before = fingerprint(inputs)
    reports = tmp_path / "reports"
    reports.mkdir()
    for fmt in ("text", "json", "sarif", "junit", "markdown", "html"):
        code, _, _ = run_cli("check", str(inputs / "demo" / "case.yaml"), str(case), str(broken),
                             "--format", fmt, "--output", str(reports / f"report.{fmt}"))
        assert code == 2                                 # the broken one; the others reported
    run_cli("check", str(inputs / "demo" / "case.yaml"), str(case))
    assert fingerprint(inputs) == before
    assert len(list(reports.iterdir())) == 6


# -- several processes at once -----------------------------------------------------------------

_WORKER = """
import os, sys
import caselint.cache
import caselint.mesh
caselint.cache.MIN_CELLS = 0          # cache even this small mesh
if os.environ.get("CACHE_ONLY"):      # prove the mesh comes from the shared cache entry
    def read_mesh(*args, **kwargs):
        raise AssertionError("the mesh file was read, not the cache")
    caselint.mesh.read_mesh = read_mesh
from caselint.cli import main
sys.exit(main(sys.argv[1:]))
"""


def _check_in_processes(case: Path, cache_dir: Path, n: int = 4,
                        cache_only: bool = False) -> list[tuple[int, str, str]]:
    env = dict(os.environ, CASELINT_CACHE_DIR=str(cache_dir), CASELINT_DISABLE_PLUGIN_AUTOLOAD="1",
               PYTHONPATH=str(ROOT), CACHE_ONLY="1" if cache_only else "")
    procs = [subprocess.Popen([sys.executable, "-c", _WORKER, "check", str(case), "--format",
                               "json"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                              env=env) for _ in range(n)]
    # communicate, not wait: a report longer than the pipe's buffer would block the child
    outputs = [p.communicate(timeout=120) for p in procs]
    return [(p.returncode, out, err) for p, (out, err) in zip(procs, outputs)]


def test_four_processes_checking_one_case_agree_and_share_the_cache(tmp_path):
    case = write_block(tmp_path, n=14)                   # 2744 cells
    cache_dir = tmp_path / "cache"
    cold = _check_in_processes(case, cache_dir)          # all four miss, build and store
    warm = _check_in_processes(case, cache_dir, cache_only=True)   # all four read the entry
    outputs = {out for _, out, _ in cold + warm}
    assert {(code, err) for code, _, err in cold + warm} == {(0, "")}
    assert len(outputs) == 1                              # byte-identical JSON, cold or warm
    assert strict_json(outputs.pop())["cases"][0]["checks"]
    # the compiled kernels' own folder ("kernels", with CASELINT_KERNELS=numba) is not an entry
    entries = sorted(p.name for p in cache_dir.iterdir() if p.name != "kernels")
    assert len(entries) == 1 and entries[0].startswith("mesh-") and entries[0].endswith(".npz")
    with np.load(cache_dir / entries[0], allow_pickle=False) as arrays:
        assert arrays["points"].shape == (15**3, 3)      # a whole entry, not a torn one
