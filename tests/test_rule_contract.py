"""The rule contract: parameters checked by the engine where they are set, grades named and
overridden by name, needs executed, rule-set files named by path, plugin quantities
converted by the loader, and a run that collects hooks once, parses each case file once
and hashes each mesh once.
"""

from __future__ import annotations

import functools
import json
import textwrap
from pathlib import Path

import numpy as np
import pytest

import caselint.engine.plugins as plugins
from caselint import hookimpl
from caselint.api import lint, lint_case
from caselint.errors import CaseFileError
from caselint.mesh.blocks import structured_hex, write_gmsh22
from caselint.model import (
    CaseSection,
    Grade,
    Limits,
    Measurement,
    Parameter,
    Rule,
    RuleResult,
    Where,
)
from test_cli import run_cli

#: Collected when this module is imported, that is while pytest collects the tests.
AUTOLOAD_OFF_AT_COLLECTION = plugins._autoload_disabled()

SEEN: list[dict] = []


def _check(ctx) -> RuleResult:
    SEEN.append(dict(ctx.params, grades={n: g.limits for n, g in ctx.grades.items()},
                     section=ctx.case.extensions.get("kiln")))
    return RuleResult((Measurement(float(ctx.params["layers"]), where=Where(key="kiln")),
                       Measurement(2.5, grade="drift", label="drift")))


KILN_RULE = Rule(
    id="kiln-probe", title="Kiln probe (test rule)", unit="cells",
    rationale="A rule of an invented kiln maker's pack, with a parameter of every kind.",
    source="test", hint="Change the kiln.", limits=Limits(warn=5, error=2), worse="lower",
    check=_check, needs=("kiln.airflow", "mesh"),
    grades=(Grade("drift", warn=2.0, error=4.0, unit="mm", worse="higher",
                  description="belt drift", source="invented"),),
    parameters=(
        Parameter("gap", 0.05, "m", "probe gap", exclusive_minimum=0),
        Parameter("layers", 3, "cells", "probe layers", kind="integer", minimum=1, maximum=50),
        Parameter("strict", False, "", "strict mode"),
        Parameter("mode", "fast", "", "how to probe", choices=("fast", "exact")),
        Parameter("cap", None, "m", "an optional cap"),
    ),
)
KILN_SECTION = CaseSection(
    "kiln", {"type": "object", "additionalProperties": False,
             "properties": {"airflow": {"type": ["number", "string"]},
                            "belt": {"type": "object", "additionalProperties": False,
                                     "properties": {"speed": {"type": ["number", "string"]}}}}},
    quantities={"airflow": "volume_flow", "belt.speed": "velocity"})


class _KilnPack:
    calls = 0

    @hookimpl
    def caselint_register_rules(self):
        _KilnPack.calls += 1
        return [KILN_RULE]

    @hookimpl
    def caselint_register_case_sections(self):
        return [KILN_SECTION]


@pytest.fixture
def kiln_pack(monkeypatch):
    """Every plugin manager built in the test also holds the pack ``kiln``; the fixture's
    value builds one."""
    real = plugins.get_plugin_manager

    def with_kiln(**kwargs):
        pm = real(**kwargs)
        if not pm.is_blocked("kiln"):
            pm.register(_KilnPack(), name="kiln")
        return pm

    monkeypatch.setattr(plugins, "get_plugin_manager", with_kiln)
    _KilnPack.calls = 0
    SEEN.clear()
    return with_kiln


CASE = """\
caselint: 1
case: {name: Invented kiln K7}
mesh:
  file: kiln.msh
  boundaries: {xmin: inlet, xmax: outlet, ymin: wall, ymax: wall, zmin: wall, zmax: wall}
kiln:
  airflow: 1800 m^3/h
  belt: {speed: 36 m/min}
checks:
  rule_sets: [./company/kiln-set.yaml]
"""

RULE_SET = """\
description: the kiln maker's set, kept beside the case
extends: [general, ./strict.yaml]
rules:
  kiln-probe:
    warn: 3
    gap: 0.1
    grades: {drift: {error: 3}}
"""

