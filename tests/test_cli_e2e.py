"""The command line end to end: real case files, real meshes, the real rules.

The meshes are axis-aligned hexahedral blocks written with meshio, so the expected values
are known by hand: faces are orthogonal (non-orthogonality 0 deg), and the growth ratio
between two neighbouring cells is the ratio of their x spacings (the y and z spacings are
equal), e.g. 0.4 m / 0.1 m = 4.
"""

from __future__ import annotations

import json
from pathlib import Path

import meshio
import numpy as np
import pytest
from jsonschema import Draft202012Validator

from caselint.report.json_report import report_schema
from test_cli import run_cli

GROUPS = {"inlet": 1, "outlet": 2, "walls": 3}


def write_block_mesh(path: Path, xs, ys=(0.0, 0.1, 0.2), zs=(0.0, 0.1, 0.2)) -> Path:
    """A hex block on the grid xs x ys x zs (m) with groups inlet (x min), outlet, walls."""
    xs, ys, zs = (np.asarray(v, dtype=float) for v in (xs, ys, zs))
    nx, ny, nz = len(xs), len(ys), len(zs)
    X, Y, Z = np.meshgrid(xs, ys, zs, indexing="ij")
    points = np.column_stack([X.ravel(order="F"), Y.ravel(order="F"), Z.ravel(order="F")])
    pid = np.arange(nx * ny * nz).reshape((nx, ny, nz), order="F")
    c = pid[:-1, :-1, :-1].ravel(order="F")
    dx, dy, dz = 1, nx, nx * ny
    hexes = np.column_stack([c, c + dx, c + dx + dy, c + dy,
                             c + dz, c + dx + dz, c + dx + dy + dz, c + dy + dz])

    def side(ids2d, a, b):
        """Quads over a grid of point ids (2-D array), corners in cyclic order."""
        p = ids2d[:-1, :-1].ravel()
        return np.column_stack([p, p + a, p + a + b, p + b])

    quads, tags = [], []
    for sl, a, b, group in (
        ((0, slice(None), slice(None)), dy, dz, "inlet"),
        ((-1, slice(None), slice(None)), dy, dz, "outlet"),
        ((slice(None), 0, slice(None)), dx, dz, "walls"),
        ((slice(None), -1, slice(None)), dx, dz, "walls"),
        ((slice(None), slice(None), 0), dx, dy, "walls"),
        ((slice(None), slice(None), -1), dx, dy, "walls"),
    ):
        q = side(pid[sl], a, b)
        quads.append(q)
        tags.append(np.full(len(q), GROUPS[group]))
    quads, tags = np.vstack(quads), np.concatenate(tags)
    mesh = meshio.Mesh(
        points, [("hexahedron", hexes), ("quad", quads)],
        cell_data={"gmsh:physical": [np.full(len(hexes), 10), tags],
                   "gmsh:geometrical": [np.full(len(hexes), 10), tags]},
        field_data={**{name: np.array([tag, 2]) for name, tag in GROUPS.items()},
                    "fluid": np.array([10, 3])},
    )
    meshio.write(path, mesh, file_format="gmsh22", binary=False)
    return path


def write_case(folder: Path, mesh: Path, name: str = "Invented test duct",
               extra: str = "") -> Path:
    case = folder / f"{mesh.stem}.yaml"
    case.write_text(
        "caselint: 1\n"
        f"case: {{name: {name}, safety: none}}\n"
        f"mesh:\n  file: {mesh.name}\n  units: m\n"
        "  boundaries: {inlet: inlet, outlet: outlet, walls: wall}\n"
        f"checks: {{rule_sets: [general]}}\n{extra}",
        encoding="utf-8",
    )
    return case


@pytest.fixture
def uniform_case(tmp_path):
    # 12 cells of 0.1 m between the duct walls: gap-cells passes as well
    across = np.linspace(0.0, 1.2, 13)
    mesh = write_block_mesh(tmp_path / "uniform.msh", xs=[0.0, 0.1, 0.2, 0.3], ys=across,
                            zs=across)
    return write_case(tmp_path, mesh)


@pytest.fixture
def jump_case(tmp_path):
    # x spacings 0.1, 0.1, 0.4 m: the last pair of cells jumps by 4 in size.
    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    return write_case(tmp_path, mesh, name="Invented duct with a jump")


def _checks(document: dict) -> dict[str, dict]:
    return {c["rule"]: c for c in document["cases"][0]["checks"]}


def test_uniform_mesh_passes_every_mesh_check(uniform_case):
    code, out, err = run_cli("check", str(uniform_case), "--format", "json")
    assert (code, err) == (0, "")
    document = json.loads(out)
    assert Draft202012Validator(report_schema()).is_valid(document)
    checks = _checks(document)
    assert checks["growth-ratio"]["outcome"] == "pass"
    assert checks["growth-ratio"]["measured"] == pytest.approx(1.0, abs=1e-12)
    assert checks["non-orthogonality"]["measured"] == pytest.approx(0.0, abs=1e-9)
    assert checks["unassigned-boundary"]["outcome"] == "pass"
    assert checks["gap-cells"]["measured"] == 12
    assert document["cases"][0]["mesh"] == "uniform.msh"


