"""Time-step rules on box meshes whose Courant, acoustic and diffusion numbers are known.

References: Co = U dt / dx on uniform hexahedra and dt (|u|/dx + |v|/dy + |w|/dz) for a
skewed velocity [computed, REFERENCES.md section 4]; explicit limits from
caselint.physics.timestep (checked against RK step matrices in test_physics_timestep.py);
cylinder shedding D = 0.1 m, U = 10 m/s, St 0.2 (Williamson 1996 [memory]) -> period 0.05 s,
100 steps of 5e-4 s [computed]; implicit and steps-per-period limits are common practice.
"""

from __future__ import annotations

from pathlib import Path

import meshio
import numpy as np
import pytest

import dataclasses

from caselint.engine.runner import check_rule, graded_measurements
from caselint.errors import CaseFileError
from caselint.manifest.case import (
    Case, CaseInfo, Flow, Fluid, MeshSpec, Physics, TimeSpec, Turbulence,
)
from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import graded, structured_hex
from caselint.model import Limits, Rule, RuleResult
from caselint.rules import time_resolution, time_step
from caselint.rules.time_resolution import TIME_RESOLUTION
from caselint.rules.time_step import ACOUSTIC_COURANT, COURANT, DIFFUSION_NUMBER

DX, DY, DZ = 0.125, 0.25, 0.5     # exact in binary
ALL_RULES = (COURANT, ACOUSTIC_COURANT, DIFFUSION_NUMBER, TIME_RESOLUTION)


def box_meshio(nx=4, ny=3, nz=2) -> meshio.Mesh:
    return structured_hex(np.arange(nx + 1) * DX, np.arange(ny + 1) * DY, np.arange(nz + 1) * DZ)


@pytest.fixture(scope="module")
def box():
    return mesh_from_meshio(box_meshio())


def make_case(*, time=None, flow=None, fluid=None, model=None, compressible=False,
              boundaries=None, velocity_field=None, method="finite-volume") -> Case:
    time = {"mode": "transient", "step": 1e-3, **(time or {})}
    flow = {"velocity": 10.0, "direction": (1.0, 0.0, 0.0), **(flow or {})}
    return Case(
        path=Path("case.yaml"), version=1, info=CaseInfo(name="test"),
        mesh=MeshSpec(file=Path("mesh.vtu"), boundaries=dict(boundaries or {}),
                      velocity_field=velocity_field),
        physics=Physics(method=method, flow=Flow(**flow), fluid=Fluid(**(fluid or {})),
                        turbulence=Turbulence(model=model), compressible=compressible),
        time=TimeSpec(**time),
    )


def run(rule: Rule, mesh, case: Case, **settings) -> RuleResult:
    """Run a rule as the engine would, with a case file's ``settings`` for it; its
    measurements as the engine grades them (each with its grade's limits)."""
    result = check_rule(rule, case, mesh, settings=settings)
    if result.skipped is not None:
        return result
    graded = graded_measurements(rule, result, settings)
    return dataclasses.replace(result, measurements=tuple(graded))


def only(result: RuleResult):
    assert result.skipped is None, result.skipped
    assert len(result.measurements) == 1
    return result.measurements[0]


# -- skips ---------------------------------------------------------------------------------


@pytest.mark.parametrize("rule", ALL_RULES, ids=lambda r: r.id)
def test_steady_case_skips_every_time_step_rule(rule, box):
    case = make_case(time={"mode": "steady"})
    assert run(rule, box, case).skipped == "steady case"


def test_registered_rules_and_their_defaults():
    rules = {r.id: r for r in time_step.caselint_register_rules()}
    assert sorted(rules) == ["acoustic-courant", "courant", "diffusion-number"]
    assert [r.id for r in time_resolution.caselint_register_rules()] == ["time-resolution"]
    assert rules["diffusion-number"].limits == Limits(warn=None, error=0.5)
    assert TIME_RESOLUTION.worse == "lower"
    grades = {g.name: g.limits for g in rules["courant"].all_grades}
    assert grades == {"implicit": Limits(warn=5.0, error=None),
                      "implicit.scale-resolving": Limits(warn=1.0, error=None),
                      "explicit": Limits(warn=None, error=None)}
    assert rules["courant"].parameters == ()


