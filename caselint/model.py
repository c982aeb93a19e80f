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
#: Places of a mesh entity for grading by place (codes are indices into this tuple): inside a
#: region of interest of the case file, in the band of cells near a no-slip wall, elsewhere.
PLACES: tuple[str, ...] = ("elsewhere", "near-wall", "region")
#: The places judged strictly: where the flow is resolved ("fine where the flow is resolved,
#: a compromise elsewhere" is common practice).
STRICT_PLACES: tuple[str, ...] = ("region", "near-wall")
SEVERITIES: tuple[str, ...] = ("error", "warning", "note")
#: Rank of each severity; a larger number is more severe.
SEVERITY_RANK: dict[str, int] = {"note": 0, "warning": 1, "error": 2}

#: How many cell or face ids a finding lists; the count is always given in full.
MAX_LISTED_IDS = 10
#: Keys of a rule's entry in a rule set or case file that are not parameters.
ENTRY_KEYS: tuple[str, ...] = ("enabled", "warn", "error", "severity", "grades")


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
    place: str | None = None     # grading by place: the places judged, e.g. "elsewhere"

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
        for key in ("boundary", "region", "key", "line", "place"):
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


@dataclass(frozen=True, eq=False)
class Extent:
    """The per-entity values behind a measurement, each with its place, for grading by
    extent and place (see :class:`Grade`).

    ``values`` (N,) are finite per-entity values (faces, cells, wall faces), ``places`` (N,)
    their place codes (indices into :data:`PLACES`). ``measure(subset, limits)`` returns the
    located measurement of the entities ``subset`` (indices into ``values``) against
    ``limits``: their worst value, where it is, how many are past the limits; the engine
    calls it for each place it grades. ``weights`` (N,), when given, weigh the shares (wall
    face areas: a share of the wall area); ``entity`` names one entity ("face", "cell").
    Compared by identity: it holds arrays.
    """

    values: Any
    places: Any
    entity: str
    measure: Callable[[Any, "Limits"], "Measurement"]
    weights: Any = None
    weight_words: str = ""

    def __post_init__(self) -> None:
        import numpy as np

        if np.shape(self.values) != np.shape(self.places) or np.ndim(self.values) != 1:
            raise ValueError(f"an extent needs one place per value, got shapes "
                             f"{np.shape(self.values)} and {np.shape(self.places)}")
        if self.weights is not None and np.shape(self.weights) != np.shape(self.values):
            raise ValueError(f"an extent's weights must match its values, got shapes "
                             f"{np.shape(self.weights)} and {np.shape(self.values)}")


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

    ``grade`` names the rule's grade (:class:`Grade`) the measurement is graded against
    (None: the rule's main grade); the engine resolves it with the rule-set and case-file
    overrides, and takes the grade's direction and unit where the measurement leaves them
    unset. ``limits`` set here replace the grade's (a rule deriving them per case from its
    resolved grade, ``ctx.grades``). A measurement with an ``extent`` is graded by extent
    and place instead: the engine grades it once per place grade of the rule.
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
    grade: str | None = None
    extent: Extent | None = None

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


def log_bin_edges(values: Any, per_decade: int = 4, max_bins: int = 200) -> Any:
    """Log-spaced histogram edges on whole fractions of a decade covering the positive,
    finite ``values`` (numbers spanning decades: y+, Courant numbers)."""
    import numpy as np

    values = np.asarray(values, dtype=np.float64).ravel()
    values = values[np.isfinite(values) & (values > 0)]
    lo, hi = (float(values.min()), float(values.max())) if values.size else (1.0, 1.0)
    low = math.floor(math.log10(max(lo, 1e-12)) * per_decade) / per_decade
    high = math.ceil(math.log10(max(hi, 1e-12)) * per_decade) / per_decade
    high = max(high, low + 1.0 / per_decade)
    bins = min(int(round((high - low) * per_decade)), max_bins)
    return np.logspace(low, high, bins + 1)


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


#: Kinds of rule parameters and how a message names a value of each.
PARAMETER_KINDS: dict[str, str] = {
    "number": "a finite number", "integer": "a whole number", "flag": "true or false",
    "text": "text",
}
_NAME = r"[a-z][a-z0-9]*(_[a-z0-9]+)*"
_GRADE_NAME = r"[a-z][a-z0-9]*(-[a-z0-9]+)*(\.[a-z0-9]+(-[a-z0-9]+)*)*"


