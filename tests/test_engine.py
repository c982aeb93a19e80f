"""The engine: plugin registration, rule sets, grading, waivers, crash isolation."""

from __future__ import annotations

import datetime as dt
import textwrap
from pathlib import Path

import pytest

from caselint import hookimpl
from caselint.engine import grading
from caselint.engine.plugins import BUILTIN_PLUGINS, get_plugin_manager, plugin_listing
from caselint.engine.registry import collect_rule_set_files, collect_rules
from caselint.engine.rulesets import select_rules
from caselint.engine.runner import run_case
from caselint.errors import CaseFileError, PluginLoadError
from caselint.manifest.case import Case, CaseInfo, Checks, MeshSpec, Waiver
from caselint.model import Limits, Measurement, Rule, RuleResult, Where


def _flow_rule(rule_id: str, values: list[float], *, worse: str = "higher",
               scopes: list[str | None] | None = None) -> Rule:
    """A rule that needs no mesh and reports the given values (one per boundary scope)."""
    scopes = scopes or [None] * len(values)

    def check(ctx):
        return RuleResult(tuple(Measurement(v, where=Where(boundary=s))
                                for v, s in zip(values, scopes)))

    return Rule(id=rule_id, title=f"Test rule {rule_id}", rationale="For the engine tests.",
                source="test", unit="deg", limits=Limits(warn=10, error=20), hint="Change it.",
                check=check, worse=worse, needs=("physics.flow",))


def _case(tmp_path: Path, waivers=(), safety="none") -> Case:
    return Case(path=tmp_path / "case.yaml", version=1, info=CaseInfo("t", safety=safety),
                mesh=MeshSpec(file=tmp_path / "mesh.msh"), checks=Checks(waivers=tuple(waivers)))


def _active(rule, limits=None, severity=None):
    from caselint.engine.entries import ActiveRule

    return ActiveRule(rule, limits or rule.limits, {}, severity)


def _no_mesh():
    raise AssertionError("these rules must not read a mesh")


def test_builtin_plugins_register_their_rules_and_sets():
    pm = get_plugin_manager()
    rules = collect_rules(pm)
    assert "waiver-expiry" in rules
    assert list(rules) == sorted(rules)
    assert "general" in collect_rule_set_files(pm)
    names = {row["name"] for row in plugin_listing(pm)}
    assert set(BUILTIN_PLUGINS) <= names


def test_blocking_a_builtin_plugin_removes_its_rules():
    pm = get_plugin_manager(blocked=["caselint.rules.waivers"])
    assert "waiver-expiry" not in collect_rules(pm)


def test_a_plugin_registered_in_a_test_adds_a_rule_that_runs(tmp_path):
    class Pack:
        @hookimpl
        def caselint_register_rules(self):
            return [_flow_rule("test-angle", [12.5])]

    pm = get_plugin_manager()
    pm.register(Pack(), name="test-pack")
    try:
        rules = collect_rules(pm)
        assert "test-angle" in rules
        report = run_case(_case(tmp_path), (_active(rules["test-angle"]),), _no_mesh)
        (check,) = report.checks
        assert (check.outcome, check.severity, check.measured, check.limit) == (
            "fail", "warning", 12.5, 10)
        assert report.findings[0].message.startswith("Test rule test-angle is 12.5 deg, above "
                                                     "the warning limit 10 deg")
    finally:
        pm.unregister(name="test-pack")
    assert "test-angle" not in collect_rules(pm)


def test_duplicate_rule_id_names_both_plugins():
    class A:
        @hookimpl
        def caselint_register_rules(self):
            return [_flow_rule("same-id", [1])]

    class B(A):
        pass

    pm = get_plugin_manager()
    pm.register(A(), name="pack-a")
    pm.register(B(), name="pack-b")
    with pytest.raises(PluginLoadError, match="'same-id'.*'pack-a'.*'pack-b'|'same-id'.*'pack-b'.*'pack-a'"):
        collect_rules(pm)


