"""Near-wall rules on hexahedral and prism-layer meshes whose first heights are designed.

Hand computations [computed] use the published formulas directly (Schlichting 1979 Cf,
Colebrook 1939, delta = 0.37 x Re_x^-1/5 [memory], Blasius): u_tau = U sqrt(Cf/2) or
U sqrt(f/8), y+ = y u_tau / nu with y half the first-layer height in a cell-centred case
(the centre of a right prism) and the whole first-layer height in a vertex-centred or
finite-element one (the first node).
Air: nu = 1.5e-5 m^2/s, U = 10 m/s, x = 1 m gives u_tau = 0.44873 m/s (REFERENCES.md §2).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from caselint.engine.entries import resolve
from caselint.engine.runner import run_case
from caselint.manifest.case import (
    Case, CaseInfo, Flow, Fluid, MeshSpec, Physics, Turbulence,
)
from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import structured_hex, tetrahedralise
from caselint.rules.near_wall import (
    BOUNDARY_LAYER_CELLS, LAYER_COVER, LAYER_GROWTH, LAYER_TRANSITION, WALL_SPACING_UNIFORMITY,
)
from caselint.rules.near_wall import RULES as NEAR_WALL_RULES
from caselint.rules.yplus import WALL_YPLUS
from near_wall_meshes import geometric, layer_block, prism_block

NU, U, L = 1.5e-5, 10.0, 1.0
RE_L = U * L / NU
CF = (2 * math.log10(RE_L) - 0.65) ** -2.3            # Schlichting, by hand
U_TAU = U * math.sqrt(CF / 2)
RULES = (*NEAR_WALL_RULES, WALL_YPLUS)


def make_case(*, model="k-omega-sst", treatment="resolved", method="cell-centred",
              kind="external", velocity=U, length=L, nu=NU, density=1.2, leading_edge=None,
              direction=None, walls=("zmin",)) -> Case:
    roles = {name: "wall" for name in walls}
    roles.setdefault("zmax", "symmetry")
    return Case(
        path=Path("case.yaml"), version=1, info=CaseInfo(name="near-wall test"),
        mesh=MeshSpec(file=Path("mesh.msh"), boundaries=roles),
        physics=Physics(
            method=method, fluid=Fluid(kinematic_viscosity=nu, density=density),
            flow=Flow(kind=kind, velocity=velocity, length=length, leading_edge=leading_edge,
                      direction=direction),
            turbulence=Turbulence(model=model, wall_treatment=treatment),
        ),
    )


def grade(rule, mesh, case, **settings):
    """Run one rule through the engine, with a case file's ``settings``: (check, findings,
    notes)."""
    report = run_case(case, (resolve(rule, settings),), lambda: mesh)
    (check,) = report.checks
    findings = [f for f in report.findings if f.severity != "note"]
    notes = [f.message for f in report.findings if f.severity == "note"]
    return check, findings, notes


def block(first, ratio=1.2, n=12, **kw):
    return mesh_from_meshio(layer_block(geometric(first, ratio, n), **kw))


def first_height_for(y_plus, fv=True):
    """First-layer height putting the first wall distance at ``y_plus``."""
    y = y_plus * NU / U_TAU
    return 2 * y if fv else y


# -- wall-spacing-uniformity -----------------------------------------------------------------


def scaled_block(scales):
    """Layers whose heights at node column i are multiplied by scales[i] (x direction)."""
    m = layer_block(geometric(1e-4, 1.2, 6), nx=len(scales) - 1, ny=2)
    column = np.rint(m.points[:, 0] / 0.05).astype(int)
    m.points[:, 2] *= np.asarray(scales, dtype=float)[column]
    return mesh_from_meshio(m)


def test_uniform_wall_spacing_ratio_is_one():
    check, findings, _ = grade(WALL_SPACING_UNIFORMITY, block(1e-4), make_case())
    assert check.outcome == "pass"
    assert check.measured == pytest.approx(1.0, abs=1e-12)


@pytest.mark.parametrize("scales, ratio, severity", [
    ([1, 1, 1, 2, 2, 2], 2.0, "warning"),         # cell heights 1, 1, 1.5, 2, 2 (x 1e-4 m)
    ([1, 1, 4, 4], 4.0, "error"),                 # 1, 2.5, 4
])
def test_designed_wall_spacing_ratio_is_measured(scales, ratio, severity):
    mesh = scaled_block(scales)
    check, findings, _ = grade(WALL_SPACING_UNIFORMITY, mesh, make_case())
    assert check.measured == pytest.approx(ratio, rel=1e-12)
    assert check.severity == severity
    (finding,) = findings
    assert finding.where.boundary == "zmin"
    assert "first-layer height from 0.0001 m" in finding.message
    assert f"to {ratio * 1e-4:.3g} m" in finding.message
    # the point is on one of the tallest faces: those right of the first full-scale node
    assert finding.where.point[0] > 0.05 * scales.index(max(scales))


# -- wall-yplus ------------------------------------------------------------------------------


def test_yplus_matches_the_hand_computation_and_doubles_for_finite_elements():
    mesh = block(4e-5)
    fv, _, notes = grade(WALL_YPLUS, mesh, make_case())
    fe, _, _ = grade(WALL_YPLUS, mesh, make_case(method="finite-element"))
    assert U_TAU == pytest.approx(0.44873, rel=2e-5)          # REFERENCES.md §2
    assert fv.measured == pytest.approx(2e-5 * U_TAU / NU, rel=1e-10)
    assert fv.measured == pytest.approx(0.59831, rel=1e-4)
    assert fe.measured == pytest.approx(2 * fv.measured, rel=1e-12)
    assert fv.outcome == "pass" and fe.outcome == "fail" and fe.severity == "warning"
    assert any("Schlichting" in n and "first cell centre" in n for n in notes)
    assert any("y+ of the first cell centre on 'zmin' by area" in n and "100 % below 5" in n
               for n in notes)
    # a vertex-centred finite-volume solver stores its unknowns at the nodes: its first wall
    # distance is the first node's, the whole first-layer height, as in finite elements
    vc, _, vc_notes = grade(WALL_YPLUS, mesh, make_case(method="vertex-centred"))
    assert vc.measured == pytest.approx(2 * fv.measured, rel=1e-12)
    assert any("first node (vertex-centred storage)" in n for n in vc_notes)


def test_vertex_centred_first_node_yplus_doubles_on_a_prism_layer():
    # right prisms on a 4e-5 m first layer: the cell centroid sits at half the height
    # (prism centroid at the mid-height of a right prism [computed]), the node at the top
    heights = geometric(4e-5, 1.2, 6)
    mesh = mesh_from_meshio(prism_block(heights, [0.05, 0.05]))
    cc, _, _ = grade(WALL_YPLUS, mesh, make_case(method="cell-centred"))
    vc, _, _ = grade(WALL_YPLUS, mesh, make_case(method="vertex-centred"))
    assert cc.measured == pytest.approx(2e-5 * U_TAU / NU, rel=1e-9)
    assert vc.measured == pytest.approx(4e-5 * U_TAU / NU, rel=1e-9)
    assert vc.measured == pytest.approx(2 * cc.measured, rel=1e-12)


TABLE = {  # expected (outcome, severity) at y+ = 0.5, 15, 60 for each wall treatment
    "resolved": [("pass", None), ("fail", "error"), ("fail", "error")],
    "wall-function": [("fail", "error"), ("fail", "error"), ("pass", None)],
    "blended": [("pass", None), ("fail", "warning"), ("pass", None)],
}


@pytest.mark.parametrize("treatment", sorted(TABLE))
def test_each_wall_treatment_grades_designed_meshes(treatment):
    for target, expected in zip((0.5, 15.0, 60.0), TABLE[treatment]):
        mesh = block(first_height_for(target), ratio=1.15, n=8)
        check, findings, _ = grade(WALL_YPLUS, mesh, make_case(treatment=treatment))
        assert (check.outcome, check.severity) == expected, (treatment, target)
        if treatment == "blended":
            assert check.unit == "%"
            assert check.measured == (100.0 if target == 15.0 else 0.0)
        else:
            assert check.measured == pytest.approx(target, rel=1e-9)


def test_wall_function_fix_gives_the_first_height_for_the_band():
    mesh = block(first_height_for(15.0), ratio=1.15, n=8)
    _, findings, _ = grade(WALL_YPLUS, mesh, make_case(treatment="wall-function"))
    (finding,) = findings
    assert "smallest y+ of the first cell centre on boundary 'zmin' is 15" in finding.message
    assert "below the error limit 30" in finding.message
    height = 2 * 30 * NU / U_TAU                         # first-layer height for y+ = 30
    assert f"first-layer height {height:.3g} m" in finding.hint


def test_yplus_from_a_wall_shear_stress_field():
    m = layer_block(geometric(1e-4, 1.2, 5))
    m.point_data["wallShearStress"] = np.tile([0.24, 0.0, 0.0], (len(m.points), 1))  # Pa
    mesh = mesh_from_meshio(m)
    check, _, notes = grade(WALL_YPLUS, mesh, make_case(velocity=None, kind=None))
    assert check.measured == pytest.approx(5e-5 * math.sqrt(0.24 / 1.2) / NU, rel=1e-10)
    assert any("y+ from the mesh field wallShearStress" in n for n in notes)
    # without a density the field cannot be used, and the case lacks the flow data
    check, _, notes = grade(WALL_YPLUS, mesh, make_case(velocity=None, density=None))
    assert check.outcome == "skipped" and "physics.flow.velocity" in check.reason
    assert any("no physics.fluid.density" in n for n in notes)


def test_yplus_from_a_friction_velocity_cell_field():
    m = layer_block(geometric(1e-4, 1.2, 5))
    m.cell_data["u_tau"] = [np.full(len(m.cells[0].data), 0.3), np.zeros(len(m.cells[1].data))]
    check, _, notes = grade(WALL_YPLUS, mesh_from_meshio(m), make_case())
    assert check.measured == pytest.approx(5e-5 * 0.3 / NU, rel=1e-10)
    assert any("mesh field u_tau (cell data" in n for n in notes)


def test_internal_flow_uses_colebrook():
    # water in a 0.1 m duct at 2 m/s: Re = 2e5; f solved here by fixed-point iteration
    nu, d, u = 1e-6, 0.1, 2.0
    re = u * d / nu
    x = 8.0
    for _ in range(100):
        x = -2 * math.log10(2.51 * x / re)
    u_tau = u * math.sqrt(x ** -2 / 8)
    mesh = block(2e-5, n=6)
    check, _, notes = grade(WALL_YPLUS, mesh,
                            make_case(kind="internal", velocity=u, length=d, nu=nu))
    assert check.measured == pytest.approx(1e-5 * u_tau / nu, rel=1e-9)
    assert any("Colebrook" in n for n in notes)


def test_leading_edge_gives_each_face_its_own_reynolds_number():
    mesh = block(4e-5, nx=4, ny=1)                  # face centres at x = 0.025 ... 0.175 m
    case = make_case(leading_edge=(0.0, 0.0, 0.0), direction=(1.0, 0.0, 0.0))
    check, _, notes = grade(WALL_YPLUS, mesh, case)
    x = 0.025                                       # the highest friction: nearest the edge
    cf = (2 * math.log10(U * x / NU) - 0.65) ** -2.3
    assert check.measured == pytest.approx(2e-5 * U * math.sqrt(cf / 2) / NU, rel=1e-10)
    assert any("below 5e5" in n for n in notes)      # Re_x < 5e5 there: noted


def test_wall_resolved_les_checks_wall_spacings():
    # wall faces 2 mm streamwise (x) by 1 mm spanwise (y)
    mesh = block(first_height_for(0.5), n=6, nx=3, ny=2, dx=2e-3, dy=1e-3)
    case = make_case(model="les", direction=(1.0, 0.0, 0.0))
    check, findings, _ = grade(WALL_YPLUS, mesh, case)
    assert check.outcome == "pass"
    report = run_case(case, (resolve(WALL_YPLUS),), lambda: mesh)
    assert report.checks[0].outcome == "pass"
    coarse = block(first_height_for(0.5), n=6, nx=3, ny=2, dx=0.02, dy=1e-3)
    check, findings, _ = grade(WALL_YPLUS, coarse, case)
    (finding,) = findings
    assert finding.severity == "warning"
    assert finding.measured == pytest.approx(0.02 * U_TAU / NU, rel=1e-9)   # dx+ = 598
    assert "streamwise wall spacing dx+" in finding.message
    _, _, notes = grade(WALL_YPLUS, coarse, make_case(model="les"))
    assert any("no physics.flow.direction" in n for n in notes)


@pytest.mark.parametrize("case, reason", [
    (make_case(walls=()), "no boundary has role wall"),
    (make_case(velocity=None), "physics.flow.velocity"),
    (make_case(model="k-epsilon", treatment=None), "wall_treatment"),
    (make_case(model=None, treatment=None), "physics.turbulence.model"),
    (make_case(kind=None), "physics.flow.kind"),
])
def test_yplus_skips_without_the_data_it_needs(case, reason):
    check, _, _ = grade(WALL_YPLUS, block(1e-4, n=4), case)
    assert check.outcome == "skipped" and reason in check.reason


def test_laminar_case_is_judged_as_resolved_with_blasius():
    mesh = block(4e-5)
    check, _, notes = grade(WALL_YPLUS, mesh, make_case(model="laminar", treatment=None))
    cf = 0.664 / math.sqrt(RE_L)
    assert check.measured == pytest.approx(2e-5 * U * math.sqrt(cf / 2) / NU, rel=1e-10)
    assert any("Blasius" in n and "laminar case resolves the wall" in n for n in notes)


# -- boundary-layer-cells --------------------------------------------------------------------


DELTA = 0.37 * L * RE_L ** -0.2                      # 0.02529 m [computed]


def across(heights, delta: float) -> float:
    """Cells across ``delta`` above a wall, by hand: the layers wholly inside, plus the share
    of the next layer's height below delta (the rule's definition of a partial cell)."""
    tops = np.cumsum(heights)
    k = int(np.count_nonzero(tops <= delta))
    below = tops[k - 1] if k else 0.0
    return k + (delta - below) / heights[k] if k < len(heights) else float(k)


def test_cells_within_the_boundary_layer_and_stack_cover():
    heights = geometric(1e-4, 1.2, 30)
    within = int(np.count_nonzero(np.cumsum(heights) <= DELTA))
    assert within == 21                              # [computed] 1.2^k <= 51.6
    expected = across(heights, DELTA)                # and 0.61 of the 22nd layer
    assert expected == pytest.approx(21.61186, abs=1e-5)
    check, findings, notes = grade(BOUNDARY_LAYER_CELLS, block(1e-4, n=30), make_case())
    assert check.outcome == "pass" and check.measured == pytest.approx(expected, rel=1e-9)
    assert any(f"{DELTA:.3g} m" in n for n in notes)
    # 20 layers stop short of delta: enough cells (layer-cover passes 30 layers), but the
    # stack covers 0.738 of it
    check, findings, _ = grade(LAYER_COVER, block(1e-4, n=30), make_case())
    assert check.outcome == "pass" and check.measured > 1
    check, findings, _ = grade(LAYER_COVER, block(1e-4, n=20), make_case())
    (finding,) = findings
    thickness = 1e-4 * (1.2 ** 20 - 1) / 0.2
    assert finding.severity == "warning" and check.unit == ""
    assert finding.measured == pytest.approx(thickness / DELTA, rel=1e-10)
    assert check.measured == pytest.approx(thickness / DELTA, rel=1e-10)


def test_few_prism_layers_under_a_coarse_tetrahedral_core():
    """Four prism layers (5.37 mm) under Kuhn tetrahedra of 0.05 m hexahedra, delta 25.3 mm.
    Every Kuhn tetrahedron spans the whole height of its hexahedron (its corners run from
    the bottom to the top face), so each counts the length of the ray inside it over
    0.05 m: the tetrahedra of one hexahedron add up to one cell across it [computed], and
    the count is 4 + 19.9 mm / 50 mm = 4.40, an error."""
    heights = geometric(1e-3, 1.2, 4)
    mesh = mesh_from_meshio(prism_block(heights, [0.05, 0.05]))
    check, findings, _ = grade(BOUNDARY_LAYER_CELLS, mesh, make_case())
    expected = 4 + (DELTA - heights.sum()) / 0.05
    assert expected == pytest.approx(4.399, abs=1e-3)
    assert check.measured == pytest.approx(expected, rel=1e-9)
    assert (check.outcome, check.severity) == ("fail", "error")


def test_laminar_and_internal_thickness():
    heights = geometric(1e-4, 1.2, 30)
    mesh = block(1e-4, n=30)
    laminar = 5.0 * L / math.sqrt(RE_L)             # Blasius delta99 = 6.12 mm
    check, _, _ = grade(BOUNDARY_LAYER_CELLS, mesh, make_case(model="laminar"))
    assert check.measured == pytest.approx(across(heights, laminar), rel=1e-9)
    check, _, notes = grade(BOUNDARY_LAYER_CELLS, mesh, make_case(kind="internal", length=0.02))
    assert check.measured == pytest.approx(across(heights, 0.01), rel=1e-9)
    assert any("half the hydraulic diameter" in n for n in notes)


# -- layer-growth ----------------------------------------------------------------------------


@pytest.mark.parametrize("ratio, expected", [
    (1.1, ("pass", None)), (1.25, ("fail", "warning")), (1.35, ("fail", "error")),
    (1.2, ("pass", None)),        # exactly at the warning limit: round-off must not cross it
])
def test_layer_growth_grades(ratio, expected):
    check, _, _ = grade(LAYER_GROWTH, block(1e-4, ratio=ratio, n=10), make_case())
    assert (check.outcome, check.severity) == expected
    assert check.measured == pytest.approx(ratio, rel=1e-10)


def test_jump_from_prism_layers_to_the_tetrahedral_core():
    heights = geometric(1e-3, 1.2, 5)
    mesh = mesh_from_meshio(prism_block(heights, [0.05, 0.05]))
    check, findings, _ = grade(LAYER_TRANSITION, mesh, make_case())
    (finding,) = findings
    assert finding.severity == "error" and "core cell" in finding.message
    assert finding.measured == pytest.approx(0.05 / heights[-1], rel=1e-10)
    assert check.severity == "error" and check.measured == finding.measured
    # the growth inside the stack is what layer-growth's row shows: 1.2
    check, _, _ = grade(LAYER_GROWTH, mesh, make_case())
    assert check.outcome == "pass" and check.measured == pytest.approx(1.2, rel=1e-10)


def test_tetrahedral_walls_have_nothing_to_grow():
    mesh = mesh_from_meshio(tetrahedralise(structured_hex(*(np.linspace(0, 0.2, 3),) * 3)))
    check, _, _ = grade(LAYER_GROWTH, mesh, make_case())
    assert check.outcome == "skipped" and "no wall face has a layer stack" in check.reason


def test_all_rules_are_registered_with_documented_parameters():
    from caselint.rules import near_wall, yplus

    ids = sorted(r.id for r in near_wall.caselint_register_rules())
    assert ids == ["boundary-layer-cells", "layer-cover", "layer-growth", "layer-transition",
                   "wall-spacing-uniformity"]
    assert [r.id for r in yplus.caselint_register_rules()] == ["wall-yplus"]
    for rule in RULES:
        assert rule.source and rule.rationale
        for p in rule.parameters:
            assert p.description and p.name in rule.rationale or p.description


# -- end to end ------------------------------------------------------------------------------


def test_lint_case_runs_the_near_wall_rules_from_a_rule_set(tmp_path):
    from caselint.api import lint_case
    from caselint.engine.hookspecs import hookimpl
    from caselint.engine.plugins import get_plugin_manager
    from caselint.mesh.blocks import write_gmsh22
    from caselint.rules import near_wall

    # an invented inspection-tunnel floor: 1 m plate, air at 10 m/s, layers for y+ = 0.5
    write_gmsh22(layer_block(geometric(first_height_for(0.5), 1.2, 25)), tmp_path / "floor.msh")
    (tmp_path / "near-wall.yaml").write_text(
        "description: near-wall checks\nrules:\n  wall-yplus: {}\n"
        "  wall-spacing-uniformity: {}\n  boundary-layer-cells: {warn: 12}\n"
        "  layer-growth: {}\n  layer-transition: {error: 3.0}\n  layer-cover: {}\n")
    (tmp_path / "case.yaml").write_text(
        "caselint: 1\ncase: {name: Tunnel floor T1}\nmesh:\n  file: floor.msh\n"
        "  boundaries: {zmin: wall, zmax: symmetry, xmin: inlet, xmax: outlet, "
        "ymin: symmetry, ymax: symmetry}\n"
        "physics:\n  fluid: {kinematic_viscosity: 1.5e-5 m^2/s}\n"
        "  flow: {kind: external, velocity: 10 m/s, length: 1 m}\n"
        "  turbulence: {model: k-omega-sst, wall_treatment: resolved}\n"
        "checks: {rule_sets: [near-wall]}\n")

    class Sets:
        @hookimpl
        def caselint_register_rule_sets(self):
            return [tmp_path / "near-wall.yaml"]

    pm = get_plugin_manager()
    if not pm.has_plugin("caselint.rules.near_wall"):
        pm.register(near_wall, name="caselint.rules.near_wall")
    pm.register(Sets(), name="test-near-wall-sets")
    report = lint_case(tmp_path / "case.yaml", pm=pm)
    checks = {c.rule: c for c in report.checks}
    assert sorted(checks) == ["boundary-layer-cells", "layer-cover", "layer-growth",
                              "layer-transition", "wall-spacing-uniformity", "wall-yplus"]
    assert checks["wall-yplus"].outcome == "pass"
    assert checks["wall-yplus"].measured == pytest.approx(0.5, rel=1e-9)
    assert checks["wall-spacing-uniformity"].measured == pytest.approx(1.0, abs=1e-12)
    assert checks["layer-growth"].measured == pytest.approx(1.2, rel=1e-12)
    assert checks["layer-growth"].outcome == "pass"
    # all 25 layers lie inside delta (>= 12 cells, the case's rule set: a pass), but the
    # stack is thinner than delta: layer-cover warns, with the ratio as its row's value
    heights = geometric(first_height_for(0.5), 1.2, 25)
    assert np.count_nonzero(np.cumsum(heights) <= DELTA) == 25
    bl = checks["boundary-layer-cells"]
    assert (bl.outcome, bl.measured) == ("pass", 25)
    cover = checks["layer-cover"]
    assert (cover.outcome, cover.severity) == ("fail", "warning")
    assert cover.measured == pytest.approx(heights.sum() / DELTA, rel=1e-9)
    (finding,) = [f for f in report.findings if f.rule == "layer-cover"
                  and f.severity != "note"]
    assert "thinnest layer stack" in finding.message and finding.where.boundary == "zmin"


def test_resolved_fix_names_the_air_flat_plate_first_height():
    # y+ = 1 at 3.3428e-5 m (REFERENCES.md §2): first-layer height 6.69e-5 m in a FV case
    _, findings, _ = grade(WALL_YPLUS, block(4e-4), make_case())
    (finding,) = findings
    assert "3.34e-05 m from the wall (first-layer height 6.69e-05 m)" in finding.hint


def test_two_dimensional_case():
    from caselint.mesh.blocks import structured_quad
    from near_wall_meshes import stack

    mesh = mesh_from_meshio(structured_quad(np.linspace(0, 0.3, 7),
                                            stack(geometric(4e-5, 1.2, 10))))
    check, _, _ = grade(WALL_YPLUS, mesh, make_case(walls=("ymin",)))
    assert check.measured == pytest.approx(2e-5 * U_TAU / NU, rel=1e-10)
    case = make_case(walls=("ymin",), model="les", direction=(1.0, 0.0, 0.0))
    check, findings, _ = grade(WALL_YPLUS, mesh, case)
    (finding,) = findings                              # dx+ = 0.05 u_tau / nu; no dz+ in 2-D
    assert finding.measured == pytest.approx(0.05 * U_TAU / NU, rel=1e-9)
    check, _, _ = grade(WALL_SPACING_UNIFORMITY, mesh, case)
    assert check.measured == pytest.approx(1.0, abs=1e-12)


def test_damaged_wall_cells_give_findings_not_crashes():
    m = layer_block(geometric(1e-4, 1.2, 6))
    on_top = np.flatnonzero(np.isclose(m.points[:, 2], 1e-4) & np.isclose(m.points[:, 0], 0.05)
                            & np.isclose(m.points[:, 1], 0.05))
    m.points[on_top, 2] = -5e-4                     # folds the first layer around one node
    mesh = mesh_from_meshio(m)
    for rule in RULES:
        check, findings, _ = grade(rule, mesh, make_case())
        assert check.outcome in ("pass", "fail", "skipped"), (rule.id, check.reason)
        assert check.measured is None or math.isfinite(check.measured)
        assert all(f.measured is None or math.isfinite(f.measured) for f in findings)


@pytest.mark.parametrize("rule", RULES, ids=lambda r: r.id)
def test_every_rule_skips_without_walls(rule):
    check, _, _ = grade(rule, block(1e-4, n=4), make_case(walls=()))
    assert check.outcome == "skipped" and "no boundary has role wall" in check.reason


@pytest.mark.parametrize("rule", RULES, ids=lambda r: r.id)
def test_inviscid_cases_and_slip_walls_skip_the_near_wall_rules(rule):
    """An Euler case (no viscosity) or a case whose only solid boundary slips forms no
    boundary layer: every near-wall rule skips, naming why."""
    mesh = block(1e-4)
    check, findings, _ = grade(rule, mesh, make_case(model="inviscid"))
    assert check.outcome == "skipped" and findings == []
    assert "inviscid" in check.reason
    slip = make_case(walls=())
    slip.mesh.boundaries["zmin"] = "slip-wall"
    check, findings, _ = grade(rule, mesh, slip)
    assert check.outcome == "skipped" and "slip walls" in check.reason


def test_gaps_between_slip_walls_are_still_measured():
    from caselint.rules.gaps import GAP_CELLS

    mesh = block(0.05, ratio=1.0, n=4)            # 4 cells of 5 cm between zmin and zmax
    case = make_case(walls=())
    case.mesh.boundaries.update({"zmin": "slip-wall", "zmax": "slip-wall"})
    check, findings, _ = grade(GAP_CELLS, mesh, case)
    assert check.measured == 4 and check.outcome == "fail"


@pytest.mark.parametrize("target, shown", [(40.0, "wall-function.low"),
                                           (180.0, "wall-function.high")])
def test_wall_function_row_shows_the_end_nearer_its_limit(target, shown):
    """A passing wall-function band shows the y+ end closer to its limit (30 below, 300
    above): the smallest y+ for a first layer near 40, the largest for one near 180."""
    from caselint.engine.runner import check_rule

    mesh = block(first_height_for(target), n=6)
    case = make_case(treatment="wall-function")
    check, findings, _ = grade(WALL_YPLUS, mesh, case)
    assert check.outcome == "pass" and findings == []
    ends = {m.grade: m for m in check_rule(WALL_YPLUS, case, mesh).measurements}
    nearer = ("wall-function.low" if ends["wall-function.low"].value / 30.0
              <= 300.0 / ends["wall-function.high"].value else "wall-function.high")
    assert nearer == shown and check.measured == pytest.approx(ends[shown].value)
    assert all("ranges from" in m.detail for m in ends.values())
