"""The typed data model shared by the engine, the rules and the reporters.

A rule returns a :class:`RuleResult`; the engine grades it against the limits of the
active rule set, applies waivers and builds :class:`Check` and :class:`Finding` records,
collected per case in a :class:`CaseReport` and per run in a :class:`Report`.
Values are SI unless a ``unit`` field says otherwise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable

# Parts of the model live in leaf modules; import every record from here.
from caselint.declarations import PARAMETER_KINDS, Grade, Parameter  # noqa: F401
from caselint.extents import Distribution, Extent, PlaceSpread  # noqa: F401
from caselint.plotdata import PlotData, PlotSeries, log_bin_edges  # noqa: F401
from caselint.values import (  # noqa: F401
    ENTRY_KEYS,
    MAX_LISTED_IDS,
    OUTCOMES,
    PLACES,
    SEVERITIES,
    SEVERITY_RANK,
    STRICT_PLACES,
    Limits,
    Outcome,
    Severity,
    Where,
    Worse,
    _require_finite,
)

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
    worse: Worse = "higher"      # direction of the deciding value: its limits are maxima or minima
    distributions: tuple[Distribution, ...] = ()

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
