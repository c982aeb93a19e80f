"""pint's parsed unit definitions kept in caselint's cache folder, and every way it falls back.

Reference values are exact by definition: 1 ft = 0.3048 m and 1 lb = 0.45359237 kg
(international yard and pound, 1959); standard gravity 9.80665 m/s^2 (3rd CGPM, 1901), so
1 psi = 0.45359237 * 9.80665 / 0.0254^2 Pa = 6894.757293168361 Pa; T[K] = (T[degF] +
459.67) * 5/9, so 32 degF = 273.15 K, 212 degF = 100 degC, -40 degF = -40 degC, and a
difference of 1 degF is 5/9 K.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pint
import pytest

from caselint import cachedir as cache
from caselint.manifest import units
from caselint.manifest.units import build_registry, registry_folder_name, to_si, unit_registry

REFERENCE = [   # (quantity, unit, to unit, exact value)
    (1, "ft", "m", 0.3048),
    (1, "psi", "Pa", 0.45359237 * 9.80665 / 0.0254**2),
    (32, "degF", "K", 273.15),
    (212, "degF", "degC", 100.0),
    (-40, "degF", "degC", -40.0),
    (1, "delta_degF", "K", 5 / 9),
    (30, "km/h", "m/s", 30_000 / 3600),
    (1, "cP", "Pa*s", 1e-3),
]


def _conversions(registry) -> list[float]:
    return [registry.Quantity(value, unit).to(target).magnitude
            for value, unit, target, _ in REFERENCE]


def _files(root: Path) -> set[Path]:
    return {p.relative_to(root) for p in root.rglob("*") if p.is_file()}


@pytest.fixture(scope="module")
def uncached() -> list[float]:
    """What pint gives without any disk cache (the reference for the cached registries)."""
    return _conversions(pint.UnitRegistry(cache_folder=None))


def test_psi_reference_is_what_the_docstring_says():
    assert 0.45359237 * 9.80665 / 0.0254**2 == pytest.approx(6894.757293168361, rel=1e-15)


def test_uncached_pint_matches_the_definitions(uncached):
    for got, (_, unit, _, exact) in zip(uncached, REFERENCE):
        assert got == pytest.approx(exact, rel=1e-12, abs=1e-12), unit


def test_second_registry_reads_the_cache_and_converts_identically(tmp_path, uncached):
    first = build_registry(tmp_path)
    folder = tmp_path / registry_folder_name()
    entries = sorted(folder.glob("*.pickle"))
    assert len(entries) >= 2                        # the definition files and the unit table
    assert first.cache_folder == folder
    stamps = {p: p.stat().st_mtime_ns for p in entries}
    second = build_registry(tmp_path)
    assert second.cache_folder == folder
    assert {p: p.stat().st_mtime_ns for p in sorted(folder.glob("*.pickle"))} == stamps
    assert _conversions(first) == uncached          # bit for bit, not approximately
    assert _conversions(second) == uncached
    assert [p.name for p in tmp_path.iterdir()] == [folder.name]   # no temporary folder left


def test_cache_is_really_read_a_damaged_entry_falls_back_and_is_rebuilt(tmp_path, uncached):
    build_registry(tmp_path)
    folder = tmp_path / registry_folder_name()
    for entry in folder.glob("*.pickle"):
        entry.write_bytes(b"not a pickle")
    damaged = build_registry(tmp_path)
    assert damaged.cache_folder is None             # built from the definitions instead
    assert _conversions(damaged) == uncached
    assert not folder.exists()                      # removed, so that the next run rebuilds it
    rebuilt = build_registry(tmp_path)
    assert rebuilt.cache_folder == folder and _conversions(rebuilt) == uncached


def test_losing_the_race_to_fill_keeps_the_other_process_folder(tmp_path, uncached):
    build_registry(tmp_path)                        # the other process, done first
    folder = tmp_path / registry_folder_name()
    stamps = {p: p.stat().st_mtime_ns for p in folder.iterdir()}
    units._fill(pint, tmp_path, folder)             # this one fills its own, renames: refused
    assert {p: p.stat().st_mtime_ns for p in folder.iterdir()} == stamps
    assert [p.name for p in tmp_path.iterdir()] == [folder.name]   # its temporary folder gone
    assert _conversions(build_registry(tmp_path)) == uncached


@pytest.mark.parametrize("where", ["a file", "below a file"])
def test_unusable_folder_gives_an_uncached_registry(tmp_path, uncached, where):
    blocker = tmp_path / "blocker"
    blocker.write_text("a file where the cache folder should be")
    target = blocker if where == "a file" else blocker / "cache"
    registry = build_registry(target)
    assert registry.cache_folder is None
    assert _conversions(registry) == uncached
    assert _files(tmp_path) == {Path("blocker")}


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0,
                    reason="needs POSIX permissions that bind (root ignores them)")
def test_read_only_cache_folder_gives_an_uncached_registry(tmp_path, uncached):
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(stat.S_IRUSR | stat.S_IXUSR)
    try:
        registry = build_registry(folder)
    finally:
        folder.chmod(stat.S_IRWXU)
    assert registry.cache_folder is None and _conversions(registry) == uncached
    assert list(folder.iterdir()) == []


def test_folder_others_may_write_to_is_not_read(tmp_path, uncached):
    build_registry(tmp_path)
    folder = tmp_path / registry_folder_name()
    folder.chmod(0o777)
    registry = build_registry(tmp_path)
    assert registry.cache_folder is None            # its pickles could hold anyone's code
    assert _conversions(registry) == uncached
    assert folder.is_dir()                          # someone else's folder is left alone


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() != 0,
                    reason="handing the folder to another user needs root")
def test_folder_of_another_user_is_not_read(tmp_path, uncached):
    build_registry(tmp_path)
    folder = tmp_path / registry_folder_name()
    os.chown(folder, 65534, -1)
    registry = build_registry(tmp_path)
    assert registry.cache_folder is None and _conversions(registry) == uncached


def test_folder_name_carries_the_versions_the_pickles_depend_on():
    import flexparser

    name = registry_folder_name()
    assert pint.__version__ in name and flexparser.__version__ in name
    assert name.startswith("units-") and os.sep not in name


@pytest.fixture()
def fresh_registry():
    """unit_registry() rebuilt within the test, and the process's registry restored after."""
    unit_registry.cache_clear()
    yield
    unit_registry.cache_clear()