STRICT = """\
rules:
  growth-ratio: {warn: 1.2}
"""


@pytest.fixture
def kiln(tmp_path: Path) -> Path:
    write_gmsh22(structured_hex(*(np.linspace(0, 0.4, 5),) * 3), tmp_path / "kiln.msh")
    (tmp_path / "company").mkdir()
    (tmp_path / "company" / "kiln-set.yaml").write_text(RULE_SET, encoding="utf-8")
    (tmp_path / "company" / "strict.yaml").write_text(STRICT, encoding="utf-8")
    case = tmp_path / "case.yaml"
    case.write_text(CASE, encoding="utf-8")
    return case


def _set_entry(kiln: Path, line: str) -> Path:
    """The kiln set with ``line`` (on line 5) as the whole kiln-probe entry."""
    rule_set = kiln.parent / "company" / "kiln-set.yaml"
    entry = RULE_SET[RULE_SET.index("    warn: 3"):]
    rule_set.write_text(RULE_SET.replace(entry, f"    {line}\n"), encoding="utf-8")
    return rule_set


# -- the collection-time guard -----------------------------------------------------------------


def test_installed_packs_are_off_before_tests_are_collected():
    assert AUTOLOAD_OFF_AT_COLLECTION


# -- parameters and grades ---------------------------------------------------------------------


def test_a_rule_set_file_by_path_applies_its_grades_and_parameters(kiln_pack, kiln):
    report = lint_case(kiln, pm=kiln_pack())
    (seen,) = SEEN
    assert (seen["gap"], seen["layers"], seen["strict"], seen["mode"], seen["cap"]) == (
        0.1, 3, False, "fast", None)
    assert seen["grades"] == {"main": Limits(warn=3, error=2), "drift": Limits(warn=2, error=3)}
    checks = {c.rule: c for c in report.checks}
    # the drift of 2.5 mm is past the set's warning limit 2 (its error limit is 3 now)
    assert (checks["kiln-probe"].outcome, checks["kiln-probe"].severity) == ("fail", "warning")
    (drift,) = [f for f in report.findings if f.rule == "kiln-probe"]
    assert drift.message == "drift is 2.5 mm, above the warning limit 2 mm"
    assert checks["growth-ratio"].limits.warn == 1.2            # from the file it extends
    assert report.rule_sets == ("general", "./strict.yaml", "./company/kiln-set.yaml")


def test_the_case_file_overrides_a_grade_by_name(kiln_pack, kiln):
    kiln.write_text(CASE + "  rules: {kiln-probe: {grades: {drift: {warn: 3}}, mode: exact}}\n",
                    encoding="utf-8")
    report = lint_case(kiln, pm=kiln_pack())
    assert SEEN[0]["grades"]["drift"] == Limits(warn=3, error=3) and SEEN[0]["mode"] == "exact"
    assert {c.rule: c.outcome for c in report.checks}["kiln-probe"] == "pass"


@pytest.mark.parametrize("line, key, expected", [
    ("gap: 0", "gap", "parameter 'gap' of rule 'kiln-probe' must be a finite number, above 0 "
                      "(in m), got 0"),
    ("gap: .inf", "gap", "must be a finite number, above 0 (in m), got inf"),
    ("gap: null", "gap", "must be a finite number, above 0 (in m), got None"),
    ("layers: 2.5", "layers", "must be a whole number, at least 1 and at most 50 (in cells)"),
    ("layers: 51", "layers", "must be a whole number, at least 1 and at most 50 (in cells)"),
    ("strict: yes please", "strict", "parameter 'strict' of rule 'kiln-probe' must be true or "
                                     "false, got 'yes please'"),
    ("mode: quick", "mode", "must be one of fast, exact, got 'quick'"),
    ("cap: many", "cap", "must be a finite number (in m) or null, got 'many'"),
    ("warn: lots", "warn", "warn of rule 'kiln-probe' must be a finite number in cells or null"),
    ("grades: {drfit: {warn: 1}}", "grades.drfit",
     "rule 'kiln-probe' has no grade 'drfit' (did you mean 'drift'?)"),
    ("grades: {drift: {beyond: 1}}", "grades.drift.beyond",
     "grade 'drift' of rule 'kiln-probe' has no setting 'beyond'; it takes warn, error"),
    ("lenght: 3", "lenght", "rule 'kiln-probe' has no setting 'lenght'"),
])
def test_a_bad_value_in_a_rule_set_file_names_that_file_line_and_key(kiln_pack, kiln, line, key,
                                                                   expected):
    rule_set = _set_entry(kiln, line)
    code, out, err = run_cli("check", str(kiln))
    assert (code, out) == (2, "")
    assert err.startswith(f"caselint: error: {rule_set.resolve()}:5: "
                          f"[rules.kiln-probe.{key}] "), err
    assert expected in err