@pytest.mark.parametrize("change, reason", [
    ({"time": {"step": None}}, "the case file gives no time.step"),
    ({"flow": {"velocity": None}}, "no flow velocity"),
    ({"flow": {"direction": None}}, "physics.flow.direction is not given"),
])
def test_courant_says_what_is_missing(box, change, reason):
    assert run(COURANT, box, make_case(**change)).skipped.startswith(reason)


# -- courant: values ------------------------------------------------------------------------


def test_courant_on_uniform_hexes_is_u_dt_over_dx(box):
    m = only(run(COURANT, box, make_case(time={"step": 2e-3})))
    assert m.value == pytest.approx(10.0 * 2e-3 / DX, rel=1e-12)    # 0.16 [computed]
    assert m.limits == Limits(warn=5.0, error=None)                  # implicit RANS
    assert m.where.cell_count == 0 and m.where.key == "time.step"
    assert "99th percentile 0.16" in m.detail
    assert "the reference velocity 10 m/s along (1, 0, 0)" in m.detail


def test_courant_attaches_its_distribution_for_the_review_reports(box):
    result = run(COURANT, box, make_case(time={"step": 2e-3}))
    (plot,) = result.plots
    (series,) = plot.series
    assert sum(series.y) == box.n_cells and series.below == series.above == 0
    # every cell sits at Co = 0.16, in the quarter-decade bin 10^-0.75 .. 10^-0.5
    (full,) = [i for i, count in enumerate(series.y) if count]
    assert series.x[full] <= 0.16 < series.x[full + 1]
    assert plot.x_log and plot.limits == Limits(warn=5.0, error=None)


def test_courant_with_a_skewed_velocity(box):
    u = np.array([3.0, -4.0, 12.0])
    case = make_case(flow={"velocity": float(np.linalg.norm(u)),
                           "direction": tuple(u / np.linalg.norm(u))})
    m = only(run(COURANT, box, case))
    assert m.value == pytest.approx(1e-3 * (3 / DX + 4 / DY + 12 / DZ), rel=1e-12)  # 0.064


# -- courant: limits by integration and model -------------------------------------------


@pytest.mark.parametrize("time, limit", [
    ({"integration": "explicit"}, 1.0),                                   # forward Euler, upwind
    ({"scheme": "forward-euler"}, 1.0),                                   # implied explicit
    ({"integration": "explicit", "scheme": "rk4"}, 1.3926),
    ({"scheme": "rk3", "advection_scheme": "central"}, 1.7320),
])
def test_explicit_courant_error_is_the_scheme_limit(box, time, limit):
    # dt = 2e-2: Co = 10 * 2e-2 / 0.125 = 1.6, above every limit but rk3/rk4 central
    m = only(run(COURANT, box, make_case(time={"step": 2e-2, **time})))
    assert m.value == pytest.approx(1.6, rel=1e-12)
    assert m.limits == Limits(warn=None, error=limit)
    if limit < 1.6:
        assert m.where.cell_count == box.n_cells
        assert f"{box.n_cells} cells of {box.n_cells} (100 %) above {limit:g}" in m.detail
        dt_max = 2e-2 * limit / 1.6
        assert m.fix.startswith(f"Use time.step <= {dt_max:.3g} s")


def test_forward_euler_with_central_advection_is_never_stable(box):
    case = make_case(time={"scheme": "forward-euler", "advection_scheme": "central"})
    m = only(run(COURANT, box, case))
    assert m.limits == Limits(warn=None, error=0.0)
    assert "unstable at any time step" in m.fix


def test_explicit_grade_replaces_the_scheme_limit(box):
    case = make_case(time={"integration": "explicit", "scheme": "rk4"})
    m = only(run(COURANT, box, case, grades={"explicit": {"error": 0.8}}))
    assert m.limits == Limits(warn=None, error=0.8)
    assert "error limit 0.8 of the rule set's explicit grade" in m.detail


@pytest.mark.parametrize("model, warn", [("les", 1.0), ("ddes", 1.0), ("dns", 1.0),
                                         ("k-omega-sst", 5.0), ("laminar", 5.0), (None, 5.0)])
def test_implicit_courant_warning_depends_on_the_model(box, model, warn):
    case = make_case(time={"integration": "implicit", "scheme": "bdf2"}, model=model)
    m = only(run(COURANT, box, case))
    assert m.limits == Limits(warn=warn, error=None)


