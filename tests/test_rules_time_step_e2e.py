"""The time-step rules end to end: case file, VTU mesh carrying a velocity field, a rule set
registered by a throwaway plugin, through caselint.api.lint_case, into the json report.

Reference values [computed]: 4 x 3 x 2 hexahedra of 0.125 x 0.25 x 0.5 m carrying
u = (0, 4, 0) m/s as point data; dt = 0.1 s gives Co = 4 * 0.1 / 0.25 = 1.6 in every cell,
above the forward-Euler/upwind limit 1.0 (the reference velocity, 1 m/s along x, would give
0.8 and pass); a 1 Hz frequency of interest gives 10 steps per period, below 20.
"""

from __future__ import annotations

import json
from pathlib import Path

import meshio
import numpy as np
import pytest
from jsonschema import Draft202012Validator

from caselint.api import lint_case
from caselint.engine.hookspecs import hookimpl
from caselint.engine.plugins import get_plugin_manager
from caselint.model import Report
from caselint.report.json_report import render_json, report_schema
from caselint.rules import time_step

CASE = """\
caselint: 1
case: {name: Kiln draught K2, description: Invented drying kiln with a roof fan}
mesh:
  file: kiln.vtu
physics:
  fluid: {kinematic_viscosity: 1.5e-5 m^2/s}
  flow: {kind: internal, velocity: 1 m/s, direction: [1, 0, 0], length: 0.5 m}
  turbulence: {model: k-omega-sst}
time:
  mode: transient
  step: 0.1 s
  end: 10 s
  integration: explicit
  scheme: forward-euler
  frequency: 1 Hz
checks:
  rule_sets: [time-test]
"""

# The entries proposed for rules/general.yaml, verbatim, so the loader is known to take them.
RULE_SET = """\
description: time-step rules under test
rules:
  courant:
    warn: 5                      # grade implicit (the main grade)
    grades:
      implicit.scale-resolving: {warn: 1}
      explicit: {error: null}    # null: the stability limit of the declared scheme
  acoustic-courant: {}
  diffusion-number: {error: 0.5}
  time-resolution:
    warn: 20                     # grade steps: time steps per period (URANS, laminar)
    grades:
      steps.scale-resolving: {warn: 50}
      samples: {warn: 2}
      flow-throughs: {warn: 3}
    bluff_body_strouhal: 0.2
"""


def test_the_rule_set_is_the_one_shipped_in_general():
    from caselint.resources import shipped_dir

    general = (shipped_dir("rules") / "general.yaml").read_text(encoding="utf-8")
    for line in RULE_SET.splitlines()[2:]:
        assert line in general, line


@pytest.fixture
def case_path(tmp_path: Path) -> Path:
    xs, ys, zs = np.arange(5) * 0.125, np.arange(4) * 0.25, np.arange(3) * 0.5
    z, y, x = np.meshgrid(zs, ys, xs, indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    k, j, i = np.meshgrid(np.arange(2), np.arange(3), np.arange(4), indexing="ij")
    base = (i + 5 * (j + 4 * k)).ravel()
    offsets = np.array([0, 1, 6, 5, 20, 21, 26, 25])
    mesh = meshio.Mesh(points, [("hexahedron", base[:, None] + offsets)],
                       point_data={"U": np.tile([0.0, 4.0, 0.0], (len(points), 1))})
    meshio.write(tmp_path / "kiln.vtu", mesh)
    (tmp_path / "time-test.yaml").write_text(RULE_SET, encoding="utf-8")
    path = tmp_path / "case.yaml"
    path.write_text(CASE, encoding="utf-8")
    return path


@pytest.fixture
def pm(case_path: Path):
    rule_set = case_path.parent / "time-test.yaml"

    class RuleSets:
        @hookimpl
        def caselint_register_rule_sets(self):
            return [rule_set]

    pm = get_plugin_manager()
    name = "caselint.rules.time_step"
    added = not pm.has_plugin(name)
    if added:                       # until the lead lists it among the built-in plugins
        pm.register(time_step, name=name)
    pm.register(RuleSets(), name="time-test-sets")
    try:
        yield pm
    finally:
        pm.unregister(name="time-test-sets")
        if added:
            pm.unregister(name=name)


def test_lint_case_grades_the_time_step(case_path, pm):
    report = lint_case(case_path, pm=pm)
    checks = {c.rule: c for c in report.checks}
    courant = checks["courant"]
    assert (courant.outcome, courant.severity) == ("fail", "error")
    assert courant.measured == pytest.approx(1.6, rel=1e-12)
    assert courant.limit == 1.0
    assert (courant.limits.warn, courant.limits.error) == (None, 1.0)
    assert checks["acoustic-courant"].outcome == "skipped"
    assert checks["acoustic-courant"].reason == ("the case does not declare compressible flow "
                                                 "(physics.compressible)")
    diffusion = checks["diffusion-number"]
    assert diffusion.outcome == "pass"
    assert diffusion.measured == pytest.approx(
        1.5e-5 * 0.1 * (0.125**-2 + 0.25**-2 + 0.5**-2), rel=1e-12)
    resolution = checks["time-resolution"]
    assert (resolution.outcome, resolution.severity) == ("fail", "warning")
    assert resolution.measured == pytest.approx(10.0) and resolution.limit == 20.0

    finding = next(f for f in report.findings if f.rule == "courant")
    assert finding.message.startswith("largest cell Courant number is 1.6, above the error "
                                      "limit 1; 99th percentile 1.6; 24 cells of 24 (100 %)")
    assert "the velocity field 'U' (point data of the mesh file, largest 4 m/s)" in finding.message
    assert finding.where.key == "time.step"
    assert finding.where.line == CASE.splitlines().index("  step: 0.1 s") + 1
    assert finding.hint.startswith("Use time.step <= 0.0625 s")
    steps = next(f for f in report.findings if f.rule == "time-resolution")
    assert steps.message.startswith("time steps per period is 10, below the warning limit 20")

    text = render_json(Report(cases=(report,), caselint_version="test"))
    Draft202012Validator(report_schema()).validate(json.loads(text))


def test_steady_case_skips_all_four(case_path, pm):
    case_path.write_text(CASE.replace("mode: transient", "mode: steady"), encoding="utf-8")
    report = lint_case(case_path, pm=pm)
    assert {c.rule: (c.outcome, c.reason) for c in report.checks} == {
        rule: ("skipped", "steady case")
        for rule in ("acoustic-courant", "courant", "diffusion-number", "time-resolution")}
