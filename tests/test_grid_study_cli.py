"""``caselint grid-study``: inputs, JSON contract, text table, CSV tables, plots, exit codes.

Reference values: Celik et al., ASME J. Fluids Eng. 130(7) 078001 (2008), Table 1, first
column [memory, reproduced by computation] (REFERENCES.md section 1); the rest are
solutions of the exact form phi = phi0 + C h^p whose answers are known [computed].
"""

from __future__ import annotations

import contextlib
import io
import json
import textwrap

import numpy as np
import pytest

from caselint.cli import main
from caselint.mesh.blocks import structured_hex, write_gmsh22

CELIK = ["--cells", "18000", "8000", "4500", "--dims", "2", "--values", "6.063", "5.972", "5.863"]
CONTRACT = ("refinement_ratios", "apparent_order", "extrapolated_value", "relative_error_percent",
            "extrapolated_error_percent", "gci_fine_percent", "asymptotic_ratio", "convergence")


def run_cli(*args: str) -> tuple[int, str, str]:
    """Run ``caselint ARGS`` in-process; return (exit code, stdout, stderr)."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


def run_json(*args: str) -> dict:
    code, out, err = run_cli("grid-study", *args, "--format", "json")
    assert code == 0, err
    return json.loads(out)


@pytest.fixture(autouse=True)
def _plain_output(monkeypatch):
    for name in ("NO_COLOR", "COLUMNS", "CASELINT_DEBUG"):
        monkeypatch.delenv(name, raising=False)


def test_celik_table_1_as_json():
    doc = run_json(*CELIK)
    assert all(key in doc for key in CONTRACT)
    assert doc["refinement_ratios"] == pytest.approx([1.5, 4 / 3], rel=1e-14)
    assert round(doc["apparent_order"], 2) == 1.53
    assert round(doc["extrapolated_value"], 4) == 6.1685
    assert round(doc["relative_error_percent"], 1) == 1.5
    assert round(doc["extrapolated_error_percent"], 1) == 1.7
    assert round(doc["gci_fine_percent"], 1) == 2.2
    assert doc["gci_fine_percent"] == pytest.approx(2.17499, abs=5e-6)
    assert doc["convergence"] == "monotonic"
    assert doc["safety_factor"] == 1.25 and doc["order_assumed"] is False
    assert doc["asymptotic_ratio"] == pytest.approx(1.01524, abs=5e-6)    # [computed]
    assert [m["cells"] for m in doc["meshes"]] == [18000, 8000, 4500]
    assert doc["h_unit"] == "relative" and doc["dims"] == 2


def test_celik_table_1_as_text():
    code, out, err = run_cli("grid-study", *CELIK)
    assert code == 0 and err == ""
    assert "r21 = 1.5, r32 = 1.333" in out
    assert "apparent order p                      1.534" in out
    assert "extrapolated value                    6.1685" in out
    assert "GCI fine                              2.17 %" in out
    assert "monotonic (R = e21/e32 = 0.8349)" in out


def test_spacing_and_negative_values_in_exponent_form():
    # phi = -1e-3 (1 + h^2) at h = 1, 2, 4: p = 2, phi_ext = -1e-3 [computed]
    doc = run_json("--spacing", "1", "2", "4", "--values", "-2e-3", "-5e-3", "-1.7e-2")
    assert doc["apparent_order"] == pytest.approx(2.0, rel=1e-12)
    assert doc["extrapolated_value"] == pytest.approx(-1e-3, rel=1e-12)
    assert doc["h_unit"] == "as given" and doc["meshes"][0]["cells"] is None


def test_two_meshes_need_an_order_and_use_fs_3():
    code, out, err = run_cli("grid-study", "--spacing", "1", "2", "--values", "10.1", "10.4")
    assert code == 2 and out == "" and "--order P" in err and "Traceback" not in err
    # phi = 10 + 0.1 h^2: phi_ext = 10, GCI = 3 * (0.3/10.1) / 3 [computed]
    doc = run_json("--spacing", "1", "2", "--values", "10.1", "10.4", "--order", "2")
    assert doc["safety_factor"] == 3.0 and doc["order_assumed"] is True
    assert doc["apparent_order"] is None and doc["order_used"] == 2.0
    assert doc["extrapolated_value"] == pytest.approx(10.0, rel=1e-13)
    assert doc["gci_fine_percent"] == pytest.approx(100 * 0.3 / 10.1, rel=1e-12)
    assert doc["convergence"] == "undetermined" and doc["asymptotic_ratio"] is None


def test_divergent_study_is_a_result_not_an_error():
    code, out, err = run_cli("grid-study", "--spacing", "1", "2", "4", "--values", "1", "1.2",
                             "1.3", "--format", "json")
    assert code == 0 and err == ""
    doc = json.loads(out)                 # strict JSON: no NaN anywhere
    assert doc["convergence"] == "divergent"
    assert doc["apparent_order"] is None and doc["gci_fine_percent"] is None
    assert doc["relative_error_percent"] == pytest.approx(20.0)
    assert "R = e21/e32 = 2" in doc["message"]
    code, out, _ = run_cli("grid-study", "--spacing", "1", "2", "4", "--values", "1", "1.2", "1.3")
    assert code == 0 and "divergent" in out and "GCI fine" in out and "n/a" in out


def test_zero_differences_are_explained():
    doc = run_json("--spacing", "1", "2", "4", "--values", "3", "3", "3")
    assert doc["convergence"] == "undetermined"
    assert "e21 = e32 = 0" in doc["message"] and doc["gci_fine_percent"] is None


def test_more_than_three_meshes_use_the_three_finest():
    doc = run_json("--spacing", "1", "2", "4", "8", "--values", "1.5", "3", "9", "33")
    assert doc["apparent_order"] == pytest.approx(2.0, rel=1e-12)
    assert [m["used"] for m in doc["meshes"]] == [True, True, True, False]
    assert doc["notes"] == ["4 meshes given: the procedure uses the three finest"]


@pytest.mark.parametrize("args, words", [
    (["--cells", "4500", "8000", "18000", "--values", "1", "2", "3"], "finest first"),
    (["--spacing", "2", "1", "4", "--values", "1", "2", "3"], "finest first"),
    (["--cells", "100", "50", "--spacing", "1", "2", "--values", "1", "2"], "one way"),
    (["--values", "1", "2", "3"], "give the meshes one way"),
    (["--cells", "100", "50", "20"], "give the results one way"),
    (["--cells", "100", "50", "20", "--values", "1", "2"], "got 2 values for 3 meshes"),
    (["--spacing", "1", "2", "4", "--values", "1", "nan", "2"], "finite"),
    (["--spacing", "1", "2", "4", "--dims", "2", "--values", "1", "2", "3"], "--dims"),
    (["--spacing", "1", "2", "4", "--values", "1", "2", "3", "--order", "2"], "two-mesh"),
    (["--spacing", "1", "2", "--values", "1", "2", "--order", "-1"], "positive"),
    (["--cells", "100", "0", "--values", "1", "2"], "positive number of cells"),
    (["--cells", "100", "1e3", "--values", "1", "2"], "whole number"),
])
def test_bad_input_exits_2_with_a_message(args, words):
    code, out, err = run_cli("grid-study", *args)
    assert code == 2 and out == ""
    assert words in err and "Traceback" not in err


# -- CSV tables ------------------------------------------------------------------------


def test_a_profile_table(tmp_path):
    # rows: phi = phi0 - c h^2 at h = 1, 2, 4 (p = 2), a divergent row, a flat row [computed]
    table = tmp_path / "profile.csv"
    table.write_text("# velocity along the invented mixer's centre line\n"
                     "x (m),fine,medium,coarse\n"
                     "0.1,0.99,0.96,0.84\n"
                     "0.2,1.0,1.2,1.3\n"
                     "\n"
                     "0.3,2.5,2.5,2.5\n")
    doc = run_json("--spacing", "1", "2", "4", "--table", str(table))
    rows = doc["quantities"]
    assert [r["name"] for r in rows] == ["0.1", "0.2", "0.3"]
    assert [r["convergence"] for r in rows] == ["monotonic", "divergent", "undetermined"]
    assert rows[0]["apparent_order"] == pytest.approx(2.0, rel=1e-12)
    assert rows[0]["extrapolated_value"] == pytest.approx(1.0, rel=1e-12)
    assert all(key in rows[0] for key in CONTRACT if key != "refinement_ratios")
    assert doc["refinement_ratios"] == [2.0, 2.0]
    assert doc["average_apparent_order"] == pytest.approx(2.0, rel=1e-12)
    assert doc["convergence_counts"] == {"monotonic": 1, "oscillatory": 0, "divergent": 1,
                                         "undetermined": 1}
    assert [m["name"] for m in doc["meshes"]] == ["fine", "medium", "coarse"]
    code, out, _ = run_cli("grid-study", "--spacing", "1", "2", "4", "--table", str(table))
    assert code == 0
    assert "3 quantities: 1 monotonic, 1 divergent, 1 undetermined; average apparent order 2." in out
    assert "0.2: divergent" in out


@pytest.mark.parametrize("text, words", [
    ("", "the table is empty"),
    ("0.1,1,2,3\n", ":1: expected a header row"),
    ("x,a,b\n0.1,1,2\n", ":1: the header has 2 mesh columns; expected 3"),
    ("x,a,b,c\n", "no data rows"),
    ("x,a,b,c\n0.1,1,2\n", ":2: expected 4 columns"),
    ("x,a,b,c\n0.1,1,2,3\n0.2,1,oops,3\n", ":3: column 3 ('b'): expected a finite number, got 'oops'"),
    ("x,a,b,c\n0.1,1,inf,3\n", ":2: column 3 ('b')"),
])
def test_bad_tables_name_file_and_line(tmp_path, text, words):
    table = tmp_path / "t.csv"
    table.write_text(text)
    code, out, err = run_cli("grid-study", "--spacing", "1", "2", "4", "--table", str(table))
    assert code == 2 and out == ""
    assert str(table) in err and words in err


def test_missing_table(tmp_path):
    code, _, err = run_cli("grid-study", "--spacing", "1", "2", "4", "--table",
                           str(tmp_path / "none.csv"))
    assert code == 2 and "table file not found" in err


# -- case files ------------------------------------------------------------------------


def write_family(folder, sizes=(9, 6, 4), scale=1.0):
    for n in sizes:
        axes = np.linspace(0.0, scale, n + 1)
        write_gmsh22(structured_hex(axes, axes, axes), folder / f"cube{n}.msh")


def test_meshes_from_a_case_file(tmp_path):
    write_family(tmp_path, scale=1000.0)
    case = tmp_path / "case.yaml"
    case.write_text(textwrap.dedent("""\
        caselint: 1
        case: {name: Invented kiln duct}
        mesh: {file: cube9.msh, units: mm}
        grid_study:
          meshes: [cube4.msh, cube9.msh, cube6.msh]
        """))
    # unit cube in mm: h = 1/9, 1/6, 1/4 m, ratios 1.5 [computed]; phi = 1 + h^2 / 10
    values = [1 + (1 / n) ** 2 / 10 for n in (9, 6, 4)]
    doc = run_json("--case", str(case), "--values", *(repr(v) for v in values))
    assert [m["name"] for m in doc["meshes"]] == ["cube9.msh", "cube6.msh", "cube4.msh"]
    assert [m["cells"] for m in doc["meshes"]] == [729, 216, 64]
    assert [m["h"] for m in doc["meshes"]] == pytest.approx([1 / 9, 1 / 6, 1 / 4], rel=1e-12)
    assert doc["h_unit"] == "m" and doc["dims"] == 3
    assert doc["apparent_order"] == pytest.approx(2.0, rel=1e-9)
    assert doc["extrapolated_value"] == pytest.approx(1.0, rel=1e-12)


def test_case_without_a_grid_study(tmp_path):
    write_family(tmp_path, sizes=(4,))
    case = tmp_path / "case.yaml"
    case.write_text("caselint: 1\ncase: {name: Invented}\nmesh: {file: cube4.msh}\n")
    code, _, err = run_cli("grid-study", "--case", str(case), "--values", "1", "2", "3")
    assert code == 2 and "[grid_study.meshes]" in err and "no grid study" in err


def test_case_with_an_unreadable_grid_mesh(tmp_path):
    write_family(tmp_path, sizes=(4,))
    (tmp_path / "bad.msh").write_text("garbage\n")
    case = tmp_path / "case.yaml"
    case.write_text("caselint: 1\ncase: {name: Invented}\nmesh: {file: cube4.msh}\n"
                    "grid_study:\n  meshes: [cube4.msh, bad.msh]\n")
    code, _, err = run_cli("grid-study", "--case", str(case), "--values", "1", "2", "--order", "2")
    assert code == 2 and "case.yaml:5" in err and "[grid_study.meshes[1]]" in err
    assert "Traceback" not in err


# -- plots -----------------------------------------------------------------------------


@pytest.mark.parametrize("suffix, head", [(".png", b"\x89PNG\r\n\x1a\n"), (".svg", b"<?xml"),
                                          (".pdf", b"%PDF-")])
def test_plot_files(tmp_path, suffix, head):
    plot = tmp_path / f"study{suffix}"
    code, out, err = run_cli("grid-study", *CELIK, "--plot", str(plot))
    assert code == 0 and f"wrote the plot {plot}" in err
    data = plot.read_bytes()
    assert data.startswith(head) and len(data) > 1000
    if suffix == ".svg":
        assert b"<svg" in data and b"extrapolated 6.1685" in data
    assert not list(tmp_path.glob(".*.tmp"))          # no temporary file left behind


def test_plot_of_a_table_and_of_a_divergent_study(tmp_path):
    table = tmp_path / "p.csv"
    table.write_text("x,f,m,c\n0.1,0.99,0.96,0.84\n0.2,1.0,1.2,1.3\n")
    plot = tmp_path / "profile.png"
    assert run_cli("grid-study", "--spacing", "1", "2", "4", "--table", str(table), "--plot",
                   str(plot))[0] == 0
    assert plot.read_bytes().startswith(b"\x89PNG")
    plot = tmp_path / "divergent.svg"
    assert run_cli("grid-study", "--spacing", "1", "2", "4", "--values", "1", "1.2", "1.3",
                   "--plot", str(plot))[0] == 0
    assert b"no extrapolation" in plot.read_bytes()


def test_plot_never_replaces_an_input_or_writes_a_bad_suffix(tmp_path):
    table = tmp_path / "p.png"
    table.write_text("x,f,m,c\n0.1,0.99,0.96,0.84\n")
    code, _, err = run_cli("grid-study", "--spacing", "1", "2", "4", "--table", str(table),
                           "--plot", str(table))
    assert code == 2 and "never overwrites" in err
    assert table.read_text().startswith("x,f,m,c")
    code, _, err = run_cli("grid-study", *CELIK, "--plot", str(tmp_path / "x.gif"))
    assert code == 2 and "unknown plot format '.gif'" in err
    code, _, err = run_cli("grid-study", *CELIK, "--plot", str(tmp_path / "no" / "x.png"))
    assert code == 2 and "does not exist" in err


def test_the_same_study_gives_the_same_svg(tmp_path):
    first, second = tmp_path / "a.svg", tmp_path / "b.svg"
    for plot in (first, second):
        assert run_cli("grid-study", *CELIK, "--plot", str(plot))[0] == 0
    assert first.read_bytes() == second.read_bytes()
