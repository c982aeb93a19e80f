"""Grading by extent and place: one bad spot far from walls and regions passes the share
grade and is reported; the same spot in a region of interest or near a wall fails.

The mesh is a 16 x 16 x 16 block of unit cubes with a no-slip floor (z = 0) and one node
moved 0.5 along x. Moving one corner of a unit trilinear hexahedron by d along an edge
changes its volume by d/4 [computed], so the four cells behind the node hold 1.125 m^3 and
the four ahead 0.875 m^3: the four faces between them have a volume ratio of 9/7 = 1.2857,
the only faces above the case's limit of 1.25 (rule volume-ratio, tightened by the case).
Expected shares below are counted here with numpy from the per-face values and places,
independently of the engine's grading code.
"""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import numpy as np
import pytest
from jsonschema import Draft202012Validator

from caselint.api import lint_case
from caselint.engine.extent import distribution, expand
from caselint.engine.entries import resolve
from caselint.mesh import mesh_from_meshio, quality
from caselint.mesh.blocks import structured_hex, write_gmsh22
from caselint.model import PLACES, Extent, Grade, Limits, Measurement, Rule, RuleResult, Where
from caselint.report.json_report import report_schema
from test_cli import run_cli

N = 16
ROLES = "{zmin: wall, zmax: open, xmin: inlet, xmax: outlet, ymin: symmetry, ymax: symmetry}"


def block_with_a_moved_node(height: float) -> object:
    """The block with the node (8, 8, height) moved by (0.5, 0, 0)."""
    m = structured_hex(*(np.arange(N + 1.0),) * 3)
    node = np.flatnonzero(np.all(m.points == (8.0, 8.0, height), axis=1))
    assert node.size == 1
    m.points[node[0]] += (0.5, 0.0, 0.0)
    return m


def write(folder: Path, height: float, extra: str = "", growth: str = "warn: 1.25") -> Path:
    """The block and a case file for it; ``growth`` is the volume-ratio entry's settings."""
    write_gmsh22(block_with_a_moved_node(height), folder / "block.msh")
    case = folder / "case.yaml"
    case.write_text(textwrap.dedent(f"""\
        caselint: 1
        case: {{name: Invented drying tunnel section}}
        mesh:
          file: block.msh
          boundaries: {ROLES}
        checks:
          rule_sets: [general]
          rules: {{volume-ratio: {{{growth}}}}}
        """) + textwrap.dedent(extra), encoding="utf-8")
    return case


@pytest.fixture(scope="module")
def far(tmp_path_factory) -> Path:
    return write(tmp_path_factory.mktemp("far"), 13.0)          # 13 layers above the floor


def growth_check(report):
    (check,) = [c for c in report.checks if c.rule == "volume-ratio"]
    return check


def test_the_bad_spot_is_what_the_metric_says():
    mesh = mesh_from_meshio(block_with_a_moved_node(13.0))
    inner = mesh.neighbour >= 0
    growth = quality.volume_ratio(mesh)[inner]
    assert growth.max() == pytest.approx(9.0 / 7.0, rel=1e-12)
    assert int(np.count_nonzero(growth > 1.25)) == 4 and inner.sum() == 11520
    bad = (mesh.cell_volumes <= 0) | (quality.min_corner_jacobian(mesh) < 0)
    assert not bad.any()                                     # a bad spot, not a broken one


def test_far_from_walls_and_regions_it_passes_the_share_grade_and_is_reported(far):
    report = lint_case(far)
    check = growth_check(report)
    assert check.outcome == "pass"
    assert check.measured == pytest.approx(9.0 / 7.0, rel=1e-9)  # settled to 10 digits   # the worst is still shown
    assert not [f for f in report.findings if f.rule == "volume-ratio"]
    (dist,) = check.distributions
    assert dist.entity == "face" and dist.count == 11520 and dist.worst_place == "elsewhere"
    places = {p.place: p for p in dist.places}
    assert set(places) == {"near-wall", "elsewhere"}
    # the 10 layers above the floor: their 10 x 16 x 16 cells own every face beside them
    mesh = mesh_from_meshio(block_with_a_moved_node(13.0))
    inner = np.flatnonzero(mesh.neighbour >= 0)
    z_top = np.maximum(mesh.cell_centroids[mesh.owner[inner], 2],
                       mesh.cell_centroids[mesh.neighbour[inner], 2])
    z_low = np.minimum(mesh.cell_centroids[mesh.owner[inner], 2],
                       mesh.cell_centroids[mesh.neighbour[inner], 2])
    near = z_low < 10.0                       # a face is near the wall if either cell is
    assert places["near-wall"].count == int(near.sum())
    assert places["elsewhere"].count == int((~near).sum())
    assert z_top.max() > 10.0
    growth = quality.volume_ratio(mesh)[inner]
    share = 100.0 * np.count_nonzero(growth[~near] > 1.25) / np.count_nonzero(~near)
    assert dict(places["elsewhere"].beyond)[1.25] == pytest.approx(share, rel=1e-5)
    assert share < 1.0                                            # below elsewhere-share's warn
    assert places["near-wall"].worst == pytest.approx(1.0, abs=1e-12)


