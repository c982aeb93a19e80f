"""The region-cell-size rule on graded blocks whose cell sizes are known.

References: on a tensor grid the cell size (cube root of the volume) and which centroids lie
in a box follow from the grid lines [computed]; on a tetrahedral mesh the cell volumes are
checked against VTK's ``vtkCellSizeFilter`` (``vtk`` PyPI package).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import vtk
from vtk.util.numpy_support import numpy_to_vtk, numpy_to_vtkIdTypeArray, vtk_to_numpy

from caselint.engine.runner import check_rule
from caselint.manifest.case import Case, CaseInfo, MeshSpec, Region
from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import structured_hex, structured_quad, tetrahedralise
from caselint.model import Limits, RuleResult
from caselint.rules.regions import REGION_CELL_SIZE, cell_sizes, inside

# x spacing: 10 cells of 0.1 m then 5 cells of 0.4 m; y and z: 0.1 m
XS = np.concatenate([np.linspace(0, 1, 11), np.linspace(1.4, 3.0, 5)])


@pytest.fixture(scope="module")
def block():
    return mesh_from_meshio(structured_hex(XS, np.linspace(0, 0.5, 6), np.linspace(0, 0.3, 4)))


def run(mesh, regions, limits: Limits | None = None) -> RuleResult:
    case = Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="t"),
                mesh=MeshSpec(file=Path("mesh.msh")), regions=tuple(regions))
    settings = {} if limits is None else {"warn": limits.warn, "error": limits.error}
    return check_rule(REGION_CELL_SIZE, case, mesh, settings=settings)


def box(name, lo, hi, size):
    return Region(name, "box", {"min": tuple(lo), "max": tuple(hi)}, size)


def test_box_over_fine_cells_passes(block):
    (m,) = run(block, [box("inlet-zone", (0, 0, 0), (1, 0.5, 0.3), 0.12)]).measurements
    # 0.1 x 0.1 x 0.1 m cells: size 0.1 m [computed]
    assert m.value == pytest.approx(0.1, rel=1e-12)
    assert (m.unit, m.label, m.limits) == ("m", "largest cell size", Limits(0.12, 0.24))
    assert m.where.cell_count == 0 and m.where.region == "inlet-zone"
    assert m.detail == "all 150 cells in the region are at most 0.12 m (max_cell_size 0.12 m)"
    assert m.where.key == "regions[0]"


def test_box_reaching_coarse_cells_counts_and_places_them(block):
    # x from 0.5 to 2.2: 5 fine columns (0.55..0.95) and 2 coarse ones (centres 1.2 and 1.6...)
    (m,) = run(block, [box("wake", (0.5, 0, 0), (2.2, 0.5, 0.3), 0.12)]).measurements
    coarse = (0.4 * 0.1 * 0.1) ** (1 / 3)               # 0.15874 m [computed]
    assert m.value == pytest.approx(coarse, rel=1e-12)
    # centroids inside: x = 0.55..0.95 (5 columns) and 1.2, 1.6, 2.0 (3 columns), 15 cells each
    assert m.where.cell_count == 3 * 15
    assert m.detail.startswith("45 of 120 cells in the region are larger than 0.12 m; largest cell")
    assert m.where.point[0] in (pytest.approx(1.2), pytest.approx(1.6), pytest.approx(2.0))
    assert m.fix.startswith("Refine the cells in region 'wake' to at most 0.12 m")
    assert len(m.where.cells) == 10
    # with the default limits (1x warning, 2x error) 0.159 m is a warning, not an error
    assert m.limits.warn < m.value < m.limits.error


def test_sphere_and_cylinder_select_centroids_analytically(block):
    centroids = block.cell_centroids
    sphere = Region("probe", "sphere", {"center": (0.55, 0.25, 0.15), "radius": 0.12}, 0.2)
    expected = ((centroids - (0.55, 0.25, 0.15)) ** 2).sum(axis=1) <= 0.12**2
    assert np.array_equal(inside(sphere, centroids), expected)
    # the centre cell and its 6 face neighbours (0.1 m away); edge neighbours are 0.141 m away
    assert expected.sum() == 7
    cyl = Region("jet", "cylinder", {"start": (0.0, 0.25, 0.15), "end": (3.0, 0.25, 0.15),
                                     "radius": 0.06}, 0.2)
    in_cyl = inside(cyl, centroids)
    assert in_cyl.sum() == 15 * 1                       # the middle row of cells along x
    (m_s, m_c) = run(block, [sphere, cyl]).measurements
    assert m_s.value == pytest.approx(0.1) and m_s.where.region == "probe"
    assert m_c.value == pytest.approx((0.4 * 0.01) ** (1 / 3)) and m_c.where.cell_count == 0


def test_region_smaller_than_a_cell_measures_the_cell_around_it(block):
    (m,) = run(block, [box("tiny", (2.01, 0.21, 0.11), (2.02, 0.22, 0.12), 0.05)]).measurements
    assert m.value == pytest.approx((0.4 * 0.01) ** (1 / 3))
    assert m.detail.startswith("no cell centroid lies inside the region; the cell nearest its "
                               "centre (cell")
    assert m.where.cell_count == 1


def test_missing_data_gives_notes_and_skips(block):
    assert run(block, []).skipped == "the case file gives no regions"
    no_size = run(block, [box("a", (0, 0, 0), (1, 1, 1), None)])
    assert no_size.skipped == "no region sets max_cell_size"
    assert no_size.notes[0].message == "region 'a' has no max_cell_size and is not checked"
    outside = run(block, [box("far", (10, 10, 10), (11, 11, 11), 0.1)])
    assert outside.skipped == "no region with a max_cell_size holds a cell of the mesh"
    assert "its centre is outside the mesh" in outside.notes[0].message
    mixed = run(block, [box("far", (10, 10, 10), (11, 11, 11), 0.1),
                        box("near", (0, 0, 0), (1, 1, 1), 0.1)])
    assert len(mixed.measurements) == 1 and len(mixed.notes) == 1


def test_two_d_mesh_uses_square_root_of_area_and_ignores_z():
    mesh = mesh_from_meshio(structured_quad(np.linspace(0, 2, 5), np.linspace(0, 1, 11)))
    # cells 0.5 x 0.1 m: size sqrt(0.05) = 0.2236 m [computed]; z range of the box irrelevant
    (m,) = run(mesh, [box("all", (0, 0, 5), (2, 1, 6), 0.2)]).measurements
    assert m.value == pytest.approx(np.sqrt(0.05), rel=1e-12)
    assert m.where.cell_count == 40


def test_tetrahedral_cell_sizes_match_vtk_cell_size_filter():
    m = tetrahedralise(structured_hex(np.linspace(0, 1, 4), np.linspace(0, 2, 4),
                                      np.linspace(0, 0.6, 3)))
    rng = np.random.default_rng(11)
    inner = np.all((m.points > 1e-9) & (m.points < np.array([1, 2, 0.6]) - 1e-9), axis=1)
    m.points[inner] += rng.uniform(-0.05, 0.05, (inner.sum(), 3))
    mesh = mesh_from_meshio(m)
    conn = mesh.data.shapes[0].connectivity.astype(np.int64)
    grid = vtk.vtkUnstructuredGrid()
    pts = vtk.vtkPoints()
    pts.SetData(numpy_to_vtk(np.ascontiguousarray(mesh.points), deep=True))
    grid.SetPoints(pts)
    cells = vtk.vtkCellArray()
    offsets = np.arange(0, conn.size + 1, 4, dtype=np.int64)
    cells.SetData(numpy_to_vtkIdTypeArray(offsets, deep=True),
                  numpy_to_vtkIdTypeArray(conn.ravel(), deep=True))
    grid.SetCells(vtk.VTK_TETRA, cells)
    sizer = vtk.vtkCellSizeFilter()
    sizer.SetInputData(grid)
    sizer.Update()
    volume = vtk_to_numpy(sizer.GetOutput().GetCellData().GetArray("Volume"))
    assert cell_sizes(mesh) == pytest.approx(np.cbrt(volume), rel=1e-9)