def test_a_grade_set_by_name_replaces_that_regime_grade(box):
    case = make_case(time={"integration": "explicit"})
    m = only(run(COURANT, box, case, grades={"explicit": {"warn": 0.5}}))
    assert m.limits == Limits(warn=0.5, error=1.0)        # the error: the scheme's limit
    m = only(run(COURANT, box, make_case(model="les"),
                 grades={"implicit.scale-resolving": {"error": 3.0}}))
    assert m.limits == Limits(warn=1.0, error=3.0)
    # warn and error alone set the main grade (implicit), not the others
    m = only(run(COURANT, box, make_case(), warn=2.0))
    assert m.limits == Limits(warn=2.0, error=None)
    m = only(run(COURANT, box, make_case(model="les"), warn=2.0))
    assert m.limits == Limits(warn=1.0, error=None)


def test_undeclared_integration_is_graded_as_implicit_with_a_note(box):
    result = run(COURANT, box, make_case())
    assert result.measurements[0].limits == Limits(warn=5.0, error=None)
    (note,) = result.notes
    assert note.message.startswith("time.integration is not given")
    declared = run(COURANT, box, make_case(time={"integration": "implicit"}))
    assert declared.notes == ()


def test_bad_grade_is_a_clear_case_file_error(box):
    with pytest.raises(CaseFileError, match="warn of grade 'implicit' of rule 'courant' must be "
                                            "a finite number or null, got 'five'") as err:
        run(COURANT, box, make_case(), grades={"implicit": {"warn": "five"}})
    assert err.value.key == "checks.rules.courant.grades.implicit.warn"
    with pytest.raises(CaseFileError, match="has no grade 'implict' \\(did you mean "
                                            "'implicit'\\?\\)"):
        run(COURANT, box, make_case(), grades={"implict": {"warn": 2}})


# -- courant: where the offending cells are -------------------------------------------------


def test_courant_locates_thin_cells_at_a_wall():
    xs = graded(0.0, 1.0, 10, 1.5)              # thinnest cells at the xmin wall
    mesh = mesh_from_meshio(structured_hex(xs, [0, 0.5, 1.0], [0, 1.0]))
    case = make_case(time={"step": 1.5e-3, "integration": "explicit"},
                     boundaries={"xmin": "wall", "xmax": "outlet"})
    dx = np.diff(xs)
    co = 10.0 * 1.5e-3 / dx                   # [computed] per column: 1.70, 1.13, 0.756, ...
    m = only(run(COURANT, mesh, case))
    assert m.value == pytest.approx(co.max(), rel=1e-12)
    columns_over = int((co > 1.0).sum())
    assert columns_over == 2
    assert m.where.cell_count == 2 * columns_over           # 2 cells per column (y)
    assert set(m.where.cells) == {0, 1, 10, 11}              # x fastest, 10 columns
    assert f"4 cells of {mesh.n_cells} (20 %) above 1, 2 of them next to walls" in m.detail
    assert m.fix.startswith(f"Use time.step <= {1.5e-3 / co.max():.3g} s")
    assert m.where.point == pytest.approx((dx[0] / 2, 0.25, 0.5))


def test_courant_on_a_2d_mesh_and_with_a_collapsed_cell():
    from caselint.mesh.blocks import structured_quad

    mesh = mesh_from_meshio(structured_quad(np.arange(5) * DX, np.arange(3) * DY))
    u = np.array([3.0, -4.0, 0.0])
    case = make_case(flow={"velocity": 5.0, "direction": tuple(u / 5.0)})
    assert only(run(COURANT, mesh, case)).value == pytest.approx(1e-3 * (3 / DX + 4 / DY))
    m = structured_hex([0, 1, 2, 3], [0, 1], [0, 1])
    m.points[m.points[:, 0] == 3.0, 0] = 2.0          # the last cell collapses to zero volume
    m_ = only(run(COURANT, mesh_from_meshio(m), make_case()))
    assert m_.value == pytest.approx(10.0 * 1e-3 / 1.0)
    assert "1 cell of non-positive volume left out (see inverted-cells)" in m_.detail


# -- courant: a velocity field carried by the mesh ------------------------------------------


def with_field(m: meshio.Mesh, name: str, values: np.ndarray, kind: str) -> meshio.Mesh:
    if kind == "point":
        m.point_data[name] = values
    else:
        m.cell_data[name] = [values, np.zeros((len(m.cells[1].data), values.shape[1]))]
    return m