@pytest.mark.parametrize(
    "value, worse, expected",
    [(9.9, "higher", None), (10.0, "higher", None), (10.01, "higher", "warning"),
     (20.5, "higher", "error"), (10.5, "lower", None), (9.0, "lower", "warning"),
     (3.0, "lower", "error")],
)
def test_grading_is_strict_beyond_each_limit(value, worse, expected):
    assert grading.grade(value, Limits(warn=10, error=20) if worse == "higher"
                         else Limits(warn=10, error=5), worse) == expected


def test_a_crashing_rule_is_an_error_outcome_and_the_others_still_run(tmp_path):
    def boom(ctx):
        raise ZeroDivisionError("division by zero")

    bad = Rule(id="crashes", title="Crashes", rationale="r", source="s", unit="", hint="h",
               limits=Limits(warn=1), check=boom, needs=())
    good = _flow_rule("fine", [3.0])
    report = run_case(_case(tmp_path), (_active(bad), _active(good)), _no_mesh)
    outcomes = {c.rule: c.outcome for c in report.checks}
    assert outcomes == {"crashes": "error", "fine": "pass"}
    (finding,) = report.findings
    assert finding.severity == "error" and "ZeroDivisionError" in finding.message


def test_waiver_scoped_to_a_boundary_waives_only_that_boundary(tmp_path):
    rule = _flow_rule("per-wall", [25.0, 15.0], scopes=["floor", "ceiling"])
    waiver = Waiver(rule="per-wall", reason="accepted", approved_by="R. Osei",
                    expires=dt.date(2027, 1, 1), boundary="floor")
    report = run_case(_case(tmp_path, [waiver]), (_active(rule),), _no_mesh,
                      today=dt.date(2026, 12, 1))
    by_wall = {f.where.boundary: f for f in report.findings}
    assert by_wall["floor"].waived and by_wall["floor"].severity == "error"
    assert not by_wall["ceiling"].waived
    (check,) = report.checks
    assert (check.outcome, check.severity, check.measured) == ("fail", "warning", 25.0)


def test_all_failures_waived_gives_outcome_waived(tmp_path):
    rule = _flow_rule("one", [25.0])
    waiver = Waiver(rule="one", reason="r", approved_by="A", expires=dt.date(2027, 1, 1))
    report = run_case(_case(tmp_path, [waiver]), (_active(rule),), _no_mesh,
                      today=dt.date(2026, 12, 1))
    assert report.checks[0].outcome == "waived"


def test_expired_waiver_does_not_waive_and_is_reported(tmp_path):
    pm = get_plugin_manager()
    rules = collect_rules(pm)
    rule = _flow_rule("one", [25.0])
    waiver = Waiver(rule="one", reason="r", approved_by="A", expires=dt.date(2026, 11, 30),
                    key="checks.waivers[0]")
    report = run_case(_case(tmp_path, [waiver]),
                      (_active(rule), _active(rules["waiver-expiry"])), _no_mesh,
                      today=dt.date(2026, 12, 1))
    outcomes = {c.rule: (c.outcome, c.severity, c.measured) for c in report.checks}
    assert outcomes == {"one": ("fail", "error", 25.0), "waiver-expiry": ("fail", "warning", 1)}
    expiry = [f for f in report.findings if f.rule == "waiver-expiry"][0]
    assert "expired on 2026-11-30" in expiry.message


def test_safety_relevant_case_carries_the_caution(tmp_path):
    report = run_case(_case(tmp_path, safety="fire-smoke"), (_active(_flow_rule("x", [30])),),
                      _no_mesh)
    assert "licensed professional" in report.safety_note
    assert "fire-smoke" in report.findings[0].safety


def test_severity_ceiling_caps_findings(tmp_path):
    report = run_case(_case(tmp_path), (_active(_flow_rule("x", [30]), severity="warning"),),
                      _no_mesh)
    assert report.checks[0].severity == "warning" and report.findings[0].severity == "warning"


def _write(path: Path, text: str) -> Path:
    path.write_text(textwrap.dedent(text))
    return path


