"""grid-refinement-ratio on families of generated box meshes whose cell sizes are known:
an n x n x n block of a unit cube has h = (1/n^3)^(1/3) = 1/n, so two blocks of n_f and n_c
cells per side differ by the ratio n_f/n_c [computed].
"""

from __future__ import annotations

import datetime as dt
import textwrap
from pathlib import Path

import numpy as np
import pytest

from caselint import hookimpl
from caselint.api import lint_case
from caselint.engine.entries import resolve
from caselint.engine.plugins import get_plugin_manager
from caselint.engine.runner import graded_measurements, run_rule
from caselint.errors import CaseFileError
from caselint.manifest.case import Case, CaseInfo, GridStudy, MeshSpec, Physics, Turbulence
from caselint.mesh import read_mesh
from caselint.mesh.blocks import structured_hex, structured_quad, write_gmsh22
from caselint.rules.grid_refinement import GRID_REFINEMENT_RATIO

RULE = GRID_REFINEMENT_RATIO


def cube(folder: Path, n: int, *, size=(1.0, 1.0, 1.0), name=None, scale=1.0) -> Path:
    """An n x n x n block of a box, written as a gmsh 2.2 file; coordinates times ``scale``."""
    axes = [np.linspace(0.0, s * scale, n + 1) for s in size]
    path = folder / (name or f"cube{n}.msh")
    write_gmsh22(structured_hex(*axes), path)
    return path


def wall_block(folder: Path, n: int, first: float | None) -> Path:
    """n x n x n cells of a unit cube, graded off the wall ymin; ``first`` fixes the first
    layer height (None: uniform, so the first layer shrinks as 1/n)."""
    xs = np.linspace(0.0, 1.0, n + 1)
    ys = xs if first is None else np.concatenate([[0.0], np.linspace(first, 1.0, n)])
    path = folder / f"wall{n}-{'fixed' if first else 'scaled'}.msh"
    write_gmsh22(structured_hex(xs, ys, xs), path)
    return path


def make_case(meshes, *, main=None, units="m", scale=1.0, wall_treatment=None,
              boundaries=None) -> Case:
    meshes = tuple(Path(m) for m in meshes)
    return Case(
        path=meshes[0].parent / "case.yaml", version=1, info=CaseInfo(name="grid study"),
        mesh=MeshSpec(file=Path(main or meshes[0]), units=units, scale_to_m=scale,
                      boundaries=dict(boundaries or {})),
        physics=Physics(turbulence=Turbulence(model="k-epsilon", wall_treatment=wall_treatment)),
        grid_study=GridStudy(meshes),
    )


def run(case: Case, load_mesh=None, **settings):
    """The rule on ``case`` with a case file's ``settings``, its measurements as the engine
    grades them; the case's own mesh (a family member here) is read on demand."""
    import dataclasses

    spec = case.mesh
    load_mesh = load_mesh or (lambda: read_mesh(spec.file, scale_to_m=spec.scale_to_m))
    result = run_rule(resolve(RULE, settings), case, load_mesh)
    if result.skipped is not None:
        return result
    return dataclasses.replace(result,
                               measurements=tuple(graded_measurements(RULE, result, settings)))


def grade(value: float) -> str | None:
    """The severity the engine gives a refinement ratio under the default limits."""
    from caselint.engine.grading import grade as engine_grade

    return engine_grade(value, RULE.limits, RULE.worse)


def severity(m) -> str | None:
    """The severity the engine gives a measurement (its own limits, or the rule's)."""
    from caselint.engine.grading import grade as engine_grade

    return engine_grade(m.value, m.limits or RULE.limits, m.worse or RULE.worse)


def concern(result, words: str):
    """The one measurement whose label holds ``words``, or None."""
    found = [m for m in result.measurements if words in m.label]
    assert len(found) <= 1
    return found[0] if found else None


def test_ratio_1_5_family_passes(tmp_path):
    # n = 9, 6, 4: ratios 1.5 and 1.5 [computed]
    paths = [cube(tmp_path, n) for n in (9, 6, 4)]
    result = run(make_case(paths))
    m = result.measurements[0]
    assert m.value == pytest.approx(1.5, rel=1e-12) and m.label == "" and m.grade is None
    assert grade(m.value) is None
    assert m.where.key == "grid_study.meshes"
    assert "1.5 (cube9.msh -> cube6.msh), 1.5 (cube6.msh -> cube4.msh)" in m.detail
    assert "h = 0.1111, 0.1667, 0.25 m" in m.detail
    # the other concerns are measured too, and pass: 3 meshes, equal volumes (0 %)
    count = concern(result, "size of the grid study")
    volume = concern(result, "domain-volume difference")
    assert count.value == 3 and count.limits.warn == 3 and severity(count) is None
    assert volume.value == pytest.approx(0.0, abs=1e-9) and severity(volume) is None
    assert concern(result, "first-layer") is None           # not a wall-function case
    assert len(result.measurements) == 3 and result.notes == ()


