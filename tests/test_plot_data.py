"""Plot data: rules attach distributions, the engine keeps them, the JSON report carries them.

The mesh histograms are checked on axis-aligned hex blocks whose answers are known by
hand: every face is orthogonal (0 deg), and the volume ratio across a face is the ratio
of the x spacings of the two cells (y and z spacings are equal).
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np
import pytest
from jsonschema import Draft202012Validator
from review_samples import RULE_SET, TEST_SET, review_formats, sample_report  # noqa: F401
from test_cli import run_cli
from test_cli_e2e import write_block_mesh, write_case

from caselint.api import build_report, lint_case
from caselint.engine.plugins import get_plugin_manager
from caselint.engine.registry import collect_rule_set_files
from caselint.engine.rulesets import ActiveRule
from caselint.engine.runner import run_case
from caselint.manifest.case import Case, CaseInfo, MeshSpec
from caselint.model import Limits, Measurement, PlotData, PlotSeries, Rule, RuleResult
from caselint.report.json_report import render_json, report_schema


def test_histogram_counts_values_and_what_falls_outside():
    values = [0.5, 1.0, 1.5, 2.5, 5.0, -1.0, float("nan"), 3.0]
    series = PlotSeries.histogram(values, [0.0, 1.0, 2.0, 3.0], label="walls")
    # numpy's convention: bins [0,1) [1,2) [2,3], the last one closed; NaN is dropped
    assert series.y == (1.0, 2.0, 2.0)
    assert (series.below, series.above, series.label) == (1, 1, "walls")
    assert series.y == tuple(float(c) for c in np.histogram([0.5, 1, 1.5, 2.5, 3], [0, 1, 2, 3])[0])


@pytest.mark.parametrize("kwargs, message", [
    ({"series": ()}, "has no series"),
    ({"series": (PlotSeries((0.0, 1.0), (1.0, 2.0)),)}, "n \\+ 1 increasing edges"),
    ({"series": (PlotSeries((1.0, 0.0), (1.0,)),)}, "n \\+ 1 increasing edges"),
    ({"series": (PlotSeries((0.0, 1.0), (1.0,)),), "kind": "pie"}, "kind"),
    ({"series": (PlotSeries((0.0, 1.0), (1.0,)),), "kind": "line"}, "1 y values"),
])
def test_plot_data_refuses_inconsistent_series(kwargs, message):
    with pytest.raises(ValueError, match=message):
        PlotData(**{"title": "t", "x_label": "x", "y_label": "y", **kwargs})
    with pytest.raises(ValueError, match="non-finite"):
        PlotSeries((0.0, float("inf")), (1.0,))


def _rule(rule_id: str, plots) -> Rule:
    def check(ctx):
        return RuleResult(measurements=(Measurement(1.0),), plots=plots)

    return Rule(id=rule_id, title="Invented test rule", rationale="For the tests only.",
                source="common practice", unit="", limits=Limits(2.0, 3.0), hint="None.",
                check=check, needs=())


def test_engine_stamps_plots_with_the_rule_and_a_bad_plot_is_a_rule_fault(tmp_path):
    plot = PlotData("Test histogram", "x", "count", (PlotSeries((0.0, 1.0), (4.0,)),))
    good, bad = _rule("plotting-rule", (plot,)), _rule("bad-plot", ("not a plot",))
    case = Case(path=tmp_path / "case.yaml", version=1, info=CaseInfo("t"),
                mesh=MeshSpec(file=tmp_path / "m.msh"))
    report = run_case(case, (ActiveRule(good, good.limits, {}), ActiveRule(bad, bad.limits, {})),
                      lambda: None)
    assert [(p.rule, p.title) for p in report.plots] == [("plotting-rule", "Test histogram")]
    outcomes = {c.rule: (c.outcome, c.reason) for c in report.checks}
    assert outcomes["plotting-rule"][0] == "pass"
    assert outcomes["bad-plot"][0] == "error" and "not PlotData" in outcomes["bad-plot"][1]


def _plots(case: Path) -> dict[str, PlotData]:
    return {p.rule: p for p in lint_case(case).plots if p.kind != "cut"}


def test_mesh_quality_histograms_on_a_block_with_a_size_jump(tmp_path):
    # 3 x 2 x 2 hexes, x spacings 0.1, 0.1, 0.4 m. Internal faces: 2 x-planes of 4 faces,
    # 1 y-plane and 1 z-plane of 6: 20. Ratios: 4 faces at x = 0.2 m see 0.4/0.1 = 4,
    # the other 16 join equal cells (1.0). Boundary faces: 2*4 + 2*6 + 2*6 = 32, so 52 faces.
    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    plots = _plots(write_case(tmp_path, mesh))
    growth = plots["growth-ratio"]
    (series,) = growth.series
    edges, counts = np.array(series.x), np.array(series.y)
    # bins across the data 1.0 .. 4.0: the widest round width giving ten or more is 0.25
    assert edges == pytest.approx(np.arange(1.0, 4.1, 0.25), abs=1e-12) and len(counts) == 12
    assert counts.sum() == 20 and (series.below, series.above) == (0, 0)
    assert counts[0] == 16
    assert counts[-1] == 4                       # 4 up to round-off: the last, closed bin
    assert growth.limits == Limits(2.0, 3.0) and growth.kind == "histogram"
    # every angle is 0 up to round-off: no spread to resolve, one bin of the 0.5 deg resolution
    (angles,) = plots["non-orthogonality"].series
    assert angles.x == (0.0, 0.5) and angles.y == (20.0,) and angles.above == 0   # internal


def test_json_report_carries_plots_and_review_fields_and_validates():
    document = json.loads(render_json(sample_report()))
    assert list(Draft202012Validator(report_schema()).iter_errors(document)) == []
    hood = document["cases"][0]
    assert [p["rule"] for p in hood["plots"]] == ["layer-profile", "non-orthogonality"]
    histogram = hood["plots"][1]
    assert histogram["series"][0] == {"label": "", "x": [0.0, 30.0, 60.0, 90.0],
                                      "y": [900.0, 80.0, 14.0], "below": 0, "above": 2}
    assert histogram["limits"] == {"warning": 70.0, "error": 85.0}
    assert hood["description"] == "Smoke capture of the kiln hood at full draught"
    assert hood["case_sha256"] == "a" * 64 and hood["mesh_sha256"] == "b" * 64
    assert hood["checklist"][0] == {"id": "fluid-data", "rule_set": "general",
                                    "text": "Fluid properties checked against the project's "
                                            "data source"}
    assert hood["waivers"][1] == {"rule": "skewness", "reason": "legacy block at the duct bend",
                                  "approved_by": "P. Anand", "expires": "2020-06-30",
                                  "expired": True, "used": False, "boundary": "duct-bend",
                                  "line": 45}
    assert hood["review"] == {"prepared_by": "I. Marchetti",
                              "reviewers": ["T. Oyelaran", "K. Brandvold"],
                              "approved_by": "S. Okafor"}
    assert hood["baselined"] == 0 and document["baseline"] == ""
    assert [r["id"] for r in document["rules"]] == ["growth-ratio", "inverted-cells",
                                                    "non-orthogonality"]
    assert document["rule_set_files"] == [{"name": "general", "provider": "caselint",
                                           "version": "0.1.0", "sha256": "c" * 64}]


def test_json_report_of_a_real_case_has_hashes_and_rule_set_files(tmp_path,
                                                                  review_formats):  # noqa: F811
    mesh = write_block_mesh(tmp_path / "uniform.msh", xs=[0.0, 0.1, 0.2, 0.3])
    case = write_case(tmp_path, mesh)
    code, out, err = run_cli("check", *TEST_SET, str(case), "--format", "json")
    assert code == 0, err
    document = json.loads(out)
    assert list(Draft202012Validator(report_schema()).iter_errors(document)) == []
    entry = document["cases"][0]
    assert entry["case_sha256"] == hashlib.sha256(case.read_bytes()).hexdigest()
    assert entry["mesh_sha256"] == hashlib.sha256(mesh.read_bytes()).hexdigest()
    (used,) = document["rule_set_files"]
    # registered (by the test fixture) as a built-in plugin: caselint provides it
    assert (used["name"], used["provider"]) == ("review-test", "caselint")
    assert used["sha256"] == hashlib.sha256(RULE_SET.read_bytes()).hexdigest()
    # the shipped general set (with every rule set reached through `extends`) likewise
    pm = get_plugin_manager()
    report = build_report((lint_case(case, pm=pm),), pm)
    files = collect_rule_set_files(pm)
    assert [(i.name, i.sha256) for i in report.rule_set_info] == [
        (name, hashlib.sha256(files[name].read_bytes()).hexdigest())
        for name in sorted(report.cases[0].rule_sets)]
    assert "general" in report.cases[0].rule_sets
    assert {r["id"] for r in document["rules"]} == {c["rule"] for c in entry["checks"]}
