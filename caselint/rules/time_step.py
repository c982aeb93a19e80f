"""Built-in time-step rules: Courant, acoustic Courant and diffusion numbers per cell.

The numbers and limits come from :mod:`caselint.physics.timestep`; the velocity from
:mod:`caselint.rulekit.velocity`. Steady cases skip every rule ("steady case": the need
``transient``). Whether the run resolves the physics in time (steps per period, sampling,
flow-throughs) is :mod:`caselint.rules.time_resolution`.

Limits that depend on the case (explicit or implicit integration, the turbulence model)
are grades of the rule (``implicit``, ``implicit.scale-resolving``, ``explicit``); the check
picks the grade of the case's regime. The ``explicit`` grade's error limit, when a rule set
leaves it null, is the stability limit of the declared scheme.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint import hookimpl
from caselint.model import (
    Grade,
    Limits,
    Measurement,
    Note,
    PlotData,
    PlotSeries,
    Rule,
    RuleResult,
    Where,
    log_bin_edges,
)
from caselint.physics import timestep
from caselint.rulekit import RuleContext, cell_names, finite_point, first_limit, plural, worst_ids
from caselint.rulekit.cases import scale_resolving
from caselint.rulekit.velocity import flow_velocity
from caselint.rulekit.walls import wall_cell_count

if TYPE_CHECKING:
    from caselint.manifest.case import Case

_CFL = "Courant, Friedrichs & Lewy, Math. Ann. 100 (1928)"
# Baldauf's published values are quoted from memory; caselint's table is computed.
_STABILITY = ("explicit limits computed from the Runge-Kutta amplification polynomial "
              "(upwind values agree with Baldauf, J. Comput. Phys. 227, 2008)")


def _cell_number_result(ctx: RuleContext, values: np.ndarray, limits: Limits, what: str,
                        context: str, notes: tuple[Note, ...] = (),
                        cells_fix: str = "where the flow is fastest",
                        grade: str | None = None) -> RuleResult:
    """Measurement of the largest per-cell number: percentile, offenders, walls, fix."""
    mesh, dt = ctx.mesh, ctx.case.time.step
    valid = mesh.cell_volumes > 0.0
    if not valid.any():
        return RuleResult.skip("no cell has a positive volume (see inverted-cells)")
    threshold = first_limit(limits)
    checked = np.where(valid, values, 0.0)
    listed, count = worst_ids(checked, threshold, names=mesh.file_cell_ids())
    worst = int(listed[0])
    peak = float(values[worst])
    name = int(mesh.file_cell_ids(worst))
    p99 = float(np.percentile(values[valid], 99))
    n_valid = int(valid.sum())
    parts = [f"99th percentile {p99:.3g}"]
    if count:
        share = 100.0 * count / n_valid
        over = np.flatnonzero(checked > threshold)
        walls = wall_cell_count(ctx.case, mesh, over)
        at_walls = f", {walls} of them next to walls" if walls is not None else ""
        parts.append(f"{plural(count, 'cell')} of {n_valid} ({share:.3g} %) above "
                     f"{threshold:g}{at_walls}, worst cell {name}")
    else:
        parts.append(f"largest in cell {name}")
    if n_valid < mesh.n_cells:
        parts.append(f"{plural(mesh.n_cells - n_valid, 'cell')} of non-positive volume left "
                     "out (see inverted-cells)")
    parts.append(context)
    fix = ""
    if threshold is not None and threshold > 0 and peak > 0:
        dt_max = timestep.max_time_step(dt, peak, threshold)
        fix = (f"Use time.step <= {dt_max:.3g} s to bring the largest {what} from {peak:.3g} "
               f"to {threshold:g} (now {dt:.3g} s), or enlarge the smallest cells "
               f"{cells_fix}.")
    elif threshold == 0:
        fix = ("This scheme combination is unstable at any time step: use upwind advection "
               "or an rk3/rk4 scheme (time.scheme, time.advection_scheme).")
    where = Where(cells=cell_names(mesh, listed) if count else (), cell_count=count,
                  point=finite_point(mesh.cell_centroids[worst]), key="time.step")
    measurement = Measurement(value=peak, where=where, detail="; ".join(parts), fix=fix,
                              limits=limits, grade=grade)
    cells = values[valid]
    plot = PlotData(title=f"{what[0].upper()}{what[1:]} per cell", x_label=what,
                    y_label="cells", series=(PlotSeries.histogram(cells, log_bin_edges(cells)),),
                    limits=limits, x_log=True)
    return RuleResult(measurements=(measurement,), notes=notes, plots=(plot,))


def _scheme_words(case: "Case") -> str:
    """``rk4 with upwind advection``, saying which of the two was assumed."""
    time = case.time
    text = f"{time.scheme or 'forward-euler'} with {time.advection_scheme or 'upwind'} advection"
    assumed = [key for key, value in (("time.scheme", time.scheme),
                                      ("time.advection_scheme", time.advection_scheme))
               if value is None]
    if assumed:
        text += f" ({' and '.join(assumed)} not given: assumed)"
    return text


def _explicit_limits(ctx: RuleContext) -> tuple[Limits, str]:
    """The ``explicit`` grade, its null error limit filled in with the stability limit of
    the declared scheme, and how the error limit was chosen."""
    grade = ctx.grade("explicit")
    if grade.error is not None:
        return grade, f"error limit {grade.error:g} of the rule set's explicit grade"
    time = ctx.case.time
    limit = timestep.explicit_courant_limit(time.scheme, time.advection_scheme)
    return (Limits(warn=grade.warn, error=limit),
            f"stability limit {limit:g} of {_scheme_words(ctx.case)}")


# -- courant -----------------------------------------------------------------------------


def check_courant(ctx: RuleContext) -> RuleResult:
    """Largest per-cell Courant number against the limit of the integration and model."""
    case = ctx.case
    velocity = flow_velocity(ctx)
    if isinstance(velocity, str):
        return RuleResult.skip(velocity)
    integration = case.time.integration_or_implied
    notes: tuple[Note, ...] = ()
    if integration == "explicit":
        grade = "explicit"
        limits, how = _explicit_limits(ctx)
        words = f"explicit run, {how}"
    else:
        grade = "implicit.scale-resolving" if scale_resolving(case) else "implicit"
        limits = ctx.grade(grade)
        model = case.physics.turbulence.model if scale_resolving(case) else None
        words = f"implicit run{f' with {model}' if model else ''}, " + (
            f"warning above {limits.warn:g}" if limits.warn is not None else "no warning limit")
        if integration is None:
            words += " (time.integration not given: graded as implicit)"
            notes = (Note("time.integration is not given, so the Courant number is graded as "
                          "for an implicit run; an explicit run has a hard stability limit, "
                          "declare it", Where(key="time")),)
    values = timestep.courant_numbers(ctx.mesh, case.time.step, velocity.face)
    return _cell_number_result(ctx, values, limits, "Courant number",
                               f"velocity: {velocity.described}; {words}", notes, grade=grade)


# -- acoustic-courant ----------------------------------------------------------------------


def check_acoustic_courant(ctx: RuleContext) -> RuleResult:
    """Largest (|u| + c) dt / dx of an explicit compressible run against its stability limit."""
    case = ctx.case
    integration = case.time.integration_or_implied
    if integration != "explicit":
        why = ("time.integration is not given" if integration is None
               else "implicit integration")
        return RuleResult.skip(f"{why}: the acoustic limit applies to explicit runs")
    velocity = flow_velocity(ctx)
    if isinstance(velocity, str):
        return RuleResult.skip(velocity)
    limits, how = _explicit_limits(ctx)
    c = case.physics.fluid.sound_speed
    values = timestep.acoustic_courant_numbers(ctx.mesh, case.time.step, velocity.face, c)
    return _cell_number_result(
        ctx, values, limits, "acoustic Courant number",
        f"sound speed {c:.4g} m/s; velocity: {velocity.described}; {how}", grade="explicit")


# -- diffusion-number ----------------------------------------------------------------------


def check_diffusion_number(ctx: RuleContext) -> RuleResult:
    """Largest kappa dt sum_i 1/dx_i^2 of an explicit run against 1/2."""
    case = ctx.case
    integration = case.time.integration_or_implied
    if integration == "implicit":
        return RuleResult.skip("implicit integration has no diffusion stability limit")
    if integration is None:
        return RuleResult.skip("time.integration is not given (an implicit run has no "
                               "diffusion stability limit; declare explicit to check it)")
    fluid = case.physics.fluid
    candidates = [(v, words) for v, words in (
        (fluid.nu, "kinematic viscosity"), (fluid.thermal_diffusivity, "thermal diffusivity"))
        if v is not None]
    if not candidates:
        return RuleResult.skip("no diffusivity: give physics.fluid viscosity and density, "
                               "kinematic_viscosity or thermal_diffusivity")
    kappa, words = max(candidates)
    context = f"{words} {kappa:.4g} m^2/s (the larger diffusivity given)"
    if case.physics.turbulence.model not in (None, "laminar", "dns"):
        context += ("; molecular value only: the eddy viscosity of the turbulence model "
                    "raises the number further")
    values = timestep.diffusion_numbers(ctx.mesh, case.time.step, kappa)
    return _cell_number_result(ctx, values, ctx.limits, "diffusion number", context,
                               cells_fix="(the finding lists the worst)")


# -- the rules -------------------------------------------------------------------------------

_STEP_HINT = ("Reduce time.step (the finding gives the largest step that meets the limit), or "
              "enlarge the smallest cells where the flow is fast: these are usually the first "
              "wall layers or refinement around small features.")

COURANT = Rule(
    id="courant",
    title="Courant number",
    rationale=(
        "The Courant number of a cell, Co = 1/2 dt sum_f |u_f . S_f| / V (" + _CFL + "), is "
        "how many cells the flow crosses in one time step; on a box cell it is exactly "
        "dt (|u|/dx + |v|/dy + |w|/dz). The velocity is a velocity field carried by the mesh "
        "file when there is one (named in the finding), else the case's reference velocity "
        "and direction. An explicit run is unstable above the limit of its scheme: 1.0 for "
        "forward Euler with upwind advection, 1.2563 for rk3 and 1.3926 for rk4 with upwind, "
        "1.7320 and 2.8284 with central differences (" + _STABILITY + "); above it is an "
        "error. An implicit run stays stable but loses accuracy in time: a warning above 1 "
        "for scale-resolving models (LES, DES variants, DNS) and above 5 otherwise (common "
        "practice)."
    ),
    source=_CFL + "; " + _STABILITY + "; implicit limits: common practice",
    unit="",
    limits=Limits(warn=5.0, error=None),
    main_grade="implicit",
    main_description="implicit runs with RANS, URANS or laminar models (common practice)",
    grades=(
        Grade("implicit.scale-resolving", warn=1.0,
              description="implicit runs with LES, DES, DDES, IDDES or DNS",
              source="common practice"),
        Grade("explicit", error=None,
              description="explicit runs; a null error limit is the stability limit of "
                          "time.scheme with time.advection_scheme (forward Euler with upwind, "
                          "1.0, when not declared)", source=_STABILITY),
    ),
    hint=_STEP_HINT,
    check=check_courant,
    needs=("transient", "time.step", "mesh"),
    measures="largest cell Courant number",
)

ACOUSTIC_COURANT = Rule(
    id="acoustic-courant",
    title="Acoustic Courant number (explicit compressible runs)",
    rationale=(
        "An explicit compressible solver carries sound waves, which travel at |u| + c, so its "
        "time step is bounded by the acoustic Courant number (|u| + c) dt / dx (" + _CFL + "). "
        "caselint uses the multi-dimensional finite-volume form 1/2 dt sum_f (|u_f . S_f| + "
        "c |S_f|) / V: on a box cell dt sum_i (|u_i| + c) / dx_i, the summed wave-speed form "
        "for unsplit explicit schemes (Blazek, Computational Fluid Dynamics: Principles and "
        "Applications). Above the stability limit of the declared scheme is an "
        "error (" + _STABILITY + "). Runs only for cases that declare compressible flow "
        "(physics.compressible) and explicit integration, with a sound speed given."
    ),
    # Blazek's local time-step form is cited from memory.
    source=_CFL + "; Blazek, Computational Fluid Dynamics: Principles and Applications; "
           + _STABILITY,
    unit="",
    limits=Limits(warn=None, error=None),
    main_grade="explicit",
    main_description=("a null error limit is the stability limit of time.scheme with "
                      "time.advection_scheme (1.0 when not declared)"),
    hint=("Reduce time.step (the finding gives the largest step that meets the limit); for a "
          "low-Mach flow an implicit or pressure-based solver avoids the acoustic limit."),
    check=check_acoustic_courant,
    needs=("transient", "compressible", "time.step", "physics.fluid.sound_speed", "mesh"),
    measures="largest cell acoustic Courant number",
)

DIFFUSION_NUMBER = Rule(
    id="diffusion-number",
    title="Diffusion number (explicit runs)",
    rationale=(
        "Explicit time integration of diffusion is stable while kappa dt sum_i 1/dx_i^2 <= 1/2 "
        "for forward Euler with central differences, i.e. kappa dt / dx^2 <= 1/2, 1/4, 1/6 on "
        "equal spacing in 1, 2, 3 dimensions (von Neumann analysis [computed]); rk3 and rk4 "
        "allow slightly more (0.628, 0.696), so 1/2 is a safe limit for them. kappa is the "
        "larger of the kinematic viscosity and the thermal diffusivity given. sum_i 1/dx_i^2 "
        "of a cell is 1/2 sum_f |S_f|^2 / V^2, exact on box cells in any orientation."
    ),
    source="von Neumann stability analysis of the explicit diffusion equation [computed]",
    unit="",
    limits=Limits(warn=None, error=0.5),
    hint=("Reduce time.step (the finding gives the largest step that meets the limit), "
          "enlarge the smallest cells, or integrate the diffusion terms implicitly."),
    check=check_diffusion_number,
    needs=("transient", "time.step", "mesh"),
    measures="largest cell diffusion number",
)

RULES: tuple[Rule, ...] = (COURANT, ACOUSTIC_COURANT, DIFFUSION_NUMBER)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in time-step stability rules."""
    return list(RULES)
