"""The domain-extent rule around a cube body with known distances and blockage.

References: the guideline values (inflow 5H, outflow 15H, lateral and top 5H, blockage 3 %)
are those of COST Action 732 (Franke et al., 2007) [confirmed for inflow and outflow,
memory for the rest, REFERENCES.md section 6]. Distances and areas of a cube in a box are
[computed]; the frontal area of a cube seen at 45 degrees is checked against the area of
the convex hull of its projected corners (``scipy.spatial.ConvexHull``).
"""

from __future__ import annotations

import datetime as dt
import textwrap
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial import ConvexHull

from caselint.api import lint_case
from caselint.engine.runner import check_rule
from caselint.engine.grading import grade
from caselint.engine.hookspecs import hookimpl
from caselint.engine.plugins import get_plugin_manager
from caselint.errors import CaseFileError
from caselint.manifest.case import Case, CaseInfo, Domain, Flow, MeshSpec, Physics
from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import write_gmsh22
from caselint.mesh.obstacles import carved_hex, carved_quad
from caselint.model import Limits
from caselint.rules import domain
from caselint.rules.domain import DOMAIN_EXTENT

SIDES = ("inflow", "outflow", "south", "north", "ground", "sky")
CUBE = {"cube": [((0, 1), (0, 1), (0, 1))]}


def cube_in_box(x=(-4, 11), y=(-3, 4), z=(0, 6), h=0.5):
    """A unit cube standing on the ground in a box domain, cells of ``h`` m."""
    axes = [np.arange(lo, hi + h / 2, h) for lo, hi in (x, y, z)]
    return mesh_from_meshio(carved_hex(*axes, CUBE, names=SIDES))


def run(mesh, direction=(1.0, 0.0, 0.0), up=None, body=("cube",), kind="external",
        safety="none", settings=None):
    norm = np.linalg.norm(direction)
    case = Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="t", safety=safety),
                mesh=MeshSpec(file=Path("mesh.msh")),
                physics=Physics(flow=Flow(kind=kind,
                                          direction=tuple(np.asarray(direction) / norm))),
                domain=Domain(body=tuple(body), up=up))
    return check_rule(DOMAIN_EXTENT, case, mesh, settings=settings)


@pytest.fixture(scope="module")
def roomy():
    return cube_in_box()


def test_cube_distances_and_blockage_are_exact(roomy):
    result = run(roomy)
    labels = {m.label: m for m in result.measurements}
    inflow = labels["distance from the body to the inflow boundary"]
    outflow = labels["distance from the body to the outflow boundary"]
    lateral = labels["distance from the body to the nearer side boundary"]
    top = labels["distance from the body's top to the top boundary"]
    blockage = labels["blockage ratio"]
    # [computed] cube 1 m: 4 m upstream, 10 m downstream, 3 m each side, 5 m above
    assert (inflow.value, outflow.value, lateral.value, top.value) == pytest.approx((4, 10, 3, 5))
    assert blockage.value == pytest.approx(100.0 / (7 * 6))     # 1 m^2 over 7 m x 6 m
    assert all(m.unit == "H" and m.worse == "lower" for m in (inflow, outflow, lateral, top))
    assert (blockage.unit, blockage.worse) == ("%", "higher")
    # limits: guideline x 1 (warning) and x 0.5 (error); blockage / 1 and / 0.5
    assert inflow.limits == Limits(5.0, 2.5) and outflow.limits == Limits(15.0, 7.5)
    assert blockage.limits == Limits(3.0, 6.0)
    assert inflow.where.key == "domain.body"
    assert inflow.where.point == pytest.approx((0.0, 0.5, 0.5))     # centre of the upstream face
    assert outflow.where.point[0] == pytest.approx(1.0)
    assert inflow.detail == "4 m with body height H = 1 m; guideline at least 5 H"
    assert blockage.detail.startswith("H = 1 m, body frontal area 1 m^2, domain cross-section "
                                      "42 m^2; guideline at most 3 %")
    # tightest first: the lateral (3/5) and inflow (4/5) before the top (5/5) and blockage
    assert result.measurements[0] is lateral