def test_ratio_1_1_family_warns_and_below_it_errors(tmp_path):
    # n = 11, 10, 6: ratios 1.1 and 1.667, the smallest 1.1: a warning (Celik's 1.3), not
    # an error (NASA's 1.1) [computed]
    result = run(make_case([cube(tmp_path, n) for n in (11, 10, 6)]))
    m = result.measurements[0]
    assert m.value == 1.1
    assert grade(m.value) == "warning"
    assert "cube11.msh and cube10.msh are too close" in m.fix
    assert "1.3^3 = 2.2 times fewer cells" in m.fix
    # n = 21, 20, 12: smallest ratio 1.05 -> error [computed]
    result = run(make_case([cube(tmp_path, n) for n in (21, 20, 12)]))
    assert result.measurements[0].value == 1.05
    assert grade(result.measurements[0].value) == "error"


def test_any_order_and_units(tmp_path):
    # listed coarse first, in millimetres: sorted by h, and h in metres [computed]
    paths = [cube(tmp_path, n, scale=1000.0) for n in (4, 9, 6)]
    result = run(make_case(paths, units="mm", scale=1e-3))
    m = result.measurements[0]
    assert m.value == pytest.approx(1.5, rel=1e-12)
    assert "(cube9.msh -> cube6.msh)" in m.detail and "h = 0.1111, 0.1667, 0.25 m" in m.detail


def test_planar_family(tmp_path):
    # 2-D: h = (A/N)^(1/2) = 1/n on the unit square; n = 15, 10 -> 1.5 [computed]
    paths = []
    for n in (15, 10):
        path = tmp_path / f"sq{n}.msh"
        write_gmsh22(structured_quad(np.linspace(0, 1, n + 1), np.linspace(0, 1, n + 1)), path)
        paths.append(path)
    result = run(make_case(paths))
    assert result.measurements[0].value == pytest.approx(1.5, rel=1e-12)


def test_two_meshes_and_different_domains_warn(tmp_path):
    # the coarse box is 2 % longer: 2 % volume difference, above the 1 % default [computed]
    fine = cube(tmp_path, 9)
    coarse = cube(tmp_path, 6, size=(1.02, 1.0, 1.0), name="long.msh")
    result = run(make_case([fine, coarse]))
    count = concern(result, "size of the grid study")
    assert count.value == 2 and severity(count) == "warning" and count.unit == "meshes"
    assert "no order of convergence can be observed" in count.detail
    volume = concern(result, "domain-volume difference")
    assert volume.value == pytest.approx(2.0, rel=1e-9) and volume.unit == "%"
    assert severity(volume) == "warning" and volume.limits.warn == 1.0
    assert volume.detail.startswith("long.msh holds 1.02 m^3 against 1 m^3 in cube9.msh")
    assert volume.where.key == "grid_study.meshes[1]"
    assert result.notes == ()
    # a tolerance of 3 % accepts it
    result = run(make_case([fine, coarse]), grades={"volume-difference": {"warn": 3.0}})
    assert severity(concern(result, "domain-volume difference")) is None


def test_first_layer_refined_with_the_rest_under_wall_functions(tmp_path):
    roles = {"ymin": "wall"}
    scaled = [wall_block(tmp_path, n, None) for n in (9, 6, 4)]
    result = run(make_case(scaled, wall_treatment="wall-function", boundaries=roles))
    layer = concern(result, "first-layer")
    # uniform blocks: first layer 1/9, 1/6, 1/4 m, shrinking by the full ratio 1.5 each
    # time, so the share followed is ln 1.5 / ln 1.5 = 1 [computed]
    assert layer.value == pytest.approx(1.0, rel=1e-9) and severity(layer) == "warning"
    assert layer.limits.warn == 0.5
    assert layer.detail.startswith("median first-layer height 0.111 m in wall9-scaled.msh "
                                   "against 0.167 m in wall6-scaled.msh (factor 1.5 for a "
                                   "refinement ratio 1.5)")
    assert layer.where.key == "grid_study.meshes[0]"
    # the same family without wall functions: no first-layer check at all
    result = run(make_case(scaled, wall_treatment="resolved", boundaries=roles))
    assert concern(result, "first-layer") is None and result.notes == ()
    # first layer fixed at 0.01 m in every mesh: share 0, nothing to warn about [computed]
    fixed = [wall_block(tmp_path, n, 0.01) for n in (9, 6, 4)]
    result = run(make_case(fixed, wall_treatment="wall-function", boundaries=roles))
    layer = concern(result, "first-layer")
    assert layer.value == pytest.approx(0.0, abs=1e-9) and severity(layer) is None
    # a stricter share flags even a partly refined first layer; 1.0 accepts the scaled one
    result = run(make_case(scaled, wall_treatment="wall-function", boundaries=roles),
                 grades={"first-layer-share": {"warn": 1.0}})
    assert severity(concern(result, "first-layer")) is None


