"""Built-in time-step rules: Courant, acoustic Courant and diffusion numbers per cell, and
whether the run resolves the physics in time (steps per period, sampling, flow-throughs).

The numbers and limits come from :mod:`caselint.physics.timestep`; the velocity from
:mod:`caselint.rules.flow_velocity`. Steady cases skip every rule ("steady case").

Limits that depend on the case (explicit or implicit integration, the turbulence model,
the declared scheme) are rule parameters; the check picks one pair and gives it to its
measurement (``Measurement.limits``). A ``warn`` or ``error`` set in a rule set or the case
file replaces that grade whatever the regime; a grade left unset keeps the regime's value.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from caselint.engine.hookspecs import hookimpl
from caselint.errors import CaseFileError
from caselint.model import (
    Limits,
    Measurement,
    Note,
    Parameter,
    PlotData,
    PlotSeries,
    Rule,
    RuleResult,
    Where,
    log_bin_edges,
)
from caselint.physics import timestep
from caselint.rules.flow_velocity import flow_velocity
from caselint.rules.mesh_quality import cell_names, finite_point, plural, worst_ids

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.manifest.case import Case

#: Turbulence models that resolve turbulent scales in time (``physics.turbulence.model``).
SCALE_RESOLVING: tuple[str, ...] = ("les", "des", "ddes", "iddes", "dns")

_CFL = "Courant, Friedrichs & Lewy, Math. Ann. 100 (1928)"
# Baldauf's published values are quoted from memory; caselint's table is computed.
_STABILITY = ("explicit limits computed from the Runge-Kutta amplification polynomial "
              "(upwind values agree with Baldauf, J. Comput. Phys. 227, 2008)")


# -- shared helpers (also used by caselint.rules.time_resolution) ------------------------


def steady_skip(case: "Case") -> RuleResult | None:
    """The skip every time-step rule gives a steady case."""
    return RuleResult.skip("steady case") if case.time.mode != "transient" else None


def scale_resolving(case: "Case") -> bool:
    """True for LES, DES variants and DNS."""
    return case.physics.turbulence.model in SCALE_RESOLVING


def merged(override: Limits, regime: Limits) -> Limits:
    """The regime's limits with any grade set in a rule set or case file put in its place."""
    return Limits(warn=override.warn if override.warn is not None else regime.warn,
                  error=override.error if override.error is not None else regime.error)


def number_param(ctx: "RuleContext", rule_id: str, name: str, *, optional: bool = False):
    """A positive number parameter (None allowed when ``optional``); a clear error otherwise."""
    value: Any = ctx.params.get(name)
    if value is None and optional:
        return None
    if isinstance(value, (int, float)) and not isinstance(value, bool) and value > 0:
        return float(value)
    key = f"checks.rules.{rule_id}.{name}"
    expected = "a positive number or null" if optional else "a positive number"
    raise CaseFileError(str(ctx.case.path), f"rule {rule_id!r} parameter {name} must be "
                        f"{expected}, got {value!r}", line=ctx.case.line_of(key), key=key)


def _lowest(limits: Limits) -> float | None:
    """The limit a value crosses first (the warning limit when set)."""
    return limits.warn if limits.warn is not None else limits.error


def _cell_number_result(ctx: "RuleContext", values: np.ndarray, limits: Limits, what: str,
                        context: str, notes: tuple[Note, ...] = (),
                        cells_fix: str = "where the flow is fastest") -> RuleResult:
    """Measurement of the largest per-cell number: percentile, offenders, walls, fix."""
    mesh, dt = ctx.mesh, ctx.case.time.step
    valid = mesh.cell_volumes > 0.0
    if not valid.any():
        return RuleResult.skip("no cell has a positive volume (see inverted-cells)")
    threshold = _lowest(limits)
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
        walls = _wall_cell_count(ctx, over)
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
                              limits=limits)
    cells = values[valid]
    plot = PlotData(title=f"{what[0].upper()}{what[1:]} per cell", x_label=what,
                    y_label="cells", series=(PlotSeries.histogram(cells, log_bin_edges(cells)),),
                    limits=limits, x_log=True)
    return RuleResult(measurements=(measurement,), notes=notes, plots=(plot,))


def _wall_cell_count(ctx: "RuleContext", cells: np.ndarray) -> int | None:
    """How many of ``cells`` touch a wall boundary; None when no wall group is named."""
    mesh = ctx.mesh
    walls = [mesh.group_names.index(name) for name, role in ctx.case.mesh.boundaries.items()
             if role == "wall" and name in mesh.group_names]
    if not walls:
        return None
    faces = np.flatnonzero(np.isin(mesh.face_group, walls))
    at_wall = np.zeros(mesh.n_cells, dtype=bool)
    at_wall[mesh.owner[faces]] = True
    return int(at_wall[cells].sum())


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


def explicit_limit(ctx: "RuleContext", rule_id: str) -> tuple[float, str]:
    """Error limit of an explicit run (parameter, else the scheme's) and how it was chosen."""
    given = number_param(ctx, rule_id, "explicit_error", optional=True)
    if given is not None:
        return given, f"explicit_error parameter {given:g}"
    time = ctx.case.time
    limit = timestep.explicit_courant_limit(time.scheme, time.advection_scheme)
    return limit, f"stability limit {limit:g} of {_scheme_words(ctx.case)}"


# -- courant -----------------------------------------------------------------------------


