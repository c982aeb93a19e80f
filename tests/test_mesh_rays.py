"""Ray marching from wall faces (caselint.mesh.rays) on meshes with known answers.

References: on a structured channel the ray from each wall face crosses exactly the cells
between the walls and travels the channel height [computed]. On a perturbed tetrahedral
channel the cells crossed are checked against VTK (``vtk`` PyPI package): the ray is
sampled finely and ``vtkProbeFilter`` names the cell holding each sample, an independent
point-location count.
"""

from __future__ import annotations

import numpy as np
import pytest
import vtk
from vtk.util.numpy_support import numpy_to_vtk, numpy_to_vtkIdTypeArray, vtk_to_numpy

from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import (
    graded, shuffled, structured_hex, structured_parity, structured_quad, tetrahedralise,
)
from caselint.mesh.obstacles import carved_hex
from caselint.mesh.rays import (
    LOST, OPEN, WALL, cell_face_table, hit_angles_deg, march, wall_rays,
)

# every test here runs with the numpy kernels and with the compiled ones
pytestmark = pytest.mark.usefixtures("kernel_mode")

CHANNEL_SIDES = ("inlet", "outlet", "floor", "ceiling", "front", "back")


def quad_channel(n_across: int, height=0.4, length=10.0, n_along=50):
    """2-D channel: walls floor (y=0) and ceiling (y=height), inlet and outlet far apart."""
    return mesh_from_meshio(structured_quad(np.linspace(0, length, n_along + 1),
                                            np.linspace(0, height, n_across + 1),
                                            names=("inlet", "outlet", "floor", "ceiling")))


@pytest.mark.parametrize("n_across", [4, 12])
def test_two_d_channel_rays_cross_exactly_the_cells_between_the_walls(n_across):
    mesh = quad_channel(n_across)
    hits = wall_rays(mesh, ("floor", "ceiling"))
    assert hits.n_rays == 2 * 50                    # one per wall edge, none from inlet/outlet
    assert np.all(hits.status == WALL)
    assert np.all(hits.cells == n_across)           # [computed] cells across the channel
    assert hits.width == pytest.approx(np.full(100, 0.4), abs=1e-12)
    # floor rays end on the ceiling and the other way round
    floor = mesh.group_names.index("floor")
    start_floor = mesh.face_group[hits.start_face] == floor
    assert np.all(mesh.face_group[hits.hit_face[start_floor]] == mesh.group_names.index("ceiling"))


def test_graded_hex_channel_with_symmetry_sides_counts_cells_not_distance():
    ys = graded(0.0, 0.05, 12, 1.25)                # 12 cells across, wall-graded
    mesh = mesh_from_meshio(structured_hex(np.linspace(0, 2.0, 41), ys, np.linspace(0, 0.1, 3),
                                           names=CHANNEL_SIDES))
    hits = wall_rays(mesh, ("floor", "ceiling"))
    assert hits.n_rays == 2 * 40 * 2
    assert np.all(hits.status == WALL) and np.all(hits.cells == 12)
    assert np.allclose(hits.width, 0.05, atol=1e-12)
    # the symmetry sides are not walls: rays from walls only, each along -S of its face
    assert np.allclose(np.abs(hits.direction[:, 1]), 1.0)


def test_rays_leaving_through_an_open_boundary_are_not_gaps():
    # only the floor is a wall; every ray goes up and leaves through the top
    mesh = mesh_from_meshio(structured_hex(np.linspace(0, 1, 5), np.linspace(0, 1, 5),
                                           np.linspace(0, 3, 7)))
    hits = wall_rays(mesh, ("zmin",))
    assert np.all(hits.status == OPEN)
    assert np.all(mesh.face_group[hits.hit_face] == mesh.group_names.index("zmax"))
    assert np.all(hits.cells == 6) and np.allclose(hits.width, 3.0)


