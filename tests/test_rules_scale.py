"""The mesh-scale rule: a mesh in the wrong unit is caught and the likely unit named.

References: the unit factors are definitions (1 in = 25.4 mm, 1 ft = 304.8 mm); the mesh
lengths of a structured duct follow from its grid [computed].
"""

from __future__ import annotations

import datetime as dt
import textwrap
from pathlib import Path

import numpy as np
import pytest

from caselint.api import lint_case
from caselint.engine.runner import check_rule
from caselint.engine.hookspecs import hookimpl
from caselint.engine.plugins import get_plugin_manager
from caselint.manifest.case import Case, CaseInfo, Domain, Flow, MeshSpec, Physics
from caselint.manifest.units import scale_to_m
from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import structured_hex, write_gmsh22
from caselint.mesh.obstacles import carved_hex
from caselint.rules import scale
from caselint.rules.scale import MESH_SCALE, likely_unit, mismatch

DUCT_ROLES = {"inlet": "inlet", "outlet": "outlet", "floor": "wall", "ceiling": "wall",
              "side-a": "wall", "side-b": "wall"}


def duct(factor: float = 1.0):
    """Invented ventilation duct, 1 m long, 50 mm high, 100 mm wide, coordinates x ``factor``."""
    return structured_hex(np.linspace(0, 1.0, 21) * factor, np.linspace(0, 0.05, 6) * factor,
                          np.linspace(0, 0.1, 6) * factor,
                          names=("inlet", "outlet", "floor", "ceiling", "side-a", "side-b"))


def run(mesh_raw, units: str, length: float, roles=DUCT_ROLES, body=()):
    case = Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="t"),
                mesh=MeshSpec(file=Path("mesh.msh"), units=units, scale_to_m=scale_to_m(units),
                              boundaries=roles),
                physics=Physics(flow=Flow(length=length)), domain=Domain(body=tuple(body)))
    mesh = mesh_from_meshio(mesh_raw, scale_to_m=scale_to_m(units))
    result = check_rule(MESH_SCALE, case, mesh)
    (m,) = result.measurements
    return m


def test_consistent_duct_passes_with_its_lengths_reported():
    m = run(duct(), "m", 0.05)
    assert m.value == 1.0 and m.fix == ""
    # lower end: the 50 mm height (smallest extent; the median gap is 50 or 100 mm)
    assert m.detail == ("physics.flow.length 0.05 m; the mesh's lengths run from 0.05 m "
                        "(smallest extent of the mesh) to 1 m (largest extent of the mesh), "
                        "with mesh.units: m")


def test_mesh_in_millimetres_declared_as_metres_is_an_error_naming_mm():
    m = run(duct(1000.0), "m", 0.05)
    assert m.value == pytest.approx(1000.0)       # [computed] 50 m against 0.05 m
    assert m.value > MESH_SCALE.limits.error
    assert m.fix.startswith("The mesh looks like it is in mm, not m: set mesh.units: mm")
    assert "the mesh is at least 1000 times larger than the flow length says" in m.detail
    # the same file declared in millimetres passes
    assert run(duct(1000.0), "mm", 0.05).value == 1.0


@pytest.mark.parametrize("written, declared, factor", [
    ("mm", "in", 25.4),           # a millimetre file read as inches
    ("cm", "m", 100.0),
    ("in", "ft", 12.0),
    ("mm", "ft", 304.8),
    ("mm", "cm", 10.0),
])
def test_unit_mix_ups_are_errors_naming_the_unit_written(written, declared, factor):
    numbers = 1.0 / scale_to_m(written)            # coordinates as the file holds them
    m = run(duct(numbers), declared, 0.05)
    assert m.value == pytest.approx(factor, rel=1e-9)     # the unit ratio [definition]
    assert m.value > MESH_SCALE.limits.error
    assert m.fix.startswith(f"The mesh looks like it is in {written}, not {declared}")


