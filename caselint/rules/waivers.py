"""Rules on the case file's waivers: ``waiver-expiry`` (a waiver past its expiry date no
longer waives anything) and ``waiver-scope`` (a waiver limited to a boundary the mesh does
not have waives nothing: most often a misspelt name, so the finding it meant to cover
stays open while the waiver looks in force)."""

from __future__ import annotations

import difflib

from caselint import hookimpl
from caselint.model import Limits, Measurement, Rule, RuleResult, Where
from caselint.rulekit import RuleContext


def _check(ctx: RuleContext) -> RuleResult:
    waivers = ctx.case.checks.waivers
    expired = [(i, w) for i, w in enumerate(waivers) if w.expires < ctx.today]
    if not expired:
        soonest = min(w.expires for w in waivers)
        return RuleResult((Measurement(0, detail=f"the first waiver expires on {soonest}"),))
    measurements = []
    for i, w in expired:
        scope = f" on boundary '{w.boundary}'" if w.boundary else (
            f" in region '{w.region}'" if w.region else "")
        measurements.append(Measurement(
            len(expired),
            where=Where(key=f"checks.waivers[{i}].expires", boundary=w.boundary, region=w.region),
            detail=f"the waiver of '{w.rule}'{scope} approved by {w.approved_by} expired on "
                   f"{w.expires} and no longer applies",
        ))
    return RuleResult(tuple(measurements))


WAIVER_EXPIRY = Rule(
    id="waiver-expiry",
    title="Waivers within their expiry date",
    rationale=(
        "A waiver records that a named person accepted a finding for a stated reason, for a "
        "limited time. Once it has expired the accepted finding counts again and the waiver "
        "itself is reported, so that accepted deviations are looked at again rather than "
        "carried forward unnoticed (common practice in design review)."
    ),
    source="common practice",
    unit="waivers",
    measures="number of expired waivers",
    limits=Limits(warn=0, error=None),
    hint="Review the waived finding again: fix the case, or renew the waiver with a new "
         "expiry date and the approver's name.",
    check=_check,
    needs=("checks.waivers",),
)


def _check_scope(ctx: RuleContext) -> RuleResult:
    scoped = [(i, w) for i, w in enumerate(ctx.case.checks.waivers) if w.boundary is not None]
    if not scoped:
        return RuleResult.skip("no waiver of the case file is limited to a boundary")
    groups = ctx.mesh.group_names
    unmatched = [(i, w) for i, w in scoped if w.boundary not in groups]
    if not unmatched:
        return RuleResult((Measurement(0, detail=f"the {len(scoped)} boundaries named by "
                                                 "waivers are all in the mesh"),))
    known = ", ".join(groups) or "none"
    measurements = []
    for i, w in unmatched:
        close = difflib.get_close_matches(w.boundary, groups, n=1)
        hint = f" (did you mean '{close[0]}'?)" if close else f"; the mesh has: {known}"
        measurements.append(Measurement(
            len(unmatched),
            where=Where(key=f"checks.waivers[{i}].boundary"),
            detail=f"the waiver of '{w.rule}' approved by {w.approved_by} names boundary "
                   f"'{w.boundary}', which the mesh does not have{hint}; it waives nothing",
            fix=f"Correct the boundary name of checks.waivers[{i}] to a group of the mesh, "
                "or remove the waiver.",
        ))
    return RuleResult(tuple(measurements))


WAIVER_SCOPE = Rule(
    id="waiver-scope",
    title="Waivers limited to boundaries the mesh has",
    rationale=(
        "A waiver limited to one boundary covers only the findings on that boundary. If "
        "the mesh has no boundary of that name (a misspelling, or a group renamed when "
        "the mesh was exported again) the waiver covers nothing: the finding it was meant "
        "for stays open while the case file seems to accept it. Such a waiver is reported "
        "so that the name is corrected or the waiver removed (common practice in design "
        "review: an acceptance must point at what it accepts)."
    ),
    source="common practice",
    unit="waivers",
    measures="number of waivers whose boundary is not in the mesh",
    limits=Limits(warn=0, error=None),
    hint="Correct the waiver's boundary to a group name of the mesh (`caselint mesh MESH` "
         "lists them), or remove the waiver.",
    check=_check_scope,
    needs=("mesh", "checks.waivers"),
)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The waiver rules."""
    return [WAIVER_EXPIRY, WAIVER_SCOPE]