def test_shuffled_numbering_gives_the_same_rays():
    m = structured_hex(np.linspace(0, 1, 7), np.linspace(0, 0.3, 5), np.linspace(0, 0.2, 3))
    results = []
    for mesh in (mesh_from_meshio(m), mesh_from_meshio(shuffled(m, seed=3))):
        hits = wall_rays(mesh, ("ymin", "ymax", "zmin", "zmax"))
        order = np.lexsort(hits.origin.T[::-1])
        results.append((hits.origin[order], hits.cells[order], hits.width[order]))
    (o1, c1, w1), (o2, c2, w2) = results
    assert np.allclose(o1, o2) and np.array_equal(c1, c2) and np.allclose(w1, w2)
    assert set(np.unique(c1)) == {4, 2}             # 4 cells across y, 2 across z


def test_step_limit_stops_rays_as_lost_without_nan():
    mesh = quad_channel(4)
    walls = np.isin(mesh.face_group, [mesh.group_names.index(g) for g in ("floor", "ceiling")])
    hits = march(mesh, np.flatnonzero(walls), walls, max_steps=3)
    assert np.all(hits.status == LOST)
    assert np.all(hits.cells == 3) and np.all(hits.hit_face == -1)
    assert np.all(np.isfinite(hits.width))
    with pytest.raises(ValueError, match="max_steps"):
        march(mesh, np.flatnonzero(walls), walls, max_steps=0)


def test_cell_face_incidence_lists_each_cells_faces():
    mesh = mesh_from_meshio(tetrahedralise(structured_hex(*(np.linspace(0, 1, 3),) * 3)))
    incidence = mesh.cell_faces
    offsets, faces = incidence.offsets, incidence.faces
    assert np.all(np.diff(offsets) == 4)            # every tetrahedron has four faces
    cell = np.repeat(np.arange(mesh.n_cells), 4)
    assert np.all((mesh.owner[faces] == cell) | (mesh.neighbour[faces] == cell))
    assert np.array_equal(incidence.owned, mesh.owner[faces] == cell)
    assert faces.size == mesh.n_faces + np.count_nonzero(mesh.neighbour >= 0)
    table = cell_face_table(mesh)
    assert table.shape == (mesh.n_cells, 4)
    assert np.array_equal(np.sort(table, axis=1), np.sort(faces.reshape(-1, 4), axis=1))


def test_slot_between_two_blocks_is_a_gap_between_their_groups():
    # two fins 2.75 m and 2.5 m long, 0.75 m apart (3 cells of 0.25 m)
    mesh = mesh_from_meshio(carved_hex(
        np.linspace(0, 10, 41), np.linspace(0, 4, 17), np.linspace(0, 2, 9),
        {"fin-a": [((2, 4.75), (0, 3), (0, 2))], "fin-b": [((5.5, 8), (0, 3), (0, 2))]}))
    hits = wall_rays(mesh, ("fin-a", "fin-b"))
    a, b = mesh.group_names.index("fin-a"), mesh.group_names.index("fin-b")
    across = (mesh.face_group[hits.start_face] == a) & (hits.status == WALL)
    assert np.all(mesh.face_group[hits.hit_face[across]] == b)
    assert np.all(hits.cells[across] == 3) and np.allclose(hits.width[across], 0.75)
    assert across.sum() == 12 * 8                   # the fin face facing the slot: 12 x 8 faces


def _vtk_cells_along(mesh, hits, samples: int) -> np.ndarray:
    """Per ray, how many distinct cells VTK's probe finds along it (sampled)."""
    conn = mesh.data.shapes[0].connectivity.astype(np.int64)
    n, k = conn.shape
    grid = vtk.vtkUnstructuredGrid()
    pts = vtk.vtkPoints()
    pts.SetData(numpy_to_vtk(np.ascontiguousarray(mesh.points), deep=True))
    grid.SetPoints(pts)
    cells = vtk.vtkCellArray()
    cells.SetData(numpy_to_vtkIdTypeArray(np.arange(0, n * k + 1, k, dtype=np.int64), deep=True),
                  numpy_to_vtkIdTypeArray(conn.ravel(), deep=True))
    grid.SetCells(vtk.VTK_TETRA, cells)
    ids = numpy_to_vtk(np.arange(n, dtype=np.float64), deep=True)
    ids.SetName("cell_id")
    grid.GetCellData().AddArray(ids)
    s = (np.arange(samples) + 0.5) / samples
    along = hits.origin[:, None, :] + hits.direction[:, None, :] * (hits.width[:, None, None]
                                                                    * s[None, :, None])
    poly = vtk.vtkPolyData()
    probe_points = vtk.vtkPoints()
    probe_points.SetData(numpy_to_vtk(along.reshape(-1, 3).copy(), deep=True))
    poly.SetPoints(probe_points)
    probe = vtk.vtkProbeFilter()
    probe.SetInputData(poly)
    probe.SetSourceData(grid)
    probe.Update()
    data = probe.GetOutput().GetPointData()
    assert vtk_to_numpy(data.GetArray("vtkValidPointMask")).all()
    found = vtk_to_numpy(data.GetArray("cell_id")).reshape(hits.n_rays, samples)
    found = np.sort(found, axis=1)
    return 1 + np.count_nonzero(found[:, 1:] != found[:, :-1], axis=1)


