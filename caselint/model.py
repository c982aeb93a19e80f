"""The typed data model shared by the engine, the rules and the reporters.

A rule returns a :class:`RuleResult`; the engine grades it against the limits of the
active rule set, applies waivers and builds :class:`Check` and :class:`Finding` records,
collected per case in a :class:`CaseReport` and per run in a :class:`Report`.
Values are SI unless a ``unit`` field says otherwise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable, Literal

Outcome = Literal["pass", "fail", "skipped", "waived", "error"]
Severity = Literal["error", "warning", "note"]
Worse = Literal["higher", "lower"]

OUTCOMES: tuple[str, ...] = ("pass", "fail", "skipped", "waived", "error")
SEVERITIES: tuple[str, ...] = ("error", "warning", "note")
#: Rank of each severity; a larger number is more severe.
SEVERITY_RANK: dict[str, int] = {"note": 0, "warning": 1, "error": 2}

#: How many cell or face ids a finding lists; the count is always given in full.
MAX_LISTED_IDS = 10


def _require_finite(record: Any, names: tuple[str, ...]) -> None:
    """Refuse NaN and infinity in the named optional number fields of a record."""
    for name in names:
        value = getattr(record, name)
        if value is not None and not math.isfinite(value):
            raise ValueError(f"{type(record).__name__}.{name} must be finite, got {value!r}")


@dataclass(frozen=True)
class Limits:
    """Warning and error limits of a graded rule; ``None`` disables that grade."""

    warn: float | None = None
    error: float | None = None

    def __post_init__(self) -> None:
        _require_finite(self, ("warn", "error"))


@dataclass(frozen=True)
class Where:
    """Where a finding is: a scope (boundary or region) and a few cells, faces and a point."""

    boundary: str | None = None
    region: str | None = None
    cells: tuple[int, ...] = ()
    cell_count: int | None = None
    faces: tuple[int, ...] = ()
    face_count: int | None = None
    point: tuple[float, float, float] | None = None
    key: str | None = None       # case-file key path the finding concerns, e.g. "time.step"
    line: int | None = None      # its 1-based line in the case file (filled in by the engine)

    def __post_init__(self) -> None:
        if len(self.cells) > MAX_LISTED_IDS or len(self.faces) > MAX_LISTED_IDS:
            raise ValueError(
                f"a finding lists at most {MAX_LISTED_IDS} ids; got {len(self.cells)} cells "
                f"and {len(self.faces)} faces (give the full number as a count)"
            )
        if self.point is not None and not all(math.isfinite(v) for v in self.point):
            raise ValueError(f"a finding's point must be finite, got {self.point}")

    def to_dict(self) -> dict[str, Any]:
        """Plain-data form with empty fields left out.

        Listed ids always come with their full count (the count defaults to the number
        listed), so a reader never mistakes a capped list for all of them.
        """
        out: dict[str, Any] = {}
        for key in ("boundary", "region", "key", "line"):
            if getattr(self, key) is not None:
                out[key] = getattr(self, key)
        for kind, ids, count in (("cells", self.cells, self.cell_count),
                                 ("faces", self.faces, self.face_count)):
            if ids or count is not None:
                out[kind] = [int(i) for i in ids]
                out[f"{kind[:-1]}_count"] = int(count if count is not None else len(ids))
        if self.point is not None:
            out["point"] = [float(v) for v in self.point]
        return out


@dataclass(frozen=True)
class Measurement:
    """One measured value of a rule, graded by the engine against the rule's limits.

    A rule that measures once per boundary or region returns one measurement per scope
    (``where.boundary`` or ``where.region`` set), so a waiver can cover one scope only.
    ``detail`` is plain words appended to the engine's message (counts, what the worst
    place is); ``fix`` is a specific fix hint that replaces the rule's generic one.

    A rule that measures several quantities (a two-sided band, distances and a ratio)
    gives each its own ``label`` (the subject of the finding's sentence), ``unit``,
    ``worse`` direction and ``limits``; left unset they are the rule's. ``limits`` set
    here are final: rule-set overrides apply to the rule's own limits only, so a rule
    that sets them reads them from its parameters (``ctx.params``).
    ``statement``, when given, is the finding's whole sentence (for yes/no conditions,
    where "1 above the limit 0" would say nothing).
    """

    value: float
    where: Where = field(default_factory=Where)
    detail: str = ""
    fix: str = ""
    label: str = ""
    unit: str | None = None
    worse: Worse | None = None
    limits: Limits | None = None
    statement: str = ""

    def __post_init__(self) -> None:
        if not math.isfinite(self.value):
            raise ValueError(f"a measured value must be finite, got {self.value!r}")
        if self.worse is not None and self.worse not in ("higher", "lower"):
            raise ValueError(f"worse must be 'higher' or 'lower', got {self.worse!r}")

    @property
    def own_scale(self) -> bool:
        """True when the measurement uses its own limits, direction or unit."""
        return self.limits is not None or self.worse is not None or self.unit is not None


@dataclass(frozen=True)
class Note:
    """An informational finding (severity ``note``) that does not change the outcome."""

    message: str
    where: Where = field(default_factory=Where)


@dataclass(frozen=True)
class PlotSeries:
    """One data series of a plot: a histogram's bin edges and counts, or a line's points.

    For a histogram ``x`` holds the n+1 increasing bin edges and ``y`` the n counts;
    ``below`` and ``above`` count the values outside the edges, so nothing is hidden.
    For a line ``x`` and ``y`` are the points. ``label`` names the series (a boundary).
    """

    x: tuple[float, ...]
    y: tuple[float, ...]
    label: str = ""
    below: int = 0
    above: int = 0

    def __post_init__(self) -> None:
        if not all(math.isfinite(v) for v in (*self.x, *self.y)):
            raise ValueError(f"plot series {self.label!r} holds a non-finite number")
        if self.below < 0 or self.above < 0:
            raise ValueError(f"plot series {self.label!r}: counts outside the edges are >= 0")

    @classmethod
    def histogram(cls, values: Any, edges: Any, label: str = "") -> "PlotSeries":
        """Count finite ``values`` into bins between ``edges`` (numpy, no loop over values)."""
        import numpy as np

        values = np.asarray(values, dtype=np.float64).ravel()
        values = values[np.isfinite(values)]
        edges = np.asarray(edges, dtype=np.float64)
        counts, _ = np.histogram(values, bins=edges)
        return cls(x=tuple(float(e) for e in edges), y=tuple(float(c) for c in counts),
                   label=label, below=int(np.count_nonzero(values < edges[0])),
                   above=int(np.count_nonzero(values > edges[-1])))


def log_bin_edges(values: Any, per_decade: int | None = None) -> Any:
    """Log-spaced histogram edges chosen from the data: see :func:`caselint.bins.log_bin_edges`
    (imported when called, so that importing the model does not import numpy)."""
    from caselint.bins import log_bin_edges as edges

    return edges(values, per_decade)


@dataclass(frozen=True)
class PlotData:
    """Data a rule attaches for the review reports to draw (reporters compute nothing).

    ``kind`` is ``"histogram"`` (each series: bin edges and counts) or ``"line"``
    (each series: points, e.g. layer height against layer number). ``limits`` (with
    ``worse``), when given, are drawn as marks on the x axis of a histogram. ``rule`` is
    filled in by the engine with the id of the rule that attached the plot.
    """

    title: str
    x_label: str
    y_label: str
    series: tuple[PlotSeries, ...]
    kind: Literal["histogram", "line"] = "histogram"
    limits: Limits | None = None
    worse: Worse = "higher"
    x_log: bool = False
    y_log: bool = False
    rule: str = ""

    def __post_init__(self) -> None:
        if self.kind not in ("histogram", "line"):
            raise ValueError(f"plot kind must be 'histogram' or 'line', got {self.kind!r}")
        if not self.series:
            raise ValueError(f"plot {self.title!r} has no series")
        for s in self.series:
            if self.kind == "line" and len(s.x) != len(s.y):
                raise ValueError(f"plot {self.title!r}: series {s.label!r} has {len(s.x)} x "
                                 f"and {len(s.y)} y values")
            if self.kind == "histogram" and (len(s.x) != len(s.y) + 1 or len(s.y) < 1
                                             or any(b <= a for a, b in zip(s.x, s.x[1:]))):
                raise ValueError(f"plot {self.title!r}: series {s.label!r} needs n >= 1 counts "
                                 f"and n + 1 increasing edges, got {len(s.y)} and {len(s.x)}")


@dataclass(frozen=True)
class RuleResult:
    """What a rule returns: measurements to grade, or the reason it was skipped.

    ``plots`` are data for the review reports (``--format html``): distributions such as
    a histogram of the measured metric, kept by the engine in :attr:`CaseReport.plots`.
    """

    measurements: tuple[Measurement, ...] = ()
    skipped: str | None = None
    notes: tuple[Note, ...] = ()
    plots: tuple[PlotData, ...] = ()

    def __post_init__(self) -> None:
        if self.skipped is None and not self.measurements:
            raise ValueError("a rule that runs returns at least one measurement, or a skip reason")

    @classmethod
    def skip(cls, reason: str) -> "RuleResult":
        """A result saying the rule could not run, and why."""
        return cls(skipped=reason)


@dataclass(frozen=True)
class Parameter:
    """A rule parameter beyond its limits, with its default and unit.

    A rule set may set it to a value of the default's kind (a number, a flag, text), or
    to null where ``nullable`` (always so when the default itself is None).
    """

    name: str
    default: Any
    unit: str = ""
    description: str = ""
    nullable: bool = False


@dataclass(frozen=True)
class Rule:
    """A check: its id, what it measures and why, its default limits, and its function.

    ``check`` is a pure function ``check(ctx) -> RuleResult`` of a
    :class:`caselint.engine.context.RuleContext`; it never prints, exits or writes files.
    ``needs`` names the case data the rule reads (``"mesh"``, ``"physics.flow"``...),
    shown by ``caselint explain``. ``worse`` says which direction of the measured value
    crosses a limit: ``"higher"`` (a maximum) or ``"lower"`` (a minimum).
    """

    id: str
    title: str
    rationale: str
    source: str
    unit: str
    limits: Limits
    hint: str
    check: Callable[..., RuleResult]
    worse: Worse = "higher"
    needs: tuple[str, ...] = ("mesh",)
    parameters: tuple[Parameter, ...] = ()
    measures: str = ""

    def __post_init__(self) -> None:
        import re

        if not re.fullmatch(r"[a-z][a-z0-9]*(-[a-z0-9]+)*", self.id):
            raise ValueError(f"rule id {self.id!r} must be lower-case words joined by '-'")
        for attr in ("title", "rationale", "source", "hint"):
            if not getattr(self, attr).strip():
                raise ValueError(f"rule {self.id!r} has no {attr}")


@dataclass(frozen=True)
class Check:
    """The outcome of one rule on one case, with its extreme measured value."""

    rule: str
    title: str
    outcome: Outcome
    severity: Severity | None
    measured: float | None
    limit: float | None
    unit: str
    reason: str = ""
    limits: Limits = field(default_factory=Limits)
    worse: Worse = "higher"      # direction of the deciding value: its limits are maxima or minima

    def __post_init__(self) -> None:
        _require_finite(self, ("measured", "limit"))
        if self.worse not in ("higher", "lower"):
            raise ValueError(f"worse must be 'higher' or 'lower', got {self.worse!r}")


@dataclass(frozen=True)
class Finding:
    """One graded statement about a case, with the value, the limit and a fix hint."""

    rule: str
    severity: Severity
    message: str
    measured: float | None
    limit: float | None
    unit: str
    where: Where
    hint: str
    source: str
    waived: bool = False
    waiver: str = ""
    safety: str = ""

    def __post_init__(self) -> None:
        _require_finite(self, ("measured", "limit"))


@dataclass(frozen=True)
class CaseSection:
    """A top-level case-file section that a plugin adds, with its JSON Schema (2020-12)."""

    name: str
    schema: dict[str, Any]


@dataclass(frozen=True)
class ChecklistItem:
    """A manual check from a rule set that a reviewer ticks: what a tool cannot check."""

    id: str
    text: str
    rule_set: str


@dataclass(frozen=True)
class WaiverStatus:
    """A waiver of the case file as the run found it: in force or expired, used or not."""

    rule: str
    reason: str
    approved_by: str
    expires: str                 # ISO date
    expired: bool
    used: bool                   # it covered at least one finding of this run
    boundary: str | None = None
    region: str | None = None
    line: int | None = None      # 1-based line of the waiver in the case file


@dataclass(frozen=True)
class ReviewInfo:
    """Who prepares, reviews and approves the case (from the case file's ``review``)."""

    prepared_by: str | None = None
    reviewers: tuple[str, ...] = ()
    approved_by: str | None = None


@dataclass(frozen=True)
class CaseReport:
    """Everything found about one case file.

    ``case_sha256`` and ``mesh_sha256`` fingerprint the inputs for a sign-off record;
    ``checklist`` holds the manual checks of the rule sets used. ``plots`` are the data
    the rules attached for the review reports (ordered by rule id). ``baselined`` counts
    findings left out because a baseline file (``--baseline``) records them as known.
    """

    case: str
    name: str
    safety: str
    checks: tuple[Check, ...]
    findings: tuple[Finding, ...]
    safety_note: str = ""
    mesh: str = ""
    rule_sets: tuple[str, ...] = ()
    description: str = ""
    case_sha256: str = ""
    mesh_sha256: str = ""
    checklist: tuple[ChecklistItem, ...] = ()
    waivers: tuple[WaiverStatus, ...] = ()
    review: ReviewInfo = field(default_factory=ReviewInfo)
    plots: tuple[PlotData, ...] = ()
    baselined: int = 0


@dataclass(frozen=True)
class RuleInfo:
    """What a report says about a rule it ran: for SARIF rule metadata and review records."""

    id: str
    title: str
    rationale: str
    source: str
    hint: str
    unit: str
    limits: Limits               # the rule's default limits (before rule sets and case files)
    worse: Worse = "higher"
    measures: str = ""

    @classmethod
    def of(cls, rule: Rule) -> "RuleInfo":
        """The description of ``rule`` without its check function."""
        return cls(rule.id, rule.title, rule.rationale, rule.source, rule.hint, rule.unit,
                   rule.limits, rule.worse, rule.measures)


@dataclass(frozen=True)
class RuleSetInfo:
    """Which rule-set file a run used: its name, who provides it, and its content hash."""

    name: str
    provider: str                # distribution that registered it, e.g. "caselint"
    version: str                 # that distribution's version
    sha256: str                  # SHA-256 of the rule-set file's bytes


@dataclass(frozen=True)
class Report:
    """The result of one run over one or more case files.

    ``rules`` and ``rule_set_info`` describe the rules and rule-set files the cases ran
    under (sorted by id and name); ``baseline`` names the baseline file whose known
    findings were left out, empty when none was used.
    """

    cases: tuple[CaseReport, ...]
    caselint_version: str
    rule_sets: tuple[str, ...] = ()
    rules: tuple[RuleInfo, ...] = ()
    rule_set_info: tuple[RuleSetInfo, ...] = ()
    baseline: str = ""
