"""How the readable formats (text, markdown, html) present checks and findings.

One place for what a reviewer reads the same way in every readable format: the order of
the summary table (failures first), the name of each outcome, a measured value and its
limit written with unit and direction, where a finding is, and the numbered list that
gives each rule's sources once per report. The machine formats (json, sarif, junit) keep
their own documented order and words.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from caselint.model import Check, Finding, Where
from caselint.wording import apart, format_number, limit_text, plural, quantity

#: How many of a finding's listed cell or face ids are shown (the count is in full).
SHOWN_IDS = 5
#: Outcome names in the readable formats. A rule that raised is a fault of the rule, not
#: a finding about the case, and must not read like the severity "error".
OUTCOME_NAME = {"fail": "fail", "error": "rule fault", "waived": "waived", "pass": "pass",
                "skipped": "skipped"}
#: Outcomes in summary order: what needs action first, then what was accepted, what
#: passed and what was not checked.
OUTCOME_ORDER = ("fail", "error", "waived", "pass", "skipped")
#: How the counts of each outcome are worded in a result line (``3 failed``).
OUTCOME_COUNT = {"fail": "failed", "error": "rule fault", "waived": "waived",
                 "pass": "passed", "skipped": "skipped"}


def check_order(check: Check) -> tuple[int, int, str, str]:
    """Sort key of the summary tables: failed checks (errors, then warnings), rule faults,
    waived, passed, skipped; by rule id within each group (the title breaks a tie)."""
    severity = 0 if check.severity == "error" else 1
    return (OUTCOME_ORDER.index(check.outcome), severity if check.outcome == "fail" else 0,
            check.rule, check.title)


def in_summary_order(checks: tuple[Check, ...] | list[Check]) -> list[Check]:
    """The checks in the order of :func:`check_order`."""
    return sorted(checks, key=check_order)


def outcome_label(check: Check) -> str:
    """``fail (warning)``, ``waived (error)``, ``rule fault``, ``pass``, ``skipped``."""
    name = OUTCOME_NAME.get(check.outcome, check.outcome)
    if check.outcome in ("fail", "waived") and check.severity:
        return f"{name} ({check.severity})"
    return name


def count_words(counts: dict[str, int]) -> str:
    """``2 failed, 0 waived, 5 passed, 1 skipped, 0 rule faults``, in summary order."""
    parts = []
    for outcome in OUTCOME_ORDER:
        n = counts.get(outcome, 0)
        word = OUTCOME_COUNT[outcome]
        parts.append(plural(n, word) if outcome == "error" else f"{n} {word}")
    return ", ".join(parts)


def measured_and_limit(check: Check) -> tuple[str, str]:
    """The measured value with its unit and the limit with its direction: ``1.5`` and
    ``<= 1.3``, ``1 cell`` and ``>= 5 cells``; ``-`` for a value that is missing.

    Six significant digits, more where the two would otherwise read alike.
    """
    value, limit = check.measured, check.limit
    if value is not None and limit is not None:
        shown, limit_shown = apart(value, limit, 6, format_number)
    else:
        shown, limit_shown = format_number(value), format_number(limit)
    measured = "-" if value is None else quantity(value, check.unit, shown)
    return measured, limit_text(limit, check.worse, check.unit, limit_shown)


def _ids(kind: str, ids: tuple[int, ...], count: int | None) -> str:
    """``12 cells (ids 3, 9, 40, ...)``: the full count and the first few ids."""
    n = count if count is not None else len(ids)
    text = plural(n, kind)
    if ids:
        shown = ", ".join(str(i) for i in ids[:SHOWN_IDS])
        more = ", ..." if n > min(len(ids), SHOWN_IDS) else ""
        text += f" (id {shown})" if len(ids) == 1 and n == 1 else f" (ids {shown}{more})"
    return text


def format_where(where: Where) -> str:
    """One line saying where a finding is; ``whole case`` when it has no location."""
    parts: list[str] = []
    if where.boundary is not None:
        parts.append(f"boundary '{where.boundary}'")
    if where.region is not None:
        parts.append(f"region '{where.region}'")
    if where.key is not None:
        parts.append(f"case file {where.key}" + (f" (line {where.line})" if where.line else ""))
    if where.cell_count is not None or where.cells:
        parts.append(_ids("cell", where.cells, where.cell_count))
    if where.face_count is not None or where.faces:
        parts.append(_ids("face", where.faces, where.face_count))
    if where.point is not None:
        x, y, z = (f"{v:.4g}" for v in where.point)
        parts.append(f"near ({x}, {y}, {z}) m")
    return "; ".join(parts) if parts else "whole case"


@dataclass
class SourceKeys:
    """Numbered sources, one entry per rule: findings carry the short key ``[n]`` and the
    full citation is printed once, in :meth:`entries`."""

    _keys: dict[str, int] = field(default_factory=dict)
    _sources: dict[str, str] = field(default_factory=dict)

    def key(self, rule: str, source: str) -> str:
        """``[n]`` for ``rule``, numbered in the order rules are first cited; empty when
        the rule names no source."""
        if not source.strip():
            return ""
        if rule not in self._keys:
            self._keys[rule] = len(self._keys) + 1
            self._sources[rule] = source
        return f"[{self._keys[rule]}]"

    def cite(self, finding: Finding) -> str:
        """The key of a finding's rule (see :meth:`key`)."""
        return self.key(finding.rule, finding.source)

    def entries(self) -> list[tuple[str, str, str]]:
        """``([n], rule, source)`` for every rule cited, in key order."""
        return [(f"[{n}]", rule, self._sources[rule]) for rule, n in self._keys.items()]