@pytest.mark.parametrize("entry, key, expected", [
    ("{layers: 0}", "layers", "must be a whole number, at least 1 and at most 50 (in cells), "
                              "got 0"),
    ("{strict: 1}", "strict", "must be true or false, got 1"),
    ("{mode: 3}", "mode", "must be one of fast, exact, got 3"),
    ("{gap: -1}", "gap", "must be a finite number, above 0 (in m), got -1"),
    ("{grades: {drift: {error: high}}}", "grades.drift.error",    # the schema's word
     "expected a number or null, got 'high'"),
    ("{grades: {drift: {beyond: 2}}}", "grades.drift.beyond",
     "grade 'drift' of rule 'kiln-probe' has no setting 'beyond'; it takes warn, error"),
])
def test_a_bad_value_in_the_case_file_names_the_case_file(kiln_pack, kiln, entry, key,
                                                          expected):
    kiln.write_text(CASE + f"  rules:\n    kiln-probe: {entry}\n", encoding="utf-8")
    code, out, err = run_cli("check", str(kiln))
    assert (code, out) == (2, "")
    assert err.startswith(f"caselint: error: {kiln}:12:"), err
    assert f" [checks.rules.kiln-probe.{key}] " in err and expected in err


def test_a_parameter_that_stops_a_rule_is_an_error_not_a_silent_skip(tmp_path):
    # gap-cells: {max_steps: 0} used to skip the rule; in CI the check just stopped running
    write_gmsh22(structured_hex(*(np.linspace(0, 0.4, 5),) * 3), tmp_path / "box.msh")
    case = tmp_path / "case.yaml"
    case.write_text(CASE.replace("kiln.msh", "box.msh").split("kiln:")[0]
                    + "checks:\n  rules: {gap-cells: {max_steps: 0}}\n", encoding="utf-8")
    code, _, err = run_cli("check", str(case))
    assert code == 2 and "[checks.rules.gap-cells.max_steps] parameter 'max_steps'" in err


def test_explain_lists_every_grade_with_its_default_and_source(kiln_pack, monkeypatch):
    monkeypatch.setenv("COLUMNS", "250")
    code, out, _ = run_cli("explain", "kiln-probe")
    text = " ".join(out.split())
    assert code == 0
    assert "| main (main) | the rule's main limits | < 5 | < 2 | cells | test |" in text
    assert "| drift | belt drift | > 2 | > 4 | mm | invented |" in text
    assert "| layers | 3 | cells | a whole number, at least 1 and at most 50 (in cells) |" in text


# -- needs, quantities -------------------------------------------------------------------------


def test_plugin_quantities_reach_the_rule_in_si(kiln_pack, kiln):
    lint_case(kiln, pm=kiln_pack())
    # 1800 m^3/h = 0.5 m^3/s, 36 m/min = 0.6 m/s [computed]
    assert SEEN[0]["section"] == {"airflow": pytest.approx(0.5), "belt": {"speed":
                                                                          pytest.approx(0.6)}}


def test_a_wrong_unit_in_a_plugin_section_is_a_case_file_error(kiln_pack, kiln):
    kiln.write_text(CASE.replace("36 m/min", "36 kg"), encoding="utf-8")
    with pytest.raises(CaseFileError, match="a velocity") as err:
        lint_case(kiln, pm=kiln_pack())
    assert (err.value.line, err.value.key) == (8, "kiln.belt.speed")