@pytest.mark.parametrize("kind", ["point", "cell"])
def test_courant_follows_the_field_not_the_reference(kind):
    m = box_meshio()
    n = len(m.points) if kind == "point" else len(m.cells[0].data)
    u = np.tile([0.0, 4.0, 0.0], (n, 1))            # along y, unlike the reference along x
    mesh = mesh_from_meshio(with_field(m, "U", u, kind))
    m_ = only(run(COURANT, mesh, make_case()))
    assert m_.value == pytest.approx(4.0 * 1e-3 / DY, rel=1e-12)     # 0.016 [computed]
    assert f"the velocity field 'U' ({kind} data of the mesh file, largest 4 m/s)" in m_.detail


def test_a_varying_cell_field_gives_per_cell_numbers():
    m = box_meshio(4, 1, 1)
    u = np.zeros((4, 3))
    u[:, 0] = [1.0, 2.0, 3.0, 8.0]
    mesh = mesh_from_meshio(with_field(m, "velocity", u, "cell"))
    m_ = only(run(COURANT, mesh, make_case(flow={"velocity": None})))
    # last cell: faces at 0.5 (3 + 8) and 8 (boundary): 1/2 dt (5.5 + 8) / dx [computed]
    assert m_.value == pytest.approx(0.5 * 1e-3 * (5.5 + 8.0) / DX, rel=1e-12)
    assert m_.where.point[0] == pytest.approx(3.5 * DX)


def test_a_named_field_is_used_and_a_missing_one_is_an_error():
    m = box_meshio()
    n = len(m.points)
    with_field(m, "U", np.tile([0.0, 4.0, 0.0], (n, 1)), "point")
    with_field(m, "u_initial", np.tile([0.0, 0.0, 5.0], (n, 1)), "point")
    with_field(m, "p", np.zeros((n, 1)), "point")
    mesh = mesh_from_meshio(m)
    m_ = only(run(COURANT, mesh, make_case(velocity_field="u_initial")))
    assert m_.value == pytest.approx(5.0 * 1e-3 / DZ, rel=1e-12)
    assert "'u_initial'" in m_.detail
    arrays = "U, gmsh:geometrical, gmsh:physical, p, u_initial"
    with pytest.raises(CaseFileError, match=f"names 'speed'.*its arrays: {arrays}"):
        run(COURANT, mesh, make_case(velocity_field="speed"))
    with pytest.raises(CaseFileError, match=r"'p', which has shape \(\d+, 1\)"):
        run(COURANT, mesh, make_case(velocity_field="p"))


def test_a_field_with_nan_skips_with_the_reason():
    m = box_meshio()
    u = np.zeros((len(m.points), 3))
    u[5, 1] = np.nan
    mesh = mesh_from_meshio(with_field(m, "U", u, "point"))
    reason = run(COURANT, mesh, make_case()).skipped
    assert reason == "the velocity field 'U' (point data) has 1 non-finite value (first at point 5)"


# -- acoustic-courant -----------------------------------------------------------------------


@pytest.mark.parametrize("change, reason", [
    ({}, "the case does not declare compressible flow"),
    ({"compressible": True, "time": {"integration": "implicit"}, "fluid": {"sound_speed": 340}},
     "implicit integration: the"),
    ({"compressible": True, "fluid": {"sound_speed": 340}}, "time.integration is not given"),
    ({"compressible": True, "time": {"integration": "explicit"}},
     "the case file gives no physics.fluid.sound_speed"),
])
def test_acoustic_courant_skips(box, change, reason):
    assert run(ACOUSTIC_COURANT, box, make_case(**change)).skipped.startswith(reason)


def test_acoustic_courant_on_box_cells(box):
    case = make_case(compressible=True, fluid={"sound_speed": 340.0},
                     time={"step": 1e-5, "scheme": "rk3"})
    m = only(run(ACOUSTIC_COURANT, box, case))
    # [computed] dt sum_i (|u_i| + c) / dx_i = 1e-5 (350/0.125 + 340/0.25 + 340/0.5) = 0.0484
    assert m.value == pytest.approx(1e-5 * (350 / DX + 340 / DY + 340 / DZ), rel=1e-12)
    assert m.value == pytest.approx(0.0484, rel=1e-12)
    assert m.limits == Limits(warn=None, error=1.2563)
    assert "sound speed 340 m/s" in m.detail


