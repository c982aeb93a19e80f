"""growth-ratio and volume-ratio through the engine: what the default grades say on meshes
whose values are known by hand [computed].

- an octree mesher's 2:1 refinement (caselint.mesh.refined.refined_block, written as a mesh
  folder): growth ratio exactly 2 at every hanging face, no finding; the volume ratio 8
  passes its limit of 10;
- a block graded by 1.4 along x: every face across x is beyond the common-practice 1.3,
  a third of the faces, which the expansion-share grade turns into a warning although no
  single face comes near the worst-face limit 2;
- a 2.5 step in a channel with no-slip walls (every cell near a wall): a warning, not an
  error (a real 4x jump is an error: tests/test_cli_e2e.py).
"""

from __future__ import annotations

import numpy as np
import pytest

from caselint.api import lint_case
from caselint.mesh.refined import refined_block
from mesh_writers import write_face_folder
from test_cli_e2e import write_block_mesh, write_case

ROLES = "{xmin: inlet, xmax: outlet, ymin: symmetry, ymax: symmetry, zmin: wall, zmax: wall}"


def _checks(report) -> dict:
    return {c.rule: c for c in report.checks}


def _findings(report, rule: str) -> list:
    return [f for f in report.findings if f.rule == rule and f.severity != "note"]


def test_an_octree_2_to_1_step_is_made_on_purpose(tmp_path):
    # 16^3 coarse cubes, the middle 4^3 split 2:1: the refinement's surface is a small
    # share of the faces, as in a real octree mesh
    coarse = np.linspace(0.0, 1.6, 17)
    data = refined_block(coarse, coarse, coarse, ((0.6, 1.0),) * 3)
    write_face_folder(tmp_path / "constant" / "polyMesh", data)
    case = tmp_path / "case.yaml"
    case.write_text("caselint: 1\ncase: {name: Invented octree box, safety: none}\n"
                    f"mesh: {{file: constant/polyMesh, boundaries: {ROLES}}}\n"
                    "physics: {turbulence: {model: laminar}}\n"
                    "checks: {rule_sets: [general]}\n", encoding="utf-8")
    report = lint_case(case)
    checks = _checks(report)
    growth = checks["growth-ratio"]
    assert (growth.outcome, growth.measured) == ("pass", pytest.approx(2.0, rel=1e-9))
    (spread,) = growth.distributions
    beyond = dict(spread.beyond)
    assert beyond[2.0] == 0.0                        # 2 exactly is not beyond the limit 2
    # the faces beyond 1.3 are the hanging ones: 6 sides x 16 coarse neighbours x 4
    assert beyond[1.3] == pytest.approx(100 * 384 / spread.count, rel=1e-5)   # 6 digits
    assert beyond[1.3] < 10.0
    assert not _findings(report, "growth-ratio")
    volume = checks["volume-ratio"]
    assert (volume.outcome, volume.measured) == ("pass", pytest.approx(8.0, rel=1e-9))


def test_a_block_graded_too_fast_warns_by_its_share_not_its_worst_face(tmp_path):
    xs = np.concatenate([[0.0], np.cumsum(0.02 * 1.4 ** np.arange(6))])
    mesh = write_block_mesh(tmp_path / "graded.msh", xs=xs, ys=np.linspace(0, 0.1, 5),
                            zs=np.linspace(0, 0.1, 5))
    report = lint_case(write_case(tmp_path, mesh))
    growth = _checks(report)["growth-ratio"]
    # internal faces: across x 5 x 16 = 80, across y and z 6 x 3 x 4 = 72 each
    assert (growth.outcome, growth.severity, growth.unit) == ("fail", "warning", "%")
    assert growth.measured == pytest.approx(100 * 80 / 224, rel=1e-9)
    (spread,) = growth.distributions
    assert dict(spread.percentiles)[100.0] == pytest.approx(1.4, rel=1e-9)
    (finding,) = _findings(report, "growth-ratio")
    assert finding.message.startswith("share of the faces beyond 1.3 anywhere is 35.71 %")
    assert finding.where.face_count == 80


def test_a_2_5_step_near_a_wall_is_a_warning(tmp_path):
    mesh = write_block_mesh(tmp_path / "step.msh", xs=[0.0, 0.1, 0.2, 0.45])
    report = lint_case(write_case(tmp_path, mesh))
    growth = _checks(report)["growth-ratio"]
    assert (growth.outcome, growth.severity) == ("fail", "warning")
    strict = [f for f in _findings(report, "growth-ratio") if f.where.place == "near-wall+region"]
    (finding,) = strict
    assert finding.measured == pytest.approx(2.5, rel=1e-9) and finding.limit == 2.0
