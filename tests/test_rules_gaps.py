"""The gap-cells rule on channels and slots whose cell counts are known by construction.

References: the cells across a structured channel or slot are the grid's own count
[computed]; 5-10 cells across a gap is common practice (the rule's default limits).
"""

from __future__ import annotations

import datetime as dt
import textwrap
from pathlib import Path

import numpy as np
import pytest

from caselint.api import lint_case
from caselint.engine.hookspecs import hookimpl
from caselint.engine.plugins import get_plugin_manager
from caselint.engine.runner import check_rule
from caselint.errors import CaseFileError
from caselint.manifest.case import Case, CaseInfo, MeshSpec
from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import structured_hex, structured_quad, write_gmsh22
from caselint.mesh.obstacles import carved_hex
from caselint.model import RuleResult
from caselint.rules import gaps
from caselint.rules.gaps import GAP_CELLS

CHANNEL = {"inlet": "inlet", "outlet": "outlet", "floor": "wall", "ceiling": "wall",
           "front": "symmetry", "back": "symmetry"}


def case_with(boundaries: dict[str, str]) -> Case:
    return Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="t"),
                mesh=MeshSpec(file=Path("mesh.msh"), boundaries=boundaries))


def run(mesh, boundaries, settings=None) -> RuleResult:
    """The rule run as the engine runs it, with a case file's ``settings`` for it."""
    return check_rule(GAP_CELLS, case_with(boundaries), mesh, settings=settings)


def channel(n_across: int, length: float = 100.0, n_along: int = 200):
    """3-D channel 1 m high, inlet and outlet ``length`` apart, symmetry front and back."""
    return structured_hex(np.linspace(0, length, n_along + 1), np.linspace(0, 1.0, n_across + 1),
                          np.linspace(0, 0.5, 3),
                          names=("inlet", "outlet", "floor", "ceiling", "front", "back"))


@pytest.mark.parametrize("n_across, severity_limit", [(4, "error"), (12, None)])
def test_channel_gap_count_is_exact(n_across, severity_limit):
    result = run(mesh_from_meshio(channel(n_across)), CHANNEL)
    (m,) = result.measurements                      # one pair: ceiling and floor
    assert m.value == n_across                      # [computed] cells across
    assert m.where.boundary == "ceiling"            # alphabetically first of the pair
    assert f"narrowest gap between 'ceiling' and 'floor': {n_across} cells across 1 m" in m.detail
    rays = 2 * 200 * 2
    if n_across < 10:
        assert m.where.face_count == rays and len(m.where.faces) == 10
        assert m.fix.startswith("Refine across the gap between 'ceiling' and 'floor' (1 m wide): "
                                "at least 10 cells across, i.e. cells about 0.1 m")
    else:
        assert m.where.face_count == 0 and m.where.faces == () and m.fix == ""
        assert f"all {rays} rays across it cross at least 10 cells" in m.detail
    # the middle of the narrowest ray: halfway up the channel
    assert m.where.point[1] == pytest.approx(0.5)


def test_channel_length_between_inlet_and_outlet_is_not_a_gap():
    # 100 m between inlet and outlet, 400 cells along: no ray runs along the flow
    result = run(mesh_from_meshio(channel(12, length=100.0, n_along=400)), CHANNEL)
    (m,) = result.measurements
    assert m.value == 12 and "across 1 m" in m.detail


def test_two_d_channel_with_four_cells_is_an_error_through_the_engine(tmp_path):
    write_gmsh22(structured_quad(np.linspace(0, 5, 51), np.linspace(0, 0.2, 5),
                                 names=("in", "out", "bottom", "top")), tmp_path / "duct.msh")
    (tmp_path / "case.yaml").write_text(textwrap.dedent("""\
        caselint: 1
        case: {name: Invented cooling duct}
        mesh:
          file: duct.msh
          boundaries: {in: inlet, out: outlet, bottom: wall, top: wall}
        checks: {rule_sets: [gaptest]}
        """))
    rule_set = tmp_path / "gaptest.yaml"
    rule_set.write_text("description: gaps only\nrules:\n  gap-cells: {}\n")

    class Sets:
        @hookimpl
        def caselint_register_rule_sets(self):
            return [rule_set]

    pm = get_plugin_manager(load_entry_points=False)
    if not pm.has_plugin("caselint.rules.gaps"):       # not yet among the built-ins
        pm.register(gaps, name="caselint.rules.gaps")
    pm.register(Sets(), name="test-gap-sets")
    report = lint_case(tmp_path / "case.yaml", pm=pm, today=dt.date(2026, 1, 1))
    (check,) = report.checks
    assert (check.outcome, check.severity, check.measured, check.limit) == ("fail", "error", 4, 5)
    (finding,) = report.findings
    assert finding.message.startswith("fewest cells across a gap between walls on boundary "
                                      "'bottom' is 4 cells, below the error limit 5 cells; "
                                      "narrowest gap between 'bottom' and 'top': 4 cells "
                                      "across 0.2 m")
    assert finding.where.boundary == "bottom" and finding.where.face_count == 100


