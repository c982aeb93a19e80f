"""cell-shape and the layer-aware aspect-ratio.

- cell-shape reports the lowest scaled Jacobian of the cells, checked against VTK's
  ``vtkMeshQuality`` (Verdict, SAND2007-1751) on a good tetrahedron beside a sliver; an
  inverted cell is left to inverted-cells;
- aspect-ratio on a wall-resolved flat-plate grid (2-D quadrilaterals, first cell 2 um
  over 50 mm long cells: edge ratio 25000 at the wall [computed]): with the plate a
  no-slip wall, its layer cells are left to the layer rules and the rule passes on the
  cells above them; with the plate a symmetry plane inside a region of interest, the same
  cells are an error.
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest

from pathlib import Path

from caselint.api import lint_case
from caselint.engine.runner import check_rule
from caselint.manifest.case import Case, CaseInfo, MeshSpec
from caselint.manifest.loader import load_case
from caselint.mesh import mesh_from_meshio, read_mesh
from caselint.mesh.blocks import structured_quad, write_gmsh22
from caselint.rules.cell_quality import ASPECT_RATIO, CELL_SHAPE
from near_wall_meshes import geometric, stack
from test_rules_mesh_quality import _vtk_quality

CASE = Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="shapes"),
            mesh=MeshSpec(file=Path("mesh.vtu")))


def _run(rule, mesh):
    return check_rule(rule, CASE, mesh)


# a good tetrahedron and a sliver sharing the face (0, 1, 2); the sliver's fourth corner
# lies 0.03 below that face's plane, across its long edge
POINTS = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0.3, 0.3, 0.9], [0.8, 0.8, -0.03]],
                  dtype=float)
TETS = np.array([[0, 1, 2, 3], [0, 2, 1, 4]])


def test_cell_shape_is_verdicts_lowest_scaled_jacobian():
    import vtk

    reference = _vtk_quality(POINTS, TETS, vtk.VTK_TETRA, "SetTetQualityMeasureToScaledJacobian")
    mesh = mesh_from_meshio(meshio.Mesh(POINTS, [("tetra", TETS)]))
    (m,) = _run(CELL_SHAPE, mesh).measurements
    assert m.value == pytest.approx(reference.min(), rel=1e-12)
    assert reference.min() < 0.05 < reference.max()           # a sliver beside a good one
    assert m.where.cell_count == 1 and m.where.cells == (1,)   # the file's id of the sliver
    assert m.detail.startswith("1 cell below 0.1, worst cell 1")


def test_an_inverted_cell_is_left_to_inverted_cells():
    flipped = np.array([[0, 1, 2, 3], [0, 1, 2, 4]])          # the sliver turned inside out
    mesh = mesh_from_meshio(meshio.Mesh(POINTS, [("tetra", flipped)]))
    (m,) = _run(CELL_SHAPE, mesh).measurements
    assert m.value > 0.5 and "1 cell inverted or collapsed" in m.detail


def _plate(tmp_path, plate_role: str, extra: str = "") -> tuple[Path, np.ndarray]:
    """A 1 m plate (bottom) under 20 cells of 50 mm; rows from 2 um growing by 1.3."""
    rows = geometric(2e-6, 1.3, 46)                 # the last rows are taller than 50 mm
    mesh = structured_quad(np.linspace(0.0, 1.0, 21), stack(rows))
    write_gmsh22(mesh, tmp_path / "plate.msh")
    case = tmp_path / "plate.yaml"
    case.write_text(
        "caselint: 1\ncase: {name: Invented test plate, safety: none}\n"
        "mesh: {file: plate.msh, boundaries: {xmin: inlet, xmax: outlet, ymax: symmetry, "
        f"ymin: {plate_role}}}}}\n"
        "physics: {turbulence: {model: laminar}}\n"
        f"checks: {{rule_sets: [general]}}\n{extra}", encoding="utf-8")
    return case, rows


def test_a_wall_resolved_plate_leaves_its_layer_cells_to_the_layer_rules(tmp_path):
    case, rows = _plate(tmp_path, "wall")
    report = lint_case(case)
    (aspect,) = [c for c in report.checks if c.rule == "aspect-ratio"]
    assert aspect.outcome == "pass"
    # the rows flatter than wide (height < 50 mm) are the wall stack; above it the rows are
    # 50 mm wide and up to rows[-1] = 2 um x 1.3^45 tall
    thin = int(np.count_nonzero(rows < 0.05))
    assert aspect.measured == pytest.approx(rows[-1] / 0.05, rel=1e-9)
    loaded = load_case(case)
    (m,) = check_rule(ASPECT_RATIO, loaded, read_mesh(loaded.mesh.file)).measurements
    assert f"{20 * thin} cells in wall-layer stacks left to the layer rules" in m.detail
    assert "edge ratio up to 2.5e+04 there" in m.detail


def test_the_same_cells_over_a_symmetry_plane_in_a_region_are_an_error(tmp_path):
    case, _ = _plate(tmp_path, "symmetry", "regions:\n  - {name: plate-band, box: "
                                            "{min: [0, 0, -1], max: [1, 0.01, 1]}}\n")
    (aspect,) = [c for c in lint_case(case).checks if c.rule == "aspect-ratio"]
    assert (aspect.outcome, aspect.severity) == ("fail", "error")
    assert aspect.measured == pytest.approx(0.05 / 2e-6, rel=1e-9)   # 25000 at the wall