def test_wall_functions_without_walls_or_with_a_missing_group(tmp_path):
    paths = [wall_block(tmp_path, n, None) for n in (9, 6, 4)]
    result = run(make_case(paths, wall_treatment="wall-function", boundaries={"ymin": "inlet"}))
    assert [n.message for n in result.notes] == [
        "wall functions, but no boundary has the role wall in mesh.boundaries: first-layer "
        "heights were not compared"]
    assert concern(result, "first-layer") is None
    result = run(make_case(paths, wall_treatment="wall-function",
                           boundaries={"ymin": "wall", "hull": "wall"}))
    missing = [n for n in result.notes if "no boundary group 'hull'" in n.message]
    assert len(missing) == 3
    assert concern(result, "first-layer").value == pytest.approx(1.0, rel=1e-9)


def test_the_case_mesh_is_not_read_twice(tmp_path):
    paths = [cube(tmp_path, n) for n in (9, 6, 4)]
    calls = []

    def load():
        calls.append(1)
        return read_mesh(paths[1])

    result = run(make_case(paths, main=paths[1]), load_mesh=load)
    assert calls == [1]
    assert result.measurements[0].value == pytest.approx(1.5, rel=1e-12)


def test_skips_with_reasons(tmp_path):
    case = make_case([cube(tmp_path, 4)])
    no_study = Case(path=case.path, version=1, info=case.info, mesh=case.mesh)
    assert run(no_study).skipped == "the case file gives no grid_study.meshes"
    assert "one mesh" in run(case).skipped
    flat = tmp_path / "flat.msh"
    write_gmsh22(structured_quad(np.linspace(0, 1, 4), np.linspace(0, 1, 4)), flat)
    assert "mix 2-D and 3-D" in run(make_case([cube(tmp_path, 6), flat])).skipped


def test_an_unreadable_mesh_points_at_its_key(tmp_path):
    bad = tmp_path / "broken.msh"
    bad.write_text("$MeshFormat\nnot a mesh\n")
    case = make_case([cube(tmp_path, 6), bad])
    with pytest.raises(CaseFileError) as info:
        run(case)
    assert info.value.key == "grid_study.meshes[1]"
    assert "cannot read the grid-study mesh" in info.value.message


def lint_family(folder: Path, sizes, listed):
    """lint_case on a case whose grid study lists ``listed`` (cube meshes of ``sizes``)."""
    for n in sizes:
        cube(folder, n)
    case_file = folder / "case.yaml"
    lines = "".join(f"    - {name}\n" for name in listed)
    case_file.write_text(textwrap.dedent("""\
        caselint: 1
        case: {name: Invented mixing tank grid study}
        mesh:
          file: cube11.msh
        grid_study:
          meshes:
        """) + lines + "checks: {rule_sets: [gridtest]}\n")
    rule_set = folder / "gridtest.yaml"
    rule_set.write_text("description: grid study only\nrules:\n  grid-refinement-ratio: {}\n")

    class Sets:
        @hookimpl
        def caselint_register_rule_sets(self):
            return [rule_set]

    pm = get_plugin_manager(load_entry_points=False)
    assert pm.has_plugin("caselint.rules.grid_refinement")  # a built-in plugin
    pm.register(Sets(), name="test-grid-sets")
    return lint_case(case_file, pm=pm, today=dt.date(2026, 1, 1))


def test_end_to_end_through_lint_case(tmp_path):
    report = lint_family(tmp_path, (11, 10), ["cube10.msh", "cube11.msh"])
    (check,) = report.checks
    assert (check.rule, check.outcome, check.severity) == ("grid-refinement-ratio", "fail",
                                                           "warning")
    # two warnings of equal severity: the check reports the refinement ratio
    assert check.measured == 1.1 and check.limit == 1.3 and check.unit == ""
    warnings = sorted(f.message for f in report.findings if f.severity == "warning")
    assert len(warnings) == 2
    assert warnings[0].startswith("size of the grid study is 2 meshes, below the warning "
                                  "limit 3 meshes")
    assert warnings[1].startswith("smallest refinement ratio between neighbouring "
                                  "grid-study meshes is 1.1, below the warning limit 1.3")
    assert all(f.where.line == 6 for f in report.findings)   # the grid_study.meshes key


def test_end_to_end_a_good_ratio_with_two_meshes(tmp_path):
    # 11 -> 7 cells per side: ratio 1.571 passes; the missing third mesh decides the check
    report = lint_family(tmp_path, (11, 7), ["cube11.msh", "cube7.msh"])
    (check,) = report.checks
    assert (check.outcome, check.severity, check.measured, check.limit, check.unit) == \
        ("fail", "warning", 2.0, 3.0, "meshes")
    (finding,) = report.findings
    assert finding.message.startswith("size of the grid study is 2 meshes")
