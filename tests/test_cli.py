"""The command line: parsing, exit codes, output routing, colour, plugins, info commands.

``check`` is driven here by a stand-in for ``caselint.api.lint_case`` returning reports
built by hand, so each exit-code rule is tested on its own; tests/test_cli_e2e.py runs the
real pipeline on real case files and meshes.
"""

from __future__ import annotations

import contextlib
import io
import json
import re
from pathlib import Path

import pytest
from jsonschema import Draft202012Validator

from caselint import __version__, hookimpl
from caselint.cli import main
from caselint.errors import CaseFileError, UsageError
from caselint.model import CaseReport, Check, Finding, Limits, Parameter, Rule, RuleResult, Where
from caselint.report.json_report import report_schema, report_schema_text

ANSI = re.compile(r"\x1b\[")


class _Terminal(io.StringIO):
    """A stdout that says it is a terminal."""

    def isatty(self) -> bool:
        return True


def run_cli(*args: str, tty: bool = False) -> tuple[int, str, str]:
    """Run ``caselint ARGS`` in-process; return (exit code, stdout, stderr)."""
    out = _Terminal() if tty else io.StringIO()
    err = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(autouse=True)
def _clean_environment(monkeypatch):
    """No colour or width overrides and no debug output (conftest keeps installed packs out)."""
    for name in ("NO_COLOR", "COLUMNS", "CASELINT_DEBUG"):
        monkeypatch.delenv(name, raising=False)


# -- a throwaway rule pack -------------------------------------------------------------


def _never_called(ctx) -> RuleResult:
    raise AssertionError("the info commands never run a rule")


PROBE_RULE = Rule(
    id="probe-spacing",
    title="Probe spacing in the test pack",
    rationale="Probes closer than a few cells sample the same eddies (invented test rule).",
    source="common practice",
    unit="cells",
    limits=Limits(warn=3.0, error=1.0),
    hint="Move the probes apart.",
    check=_never_called,
    worse="lower",
    needs=("mesh", "probes"),
    parameters=(Parameter("min_gap", 0.05, "m", "smallest probe gap considered"),),
    measures="cells between neighbouring probes",
)


class _ProbePack:
    @hookimpl
    def caselint_register_rules(self):
        return [PROBE_RULE]


@pytest.fixture
def probe_pack(monkeypatch):
    """Every plugin manager the CLI builds also holds the throwaway pack ``probe-pack``."""
    import caselint.engine.plugins as plugins

    real = plugins.get_plugin_manager

    def with_probe(**kwargs):
        pm = real(**kwargs)
        pm.register(_ProbePack(), name="probe-pack")  # ignored when blocked with -p
        return pm

    monkeypatch.setattr(plugins, "get_plugin_manager", with_probe)


# -- a stand-in for lint_case ----------------------------------------------------------


def _case(path: str, *findings: Finding, outcome: str = "pass") -> CaseReport:
    check = Check("growth-ratio", "Cell growth ratio", outcome,
                  "error" if outcome == "error" else None, 1.18, 1.3, "", limits=Limits(1.3, 2.0))
    return CaseReport(path, f"Invented case {path}", "none", (check,), findings, mesh="m.msh")


def _finding(severity: str, waived: bool = False) -> Finding:
    return Finding("growth-ratio", severity, f"growth ratio 2.4 is above the {severity} limit",
                   2.4, 2.0, "", Where(boundary="inlet"), "Grade the cells more gently.",
                   "common practice", waived=waived, waiver="approved" if waived else "")