def test_growth_jump_fails_with_the_measured_ratio(jump_case):
    code, out, _ = run_cli("check", str(jump_case), "--format", "json")
    assert code == 1
    document = json.loads(out)
    assert Draft202012Validator(report_schema()).is_valid(document)
    growth = _checks(document)["growth-ratio"]
    assert (growth["outcome"], growth["severity"]) == ("fail", "error")
    assert growth["measured"] == pytest.approx(4.0, rel=1e-9)  # 0.4 m / 0.1 m
    assert growth["limit"] == 3.0
    findings = [f for f in document["cases"][0]["findings"] if f["rule"] == "growth-ratio"]
    assert findings and findings[0]["severity"] == "error"
    assert findings[0]["measured"] == pytest.approx(4.0, rel=1e-9)
    code, text, _ = run_cli("check", str(jump_case))
    assert code == 1
    assert " 4 " in text and "Invented duct with a jump" in text
    assert text.splitlines()[-1].endswith("worst severity: error (fail level: error)")


def test_two_cases_and_a_broken_one(uniform_case, jump_case, tmp_path):
    broken = tmp_path / "broken.yaml"
    broken.write_text("caselint: 1\ncase: {name: x}\nmesh: {file: nowhere.msh}\n",
                      encoding="utf-8")
    code, out, err = run_cli("check", str(uniform_case), str(broken), str(jump_case),
                             "--format", "json")
    assert code == 2
    assert err.startswith("caselint: error: ") and str(broken) in err
    assert err.count("\n") == 1 and "Traceback" not in err
    names = [c["name"] for c in json.loads(out)["cases"]]
    assert names == ["Invented test duct", "Invented duct with a jump"]


def test_json_is_byte_identical_across_runs(jump_case):
    first = run_cli("check", str(jump_case), "--format", "json")[1]
    assert run_cli("check", str(jump_case), "--format", "json")[1] == first


def test_unknown_rule_set_is_a_usage_error(uniform_case):
    code, out, err = run_cli("check", str(uniform_case), "--rule-set", "no-such-set")
    assert code == 2 and "no-such-set" in err


def test_init_writes_a_starter_that_checks(tmp_path):
    # 12 cells across the duct between its walls, so gap-cells passes too
    mesh = write_block_mesh(tmp_path / "room.msh", xs=[0.0, 0.1, 0.2],
                            ys=np.linspace(0.0, 0.2, 13), zs=np.linspace(0.0, 0.2, 13))
    target = tmp_path / "starter.yaml"
    code, out, err = run_cli("init", str(mesh), "--output", str(target))
    assert (code, out) == (0, "")
    assert str(target) in err
    text = target.read_text(encoding="utf-8")
    assert "inlet" in text and "outlet" in text and "walls" in text
    code, _, err = run_cli("check", str(target))
    assert code == 0, err
    code, _, err = run_cli("init", str(mesh), "--output", str(target))
    assert code == 2 and "already exists" in err


def test_mesh_summary_text_and_json(tmp_path):
    mesh = write_block_mesh(tmp_path / "block.msh", xs=[0.0, 100.0, 200.0, 300.0],
                            ys=[0.0, 100.0, 200.0], zs=[0.0, 100.0, 200.0])
    code, out, _ = run_cli("mesh", str(mesh), "--units", "mm", "--format", "json")
    assert code == 0
    summary = json.loads(out)
    assert summary["cells"]["total"] == 12  # 3 x 2 x 2 hexahedra
    assert summary["extent_m"]["size"] == pytest.approx([0.3, 0.2, 0.2])
    assert summary["volume_m3"]["total"] == pytest.approx(0.3 * 0.2 * 0.2)
    code, text, _ = run_cli("mesh", str(mesh), "--units", "mm")
    assert code == 0 and "inlet" in text and "\x1b[" not in text
    code, _, err = run_cli("mesh", str(tmp_path / "missing.msh"))
    assert code == 2 and "missing.msh" in err


def test_demo_runs_the_shipped_example():
    code, out, err = run_cli("demo", "--format", "json")
    assert code == 0, err  # the demo succeeds once it has shown its built-in findings
    document = json.loads(out)
    assert Draft202012Validator(report_schema()).is_valid(document)
    assert document["cases"] and document["cases"][0]["checks"]
    code_again, _, _ = run_cli("demo", "--format", "json", "--fail-on", "warning")
    worst = {f["severity"] for f in document["cases"][0]["findings"] if not f["waived"]}
    assert code_again == (1 if worst & {"error", "warning"} else 0)
    assert worst - {"note"} == {"error", "warning"}
    code_error_level, _, _ = run_cli("demo", "--format", "json", "--fail-on", "error")
    assert code_error_level == 1


def test_init_to_stdout_names_the_mesh_from_the_current_folder(tmp_path, monkeypatch):
    (tmp_path / "meshes").mkdir()
    mesh = write_block_mesh(tmp_path / "meshes" / "room.msh", xs=[0.0, 0.1, 0.2],
                            ys=np.linspace(0.0, 0.2, 13), zs=np.linspace(0.0, 0.2, 13))
    monkeypatch.chdir(tmp_path)
    code, out, err = run_cli("init", str(mesh), "--output", "-")
    assert (code, err) == (0, "")
    assert "file: meshes/room.msh" in out and "inlet" in out
    assert sorted(p.name for p in tmp_path.iterdir()) == ["meshes"]   # nothing written
    (tmp_path / "case.yaml").write_text(out, encoding="utf-8")
    code, _, err = run_cli("check", str(tmp_path / "case.yaml"))
    assert code == 0, err