def check_courant(ctx: "RuleContext") -> RuleResult:
    """Largest per-cell Courant number against the limit of the integration and model."""
    case = ctx.case
    if (skip := steady_skip(case)) is not None:
        return skip
    if case.time.step is None:
        return RuleResult.skip("time.step is not given")
    if ctx.mesh.n_cells == 0:
        return RuleResult.skip("the mesh has no volume cells")
    velocity = flow_velocity(ctx)
    if isinstance(velocity, str):
        return RuleResult.skip(velocity)
    integration = case.time.integration_or_implied
    notes: tuple[Note, ...] = ()
    if integration == "explicit":
        error, how = explicit_limit(ctx, COURANT.id)
        regime, words = Limits(warn=None, error=error), f"explicit run, {how}"
    else:
        if scale_resolving(case):
            warn = number_param(ctx, COURANT.id, "implicit_scale_resolving_warn")
            words = f"implicit run with {case.physics.turbulence.model}, warning above {warn:g}"
        else:
            warn = number_param(ctx, COURANT.id, "implicit_warn")
            words = f"implicit run, warning above {warn:g}"
        regime = Limits(warn=warn, error=None)
        if integration is None:
            words += " (time.integration not given: graded as implicit)"
            notes = (Note("time.integration is not given, so the Courant number is graded as "
                          "for an implicit run; an explicit run has a hard stability limit, "
                          "declare it", Where(key="time")),)
    values = timestep.courant_numbers(ctx.mesh, case.time.step, velocity.face)
    return _cell_number_result(ctx, values, merged(ctx.limits, regime), "Courant number",
                               f"velocity: {velocity.described}; {words}", notes)


# -- acoustic-courant ----------------------------------------------------------------------


def check_acoustic_courant(ctx: "RuleContext") -> RuleResult:
    """Largest (|u| + c) dt / dx of an explicit compressible run against its stability limit."""
    case = ctx.case
    if (skip := steady_skip(case)) is not None:
        return skip
    if not case.physics.compressible:
        return RuleResult.skip("the case does not declare compressible flow "
                               "(physics.compressible)")
    integration = case.time.integration_or_implied
    if integration != "explicit":
        why = ("time.integration is not given" if integration is None
               else "implicit integration")
        return RuleResult.skip(f"{why}: the acoustic limit applies to explicit runs")
    if case.time.step is None:
        return RuleResult.skip("time.step is not given")
    if case.physics.fluid.sound_speed is None:
        return RuleResult.skip("physics.fluid.sound_speed is not given")
    if ctx.mesh.n_cells == 0:
        return RuleResult.skip("the mesh has no volume cells")
    velocity = flow_velocity(ctx)
    if isinstance(velocity, str):
        return RuleResult.skip(velocity)
    error, how = explicit_limit(ctx, ACOUSTIC_COURANT.id)
    c = case.physics.fluid.sound_speed
    values = timestep.acoustic_courant_numbers(ctx.mesh, case.time.step, velocity.face, c)
    return _cell_number_result(
        ctx, values, merged(ctx.limits, Limits(warn=None, error=error)), "acoustic Courant number",
        f"sound speed {c:.4g} m/s; velocity: {velocity.described}; {how}")


# -- diffusion-number ----------------------------------------------------------------------


def check_diffusion_number(ctx: "RuleContext") -> RuleResult:
    """Largest kappa dt sum_i 1/dx_i^2 of an explicit run against 1/2."""
    case = ctx.case
    if (skip := steady_skip(case)) is not None:
        return skip
    integration = case.time.integration_or_implied
    if integration == "implicit":
        return RuleResult.skip("implicit integration has no diffusion stability limit")
    if integration is None:
        return RuleResult.skip("time.integration is not given (an implicit run has no "
                               "diffusion stability limit; declare explicit to check it)")
    if case.time.step is None:
        return RuleResult.skip("time.step is not given")
    fluid = case.physics.fluid
    candidates = [(v, words) for v, words in (
        (fluid.nu, "kinematic viscosity"), (fluid.thermal_diffusivity, "thermal diffusivity"))
        if v is not None]
    if not candidates:
        return RuleResult.skip("no diffusivity: give physics.fluid viscosity and density, "
                               "kinematic_viscosity or thermal_diffusivity")
    if ctx.mesh.n_cells == 0:
        return RuleResult.skip("the mesh has no volume cells")
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
    limits=Limits(warn=None, error=None),
    hint=_STEP_HINT,
    check=check_courant,
    needs=("mesh", "time.step", "physics.flow"),
    parameters=(
        Parameter("implicit_warn", 5.0, "", "warning limit of implicit runs with RANS, URANS "
                  "or laminar models (common practice)"),
        Parameter("implicit_scale_resolving_warn", 1.0, "", "warning limit of implicit runs "
                  "with LES, DES, DDES, IDDES or DNS (common practice)"),
        Parameter("explicit_error", None, "", "error limit of explicit runs; null: the "
                  "stability limit of time.scheme with time.advection_scheme (forward Euler "
                  "with upwind, 1.0, when not declared)"),
    ),
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
    hint=("Reduce time.step (the finding gives the largest step that meets the limit); for a "
          "low-Mach flow an implicit or pressure-based solver avoids the acoustic limit."),
    check=check_acoustic_courant,
    needs=("mesh", "time.step", "physics.fluid.sound_speed", "physics.flow"),
    parameters=(
        Parameter("explicit_error", None, "", "error limit; null: the stability limit of "
                  "time.scheme with time.advection_scheme (1.0 when not declared)"),
    ),
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
    needs=("mesh", "time.step", "physics.fluid"),
    measures="largest cell diffusion number",
)

RULES: tuple[Rule, ...] = (COURANT, ACOUSTIC_COURANT, DIFFUSION_NUMBER)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in time-step stability rules."""
    from caselint.rules.time_resolution import TIME_RESOLUTION

    return [*RULES, TIME_RESOLUTION]
