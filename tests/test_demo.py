"""The shipped demo case: it loads, its mesh is what make_mesh.py writes, and caselint finds
exactly the defects designed into it, with their analytic values [computed]:

- growth ratio 1.5 (the floor-layer grading, a size ratio: the layers are 1.5 times as
  thick as the one below), on 6 x 200 faces above 1.3: 1200 of the 10630 internal faces,
  11.29 %, above the 10 % the expansion-share grade allows (a warning);
- non-orthogonality 75 deg (the lean of the second floor layer), 160 internal faces above
  70 deg;
- skewness 0.6 t / sqrt(t^2 + 6.25), t = tan 75 deg, on the face above the leaning layer
  (layer heights h and 1.5 h; see tests/test_rules_mesh_quality.py for the formula);
- edge ratio 0.4 m / 0.02 m = 20 in the first floor layer, a wall-layer cell that
  aspect-ratio leaves to the layer rules;
- the 96 faces of the loading door in a group with no role.

The near-wall rules judge the same coarse room mesh against the wall-function treatment
the case declares [computed by hand below]: Colebrook, smooth, Re = 1.5 * 1.37 / nu with
nu = 1.78e-5 / 1.23 gives f = 0.01674 and u_tau = U sqrt(f / 8) = 0.06862 m/s, so the
0.4 m wall cells (first centre 0.2 m from the wall) sit at y+ = 0.2 u_tau / nu = 948; the
boundary layer developing down the walls from the ceiling is 14.8 mm thick 0.32 m below
it, 0.037 of a 0.4 m wall cell.
"""

from __future__ import annotations

import importlib.util
import math

import numpy as np
import pytest

from caselint.demo import demo_case_path
from caselint.manifest.loader import load_case

LEAN = math.tan(math.radians(75.0))