def _number_or_none(value: Any) -> float | None:
    """``value`` as a float when it is a finite number (not true/false), else None."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    try:
        number = float(value)
    except OverflowError:             # an int beyond the float range
        return None
    return number if math.isfinite(number) else None


@dataclass(frozen=True)
class Parameter:
    """A rule parameter: its default, unit and the values it takes.

    The engine checks every value a rule set or case file sets against ``kind``
    (``number``, ``integer``, ``flag``, ``text``; by default the kind of the default),
    ``minimum`` / ``maximum`` (inclusive), ``exclusive_minimum``, ``choices`` and
    ``nullable`` (null allowed; always so when the default is None), and reports a bad
    one at the file, line and key that set it. A rule never validates its parameters.
    """

    name: str
    default: Any
    unit: str = ""
    description: str = ""
    nullable: bool = False
    kind: str = ""
    minimum: float | None = None
    maximum: float | None = None
    exclusive_minimum: float | None = None
    choices: tuple[Any, ...] = ()

    def __post_init__(self) -> None:
        import re

        if not re.fullmatch(_NAME, self.name):
            raise ValueError(f"parameter name {self.name!r} must be lower-case words joined by '_'")
        if not self.kind:
            kind = ("flag" if isinstance(self.default, bool) else
                    "text" if isinstance(self.default, str) else "number")
            object.__setattr__(self, "kind", kind)
        if self.kind not in PARAMETER_KINDS:
            raise ValueError(f"parameter {self.name!r}: kind must be one of "
                             f"{', '.join(PARAMETER_KINDS)}, got {self.kind!r}")
        if self.default is None:
            object.__setattr__(self, "nullable", True)
        problem = self.problem(self.default)
        if problem is not None:
            raise ValueError(f"parameter {self.name!r}: its default {self.default!r} is not "
                             f"{problem}")

    def expected(self) -> str:
        """What a value must be, in words: ``a whole number of at least 1 (cells) or null``."""
        text = PARAMETER_KINDS[self.kind]
        if self.choices:
            text = "one of " + ", ".join(str(c) for c in self.choices)
        bounds = []
        if self.exclusive_minimum is not None:
            bounds.append(f"above {self.exclusive_minimum:g}")
        if self.minimum is not None:
            bounds.append(f"at least {self.minimum:g}")
        if self.maximum is not None:
            bounds.append(f"at most {self.maximum:g}")
        if bounds:
            text += ", " + " and ".join(bounds)
        if self.unit and self.kind in ("number", "integer"):
            text += f" (in {self.unit})"
        return text + (" or null" if self.nullable else "")

    def problem(self, value: Any) -> str | None:
        """None when ``value`` is one this parameter takes, else what was expected."""
        if value is None:
            return None if self.nullable else self.expected()
        if self.kind == "flag":
            ok = isinstance(value, bool)
        elif self.kind == "text":
            ok = isinstance(value, str)
        else:
            number = _number_or_none(value)
            ok = number is not None and (self.kind == "number" or number == int(number))
            if ok:
                ok = ((self.minimum is None or number >= self.minimum)
                      and (self.maximum is None or number <= self.maximum)
                      and (self.exclusive_minimum is None or number > self.exclusive_minimum))
        if ok and self.choices:
            ok = value in self.choices
        return None if ok else self.expected()


@dataclass(frozen=True)
class Grade:
    """A named pair of limits that a rule's measurements are graded against.

    Every rule has a main grade (named ``Rule.main_grade``, its ``limits``, ``worse`` and
    ``unit``); :attr:`Rule.grades` declares more, for measurements on another scale or in
    another regime (``wall-function.low`` for the low side of a y+ band). A measurement
    names its grade; rule sets and case files override a grade by name.

    Grading by extent and place: a grade with ``places`` judges the entities of a
    measurement's :class:`Extent` in those places (names from :data:`PLACES`). It bounds
    their worst value, or, when ``share`` is set, the share (percent of the entities, or of
    their weight) beyond the quality limit ``beyond`` (None: the rule's main warning limit,
    else its error limit).
    """

    name: str
    warn: float | None = None
    error: float | None = None
    description: str = ""
    source: str = ""
    worse: Worse | None = None
    unit: str | None = None
    places: tuple[str, ...] = ()
    share: bool = False
    beyond: float | None = None

    def __post_init__(self) -> None:
        import re

        if not re.fullmatch(_GRADE_NAME, self.name):
            raise ValueError(f"grade name {self.name!r} must be lower-case words joined by '-' "
                             "(and '.')")
        _require_finite(self, ("warn", "error", "beyond"))
        unknown = [p for p in self.places if p not in PLACES]
        if unknown:
            raise ValueError(f"grade {self.name!r}: unknown places {unknown}; places are "
                             f"{', '.join(PLACES)}")
        if (self.share or self.beyond is not None) and not self.places:
            raise ValueError(f"grade {self.name!r}: a share grade needs the places it judges")
        if self.share and self.worse == "lower":
            raise ValueError(f"grade {self.name!r}: a share grade is worse when higher")

    @property
    def limits(self) -> Limits:
        """The grade's warning and error limits."""
        return Limits(self.warn, self.error)