# -- diffusion-number -----------------------------------------------------------------------


def test_diffusion_number_skips_implicit_runs(box):
    case = make_case(time={"integration": "implicit"}, fluid={"kinematic_viscosity": 1e-5})
    assert run(DIFFUSION_NUMBER, box, case).skipped == \
        "implicit integration has no diffusion stability limit"
    case = make_case(time={"scheme": "bdf2"}, fluid={"kinematic_viscosity": 1e-5})
    assert run(DIFFUSION_NUMBER, box, case).skipped == \
        "implicit integration has no diffusion stability limit"
    missing = make_case(time={"integration": "explicit"})
    assert run(DIFFUSION_NUMBER, box, missing).skipped.startswith("no diffusivity")


def test_diffusion_number_uses_the_larger_diffusivity(box):
    case = make_case(time={"integration": "explicit", "step": 1e-2},
                     fluid={"kinematic_viscosity": 1.5e-5, "thermal_diffusivity": 2.2e-5},
                     model="k-epsilon")
    m = only(run(DIFFUSION_NUMBER, box, case))
    assert m.value == pytest.approx(2.2e-5 * 1e-2 * (DX**-2 + DY**-2 + DZ**-2), rel=1e-12)
    assert "thermal diffusivity 2.2e-05 m^2/s" in m.detail
    assert "eddy viscosity" in m.detail


def test_diffusion_number_over_one_half_gives_the_step_that_meets_it():
    h, nu = 1e-3, 1e-5
    mesh = mesh_from_meshio(structured_hex(*(np.arange(3) * h,) * 3))
    dt_limit = 0.5 / (nu * 3 / h**2)         # nu dt / h^2 = 1/6 in 3-D [computed]
    case = make_case(time={"integration": "explicit", "step": 2 * dt_limit},
                     fluid={"kinematic_viscosity": nu})
    m = only(run(DIFFUSION_NUMBER, mesh, case))
    assert m.value == pytest.approx(1.0, rel=1e-12)
    assert m.where.cell_count == mesh.n_cells
    assert m.fix.startswith(f"Use time.step <= {dt_limit:.3g} s")


# -- time-resolution ------------------------------------------------------------------------

CYLINDER = {"kind": "external", "velocity": 10.0, "length": 0.1}
AIR = {"kinematic_viscosity": 1.5e-5}


def measurements(result):
    assert result.skipped is None, result.skipped
    return {m.label: m for m in result.measurements}


def test_cylinder_shedding_100_steps_per_period(box):
    # D 0.1 m, U 10 m/s, St 0.2 -> T = 0.05 s; dt 5e-4 s -> 100 steps [computed]
    case = make_case(time={"step": 5e-4}, flow=CYLINDER, fluid=AIR)
    got = measurements(run(TIME_RESOLUTION, box, case))
    steps = got["time steps per period"]
    assert steps.value == pytest.approx(100.0, rel=1e-12)
    assert steps.limits == Limits(warn=20.0, error=None)
    assert "period 0.05 s of vortex shedding at 20 Hz: St 0.2" in steps.detail


@pytest.mark.parametrize("model, minimum", [("les", 50.0), ("k-omega-sst", 20.0)])
def test_steps_per_period_minimum_by_model(box, model, minimum):
    case = make_case(time={"step": 2e-3}, flow=CYLINDER, fluid=AIR, model=model)
    steps = measurements(run(TIME_RESOLUTION, box, case))["time steps per period"]
    assert steps.value == pytest.approx(25.0, rel=1e-12)
    assert steps.limits.warn == minimum
    assert steps.fix == f"Use time.step <= {0.05 / minimum:.3g} s for {minimum:g} steps per " \
                        "period (now 0.002 s)."


def test_declared_frequency_and_strouhal(box):
    case = make_case(time={"step": 1e-3, "frequency": 40.0})
    steps = measurements(run(TIME_RESOLUTION, box, case))["time steps per period"]
    assert steps.value == pytest.approx(25.0, rel=1e-12)
    case = make_case(time={"step": 1e-3}, flow={"length": 0.1, "strouhal": 0.25})
    steps = measurements(run(TIME_RESOLUTION, box, case))["time steps per period"]
    assert steps.value == pytest.approx(0.1 / (0.25 * 10.0) / 1e-3, rel=1e-12)   # 40
    assert "St 0.25 (physics.flow.strouhal)" in steps.detail