def make_mesh_module():
    path = demo_case_path().parent / "make_mesh.py"
    spec = importlib.util.spec_from_file_location("ripening_room_make_mesh", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_demo_case_is_shipped_and_loads():
    path = demo_case_path()
    assert path.name == "case.yaml" and path.parent.name == "ripening-room"
    case = load_case(path)
    assert case.mesh.file == path.parent / "room.msh"
    assert case.mesh.boundaries == {"ceiling-supply": "inlet", "return-grille": "outlet",
                                    "floor": "wall", "walls-ceiling": "wall"}
    assert case.physics.fluid.nu == pytest.approx(1.78e-5 / 1.23)
    assert (path.parent / "README.md").is_file()


def test_committed_mesh_is_what_make_mesh_writes(tmp_path):
    module = make_mesh_module()
    assert module.FLOOR_GRADING == 1.5 and module.RAIL_LEAN_DEG == 75.0
    fresh = tmp_path / "room.msh"
    module.write_gmsh22(module.build(), fresh)
    committed = demo_case_path().parent / "room.msh"
    assert fresh.read_bytes() == committed.read_bytes()
    assert committed.stat().st_size < 1_000_000


@pytest.fixture(scope="module")
def report():
    from caselint.api import lint_case

    return lint_case(demo_case_path())


def test_demo_checks_measure_the_designed_values(report):
    checks = {c.rule: c for c in report.checks}
    growth = checks["growth-ratio"]          # decided by the share beyond 1.3, in percent
    assert (growth.measured, growth.unit) == (pytest.approx(100 * 1200 / 10630, rel=1e-6), "%")
    (spread,) = growth.distributions
    assert dict(spread.percentiles)[100.0] == pytest.approx(1.5, abs=1e-9)   # the worst face
    assert checks["volume-ratio"].measured == pytest.approx(1.5, abs=1e-9)  # graded in z only
    assert checks["non-orthogonality"].measured == pytest.approx(75.0, abs=1e-9)
    assert checks["skewness"].measured == pytest.approx(0.6 * LEAN / math.sqrt(LEAN**2 + 6.25),
                                                        abs=1e-9)
    # the leaning layer's cells are parallelepipeds sheared by 75 deg: scaled Jacobian
    # cos 75 deg (Verdict's corner determinant of unit edge vectors) [computed]
    assert checks["cell-shape"].measured == pytest.approx(math.cos(math.radians(75.0)), abs=1e-9)
    assert checks["inverted-cells"].measured == 0
    assert checks["unassigned-boundary"].measured == 96
    outcomes = {rule: (c.outcome, c.severity) for rule, c in checks.items()
                if rule in ("growth-ratio", "volume-ratio", "non-orthogonality", "skewness",
                            "cell-shape", "inverted-cells", "unassigned-boundary")}
    assert outcomes == {
        "growth-ratio": ("fail", "warning"), "volume-ratio": ("pass", None),
        "non-orthogonality": ("fail", "warning"), "skewness": ("pass", None),
        "cell-shape": ("pass", None), "inverted-cells": ("pass", None),
        "unassigned-boundary": ("fail", "error"),
    }
    # the floor layers (edge ratio 20) are wall-layer cells, judged by the layer rules. How
    # far the stacks reach is caselint.mesh.wall_layers' business: up to the ceiling today
    # (every cell of the room is flatter than wide), and then no cell is left to judge
    aspect = checks["aspect-ratio"]
    assert aspect.outcome in ("pass", "skipped")
    if aspect.outcome == "pass":
        assert aspect.measured < 20.0
    else:
        assert "wall-layer cells are judged by the layer rules" in aspect.reason


def test_demo_near_wall_checks_follow_from_the_coarse_wall_cells(report):
    checks = {c.rule: c for c in report.checks}
    nu = 1.78e-5 / 1.23
    f = 0.01674  # Colebrook, smooth, Re = 1.5 * 1.37 / nu = 1.42e5 (tests/test_physics_friction.py)
    u_tau = 1.5 * math.sqrt(f / 8.0)
    yplus = checks["wall-yplus"]
    assert yplus.measured == pytest.approx(0.2 * u_tau / nu, rel=2e-4)  # 948.3
    assert (yplus.outcome, yplus.severity, yplus.limit) == ("fail", "error", 500)
    growth = checks["layer-growth"]  # the floor layers graded by 1.5, seen as a stack
    assert growth.measured == pytest.approx(1.5, abs=1e-9) and growth.severity == "error"
    assert checks["wall-spacing-uniformity"].outcome == "fail"
    # boundary-layer-cells: delta develops from the ceiling (the walls' most upstream point
    # along the flow direction [0, 0, -1]); the top tenth of the 3.2 m is not graded. The
    # fewest cells sit on the side walls at the highest graded face centre, the middle of
    # the 12th of the 13 upper layers: x = 3.2 m - z, delta = 0.37 x Re_x^-1/5 = 14.8 mm,
    # across 0.4 m wall cells [computed]
    module = make_mesh_module()
    z6 = module.z_levels()[module.FLOOR_LAYERS]                      # top of the floor layers
    step = (module.HEIGHT_M - z6) / module.UPPER_LAYERS
    x = module.HEIGHT_M - (z6 + 11.5 * step)
    assert x == pytest.approx(0.3213, abs=1e-4) and x >= 0.1 * module.HEIGHT_M
    delta = 0.37 * x * (1.5 * x / nu) ** -0.2
    cells = checks["boundary-layer-cells"]
    assert cells.measured == pytest.approx(delta / module.CELL_M, rel=1e-6)          # 0.037
    assert (cells.outcome, cells.severity) == ("fail", "error")


def test_demo_findings_locate_the_defects(report):
    findings = {f.rule: f for f in report.findings if f.severity != "note"}
    assert set(findings) == {"growth-ratio", "non-orthogonality", "unassigned-boundary",
                             "wall-yplus", "layer-growth", "wall-spacing-uniformity",
                             "boundary-layer-cells", "layer-cover", "gap-cells"}
    # the wedge the morph leaves between the floor and the rail on the north wall (x = 0):
    # rays from the floor meet the leaning wall after crossing the first two floor layers
    gap = findings["gap-cells"]
    assert (gap.severity, gap.measured) == ("error", 2)
    assert "between 'floor' and 'walls-ceiling'" in gap.message
    assert gap.where.point[0] < 0.2 and gap.where.point[2] < 0.02 + 0.03
    door = findings["unassigned-boundary"]
    assert door.severity == "error" and door.where.boundary == "loading-door"
    assert door.where.face_count == 96 and door.where.point[1] == 0.0   # on the west wall y = 0
    growth = findings["growth-ratio"]
    assert growth.where.face_count == 6 * 200                  # 6 steps x 20 x 10 faces
    assert growth.where.point[2] < 0.42                        # in the floor layers
    lean = findings["non-orthogonality"]
    # 16 x 10 internal faces lean the full 75 deg (x <= 6 m); the 10 boundary faces that
    # lean atan(0.8 t) = 71.5 deg are measured apart, below the boundary grade's 85 deg
    assert lean.where.face_count == 160
    assert 0.02 < lean.where.point[2] < 0.05                   # in the second floor layer
    assert "between cells" in lean.message


def test_demo_carries_a_yplus_histogram_per_wall_boundary(report):
    (plot,) = [p for p in report.plots if p.rule == "wall-yplus"]
    counts = {s.label: sum(s.y) + s.below + s.above for s in plot.series}
    assert counts == {"floor": 200, "walls-ceiling": 1216}  # every wall face, once
    edges = np.log10(plot.series[0].x)
    # log bins on whole fractions of a decade, at least ten across the data, none outside
    per_decade = round(1 / (edges[1] - edges[0]))
    assert plot.x_log and len(edges) - 1 >= 10
    assert edges * per_decade == pytest.approx(np.round(edges * per_decade), abs=1e-9)
    assert all(s.below == s.above == 0 for s in plot.series)
    assert (plot.limits.warn, plot.limits.error) == (300, 500)  # the wall-function band's top


def test_demo_layer_profile_shows_the_floor_grading(report):
    (plot,) = [p for p in report.plots if p.rule == "layer-growth"]
    floor = {s.label: s for s in plot.series}["floor"]
    # the six floor layers: 20 mm growing by 1.5 per layer (make_mesh.py)
    assert floor.y[:6] == pytest.approx([0.02 * 1.5**k for k in range(6)], rel=1e-9)
    assert plot.kind == "line" and floor.x[:3] == (1.0, 2.0, 3.0)