@dataclass(frozen=True)
class Rule:
    """A check: its id, what it measures and why, its default limits, and its function.

    ``check`` is a pure function ``check(ctx) -> RuleResult`` of a
    :class:`caselint.engine.context.RuleContext`; it never prints, exits or writes files.
    ``needs`` names the case data the rule cannot run without (``"mesh"``, a case-file
    key such as ``"physics.flow.length"``, or a condition of
    :data:`caselint.engine.needs.CONDITIONS` such as ``"transient"``); the engine skips the
    rule, with one wording, when one is missing. ``worse`` says which direction of the
    measured value crosses a limit: ``"higher"`` (a maximum) or ``"lower"`` (a minimum).
    ``limits`` are the defaults of the main grade (named ``main_grade``, described by
    ``main_description``, judging the places ``main_places`` when the rule grades by place);
    ``grades`` declares the others (see :class:`Grade`).
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
    grades: tuple[Grade, ...] = ()
    main_grade: str = "main"
    main_places: tuple[str, ...] = ()
    main_description: str = ""

    def __post_init__(self) -> None:
        import re

        if not re.fullmatch(r"[a-z][a-z0-9]*(-[a-z0-9]+)*", self.id):
            raise ValueError(f"rule id {self.id!r} must be lower-case words joined by '-'")
        for attr in ("title", "rationale", "source", "hint"):
            if not getattr(self, attr).strip():
                raise ValueError(f"rule {self.id!r} has no {attr}")
        names = [g.name for g in self.all_grades]
        if len(set(names)) < len(names):
            raise ValueError(f"rule {self.id!r} declares a grade twice: {names}")
        params = [p.name for p in self.parameters]
        if len(set(params)) < len(params) or set(params) & set(ENTRY_KEYS):
            raise ValueError(f"rule {self.id!r}: parameter names must be unique and not one of "
                             f"{', '.join(ENTRY_KEYS)}: {params}")

    @property
    def all_grades(self) -> tuple[Grade, ...]:
        """The main grade (from ``limits``), then the declared ones."""
        main = Grade(self.main_grade, self.limits.warn, self.limits.error,
                     description=self.main_description or "the rule's main limits",
                     source=self.source, worse=self.worse, unit=self.unit,
                     places=self.main_places)
        return (main, *self.grades)

    @property
    def place_grades(self) -> tuple[Grade, ...]:
        """The grades judging places (grading by extent and place)."""
        return tuple(g for g in self.all_grades if g.places)


@dataclass(frozen=True)
class PlaceSpread:
    """The entities of a distribution in one place: how many, the worst value, and the share
    beyond each limit (pairs of limit and percent)."""

    place: str
    count: int
    worst: float | None
    beyond: tuple[tuple[float, float], ...] = ()


@dataclass(frozen=True)
class Distribution:
    """How a graded quantity is spread over the mesh, for a report to show beyond the maximum.

    ``percentiles`` are pairs (p, value) over all entities (by weight when ``weighted``);
    ``beyond`` pairs (limit, percent of all entities past it) for each limit of the rule's
    place grades; ``places`` the same per place; ``worst_place`` where the worst value sits.
    """

    entity: str
    count: int
    percentiles: tuple[tuple[float, float], ...]
    beyond: tuple[tuple[float, float], ...]
    places: tuple[PlaceSpread, ...]
    worst_place: str
    worse: Worse = "higher"
    weighted: str = ""
    label: str = ""


@dataclass(frozen=True)
class Check:
    """The outcome of one rule on one case, with its extreme measured value.

    ``distributions`` describe the spread of a rule graded by extent and place.
    """

    rule: str
    title: str
    outcome: Outcome
    severity: Severity | None
    measured: float | None
    limit: float | None
    unit: str
    reason: str = ""
    limits: Limits = field(default_factory=Limits)
    distributions: tuple[Distribution, ...] = ()

    def __post_init__(self) -> None:
        _require_finite(self, ("measured", "limit"))


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
    """A top-level case-file section that a plugin adds, with its JSON Schema (2020-12).

    ``quantities`` maps the dotted keys of the section that hold physical quantities to
    their dimension (a name of ``caselint.manifest.units.DIMENSIONS``: ``"length"``,
    ``"volume_flow"``...). The loader converts them to SI like every quantity of the case
    file (a wrong unit is an error at its line), so rules read plain SI numbers from
    ``ctx.case.extensions[name]``.
    """

    name: str
    schema: dict[str, Any]
    quantities: dict[str, str] = field(default_factory=dict)


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
    ``rule_set_files`` pairs each rule set used with its file, and ``rule_info`` describes
    the rules that ran (the run's :class:`Report` gathers both).
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
    rule_set_files: tuple[tuple[str, Any], ...] = field(default=(), compare=False)
    rule_info: tuple["RuleInfo", ...] = field(default=(), compare=False)


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