@pytest.fixture
def fake_lint(monkeypatch):
    """Replace load_case and lint_case; ``cases[path]`` is the report (or the exception) for
    a path: a usage error is raised when the case file is read, anything else when it is
    checked. ``calls`` records each case file read, with the plugins and rule sets used."""
    import types

    import caselint.api as api

    cases: dict[str, object] = {}
    calls: list[dict] = []

    def load_case(path, pm=None, *, registry=None):
        calls.append({"path": str(path), "rule_sets": None, "pm": registry.pm})
        result = cases[str(path)]
        if isinstance(result, UsageError):
            raise result
        mesh = types.SimpleNamespace(file=Path(f"{path}.msh"), scale_to_m=1.0, tag_array=None,
                                     tags={}, zone=None)
        return types.SimpleNamespace(path=Path(path), mesh=mesh)

    def lint_case(case, *, rule_sets=None, registry=None, read_mesh=None, label=None, **kw):
        call = [c for c in calls if c["path"] == label][-1]
        call["rule_sets"] = rule_sets
        result = cases[label]
        if isinstance(result, BaseException):
            raise result
        return result

    monkeypatch.setattr(api, "load_case", load_case)
    monkeypatch.setattr(api, "lint_case", lint_case)
    return cases, calls


# -- parsing ---------------------------------------------------------------------------


def test_version():
    assert run_cli("--version") == (0, f"caselint {__version__}\n", "")


@pytest.mark.parametrize("args", [(), ("check",), ("check", "a.yaml", "--fail-on", "note"),
                                  ("frobnicate",), ("rules", "--bogus"), ("-p", "foo", "rules"),
                                  ("mesh", "m.msh", "--units", "furlong")])
def test_usage_errors_exit_2_with_usage_on_stderr(args):
    code, out, err = run_cli(*args)
    assert code == 2
    assert out == ""
    assert "usage: caselint" in err and "error:" in err


def test_help_exits_0():
    code, out, _ = run_cli("check", "--help")
    assert code == 0 and "--fail-on" in out and "exit codes" in out


# -- check: exit codes -----------------------------------------------------------------


@pytest.mark.parametrize("findings, fail_on, expected", [
    ((), "error", 0),
    ((_finding("note"),), "warning", 0),             # notes never fail a run
    ((_finding("warning"),), "error", 0),
    ((_finding("warning"),), "warning", 1),
    ((_finding("error"),), "error", 1),
    ((_finding("error", waived=True),), "error", 0),  # a waived error does not fail
    ((_finding("error", waived=True), _finding("warning")), "warning", 1),
])
def test_check_exit_code_follows_the_fail_level(fake_lint, findings, fail_on, expected):
    cases, _ = fake_lint
    cases["a.yaml"] = _case("a.yaml", *findings)
    code, out, err = run_cli("check", "a.yaml", "--fail-on", fail_on)
    assert (code, err) == (expected, "")
    assert out.splitlines()[-1].endswith(f"(fail level: {fail_on})")


def test_a_rule_that_raised_fails_the_run(fake_lint):
    cases, _ = fake_lint
    cases["a.yaml"] = _case("a.yaml", outcome="error")
    assert run_cli("check", "a.yaml")[0] == 1


def test_a_bad_case_file_is_reported_after_the_others_and_exits_2(fake_lint):
    cases, calls = fake_lint
    cases["good.yaml"] = _case("good.yaml", _finding("error"))
    cases["bad.yaml"] = CaseFileError("bad.yaml", "expected a number", line=7, column=12,
                                      key="physics.fluid.density")
    code, out, err = run_cli("check", "bad.yaml", "good.yaml", "--format", "json")
    assert code == 2
    assert err == ("caselint: error: bad.yaml:7:12: [physics.fluid.density] "
                   "expected a number\n")
    assert [c["case"] for c in json.loads(out)["cases"]] == ["good.yaml"]
    assert [c["path"] for c in calls] == ["bad.yaml", "good.yaml"]
    assert calls[0]["pm"] is calls[1]["pm"]  # plugins are loaded once per run