def test_the_distribution_is_in_the_json_report(far):
    code, out, err = run_cli("check", str(far), "--format", "json")
    assert code == 0, err
    document = json.loads(out)
    assert list(Draft202012Validator(report_schema()).iter_errors(document)) == []
    (check,) = [c for c in document["cases"][0]["checks"] if c["rule"] == "volume-ratio"]
    (dist,) = check["distributions"]
    assert dist["worst_place"] == "elsewhere" and dist["entity"] == "face"
    percent = {p["percent"]: p["value"] for p in dist["percentiles"]}
    assert percent[100.0] == pytest.approx(9.0 / 7.0) and percent[50.0] == pytest.approx(1.0)
    assert [b["limit"] for b in dist["beyond"]] == [1.25, 100.0]    # the strict grade's limits
    assert dist["beyond"][0]["percent"] == pytest.approx(100.0 * 4 / 11520, rel=1e-5)
    plain = [c for c in document["cases"][0]["checks"] if c["rule"] == "inverted-cells"]
    assert "distributions" not in plain[0]                          # only place-graded rules


def test_the_same_spot_in_a_region_of_interest_fails(tmp_path):
    case = write(tmp_path, 13.0, """\
        regions:
          - {name: dryer-outlet, box: {min: [6.5, 6.5, 11.5], max: [10.5, 10.5, 14.5]}}
        """)
    report = lint_case(case)
    check = growth_check(report)
    assert (check.outcome, check.severity) == ("fail", "warning")
    assert check.measured == pytest.approx(9.0 / 7.0, rel=1e-9)  # settled to 10 digits and check.limit == 1.25
    (finding,) = [f for f in report.findings if f.rule == "volume-ratio"]
    assert finding.where.place == "near-wall+region"
    assert "in regions of interest and near no-slip walls is 1.286" in finding.message
    (dist,) = check.distributions
    assert dist.worst_place == "region"


def test_the_same_spot_near_the_wall_fails_and_the_band_is_a_setting(tmp_path):
    for folder in ("near", "wide", "none"):
        (tmp_path / folder).mkdir()
    near = write(tmp_path / "near", 3.0)                          # 3 layers above the floor
    assert growth_check(lint_case(near)).severity == "warning"
    wide = write(tmp_path / "wide", 13.0, growth="warn: 1.25, near_wall_layers: 14")
    check = growth_check(lint_case(wide))                         # now within 14 layers
    assert check.severity == "warning" and check.distributions[0].worst_place == "near-wall"
    none = write(tmp_path / "none", 3.0, growth="warn: 1.25, near_wall_layers: 0")
    assert growth_check(lint_case(none)).outcome == "pass"        # no band: all elsewhere


def test_a_share_grade_fails_when_the_compromise_is_widespread(tmp_path):
    case = write(tmp_path, 13.0, growth="warn: 1.25, grades: {elsewhere-share: {warn: 0.01, "
                                        "beyond: 1.1}}")
    report = lint_case(case)
    check = growth_check(report)
    assert (check.outcome, check.severity, check.unit) == ("fail", "warning", "%")
    (finding,) = [f for f in report.findings if f.rule == "volume-ratio"]
    assert finding.where.place == "elsewhere"
    assert finding.message.startswith("share of the faces beyond 1.1 elsewhere")


# -- the engine's arithmetic on a hand-made extent ------------------------------------------


def _rule(**kw) -> Rule:
    return Rule(id="probe", title="Probe", rationale="A test rule graded by place.",
                source="test", unit="m", limits=Limits(warn=2.0, error=4.0), hint="h",
                check=lambda ctx: RuleResult.skip("unused"), main_grade="strict",
                main_places=("region", "near-wall"), **kw)