def test_rule_set_extends_and_case_overrides(tmp_path):
    rules = {"a": _flow_rule("a", [1]), "b": _flow_rule("b", [1])}
    base = _write(tmp_path / "base.yaml", """\
        rules:
          a: {warn: 5, error: 8}
          b: {}
        checklist:
          - {id: one, text: First}
        """)
    strict = _write(tmp_path / "strict.yaml", """\
        extends: base
        rules:
          a: {warn: 3}
          b: {enabled: false}
        checklist:
          - {id: two, text: Second}
        """)
    files = {"base": base, "strict": strict}
    sel = select_rules(("strict",), files, rules, {"a": {"error": 4}})
    assert sel.rule_sets == ("base", "strict")
    assert [(a.rule.id, a.limits) for a in sel.rules] == [("a", Limits(warn=3, error=4))]
    assert [c.id for c in sel.checklist] == ["one", "two"]


def test_rule_set_errors_name_file_and_line(tmp_path):
    rules = {"growth-ratio": _flow_rule("growth-ratio", [1])}
    bad = _write(tmp_path / "bad.yaml", """\
        description: typo below
        rules:
          growth-ratio: {warn: 1.3}
          grwth-ratio: {warn: 1.2}
        """)
    with pytest.raises(CaseFileError) as err:
        select_rules(("bad",), {"bad": bad}, rules)
    assert err.value.line == 4 and err.value.file == str(bad)
    assert "did you mean 'growth-ratio'" in str(err.value)


def test_rule_set_unknown_setting_and_loop(tmp_path):
    rules = {"a": _flow_rule("a", [1])}
    one = _write(tmp_path / "one.yaml", "extends: two\nrules:\n  a: {wran: 3}\n")
    two = _write(tmp_path / "two.yaml", "extends: one\nrules: {}\n")
    with pytest.raises(CaseFileError, match="loop"):
        select_rules(("one",), {"one": one, "two": two}, rules)
    solo = _write(tmp_path / "solo.yaml", "rules:\n  a: {wran: 3}\n")
    with pytest.raises(CaseFileError, match="did you mean 'warn'") as err:
        select_rules(("solo",), {"solo": solo}, rules)
    assert err.value.line == 2


def test_measurements_on_their_own_scale_are_graded_on_it(tmp_path):
    """A two-sided band: the low side and the high side each carry their own limits."""

    def band(ctx):
        return RuleResult((
            Measurement(12.0, label="smallest y+", worse="lower", limits=Limits(warn=None, error=30)),
            Measurement(250.0, label="largest y+", worse="higher", limits=Limits(warn=300, error=500)),
        ))

    rule = Rule(id="band", title="Band", rationale="r", source="s", unit="", hint="h",
                limits=Limits(warn=300, error=500), check=band, needs=())
    report = run_case(_case(tmp_path), (_active(rule),), _no_mesh)
    (check,) = report.checks
    assert (check.outcome, check.severity, check.measured, check.limit) == ("fail", "error", 12.0, 30)
    (finding,) = report.findings
    assert finding.message == "smallest y+ is 12, below the error limit 30"


def test_check_reports_the_worst_value_on_the_rule_scale_when_passing(tmp_path):
    report = run_case(_case(tmp_path), (_active(_flow_rule("x", [3.0, 7.5, 5.0])),), _no_mesh)
    (check,) = report.checks
    assert (check.outcome, check.measured, check.limit) == ("pass", 7.5, 10)


def test_waiver_statuses_say_which_waivers_expired_and_which_were_used(tmp_path):
    waivers = [
        Waiver(rule="one", reason="accepted", approved_by="A", expires=dt.date(2027, 1, 1)),
        Waiver(rule="one", reason="old", approved_by="B", expires=dt.date(2026, 1, 1)),
        Waiver(rule="two", reason="spare", approved_by="C", expires=dt.date(2027, 1, 1)),
    ]
    report = run_case(_case(tmp_path, waivers), (_active(_flow_rule("one", [25.0])),), _no_mesh,
                      today=dt.date(2026, 12, 1))
    assert [(w.approved_by, w.expired, w.used) for w in report.waivers] == [
        ("A", False, True), ("B", True, False), ("C", False, False)]
    assert report.waivers[0].expires == "2027-01-01"


