"""The ``time-resolution`` rule: does a transient run resolve the physics in time?

Three measurements, each graded by a grade of its own (minima): time steps per period of
the frequency of interest (``steps``; ``steps.scale-resolving`` for LES, DES and DNS),
saved results per period (``samples``, against the Nyquist limit of 2), and the simulated
time in flow-throughs (``flow-throughs``, domain length / velocity). The frequency is the
declared one (``time.frequency``) or that of vortex shedding, St U / L.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint import hookimpl
from caselint.model import Grade, Limits, Measurement, Note, Parameter, Rule, RuleResult, Where
from caselint.physics import timestep
from caselint.rulekit import RuleContext, first_limit
from caselint.rulekit.cases import scale_resolving
from caselint.rulekit.meshview import used_points

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

# Both from memory (see REFERENCES.md section 4); findings cite them without the tag.
_WILLIAMSON = "Williamson, Annu. Rev. Fluid Mech. 28 (1996)"
_ROSHKO = "Roshko, NACA Rep. 1191 (1954)"


def _count(value: float) -> float:
    """A ratio of case-file values, cut to 12 significant digits: 0.3 s / 0.1 s is 3, not
    2.9999999999999996, so a count on its limit is graded as on it."""
    return float(f"{value:.12g}")


def _frequency(ctx: RuleContext) -> tuple[float, str] | str:
    """(frequency in Hz, how it was found), or why there is none."""
    case = ctx.case
    if case.time.frequency is not None:
        return case.time.frequency, f"the frequency of interest {case.time.frequency:.4g} Hz"
    flow = case.physics.flow
    default = ctx.params["bluff_body_strouhal"]
    if flow.strouhal is None and (flow.kind != "external" or default is None):
        return ("no frequency of interest: give time.frequency, or physics.flow.strouhal "
                "(or physics.flow.kind: external for a bluff-body estimate)")
    if flow.velocity is None or flow.length is None:
        return ("a shedding frequency needs physics.flow.velocity and physics.flow.length "
                "(or give time.frequency)")
    U, L = flow.velocity, flow.length
    if flow.strouhal is not None:
        st, how = flow.strouhal, f"St {flow.strouhal:g} (physics.flow.strouhal)"
    else:
        nu = case.physics.fluid.nu
        re = U * L / nu if nu else None
        low, high = timestep.ROSHKO_RANGE
        if re is not None and re < low:
            return (f"Re = {re:.3g} is below about {low:g}: no periodic vortex shedding to "
                    f"resolve (onset near Re 47, {_WILLIAMSON}); give time.frequency if the "
                    "run has another frequency of interest")
        if re is not None and re <= high:
            st = timestep.roshko_strouhal(re)
            how = f"St {st:.3g} at Re {re:.3g} ({_ROSHKO})"
        else:
            st = default
            how = f"St {st:g}, a bluff-body estimate ({_WILLIAMSON})"
    f = st * U / L
    return f, f"vortex shedding at {f:.4g} Hz: {how}, U {U:.4g} m/s, L {L:.4g} m"


def domain_length(mesh: "Mesh", direction) -> float:
    """Extent (m) of the cells' points along ``direction``; the largest box side if None."""
    if direction is None:
        lo, hi = mesh.bounds
        return float((hi - lo).max())

    def compute() -> float:
        along = mesh.points[used_points(mesh)] @ np.asarray(direction, dtype=np.float64)
        return float(along.max() - along.min())

    return mesh.cached(f"time_resolution.length:{tuple(direction)}", compute)


def _steps(ctx: RuleContext, f: float, how: str) -> Measurement:
    case = ctx.case
    dt = case.time.step
    if scale_resolving(case):
        grade, words = "steps.scale-resolving", case.physics.turbulence.model
    else:
        grade, words = "steps", "URANS or laminar"
    limits = ctx.grade(grade)
    steps = _count(1.0 / (f * dt))
    target = first_limit(limits)
    fix = (f"Use time.step <= {1.0 / (f * target):.3g} s for {target:g} steps per period "
           f"(now {dt:.3g} s)." if target else "")
    minimum = f"{target:g}" if target is not None else "none"
    return Measurement(
        value=steps, limits=limits, grade=grade, label="time steps per period",
        detail=(f"period {1.0 / f:.4g} s of {how}; time step {dt:.3g} s; minimum for "
                f"{words}: {minimum}"),
        fix=fix, where=Where(key="time.step"))


def _samples(ctx: RuleContext, f: float, how: str) -> Measurement:
    interval = ctx.case.time.output_interval
    minimum = first_limit(ctx.grade("samples"))
    nyquist = timestep.nyquist_interval(f)
    fix = (f"Save results at least every {1.0 / (f * minimum):.3g} s "
           "(time.output_interval), or record probes every step." if minimum else "")
    return Measurement(
        value=_count(1.0 / (f * interval)), grade="samples",
        label="saved results per period",
        detail=(f"output every {interval:.3g} s against the period {1.0 / f:.4g} s of {how}; "
                f"the Nyquist limit is one result every {nyquist:.3g} s; monitors or probes "
                "recording every step are not affected"),
        fix=fix, where=Where(key="time.output_interval"))