@pytest.mark.parametrize("setting", ["off", "OFF", " off "])
def test_cache_off_writes_nothing(tmp_path, monkeypatch, uncached, fresh_registry, setting):
    monkeypatch.setenv(cache.ENV_DIR, setting)
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    monkeypatch.chdir(tmp_path)
    assert cache.cache_dir() is None
    registry = unit_registry()
    assert registry.cache_folder is None and _conversions(registry) == uncached
    assert to_si("1 ft", "length", "mesh.size") == pytest.approx(0.3048, rel=1e-12)
    assert list(tmp_path.iterdir()) == []


def test_registry_files_appear_only_in_the_cache_folder(tmp_path, monkeypatch, uncached,
                                                        fresh_registry):
    monkeypatch.setenv(cache.ENV_DIR, str(tmp_path / "cache"))
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    (tmp_path / "work").mkdir()
    monkeypatch.chdir(tmp_path / "work")
    registry = unit_registry()
    assert registry.cache_folder == tmp_path / "cache" / registry_folder_name()
    assert _conversions(registry) == uncached
    written = _files(tmp_path)
    assert written and all(p.parts[0] == "cache" for p in written)


def test_default_folder_follows_the_mesh_cache(tmp_path, monkeypatch):
    monkeypatch.setenv(cache.ENV_DIR, str(tmp_path / "c"))
    assert cache.cache_dir() == tmp_path / "c" == cache.default_cache_dir()
    monkeypatch.delenv(cache.ENV_DIR)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "x"))
    assert cache.cache_dir() == tmp_path / "x" / "caselint"


def test_no_cache_anywhere_when_pint_versions_are_unknown(tmp_path, monkeypatch, uncached):
    monkeypatch.setattr(units, "registry_folder_name", lambda: None)
    registry = build_registry(tmp_path)
    assert registry.cache_folder is None and _conversions(registry) == uncached
    assert list(tmp_path.iterdir()) == []


CASE = """caselint: 1
case:
  name: cache-setting
  safety: none
mesh:
  file: box.msh
  units: m
  boundaries: {xmin: inlet, xmax: outlet, ymin: wall, ymax: wall, zmin: wall, zmax: wall}
physics:
  fluid: {density: 1.2 kg/m^3, viscosity: 1.8e-5 Pa*s}
  flow: {kind: internal, velocity: 30 km/h, direction: [1, 0, 0], length: 0.2 m}
  turbulence: {model: k-omega-sst, wall_treatment: resolved}
time:
  mode: steady
checks:
  rule_sets: [general]
"""


@pytest.mark.parametrize("setting", ["off", "folder"])
def test_check_with_caching_off_leaves_no_files(tmp_path, monkeypatch, fresh_registry, setting):
    import contextlib
    import io

    import numpy as np

    from caselint.cli import main
    from caselint.mesh.blocks import structured_hex, write_gmsh22

    work = tmp_path / "work"
    work.mkdir()
    write_gmsh22(structured_hex(*(np.linspace(0, 0.2, 4),) * 3), work / "box.msh")
    (work / "box.caselint.yaml").write_text(CASE)
    monkeypatch.setenv(cache.ENV_DIR, "off" if setting == "off" else str(tmp_path / "cache"))
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    import caselint.cache as mesh_cache

    monkeypatch.setattr(mesh_cache, "MIN_CELLS", 0)
    monkeypatch.chdir(work)
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        code = main(["check", "box.caselint.yaml", "--format", "json", "-o", "report.json"])
    assert code in (0, 1) and '"cache-setting"' in (work / "report.json").read_text()
    written = _files(tmp_path) - {Path("work/box.msh"), Path("work/box.caselint.yaml"),
                                  Path("work/report.json")}
    if setting == "off":
        assert written == set()
    else:                   # the same run with a folder fills it: mesh entry and unit tables
        assert {p.parts[0] for p in written} == {"cache"}
        assert any(p.name.startswith("mesh-") for p in written)
        assert any(p.parts[1] == registry_folder_name() for p in written)