def test_rule_sets_given_on_the_command_line_reach_the_api_and_the_report(fake_lint):
    cases, calls = fake_lint
    cases["a.yaml"] = _case("a.yaml")
    code, out, _ = run_cli("check", "a.yaml", "--rule-set", "general", "--rule-set", "strict",
                           "--format", "json")
    assert code == 0
    assert calls[0]["rule_sets"] == ("general", "strict")
    document = json.loads(out)
    assert document["rule_sets"] == ["general", "strict"]
    assert Draft202012Validator(report_schema()).is_valid(document)
    run_cli("check", "a.yaml")
    assert calls[1]["rule_sets"] is None  # the case file's own rule sets apply


def test_unexpected_exception_is_one_line_exit_3(fake_lint, monkeypatch):
    cases, _ = fake_lint
    cases["a.yaml"] = RuntimeError("boom\nacross lines")
    code, out, err = run_cli("check", "a.yaml")
    assert (code, out) == (3, "")
    assert err.count("\n") == 1 and "Traceback" not in err
    assert "internal error: RuntimeError: boom across lines" in err and "please report" in err
    monkeypatch.setenv("CASELINT_DEBUG", "1")
    code, _, err = run_cli("check", "a.yaml")
    assert code == 3 and "Traceback (most recent call last)" in err


def test_unknown_format_is_a_usage_error_with_a_suggestion(fake_lint):
    cases, _ = fake_lint
    cases["a.yaml"] = _case("a.yaml")
    code, out, err = run_cli("check", "a.yaml", "--format", "jsno")
    assert (code, out) == (2, "")
    assert err == ("caselint: error: unknown output format 'jsno' (did you mean 'json'?); "
                   "available: html, json, junit, markdown, sarif, text\n")


def test_blocking_a_plugin_removes_what_it_registers(fake_lint):
    cases, _ = fake_lint
    cases["a.yaml"] = _case("a.yaml")
    for args in (("--no-plugin", "caselint.report.json_report", "check", "a.yaml", "--format",
                  "json"),
                 ("check", "--no-plugin", "caselint.report.json_report", "a.yaml", "--format",
                  "json")):
        code, _, err = run_cli(*args)
        assert code == 2 and "unknown output format 'json'" in err


@pytest.mark.parametrize("args", [("-p", "no:quillfen", "plugins"),
                                  ("plugins", "-p", "no:x")])
def test_the_old_plugin_blocking_option_names_the_new_one(args):
    code, out, err = run_cli(*args)
    assert (code, out) == (2, "")
    name = args[args.index("-p") + 1][3:]
    assert f"--no-plugin {name}" in err


# -- check: output ---------------------------------------------------------------------


def test_output_file_is_written_atomically_and_replaced(fake_lint, tmp_path):
    cases, _ = fake_lint
    cases["a.yaml"] = _case("a.yaml", _finding("warning"))
    target = tmp_path / "report.json"
    target.write_text("old report", encoding="utf-8")
    code, out, err = run_cli("check", "a.yaml", "--format", "json", "--output", str(target))
    assert (code, out, err) == (0, "", "")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["report.json"]  # no temp file left
    document = json.loads(target.read_text(encoding="utf-8"))
    assert document["cases"][0]["findings"][0]["measured"] == 2.4
    _, stdout_json, _ = run_cli("check", "a.yaml", "--format", "json")
    assert target.read_text(encoding="utf-8") == stdout_json  # same bytes either way


def test_output_never_overwrites_an_input_or_writes_into_a_missing_folder(fake_lint, tmp_path):
    cases, _ = fake_lint
    case_file = tmp_path / "case.yaml"
    case_file.write_text("case: original\n", encoding="utf-8")
    cases[str(case_file)] = _case(str(case_file))
    code, _, err = run_cli("check", str(case_file), "--output", str(case_file))
    assert code == 2 and "never overwrites its inputs" in err
    assert case_file.read_text(encoding="utf-8") == "case: original\n"
    (tmp_path / "m.msh").write_text("mesh", encoding="utf-8")
    code, _, err = run_cli("check", str(case_file), "--output", str(tmp_path / "m.msh"))
    assert code == 2 and "mesh file" in err
    assert (tmp_path / "m.msh").read_text(encoding="utf-8") == "mesh"
    code, _, err = run_cli("check", str(case_file), "-o", str(tmp_path / "no" / "r.txt"))
    assert code == 2 and "does not exist" in err