def test_a_missing_need_skips_the_rule_with_the_uniform_reason(kiln_pack, kiln):
    kiln.write_text(CASE.replace("  airflow: 1800 m^3/h\n", ""), encoding="utf-8")
    report = lint_case(kiln, pm=kiln_pack())
    probe = {c.rule: c for c in report.checks}["kiln-probe"]
    assert (probe.outcome, probe.reason) == ("skipped", "the case file gives no kiln.airflow")
    assert SEEN == []                                            # the rule was never called


# -- rule-set files by path ----------------------------------------------------------------------


def test_rule_set_paths_are_relative_to_the_case_and_listed_in_the_report(kiln_pack, kiln):
    code, out, _ = run_cli("check", str(kiln), "--format", "json")
    assert code == 1                                  # gap-cells: 4 cells across the kiln
    files = {f["name"]: f for f in json.loads(out)["rule_set_files"]}
    assert files["./company/kiln-set.yaml"]["provider"] == "file"
    assert files["general"]["provider"] == "caselint"
    assert set(files) == {"general", "./strict.yaml", "./company/kiln-set.yaml"}


def test_a_rule_set_path_on_the_command_line_is_relative_to_the_current_folder(
        kiln_pack, kiln, monkeypatch):
    monkeypatch.chdir(kiln.parent / "company")
    report = lint([kiln], rule_sets=["kiln-set.yaml"], pm=kiln_pack())
    assert report.cases[0].rule_sets == ("general", "./strict.yaml", "kiln-set.yaml")
    code, _, err = run_cli("check", str(kiln), "--rule-set", "missing.yaml")
    assert code == 2
    assert err == (f"caselint: error: <command line>: [--rule-set] rule-set file not found: "
                   f"{(kiln.parent / 'company' / 'missing.yaml').resolve()}\n")


def test_errors_in_a_rule_set_file_name_that_file(kiln_pack, kiln):
    rule_set = kiln.parent / "company" / "kiln-set.yaml"
    rule_set.write_text(RULE_SET + "  grwoth-ratio: {warn: 1.1}\n", encoding="utf-8")
    with pytest.raises(CaseFileError, match="did you mean 'growth-ratio'") as err:
        lint_case(kiln, pm=kiln_pack())
    assert (err.value.file, err.value.line) == (str(rule_set.resolve()), 8)
    kiln.write_text(CASE.replace("./company/kiln-set.yaml", "./company/nothere.yaml"),
                    encoding="utf-8")
    with pytest.raises(CaseFileError, match="rule-set file not found") as err:
        lint_case(kiln, pm=kiln_pack())
    assert (err.value.file, err.value.line, err.value.key) == (str(kiln), 10, "checks.rule_sets")


def test_a_rule_set_file_may_declare_conditions(kiln_pack, kiln):
    rule_set = kiln.parent / "company" / "kiln-set.yaml"
    rule_set.write_text(RULE_SET + textwrap.dedent("""\
        conditions:
          - id: kiln-named
            title: Kilns are named K followed by a number
            severity: warning
            message: the case name should start with Invented kiln K
            hint: Rename the case.
            source: invented
            if: {}
            then: {properties: {case: {properties: {name: {pattern: "^Invented kiln K[0-9]+$"}}}}}
        """), encoding="utf-8")
    report = lint_case(kiln, pm=kiln_pack())
    assert {c.rule: c.outcome for c in report.checks}["kiln-named"] == "pass"
    assert "kiln-named" in {r.id for r in lint([kiln], pm=kiln_pack()).rules}


# -- names of our own ----------------------------------------------------------------------------


