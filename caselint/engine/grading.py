"""Grade a rule's measurements against its limits and word the findings."""

from __future__ import annotations

from caselint.model import SEVERITY_RANK, Limits, Measurement, Rule
from caselint.wording import apart, quantity


def grade(value: float, limits: Limits, worse: str) -> str | None:
    """The severity a measured value earns ("error", "warning"), or None when it passes."""
    if worse == "higher":
        crossed = lambda limit: limit is not None and value > limit  # noqa: E731
    else:
        crossed = lambda limit: limit is not None and value < limit  # noqa: E731
    if crossed(limits.error):
        return "error"
    if crossed(limits.warn):
        return "warning"
    return None


def cap(severity: str | None, max_severity: str | None) -> str | None:
    """Lower a severity to the rule set's ceiling for the rule, if it sets one."""
    if severity is None or max_severity is None:
        return severity
    return max_severity if SEVERITY_RANK[severity] > SEVERITY_RANK[max_severity] else severity


def worst(values: list[float], worse: str) -> float:
    """The extreme value in the rule's bad direction."""
    return max(values) if worse == "higher" else min(values)


def limit_for(severity: str | None, limits: Limits) -> float | None:
    """The limit a graded value crossed; for a pass, the first limit it would cross."""
    if severity == "error":
        return limits.error
    if severity == "warning":
        return limits.warn
    return limits.warn if limits.warn is not None else limits.error


def message(rule: Rule, m: Measurement, severity: str, limit: float | None) -> str:
    """The finding's sentence: what was measured, where, against which limit, and detail."""
    if m.statement:
        return m.statement
    what = m.label or rule.measures or rule.title
    unit = m.unit if m.unit is not None else rule.unit
    scope = ""
    if m.where.boundary:
        scope = f" on boundary '{m.where.boundary}'"
    elif m.where.region:
        scope = f" in region '{m.where.region}'"
    elif m.where.place:
        from caselint.engine.extent import place_words

        scope = " " + place_words(tuple(m.where.place.split("+")))
    grade_word = "error" if severity == "error" else "warning"
    relation = "above" if (m.worse or rule.worse) == "higher" else "below"
    if limit is None:
        text = f"{what}{scope} is {quantity(m.value, unit)}"
    else:
        # written apart: a value never reads equal to the limit it crosses
        shown, limit_shown = apart(m.value, limit)
        text = (f"{what}{scope} is {quantity(m.value, unit, shown)}, {relation} the "
                f"{grade_word} limit {quantity(limit, unit, limit_shown)}")
    if m.detail:
        text += f"; {m.detail}"
    return text
