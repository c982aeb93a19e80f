"""Fuzzing the whole ``caselint check`` path: exit 0, 1 or 2, never 3; strict JSON.

Each generated case file (tests/case_fuzzing.py) names a real 12-cell hexahedral block
(and its 2x refinement for grid studies), so the valid ones run every rule of the
general set. The property (``fuzz_properties.check_cli``): exit 0/1 prints strict JSON
(NaN and infinity refused) valid against the report schema, with no rule crashing and
nothing on stderr; exit 2 prints one ``caselint: error: FILE:LINE: ...`` message whose
control characters are escaped. The examples are inputs the fuzzing found broken.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import HealthCheck, example, given, settings
from jsonschema import Draft202012Validator

import case_fuzzing as cf
import fuzz_properties as fp
from caselint.report.json_report import report_schema
from test_cli import run_cli

VALID = ("caselint: 1\ncase: {name: Invented duct}\nmesh:\n  file: m.msh\n"
         "  boundaries: {inlet: inlet, outlet: outlet, walls: wall}\n")


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("fuzz-check")
    cf.write_meshes(path)
    return path


@pytest.fixture(scope="module")
def validator() -> Draft202012Validator:
    return Draft202012Validator(report_schema())


@settings(max_examples=150, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                 HealthCheck.function_scoped_fixture])
@given(text=cf.case_texts)
# growth-ratio's histogram had one 0.05-wide bin per step up to 1.5x the limit: 16 million
# bins (and a 40 s JSON dump) for warn: 539964
@example(text=VALID + "checks: {rules: {growth-ratio: {warn: 539964.0}}}\n")
@example(text=VALID + "checks: {rules: {growth-ratio: {warn: 1.7e308}}}\n")
# a turbulent model at Re_x < 2.1: Schlichting's formula took a negative base to -2.3 (NaN)
@example(text=VALID + "physics: {fluid: {density: 1e-9, viscosity: 423.6}, flow: {kind: "
                      "external, velocity: 3e5, length: 2e4, direction: [0, 0, -1]}, "
                      "turbulence: {model: les, wall_treatment: blended}}\n")
# internal turbulent flow at Re ~ 0.6: Colebrook's Newton iteration left x > 0 (NaN)
@example(text=VALID + "physics: {fluid: {density: 8.6e5, viscosity: 9.26e4}, flow: {kind: "
                      "internal, velocity: 1.2e-7, length: 5.5e5, direction: [0, 0, 1]}, "
                      "turbulence: {model: k-epsilon, wall_treatment: resolved}}\n")
# a key holding a newline and an escape character, echoed into the error message
@example(text=VALID + 'physics: {"\\n\\e[2J": 1}\n')
# a limit as a whole number of 400 digits (math.isfinite raised OverflowError: exit 3)
@example(text=VALID + "checks: {rules: {growth-ratio: {warn: " + "9" * 400 + "}}}\n")
def test_check_ends_in_a_report_or_a_located_error(folder, validator, text):
    path = folder / "case.yaml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    fp.check_cli(path, run_cli, validator)


def test_the_generated_cases_reach_the_rules(folder, validator):
    """The strategy is not all noise: a known tame case runs and grades every rule."""
    path = folder / "tame.yaml"
    path.write_text(VALID + "physics: {fluid: {density: 1.2, viscosity: 1.8e-5}, flow: {kind: "
                            "internal, velocity: 2, direction: [1, 0, 0], length: 0.2}, "
                            "turbulence: {model: k-omega-sst, wall_treatment: resolved}}\n"
                            "time: {mode: transient, step: 1e-3, end: 1}\n", encoding="utf-8")
    assert fp.check_cli(path, run_cli, validator) == 1      # the block has a growth jump