def test_engine_grades_each_quantity_on_its_own_scale(tmp_path):
    mesh_raw = carved_hex(*[np.arange(lo, hi + 0.25, 0.5) for lo, hi in ((-2, 5), (-1, 2), (0, 3))],
                          CUBE, names=SIDES)
    write_gmsh22(mesh_raw, tmp_path / "site.msh")
    (tmp_path / "case.yaml").write_text(textwrap.dedent("""\
        caselint: 1
        case: {name: Invented pavilion wind study, safety: structural-wind}
        mesh:
          file: site.msh
          boundaries: {inflow: inlet, outflow: outlet, south: symmetry, north: symmetry,
                       ground: wall, sky: symmetry, cube: wall}
        physics:
          flow: {kind: external, direction: [1, 0, 0], velocity: 10}
        domain:
          body: [cube]
          up: [0, 0, 1]
        checks: {rule_sets: [windtest]}
        """))
    rule_set = tmp_path / "windtest.yaml"
    rule_set.write_text("description: domain only\nrules:\n  domain-extent: {outflow_h: 10}\n")

    class Sets:
        @hookimpl
        def caselint_register_rule_sets(self):
            return [rule_set]

    pm = get_plugin_manager(load_entry_points=False)
    if not pm.has_plugin("caselint.rules.domain"):       # not yet among the built-ins
        pm.register(domain, name="caselint.rules.domain")
    pm.register(Sets(), name="test-domain-sets")
    report = lint_case(tmp_path / "case.yaml", pm=pm, today=dt.date(2026, 1, 1))
    (check,) = report.checks
    assert (check.outcome, check.severity) == ("fail", "error")
    messages = sorted(f.message for f in report.findings)
    # inflow 2 H < 2.5; outflow 4 H < 5 (10 x 0.5); lateral 1 H; top 2 H; blockage 1/9
    assert messages[0] == ("blockage ratio is 11.11 %, above the error limit 6 %; H = 1 m, body "
                           "frontal area 1 m^2, domain cross-section 9 m^2; guideline at most 3 %")
    assert ("distance from the body to the outflow boundary is 4 H, below the error limit 5 H; "
            "4 m with body height H = 1 m; guideline at least 10 H") in messages
    assert len(report.findings) == 5 and all(f.severity == "error" for f in report.findings)
    assert all("licensed engineer" in f.hint for f in report.findings)
    assert all(f.where.line == 10 for f in report.findings)          # the domain.body line
    assert report.safety_note.startswith("This case concerns structural wind loads")


def test_frontal_area_at_45_degrees_matches_the_convex_hull_of_the_shadow(roomy):
    e = np.array([1.0, 1.0, 0.0]) / np.sqrt(2.0)
    result = run(roomy, direction=e)
    blockage = next(m for m in result.measurements if m.label == "blockage ratio")
    # projected corners of the cube on the plane normal to e (lateral, up coordinates)
    corners = np.array([[x, y, z] for x in (0, 1) for y in (0, 1) for z in (0, 1)], float)
    lateral = np.cross([0.0, 0.0, 1.0], e)
    shadow = ConvexHull(np.column_stack([corners @ lateral, corners[:, 2]])).volume
    assert shadow == pytest.approx(np.sqrt(2.0))                # [computed] sqrt(2) x 1
    points = roomy.points
    section = np.ptp(points @ lateral) * np.ptp(points[:, 2])
    assert blockage.value == pytest.approx(100.0 * shadow / section, rel=1e-12)


def test_half_model_on_a_mirror_plane_measures_the_open_side_only():
    mesh = cube_in_box(y=(0, 4))
    result = run(mesh)
    lateral = next(m for m in result.measurements if "side" in m.label)
    assert lateral.value == pytest.approx(3.0)
    (note,) = result.notes
    assert note.message.startswith("the body touches a side boundary")


def test_two_d_body_uses_y_up_and_has_no_lateral_distance():
    axes = (np.arange(-5, 16.1, 0.5), np.arange(0, 6.1, 0.5))
    mesh = mesh_from_meshio(carved_quad(*axes, {"block": [((0, 2), (0, 1))]}))
    result = run(mesh, body=("block",))
    labels = {m.label: m.value for m in result.measurements}
    assert "distance from the body to the nearer side boundary" not in labels
    assert labels["distance from the body to the inflow boundary"] == pytest.approx(5.0)
    assert labels["distance from the body to the outflow boundary"] == pytest.approx(14.0)
    assert labels["distance from the body's top to the top boundary"] == pytest.approx(5.0)
    assert labels["blockage ratio"] == pytest.approx(100.0 / 6.0)   # 1 m of 6 m height


def test_guidelines_for_an_aerodynamic_rule_set(roomy):
    # a rule set may lower the guidelines (values here invented for the test)
    params = {"inflow_h": 3, "outflow_h": 8, "lateral_h": 2, "top_h": 2, "blockage_percent": 5}
    result = run(roomy, settings=params)
    limits = {m.label.split(" ")[-2] if m.unit == "H" else "blockage": m.limits
              for m in result.measurements}
    assert limits == {"inflow": Limits(3, 1.5), "outflow": Limits(8, 4), "side": Limits(2, 1),
                      "top": Limits(2, 1), "blockage": Limits(5, 10)}
    assert all(grade(m.value, m.limits, m.worse) is None for m in result.measurements)
    with pytest.raises(CaseFileError, match="parameter 'top_h' of rule 'domain-extent' must be "
                                            r"a finite number, above 0 \(in H\), got -1"):
        run(roomy, settings={**params, "top_h": -1})


def test_error_grade_can_be_disabled(roomy):
    result = run(roomy, settings={"error": None})
    assert all(m.limits.error is None for m in result.measurements)


def test_missing_or_wrong_case_data(roomy):
    assert run(roomy, body=()).skipped == "the case file gives no domain.body"
    assert run(roomy, kind="internal").skipped.startswith("physics.flow.kind is internal")
    with pytest.raises(CaseFileError) as info:
        run(roomy, body=("cub",))
    assert info.value.key == "domain.body" and "'cub', not a boundary group" in info.value.message
    with pytest.raises(CaseFileError) as info:
        run(roomy, direction=(0.0, 0.0, 1.0))         # default up +z along the flow
    assert info.value.key == "physics.flow.direction"
    with pytest.raises(CaseFileError) as info:
        run(roomy, direction=(1.0, 0.0, 0.0), up=(1.0, 0.0, 0.0))
    assert info.value.key == "domain.up"