def test_lint_case_fingerprints_inputs_and_carries_the_checklist():
    import hashlib

    from caselint.api import lint_case
    from caselint.demo import demo_case_path

    path = demo_case_path()
    report = lint_case(path)
    assert report.case_sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    mesh_bytes = (path.parent / report.mesh).read_bytes()
    assert report.mesh_sha256 == hashlib.sha256(mesh_bytes).hexdigest()
    assert [item.id for item in report.checklist] == ["fluid-data", "boundary-values", "mesh-units"]
    assert report.review.prepared_by == "I. Marchetti"


def test_declarative_condition_errors_name_file_and_line(tmp_path):
    from caselint.engine.conditions import conditions_of

    bad = _write(tmp_path / "bad.yaml", """\
        rules: {}
        conditions:
          - id: needs-step
            title: Transient cases give a step
            severity: error
            message: a transient case needs time.step
            hint: give time.step
            source: common practice
            if: {properties: {time: {properties: {mode: {const: transient}}}}}
            then: {required: 5}
        """)
    with pytest.raises(CaseFileError, match="not a valid JSON Schema") as err:
        conditions_of(bad)
    assert err.value.line == 10 and err.value.key == "conditions[0].then"
    missing = _write(tmp_path / "missing.yaml", """\
        conditions:
          - {id: x-y, title: t, severity: error, message: m, hint: h, source: s, if: {}}
        """)
    with pytest.raises(CaseFileError, match="missing then") as err:
        conditions_of(missing)
    assert err.value.line == 2


def test_a_declarative_condition_passes_when_it_does_not_apply(tmp_path):
    from caselint.engine.conditions import conditions_of

    path = _write(tmp_path / "set.yaml", """\
        conditions:
          - id: needs-step
            title: Transient cases give a step
            severity: warning
            message: a transient case needs time.step
            hint: give time.step
            source: common practice
            if: {required: [time], properties: {time: {properties: {mode: {const: transient}}}}}
            then: {properties: {time: {required: [step]}}}
        """)
    rule = conditions_of(path)["needs-step"]
    assert rule.limits == Limits(warn=0, error=None)
    import dataclasses

    for document, expected in [({"time": {"mode": "steady"}}, 0),
                               ({"time": {"mode": "transient", "step": 0.1}}, 0),
                               ({"time": {"mode": "transient"}}, 1)]:
        case = dataclasses.replace(_case(tmp_path), document=document)
        report = run_case(case, (_active(rule),), _no_mesh)
        assert report.checks[0].measured == expected
    assert report.findings[0].message.startswith("a transient case needs time.step")
    assert report.findings[0].where.key == "time"


def test_rule_parameters_are_type_checked_against_their_defaults(tmp_path):
    from caselint.model import Parameter

    rule = Rule(id="p", title="t", rationale="r", source="s", unit="", hint="h",
                limits=Limits(warn=1), check=lambda ctx: RuleResult.skip("x"),
                parameters=(Parameter("min_steps", 20, "steps"), Parameter("strict", False),
                            Parameter("cap", None, "m"), Parameter("st", 0.2, nullable=True)))
    ok = _write(tmp_path / "ok.yaml",
                "rules:\n  p: {min_steps: 30, strict: true, cap: null, st: null}\n")
    (active,) = select_rules(("ok",), {"ok": ok}, {"p": rule}).rules
    assert active.params == {"min_steps": 30, "strict": True, "cap": None, "st": None}
    for text, expected in [("min_steps: many", r"must be a finite number \(in steps\)"),
                           ("min_steps: null", r"must be a finite number \(in steps\)"),
                           ("strict: 1", "must be true or false"),
                           ("min_steps: .nan", "must be a finite number")]:
        bad = _write(tmp_path / "bad.yaml", f"rules:\n  p:\n    {text}\n")
        with pytest.raises(CaseFileError, match=expected) as err:
            select_rules(("bad",), {"bad": bad}, {"p": rule})
        assert err.value.line == 3