def test_perturbed_tetrahedral_channel_agrees_with_vtk_point_location():
    m = tetrahedralise(structured_hex(np.linspace(0, 1, 6), np.linspace(0, 1, 6),
                                      np.linspace(0, 0.5, 5)), scheme=5,
                       parity=structured_parity(5, 5, 4))
    rng = np.random.default_rng(7)
    top = np.array([1.0, 1.0, 0.5])
    for k, amplitude in enumerate((0.04, 0.04, 0.025)):   # keep the box and its walls planar
        free = (m.points[:, k] > 1e-9) & (m.points[:, k] < top[k] - 1e-9)
        m.points[free, k] += rng.uniform(-amplitude, amplitude, free.sum())
    mesh = mesh_from_meshio(m)
    hits = wall_rays(mesh, ("zmin", "zmax"))
    assert np.all(hits.status == WALL) and np.allclose(hits.width, 0.5, atol=1e-12)
    # 20000 samples (2.5e-5 m apart): finer than the shortest passage through a cell here
    assert np.array_equal(_vtk_cells_along(mesh, hits, 20000), hits.cells)
    # a ray crosses more tetrahedra than there are layers (4)
    assert hits.cells.min() > 4


def test_folded_cell_never_gives_nan_and_the_march_ends():
    m = structured_quad(np.linspace(0, 1, 5), np.linspace(0, 1, 5))
    m.points[12] = [0.9, 0.95, 0.0]                # drag an inner vertex across its cells
    mesh = mesh_from_meshio(m)
    hits = wall_rays(mesh, ("ymin", "ymax"), max_steps=50)
    assert np.all(np.isfinite(hits.width)) and np.all(hits.cells <= 50)
    assert set(np.unique(hits.status)) <= {WALL, OPEN, LOST}
    # here one ray circles in the folded cells: the step limit is what ends it
    assert np.count_nonzero(hits.status == LOST) >= 1


@pytest.mark.parametrize("lean_deg", [30.0, 60.0])
def test_hit_angle_is_the_corner_angle_for_a_leaning_wall(lean_deg):
    # 2-D duct whose left wall meets the floor at lean_deg; a floor ray going up meets that
    # wall lean_deg from head-on, the flat top head-on [computed]
    m = structured_quad(np.linspace(0, 4, 41), np.linspace(0, 1, 11),
                        names=("left", "right", "floor", "top"))
    x, y = m.points[:, 0].copy(), m.points[:, 1]
    m.points[:, 0] = x + (1 - x / 4) * y / np.tan(np.radians(lean_deg))
    mesh = mesh_from_meshio(m)
    hits = wall_rays(mesh, ("floor", "left", "top"))
    angles = hit_angles_deg(mesh, hits)
    from_floor = mesh.face_group[hits.start_face] == mesh.group_names.index("floor")
    on_left = mesh.face_group[np.maximum(hits.hit_face, 0)] == mesh.group_names.index("left")
    assert np.any(from_floor & on_left)
    assert angles[from_floor & on_left] == pytest.approx(lean_deg, abs=1e-9)
    on_top = from_floor & (mesh.face_group[np.maximum(hits.hit_face, 0)]
                           == mesh.group_names.index("top"))
    assert angles[on_top] == pytest.approx(0.0, abs=1e-9)