#: Words for the places of a distribution.
PLACE_WORDS = {"region": "in regions", "near-wall": "near walls", "elsewhere": "elsewhere"}


def spread_sentence(check: Check, dist) -> str:
    """One line on how a place-graded quantity is spread (a :class:`Distribution`):
    ``over 74,212 faces: median 1.06, 99% below 1.25, worst 1.57 near walls; beyond 1.3:
    0.4% (near walls 0.2%, elsewhere 0.5%)``."""
    unit = f" {check.unit}" if check.unit else ""
    pct = dict(dist.percentiles)
    what = f"{dist.label}: " if dist.label else ""
    weight = f" (by {dist.weighted})" if dist.weighted else ""
    parts = [f"{what}over {dist.count:,} {dist.entity}{'' if dist.count == 1 else 's'}{weight}"]
    if pct:
        tail, end = (99.0, 100.0) if dist.worse == "higher" else (1.0, 0.0)
        word = "below" if dist.worse == "higher" else "above"
        text = f"median {_short(pct[50.0])}{unit}"
        if tail in pct:
            text += f", 99% {word} {_short(pct[tail])}{unit}"
        text += f", worst {_short(pct[end])}{unit}"
        if dist.worst_place:
            text += f" {PLACE_WORDS.get(dist.worst_place, dist.worst_place)}"
        parts.append(text)
    for limit, share in dist.beyond:
        per_place = [f"{PLACE_WORDS.get(p.place, p.place)} {share_of(p.beyond, limit)}"
                     for p in dist.places if p.count]
        inner = f" ({', '.join(per_place)})" if len(per_place) > 1 else ""
        side = "beyond" if dist.worse == "higher" else "below"
        parts.append(f"{side} {format_number(limit)}{unit}: {share:.2g}%{inner}")
    return "; ".join(parts)


def share_of(pairs, limit: float) -> str:
    """The percent past ``limit`` from (limit, percent) pairs, as text ('-' if absent)."""
    for lim, share in pairs:
        if lim == limit:
            return f"{share:.2g}%"
    return "-"


def _short(value: float) -> str:
    """Four significant digits: a spread is read at a glance."""
    return f"{value:.4g}"