@pytest.mark.parametrize("old, new, key, line", [
    ("xmin: inlet", "xmin: opening", "mesh.boundaries.xmin", 5),
    ("xmin: inlet", "xmin: {type: opening}", "mesh.boundaries.xmin.type", 5),
])
def test_the_old_role_name_names_the_new_one(kiln_pack, kiln, old, new, key, line):
    kiln.write_text(CASE.replace(old, new), encoding="utf-8")
    with pytest.raises(CaseFileError, match="the boundary role 'opening' is now called 'open'") \
            as err:
        lint_case(kiln, pm=kiln_pack())
    assert (err.value.key, err.value.line) == (key, line)


def test_the_old_model_name_names_the_new_one_and_new_names_load(kiln_pack, kiln):
    physics = "physics:\n  method: {method}\n  turbulence: {{model: {model}}}\n"
    kiln.write_text(CASE + physics.format(method="finite-volume", model="transition-sst"),
                    encoding="utf-8")
    code, _, err = run_cli("check", str(kiln))
    assert code == 2 and "[physics.turbulence.model] the turbulence model 'transition-sst' " \
                         "is now called 'gamma-retheta-sst'" in err
    from caselint.api import load_case

    for method, stored in (("finite-volume", "cell-centred"), ("vertex-centred",
                                                               "vertex-centred")):
        kiln.write_text(CASE.replace("xmin: inlet", "xmin: slip-wall")
                        + physics.format(method=method, model="gamma-retheta-sst"),
                        encoding="utf-8")
        case = load_case(kiln, kiln_pack())
        assert case.physics.method == stored
        assert case.mesh.boundaries["xmin"] == "slip-wall"


# -- one pass over everything --------------------------------------------------------------------


def test_one_run_collects_hooks_once_parses_each_case_once_and_hashes_each_mesh_once(
        kiln_pack, kiln, monkeypatch):
    import caselint.files as files
    import caselint.manifest.loader as loader
    from caselint.pipeline import CheckOptions, run_check

    second = kiln.parent / "second.caselint.yaml"
    second.write_text(kiln.read_text(), encoding="utf-8")
    parsed: list[str] = []
    real_load = loader.load_case
    monkeypatch.setattr(loader, "load_case",
                        lambda path, **kw: parsed.append(Path(path).name) or real_load(path, **kw))
    hashed: list[str] = []
    real_hash = files._sha256.__wrapped__
    monkeypatch.setattr(files, "_sha256", functools.lru_cache(maxsize=256)(
        lambda path, *key: hashed.append(Path(path).name) or real_hash(path, *key)))
    run = run_check(CheckOptions(paths=(str(kiln), str(second)), formats=("json",)))
    assert _KilnPack.calls == 1                                   # one registry for the run
    assert sorted(parsed) == ["case.yaml", "second.caselint.yaml"]
    # each file once: the mesh for the cache key and both reports, each case and set file
    assert sorted(hashed) == ["case.yaml", "general.yaml", "kiln-set.yaml", "kiln.msh",
                              "second.caselint.yaml", "strict.yaml"]
    document = json.loads(run.stdout[0])
    assert [c["mesh_sha256"] for c in document["cases"]][0] == \
        [c["mesh_sha256"] for c in document["cases"]][1]
    assert run.messages == [] and not run.bad_input


def test_gap_cells_and_mesh_scale_share_one_ray_cast(tmp_path, monkeypatch):
    import caselint.mesh.rays as rays

    write_gmsh22(structured_hex(*(np.linspace(0, 0.4, 5),) * 3), tmp_path / "box.msh")
    case = tmp_path / "case.yaml"
    case.write_text(CASE.replace("kiln.msh", "box.msh").split("kiln:")[0]
                    + "physics: {flow: {length: 0.4 m}}\n"
                    "checks:\n  rules: {gap-cells: {max_steps: 20000}}\n", encoding="utf-8")
    marches = []
    real = rays.march
    monkeypatch.setattr(rays, "march", lambda *a, **kw: marches.append(a[-1]) or real(*a, **kw))
    report = lint_case(case)
    checks = {c.rule: c for c in report.checks}
    assert checks["gap-cells"].measured == 4 and checks["mesh-scale"].outcome == "pass"
    assert marches == [20000]                                     # one march for both rules