def test_low_reynolds_shedding_uses_roshko_and_no_shedding_below_50(box):
    # Re = U D / nu = 100 -> St 0.167056 (Roshko 1954 [memory]); T = 0.1/(0.167056 * 10)
    case = make_case(time={"step": 1e-3}, flow={**CYLINDER, "velocity": 10.0},
                     fluid={"kinematic_viscosity": 1e-2})
    steps = measurements(run(TIME_RESOLUTION, box, case))["time steps per period"]
    assert steps.value == pytest.approx(0.1 / (0.167056 * 10.0) / 1e-3, rel=1e-9)
    slow = make_case(time={"step": 1e-3}, flow=CYLINDER, fluid={"kinematic_viscosity": 0.05})
    reason = run(TIME_RESOLUTION, box, slow).skipped
    assert "Re = 20 is below about 50" in reason


def test_output_interval_against_nyquist(box):
    case = make_case(time={"step": 5e-4, "output_interval": 0.04}, flow=CYLINDER, fluid=AIR)
    samples = measurements(run(TIME_RESOLUTION, box, case))["saved results per period"]
    assert samples.value == pytest.approx(1.25, rel=1e-12)        # 0.05 s / 0.04 s
    assert samples.limits == Limits(warn=2.0, error=None)
    assert "one result every 0.025 s" in samples.detail          # 1 / (2 * 20 Hz)
    assert samples.where.key == "time.output_interval"


def test_flow_throughs_over_the_domain_length(box):
    # domain 0.5 m along x (4 cells of 0.125 m) at 10 m/s: 0.05 s per flow-through
    case = make_case(time={"step": 5e-4, "end": 0.1}, flow=CYLINDER, fluid=AIR)
    got = measurements(run(TIME_RESOLUTION, box, case))
    assert got["flow-throughs"].value == pytest.approx(2.0, rel=1e-12)
    assert got["flow-throughs"].limits == Limits(warn=3.0, error=None)
    assert got["flow-throughs"].fix == "Run to time.end >= 0.15 s for 3 flow-throughs."
    on_limit = make_case(time={"step": 5e-4, "end": 0.15}, flow=CYLINDER, fluid=AIR)
    assert measurements(run(TIME_RESOLUTION, box, on_limit))["flow-throughs"].value == 3.0
    diagonal = make_case(time={"end": 0.1}, flow={"direction": (0.6, 0.8, 0.0)})
    got = measurements(run(TIME_RESOLUTION, box, diagonal))
    # extent of the 0.5 x 0.75 box along (0.6, 0.8): 0.3 + 0.6 = 0.9 m [computed]
    assert got["flow-throughs"].value == pytest.approx(0.1 / (0.9 / 10.0), rel=1e-11)


def test_time_resolution_skips_or_notes_what_is_missing(box):
    nothing = make_case(flow={"velocity": None})
    reason = run(TIME_RESOLUTION, box, nothing).skipped
    assert reason.startswith("steps and saved results per period: no frequency of interest")
    assert "flow-throughs: time.end and physics.flow.velocity not given" in reason
    partial = run(TIME_RESOLUTION, box, make_case(time={"end": 1.0}))
    assert [m.label for m in partial.measurements] == ["flow-throughs"]
    (note,) = partial.notes
    assert note.message.startswith("not checked: steps and saved results per period")


def test_rule_set_grades_apply_to_the_steps_only(box):
    case = make_case(time={"step": 5e-4, "end": 1.0}, flow=CYLINDER, fluid=AIR)
    got = measurements(run(TIME_RESOLUTION, box, case, warn=150.0, error=30.0))
    assert got["time steps per period"].limits == Limits(warn=150.0, error=30.0)
    assert got["flow-throughs"].limits == Limits(warn=3.0, error=None)
    got = measurements(run(TIME_RESOLUTION, box, case, grades={"flow-throughs": {"warn": 40}}))
    assert got["flow-throughs"].limits == Limits(warn=40.0, error=None)
    assert got["flow-throughs"].fix == "Run to time.end >= 2 s for 40 flow-throughs."