def test_slot_between_fins_is_found_and_is_the_worst_gap():
    # base plate (y = 0) with two fins 0.75 m apart: 3 cells of 0.25 m across the slot
    mesh = mesh_from_meshio(carved_hex(
        np.linspace(0, 10, 41), np.linspace(0, 4, 17), np.linspace(0, 2, 9),
        {"fin-a": [((2, 4.75), (0, 3), (0, 2))], "fin-b": [((5.5, 8), (0, 3), (0, 2))]},
        names=("inlet", "outlet", "base", "lid", "left", "right")))
    roles = {"inlet": "inlet", "outlet": "outlet", "base": "wall", "lid": "wall",
             "left": "symmetry", "right": "symmetry", "fin-a": "wall", "fin-b": "wall"}
    result = run(mesh, roles)
    by_pair = {m.detail.split(":")[0]: m for m in result.measurements}
    slot = by_pair["narrowest gap between 'fin-a' and 'fin-b'"]
    assert slot.value == 3 and "3 cells across 0.75 m" in slot.detail
    assert slot.where.boundary == "fin-a"
    assert slot.where.face_count == 2 * 12 * 8          # both fin faces lining the slot
    assert 4.75 < slot.where.point[0] < 5.5             # inside the slot
    assert result.measurements[0] is slot               # worst first
    # fin tops to the lid: 1 m, 4 cells; base to lid away from the fins: 4 m, 16 cells
    assert by_pair["narrowest gap between 'fin-a' and 'lid'"].value == 4
    assert by_pair["narrowest gap between 'base' and 'lid'"].value == 16


def test_a_wall_facing_itself_is_a_gap_of_that_group():
    # a U-shaped channel wall in one group: floor and ceiling both called 'duct'
    mesh = mesh_from_meshio(structured_hex(np.linspace(0, 4, 9), np.linspace(0, 1, 7),
                                           np.linspace(0, 1, 3),
                                           names=("in", "out", "duct", "duct2", "s1", "s2")))
    result = run(mesh, {"in": "inlet", "out": "outlet", "duct": "wall", "duct2": "wall",
                        "s1": "wall", "s2": "wall"})
    details = [m.detail for m in result.measurements]
    assert any(d.startswith("narrowest gap between 'duct' and 'duct2': 6 cells") for d in details)
    assert any(d.startswith("narrowest gap between 's1' and 's2': 2 cells") for d in details)
    # one group on both sides of a slot: a clamp of two jaws 1 m apart (5 cells of 0.2 m)
    clamp = mesh_from_meshio(carved_hex(
        np.linspace(0, 4, 21), np.linspace(0, 3, 16), np.linspace(0, 0.4, 3),
        {"jaws": [((1, 3), (0, 1), (0, 0.4)), ((1, 3), (2, 3), (0, 0.4))]},
        names=("in", "out", "s1", "s2", "s3", "s4")))
    result = run(clamp, {"in": "inlet", "out": "outlet", "jaws": "wall", "s1": "symmetry",
                         "s2": "symmetry", "s3": "symmetry", "s4": "symmetry"})
    (m,) = result.measurements
    assert m.value == 5 and m.where.boundary == "jaws"
    assert m.detail.startswith("narrowest gap across 'jaws': 5 cells across 1 m")


def leaning_corner(angle_deg: float):
    """2-D duct whose left wall leans over the floor: they meet at ``angle_deg`` (acute)."""
    m = structured_quad(np.linspace(0, 4, 41), np.linspace(0, 1, 11),
                        names=("left", "right", "floor", "top"))
    x, y = m.points[:, 0].copy(), m.points[:, 1]
    m.points[:, 0] = x + (1 - x / 4) * y / np.tan(np.radians(angle_deg))
    return mesh_from_meshio(m)


def test_a_corner_where_walls_meet_at_an_angle_is_not_a_passage():
    # [computed] a floor ray meets a wall leaning at 60 deg 60 deg from head-on
    mesh = leaning_corner(60.0)
    roles = {"left": "wall", "right": "outlet", "floor": "wall", "top": "inlet"}
    result = run(mesh, roles, {"max_steps": 10_000, "facing_angle_deg": 45})
    assert result.skipped.endswith("or meet another wall at more than 45 deg from head-on (a "
                                   "corner, not a passage)")
    wide = run(mesh, roles, {"max_steps": 10_000, "facing_angle_deg": 70})
    (m,) = wide.measurements
    assert m.detail.startswith("narrowest gap between 'floor' and 'left': 1 cell across")
    with pytest.raises(CaseFileError, match="parameter 'facing_angle_deg' of rule 'gap-cells' "
                                            "must be a finite number, above 0 and at most 90 "
                                            r"\(in deg\), got 95"):
        run(mesh, roles, {"facing_angle_deg": 95})


def test_no_walls_or_no_wall_to_wall_ray_is_skipped_with_the_reason():
    mesh = mesh_from_meshio(channel(4, length=2.0, n_along=4))
    no_walls = run(mesh, {k: ("symmetry" if v == "wall" else v) for k, v in CHANNEL.items()})
    assert no_walls.skipped == "no boundary has role wall or slip-wall in mesh.boundaries"
    # only the floor is a wall: every ray leaves through the (symmetry) ceiling
    open_top = run(mesh, {**CHANNEL, "ceiling": "symmetry"})
    assert open_top.skipped == ("no passage between walls: the 8 rays cast from the walls "
                                "leave through inlets, outlets, symmetry planes or other open "
                                "boundaries")


def test_bad_max_steps_is_a_case_file_error_and_a_small_one_is_a_note():
    mesh = mesh_from_meshio(channel(4, length=2.0, n_along=4))
    for bad in (0, 2.5, float("inf"), "many", None):
        with pytest.raises(CaseFileError, match="parameter 'max_steps' of rule 'gap-cells' must "
                                                "be a whole number, at least 1") as err:
            run(mesh, CHANNEL, {"max_steps": bad})
        assert err.value.key == "checks.rules.gap-cells.max_steps"
    result = run(mesh, CHANNEL, {"max_steps": 3})
    assert result.skipped is not None               # every ray stopped after 3 cells
    (note,) = result.notes
    assert note.message.startswith("16 rays from the walls stopped inside the mesh")