def test_colour_only_on_a_terminal_without_no_color(fake_lint, monkeypatch):
    cases, _ = fake_lint
    cases["a.yaml"] = _case("a.yaml", _finding("warning"))
    assert not ANSI.search(run_cli("check", "a.yaml")[1])           # piped
    assert ANSI.search(run_cli("check", "a.yaml", tty=True)[1])     # terminal
    monkeypatch.setenv("NO_COLOR", "1")
    plain = run_cli("check", "a.yaml", tty=True)[1]
    assert not ANSI.search(plain)
    assert "growth ratio 2.4 is above the warning limit" in plain


# -- rules, explain, plugins, schema, init ---------------------------------------------


def test_rules_lists_limits_with_their_direction(probe_pack):
    code, out, err = run_cli("rules")
    assert (code, err) == (0, "")
    row = next(line for line in out.splitlines() if "probe-spacing" in line)
    assert re.search(r"\|\s*< 3\s*\|\s*< 1\s*\|\s*cells\s*\|\s*Probe spacing", row)


def test_explain_shows_everything_about_a_rule(probe_pack):
    code, out, err = run_cli("explain", "probe-spacing")
    assert (code, err) == (0, "")
    text = " ".join(out.split())
    for expected in ("probe-spacing: Probe spacing in the test pack",
                     "sample the same eddies", "measures cells between neighbouring probes",
                     "warning below 3 cells; error below 1 cells", "lower (limits are minima)",
                     "case data needed the mesh (with volume cells), probes",
                     "fix hint Move the probes apart.",
                     "source common practice", "provided by probe-pack",
                     "| main (main) | the rule's main limits | < 3 | < 1 | cells | common practice",
                     "| min_gap | 0.05 | m | a finite number (in m) | smallest probe gap "
                     "considered |"):
        assert expected in text


def test_explain_unknown_rule_exits_2_with_a_suggestion(probe_pack):
    code, out, err = run_cli("explain", "probe-spaceing")
    assert (code, out) == (2, "")
    assert err == ("caselint: error: unknown rule 'probe-spaceing' (did you mean "
                   "'probe-spacing'?); `caselint rules` lists the rules\n")


def test_plugins_lists_builtins_and_packs_and_leaves_out_blocked_ones(probe_pack):
    code, out, _ = run_cli("plugins")
    assert code == 0
    assert re.search(r"caselint\.report\.json_report\s*\|\s*caselint " + re.escape(__version__)
                     + r"\s*\|\s*reporters: json", out)
    assert re.search(r"probe-pack\s*\|.*\|\s*rules: probe-spacing", out)
    code, out, _ = run_cli("--no-plugin", "probe-pack", "plugins")
    assert code == 0 and "probe-pack |" not in out and "Blocked: probe-pack" in out


def test_schema_prints_the_case_file_schema_as_json():
    code, out, _ = run_cli("schema")
    assert code == 0
    schema = json.loads(out)
    Draft202012Validator.check_schema(schema)


def test_schema_report_prints_the_shipped_report_schema():
    code, out, _ = run_cli("schema", "--report")
    assert code == 0 and out == report_schema_text().rstrip("\n") + "\n"


def test_init_refuses_to_overwrite(tmp_path):
    target = tmp_path / "case.yaml"
    target.write_text("# my case\n", encoding="utf-8")
    code, out, err = run_cli("init", str(tmp_path / "room.msh"), "--output", str(target))
    assert (code, out) == (2, "")
    assert "already exists" in err and "never overwrites" in err
    assert target.read_text(encoding="utf-8") == "# my case\n"
