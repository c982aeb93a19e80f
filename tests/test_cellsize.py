"""Cell volumes of mixed and tetrahedral meshes against analytic volumes and VTK's
vtkCellSizeFilter; mesh sizes and first-layer heights (caselint.mesh.cellsize) on graded
blocks.
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest
import vtk
from vtk.util.numpy_support import numpy_to_vtk, numpy_to_vtkIdTypeArray, vtk_to_numpy

from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import graded, shuffled, structured_hex, structured_quad, tetrahedralise
from caselint.mesh.celltypes import FACES
from caselint.mesh.cellsize import first_layer_heights, mesh_size

SEED = 20260612


def perturbed(m: meshio.Mesh, amplitude: float) -> meshio.Mesh:
    """Interior points moved at random (fixed seed); the outer box is unchanged."""
    lo, hi = m.points.min(axis=0), m.points.max(axis=0)
    inner = np.all((m.points > lo + 1e-9) & (m.points < hi - 1e-9), axis=1)
    rng = np.random.default_rng(SEED)
    m.points[inner] += rng.uniform(-amplitude, amplitude, (inner.sum(), 3))
    return m


def mixed_block(amplitude: float) -> meshio.Mesh:
    """A 4 x 3 x 2 box (0.8 x 0.9 x 0.5 m): wedges, pyramids about cell centres, hexes.

    Perturbed, the wedges' triangles no longer match the warped quadrilaterals of the
    hexahedra next to them, so only the unperturbed box has an exact total volume.
    """
    m = perturbed(structured_hex(np.linspace(0, 0.8, 5), np.linspace(0, 0.9, 4),
                                 np.linspace(0, 0.5, 3)), amplitude)
    hexes = m.cells[0].data
    first, second, rest = hexes[:8], hexes[8:16], hexes[16:]
    wedges = np.vstack([first[:, [0, 1, 2, 4, 5, 6]], first[:, [0, 2, 3, 4, 6, 7]]])
    centres = m.points[second].mean(axis=1)
    apex = len(m.points) + np.arange(len(second))
    # each outward hexahedron face, reversed, is a pyramid base seen from the centre
    pyramids = np.vstack([np.column_stack([second[:, list(reversed(f))], apex])
                          for f in FACES["hexahedron"]])
    points = np.vstack([m.points, centres])
    return meshio.Mesh(points, [("wedge", wedges), ("pyramid", pyramids), ("hexahedron", rest)])


def test_volumes_of_a_mixed_mesh():
    mesh = mesh_from_meshio(mixed_block(0.03))
    assert np.all(mesh.cell_volumes > 0)
    # the box is 0.8 x 0.9 x 0.5 m = 0.36 m^3 [computed]
    box = mesh_from_meshio(mixed_block(0.0)).cell_volumes
    assert box.sum() == pytest.approx(0.36, rel=1e-12)


def test_volumes_of_shuffled_tets_match_vtk():
    block = structured_hex(graded(0, 2, 6, 1.2), graded(0, 1, 4, 0.9), np.linspace(0, 0.5, 4))
    m = shuffled(tetrahedralise(perturbed(block, 0.02)), 5)
    mesh = mesh_from_meshio(m)
    local = mesh.cell_volumes
    # Reference: VTK 9.7 vtkCellSizeFilter (exact tetrahedron volumes)
    grid = vtk.vtkUnstructuredGrid()
    pts = vtk.vtkPoints()
    pts.SetData(numpy_to_vtk(np.ascontiguousarray(mesh.points), deep=True))
    grid.SetPoints(pts)
    conn = mesh.data.shapes[0].connectivity
    cells = vtk.vtkCellArray()
    offsets = np.arange(0, 4 * len(conn) + 1, 4, dtype=np.int64)
    cells.SetData(numpy_to_vtkIdTypeArray(offsets, deep=True),
                  numpy_to_vtkIdTypeArray(conn.ravel().astype(np.int64), deep=True))
    grid.SetCells(vtk.VTK_TETRA, cells)
    size = vtk.vtkCellSizeFilter()
    size.SetInputData(grid)
    size.Update()
    reference = vtk_to_numpy(size.GetOutput().GetCellData().GetArray("Volume"))
    np.testing.assert_allclose(local, reference, rtol=1e-10)
    assert local.sum() == pytest.approx(2 * 1 * 0.5, rel=1e-12)


def test_mesh_size_of_a_box_and_a_planar_mesh():
    # 10 x 10 x 10 cells in a unit cube: V = 1 m^3, h = (1/1000)^(1/3) = 0.1 m [computed]
    cube = mesh_from_meshio(structured_hex(*(graded(0, 1, 10, 1.1),) * 3))
    size = mesh_size(cube)
    assert (size.n_cells, size.dim, size.nonpositive_cells) == (1000, 3, 0)
    assert size.volume == pytest.approx(1.0, rel=1e-12)
    assert size.h == pytest.approx(0.1, rel=1e-12)
    # 2-D: 8 x 5 quads on 2 m x 0.5 m: A = 1 m^2, h = (1/40)^(1/2) m [computed]
    plane = mesh_from_meshio(structured_quad(np.linspace(0, 2, 9), np.linspace(0, 0.5, 6)))
    size = mesh_size(plane)
    assert size.dim == 2 and size.volume == pytest.approx(1.0)
    assert size.h == pytest.approx(40 ** -0.5, rel=1e-12)


def test_mesh_size_of_a_damaged_mesh_has_zero_h_not_nan():
    m = structured_hex([0, 1, 2], [0, 1], [0, 1])
    hexes = m.cells[0].data.copy()
    hexes[0] = hexes[0][[4, 5, 6, 7, 0, 1, 2, 3]]                  # one of two inside out
    mesh = mesh_from_meshio(meshio.Mesh(m.points, [("hexahedron", hexes)]))
    size = mesh_size(mesh)
    assert size.volume == pytest.approx(0.0, abs=1e-12)
    assert size.h == 0.0 and size.nonpositive_cells == 1


def test_first_layer_heights_of_graded_blocks():
    ys = graded(0.0, 1.0, 8, 1.25)
    hexes = mesh_from_meshio(structured_hex(np.linspace(0, 2, 5), ys, np.linspace(0, 1, 3)))
    heights = first_layer_heights(hexes, ["ymin"])
    assert heights.size == 4 * 2
    np.testing.assert_allclose(heights, ys[1], rtol=1e-12)
    # the far wall sees the last layer; both walls together give both heights
    both = first_layer_heights(hexes, ["ymin", "ymax", "no-such-group"])
    assert sorted(set(np.round(both, 12))) == sorted({round(ys[1], 12), round(1 - ys[-2], 12)})
    quads = mesh_from_meshio(structured_quad(np.linspace(0, 1, 4), ys))
    np.testing.assert_allclose(first_layer_heights(quads, ["ymin"]), ys[1], rtol=1e-12)
    assert first_layer_heights(quads, []).size == 0