def _extent(values, places, weights=None) -> Extent:
    values = np.asarray(values, dtype=float)

    def measure(subset, limits):
        worst = int(subset[np.argmax(values[subset])])
        return Measurement(float(values[worst]), where=Where(faces=(worst,), face_count=1),
                           detail=f"worst at {worst}")

    codes = np.array([PLACES.index(p) for p in places], dtype=np.int8)
    return Extent(values, codes, "face", measure, weights=weights, weight_words="wall area")


def test_expand_grades_each_place_and_weights_the_share():
    rule = _rule(grades=(Grade("elsewhere", error=10.0, places=("elsewhere",)),
                         Grade("elsewhere-share", warn=30.0, places=("elsewhere",), share=True,
                               unit="%", worse="higher")))
    values = [1.0, 3.0, 5.0, 2.5, 1.0]
    places = ["near-wall", "near-wall", "elsewhere", "elsewhere", "elsewhere"]
    areas = np.array([1.0, 1.0, 1.0, 3.0, 6.0])
    m = Measurement(5.0, extent=_extent(values, places, areas))
    grades = resolve(rule).grades
    strict, elsewhere, share = expand(rule, grades, m)
    assert (strict.grade, strict.value, strict.where.place) == ("strict", 3.0, "near-wall+region")
    assert (elsewhere.grade, elsewhere.value, elsewhere.where.place) == ("elsewhere", 5.0,
                                                                        "elsewhere")
    # beyond the main warning limit 2: faces 2 and 3, areas 1 + 3 of the 10 elsewhere
    assert share.value == pytest.approx(40.0) and share.unit == "%"
    assert share.label == "share of the wall area of the faces beyond 2 m"
    d = distribution(rule, grades, m)
    assert d.worst_place == "elsewhere" and d.weighted == "wall area"
    assert dict(d.beyond) == pytest.approx({2.0: 100 * 5 / 12, 4.0: 100 * 1 / 12,
                                            10.0: 0.0})


def test_a_place_with_no_entity_gives_no_measurement():
    rule = _rule(grades=(Grade("elsewhere", error=10.0, places=("elsewhere",)),))
    m = Measurement(1.0, extent=_extent([1.0, 1.5], ["near-wall", "near-wall"]))
    (only,) = expand(rule, resolve(rule).grades, m)
    assert only.grade == "strict"


# -- the band near the walls, and findings that keep their identity ---------------------------


@pytest.mark.parametrize("walls, layers, expected", [
    (("zmin",), 3, 3 * 8 * 8),                       # three slabs of 8 x 8 cells [computed]
    (("ymin", "ymax", "zmin", "zmax"), 2, 8 * (8 * 8 - 4 * 4)),    # a frame 2 cells thick
    (("zmin",), 0, 0),
    (("zmin", "zmax"), 5, 8 * 8 * 8),                # the bands meet: every cell
])
def test_the_near_wall_band_counts_layers_through_the_faces(walls, layers, expected):
    from caselint.rulekit.places import near_wall_cells

    mesh = mesh_from_meshio(structured_hex(*(np.arange(9.0),) * 3))
    faces = np.concatenate([mesh.group_faces(name) for name in walls])
    band = near_wall_cells(mesh, faces, layers)
    assert int(band.sum()) == expected
    if walls == ("zmin",) and layers:
        assert mesh.cell_centroids[band, 2].max() == layers - 0.5    # the last layer's centre


def test_findings_graded_by_place_have_fingerprints_of_their_own(tmp_path):
    from caselint.baseline import finding_fingerprint

    # the region holds the four cells behind the node; the four ahead (0.875 m^3) meet unit
    # cells elsewhere across faces of volume ratio 8/7 = 1.143, beyond 1.1
    case = write(tmp_path, 13.0, """\
        regions:
          - {name: dryer-outlet, box: {min: [7.2, 7.2, 12.2], max: [7.8, 8.8, 13.8]}}
        """, growth="warn: 1.25, grades: {elsewhere-share: {warn: 0.01, beyond: 1.1}}")
    report = lint_case(case)
    findings = [f for f in report.findings if f.rule == "volume-ratio"]
    assert sorted(f.where.place for f in findings) == ["elsewhere", "near-wall+region"]
    prints = {finding_fingerprint(str(case), f) for f in findings}
    assert len(prints) == 2
    # a finding that is not graded by place keeps the fingerprint it had before
    plain = [f for f in report.findings if f.where.place is None][0]
    import hashlib

    old = hashlib.sha256(json.dumps(
        [plain.rule, str(case).replace("\\", "/"), plain.where.boundary or "",
         plain.where.region or "", plain.where.key or ""], separators=(",", ":")).encode())
    assert finding_fingerprint(str(case), plain) == old.hexdigest()