def _flow_throughs(ctx: RuleContext) -> Measurement | str:
    case = ctx.case
    flow = case.physics.flow
    length = domain_length(ctx.mesh, flow.direction)
    if not length > 0.0:
        return "flow-throughs: the mesh has no extent along the flow direction"
    along = ("along physics.flow.direction" if flow.direction is not None
             else "the largest side of the mesh's bounding box (no physics.flow.direction)")
    t_ft = timestep.flow_through_time(length, flow.velocity)
    minimum = first_limit(ctx.grade("flow-throughs"))
    count = _count(case.time.end / t_ft)
    need = (f"; statistics need at least {minimum:g} (after the start-up transient)"
            if minimum is not None else "")
    return Measurement(
        value=count, grade="flow-throughs", label="flow-throughs",
        detail=(f"end time {case.time.end:.4g} s over a flow-through time of {t_ft:.4g} s "
                f"(domain length {length:.4g} m {along} at {flow.velocity:.4g} m/s){need}"),
        fix=(f"Run to time.end >= {minimum * t_ft:.4g} s for {minimum:g} flow-throughs."
             if minimum else ""),
        where=Where(key="time.end"))


def check_time_resolution(ctx: RuleContext) -> RuleResult:
    """Steps and saved results per period of interest, and flow-throughs of the run."""
    case = ctx.case
    measurements: list[Measurement] = []
    missing: list[str] = []
    found = _frequency(ctx)
    if isinstance(found, str):
        missing.append(f"steps and saved results per period: {found}")
    else:
        f, how = found
        if case.time.step is None:
            missing.append("steps per period: time.step is not given")
        else:
            measurements.append(_steps(ctx, f, how))
        if case.time.output_interval is None:
            missing.append("saved results per period: time.output_interval is not given")
        else:
            measurements.append(_samples(ctx, f, how))
    if case.time.end is None or case.physics.flow.velocity is None:
        lacking = " and ".join(k for k, v in (("time.end", case.time.end),
                                              ("physics.flow.velocity", case.physics.flow.velocity))
                               if v is None)
        missing.append(f"flow-throughs: {lacking} not given")
    else:
        found_ft = _flow_throughs(ctx)
        if isinstance(found_ft, str):
            missing.append(found_ft)
        else:
            measurements.append(found_ft)
    if not measurements:
        return RuleResult.skip("; ".join(missing))
    notes = (Note("not checked: " + "; ".join(missing), Where(key="time")),) if missing else ()
    return RuleResult(measurements=tuple(measurements), notes=notes)


TIME_RESOLUTION = Rule(
    id="time-resolution",
    title="Time resolution of the physics",
    rationale=(
        "A transient run must resolve its frequency of interest: the declared one "
        "(time.frequency) or vortex shedding at f = St U / L, with St from the case "
        "(physics.flow.strouhal), Roshko's fit St = 0.212 (1 - 21.2/Re) for 50 <= Re <= 150 "
        "(" + _ROSHKO + ") or 0.2 for a bluff body in external flow (circular cylinder, "
        "300 < Re < 2e5, " + _WILLIAMSON + "). Three quantities, each a minimum: time steps "
        "per period, at least 20 for URANS and 50 for scale-resolving models (common "
        "practice); saved results per period, at least 2 (the Nyquist limit); and the "
        "simulated time in flow-throughs (domain length along the flow / velocity), at least "
        "3 for statistics (common practice). Grades: steps (the rule's warn and error), "
        "steps.scale-resolving, samples and flow-throughs."
    ),
    source=_WILLIAMSON + "; " + _ROSHKO + "; Nyquist sampling limit; minimum counts: "
           "common practice",
    unit="",
    limits=Limits(warn=20.0, error=None),
    main_grade="steps",
    main_description="time steps per period of URANS and laminar runs",
    grades=(
        Grade("steps.scale-resolving", warn=50.0, description="time steps per period of LES, "
              "DES variants and DNS", source="common practice"),
        Grade("samples", warn=2.0, description="saved results per period",
              source="Nyquist sampling limit"),
        Grade("flow-throughs", warn=3.0, description="flow-through times of simulated time",
              source="common practice"),
    ),
    hint=("Reduce time.step, save results more often, or run longer (the finding says by "
          "how much)."),
    check=check_time_resolution,
    worse="lower",
    needs=("transient", "mesh"),
    parameters=(
        Parameter("bluff_body_strouhal", 0.2, "", "Strouhal number assumed for external flow "
                  "when the case gives none; null: no shedding estimate", nullable=True,
                  exclusive_minimum=0),
    ),
    measures="time steps per period",
)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The time-resolution rule."""
    return [TIME_RESOLUTION]