def test_mesh_in_metres_declared_in_millimetres_looks_too_small():
    m = run(duct(), "mm", 0.05)                    # the duct appears 1 mm long
    assert m.value == pytest.approx(50.0)          # 0.05 m against a 1 mm largest extent
    assert "times smaller" in m.detail
    assert m.fix.startswith("The mesh looks like it is in m, not mm")


def test_no_unit_explains_a_wrong_flow_length():
    m = run(duct(), "m", 7.0)                      # 7 m on a 1 m duct
    assert m.value == pytest.approx(7.0)
    assert m.fix.startswith("No mesh unit explains the factor 7")


def test_body_in_a_large_domain_is_compared_by_its_size():
    # invented kiosk 2 m tall in a 40 m domain: the domain alone would look 10x too large
    mesh_raw = carved_hex(np.linspace(-10, 30, 41), np.linspace(-10, 10, 21),
                          np.linspace(0, 12, 13),
                          {"kiosk": [((0, 2), (-1, 1), (0, 2))]},
                          names=("inflow", "outflow", "side1", "side2", "ground", "top"))
    roles = {"inflow": "inlet", "outflow": "outlet", "side1": "symmetry", "side2": "symmetry",
             "ground": "wall", "top": "symmetry", "kiosk": "wall"}
    m = run(mesh_raw, "m", 2.0, roles)
    assert m.value == 1.0 and "size of the walls inside the domain" in m.detail
    m = run(mesh_raw, "m", 2.0, roles, body=("kiosk",))
    assert m.value == 1.0
    wrong = run(mesh_raw, "m", 0.002, roles)       # flow length typed in the wrong unit
    assert wrong.value == pytest.approx(1000.0)
    assert wrong.fix.startswith("The mesh looks like it is in mm")


def test_helpers():
    assert mismatch(1.0, 0.5, 2.0) == 1.0
    assert mismatch(0.1, 0.5, 2.0) == pytest.approx(5.0)
    assert mismatch(8.0, 0.5, 2.0) == pytest.approx(4.0)
    assert likely_unit(0.05, 50.0, 1000.0, "m") == "mm"
    assert likely_unit(0.05, 0.05, 1.0, "m") is None


def test_without_a_flow_length_the_rule_is_skipped():
    case = Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="t"),
                mesh=MeshSpec(file=Path("mesh.msh")))
    result = check_rule(MESH_SCALE, case)         # skipped before it asks for a mesh
    assert result.skipped == "the case file gives no physics.flow.length"


@pytest.mark.parametrize("units, outcome", [("m", "fail"), ("mm", "pass")])
def test_end_to_end_mm_file(tmp_path, units, outcome):
    write_gmsh22(duct(1000.0), tmp_path / "duct.msh")
    (tmp_path / "case.yaml").write_text(textwrap.dedent(f"""\
        caselint: 1
        case: {{name: Invented supply duct}}
        mesh:
          file: duct.msh
          units: {units}
          boundaries: {{inlet: inlet, outlet: outlet, floor: wall, ceiling: wall,
                       side-a: wall, side-b: wall}}
        physics:
          flow:
            length: 50 mm
        checks: {{rule_sets: [scaletest]}}
        """))
    rule_set = tmp_path / "scaletest.yaml"
    rule_set.write_text("description: scale only\nrules:\n  mesh-scale: {}\n")

    class Sets:
        @hookimpl
        def caselint_register_rule_sets(self):
            return [rule_set]

    pm = get_plugin_manager(load_entry_points=False)
    if not pm.has_plugin("caselint.rules.scale"):       # not yet among the built-ins
        pm.register(scale, name="caselint.rules.scale")
    pm.register(Sets(), name="test-scale-sets")
    report = lint_case(tmp_path / "case.yaml", pm=pm, today=dt.date(2026, 1, 1))
    (check,) = report.checks
    assert check.outcome == outcome
    if outcome == "fail":
        assert (check.severity, check.measured, check.limit) == ("error", pytest.approx(1000), 5)
        (finding,) = report.findings
        assert finding.hint.startswith("The mesh looks like it is in mm, not m")
        assert finding.where.key == "physics.flow.length" and finding.where.line == 10
    else:
        assert check.measured == 1.0 and report.findings == ()
