"""Rule ``waiver-expiry``: a waiver past its expiry date no longer waives anything."""

from __future__ import annotations

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


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The waiver rule."""
    return [WAIVER_EXPIRY]
