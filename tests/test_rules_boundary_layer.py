"""The local boundary-layer thickness along the walls, and the cells across it through any
cell type: boundary-layer-cells and layer-cover on meshes with known layers, an aerofoil,
a pipe O-grid, and triangles and tetrahedra.

References: delta by hand from the published formulas [computed] (laminar Blasius
5.0 x / sqrt(Re_x) [confirmed]; turbulent 0.37 x Re_x^-1/5 [memory]; REFERENCES.md §2, §7),
x measured by hand from the construction of each mesh. Cells across delta along a wall
normal through triangles and tetrahedra: the line clipped against the half-spaces of every
cell, from the corner nodes (a brute-force computation with no marching and no face
adjacency). VTK's point location (``vtkProbeFilter``) was tried first and rejected as the
reference: its find-cell tolerance keeps a point in a cell it has just left where the line
runs nearly along a face (a tetrahedron here held points 1.5 mm past its face, barycentric
coordinate -9e-4).
"""

from __future__ import annotations

import numpy as np
import pytest

from caselint.mesh import mesh_from_meshio, read_mesh
from caselint.rules.near_wall import BOUNDARY_LAYER_CELLS, LAYER_COVER, LAYER_GROWTH
from near_wall_meshes import geometric, layer_block
from test_rules_near_wall import NU, U, across, grade, make_case

# every test here runs with the numpy kernels and with the compiled ones
pytestmark = pytest.mark.usefixtures("kernel_mode")


def turbulent(x, u=U, nu=NU):
    """0.37 x Re_x^-1/5, by hand."""
    return 0.37 * x * (u * x / nu) ** -0.2


def laminar(x, u=U, nu=NU):
    """5.0 x / sqrt(Re_x), by hand."""
    return 5.0 * x / np.sqrt(u * x / nu)


# -- a flat plate: delta at each face ----------------------------------------------------------

PLATE = geometric(1e-4, 1.2, 24)             # 0.1 mm growing by 1.2: 24 layers, 39.4 mm
CENTRES = 0.025 + 0.05 * np.arange(8)        # wall face centres along x (8 faces of 5 cm)


def plate(**kw):
    return mesh_from_meshio(layer_block(PLATE, nx=8, ny=2, dx=0.05, **kw))


def test_layer_cover_per_face_against_delta_at_its_own_x():
    """The plate starts at x = 0 (the walls' most upstream point along the flow): the
    thinnest cover is at the last face, T / delta(0.375 m); judged at x = L = 1 m instead
    it would be T / delta(1 m)."""
    case = make_case(direction=(1.0, 0.0, 0.0))
    check, findings, notes = grade(LAYER_COVER, plate(), case)
    expected = PLATE.sum() / turbulent(CENTRES[-1])
    assert expected == pytest.approx(3.398, abs=1e-3)
    assert check.measured == pytest.approx(expected, rel=1e-9) and check.outcome == "pass"
    assert any("each face's distance from the walls' most upstream point" in n for n in notes)
    # no direction: one thickness, at the flow length, for every face
    check, findings, notes = grade(LAYER_COVER, plate(), make_case())
    assert check.measured == pytest.approx(PLATE.sum() / turbulent(1.0), rel=1e-9)
    assert any("at x = 1 m on every face" in n for n in notes)


def test_declared_leading_edge_and_laminar_flow():
    # the plate's own leading edge 0.5 m upstream of the mesh: x = centre + 0.5
    case = make_case(model="laminar", leading_edge=(-0.5, 0.0, 0.0),
                     direction=(1.0, 0.0, 0.0))
    check, findings, notes = grade(LAYER_COVER, plate(), case)
    expected = PLATE.sum() / laminar(CENTRES[-1] + 0.5)
    assert expected == pytest.approx(6.852, abs=1e-3)     # laminar delta 5.73 mm at 0.875 m
    assert check.measured == pytest.approx(expected, rel=1e-9)
    assert check.outcome == "pass" and findings == []
    assert any("from physics.flow.leading_edge (along physics.flow.direction)" in n
               for n in notes)


def test_cells_across_delta_per_face_outside_the_leading_zone():
    """Faces in the first tenth of the plate's length (x < 0.0375 m: the first face) are not
    graded; the fewest cells are then at the second face, x = 0.075 m."""
    case = make_case(direction=(1.0, 0.0, 0.0))
    check, findings, notes = grade(BOUNDARY_LAYER_CELLS, plate(), case)
    expected = across(PLATE, turbulent(CENTRES[1]))
    assert check.measured == pytest.approx(expected, rel=1e-9)
    assert expected == pytest.approx(10.956, abs=1e-3)
    first = across(PLATE, turbulent(CENTRES[0]))
    assert any(f"2 faces of 'zmin' in the first 10% of the walls' length" in n
               and f"fewest {first:.3g} cells there" in n for n in notes)
    check, _, _ = grade(BOUNDARY_LAYER_CELLS, plate(), case, leading_zone=0.0)
    assert check.measured == pytest.approx(first, rel=1e-9)


def test_internal_flow_develops_until_half_the_hydraulic_diameter():
    """A duct of D_h = 20 mm: delta grows as on a plate from the inlet (x = 0) and stops at
    10 mm, reached at x = 1.457 Re^1/4 D_h [computed] = 0.32 m for U = 10 m/s."""
    case = make_case(kind="internal", length=0.02, direction=(1.0, 0.0, 0.0))
    check, _, notes = grade(BOUNDARY_LAYER_CELLS, plate(), case, leading_zone=0.0)
    delta = min(turbulent(CENTRES[0]), 0.01)
    assert check.measured == pytest.approx(across(PLATE, delta), rel=1e-9)
    entrance = (0.01 / 0.37 * (U / NU) ** 0.2) ** 1.25
    assert entrance == pytest.approx(1.457 * (U * 0.02 / NU) ** 0.25 * 0.02, rel=1e-4)
    assert any(f"downstream of x = {entrance:.3g} m" in n for n in notes)
    check, _, _ = grade(LAYER_COVER, plate(), case)
    assert check.measured == pytest.approx(PLATE.sum() / 0.01, rel=1e-9)   # capped at D_h/2
    # a flow entering developed: its leading edge declared a development length upstream
    developed = make_case(kind="internal", length=0.02, direction=(1.0, 0.0, 0.0),
                          leading_edge=(-1.0, 0.0, 0.0))
    check, _, _ = grade(BOUNDARY_LAYER_CELLS, plate(), developed, leading_zone=0.0)
    assert check.measured == pytest.approx(across(PLATE, 0.01), rel=1e-9)


# -- an aerofoil whose layer block is thicker than delta everywhere ------------------------------


def test_aerofoil_layer_block_covers_the_boundary_layer_from_the_leading_edge(tmp_path):
    """A gmsh hybrid mesh of a 12 % aerofoil (chord 1 m, leading edge at the origin): a
    quadrilateral block of 34 layers, 77 mm thick, under triangles. At Re_c = 1e5 (turbulent)
    delta grows to 37 mm at the trailing edge. Near the leading edge the outer layers are
    taller than the 1.5 mm surface cells are wide, so the measured stack there is 28 mm:
    judged against delta at x = L it would be flagged; against delta at its own x it is far
    thicker than needed."""
    from wall_meshes import aerofoil_layers

    mesh = read_mesh(aerofoil_layers(tmp_path / "foil.msh"))
    u, nu = 1.5, 1.5e-5
    case = make_case(velocity=u, nu=nu, length=1.0, direction=(1.0, 0.0, 0.0),
                     walls=("foil",))
    check, findings, _ = grade(LAYER_COVER, mesh, case)
    assert check.outcome == "pass" and findings == []
    from caselint.mesh.wall_layers import wall_layers

    layers = wall_layers(mesh, mesh.group_faces("foil"))
    x = mesh.face_centroids[layers.faces, 0]                  # leading edge at x = 0
    nose = x < 0.01
    assert layers.thickness[nose].max() < turbulent(1.0, u, nu)   # x = L would flag these
    delta = turbulent(np.maximum(x, 0.01), u, nu)             # faces nearer than 1 % of L
    assert check.measured == pytest.approx((layers.thickness / delta).min(), rel=1e-9)
    assert check.measured > 1.5
    cells, _, _ = grade(BOUNDARY_LAYER_CELLS, mesh, case)
    assert cells.outcome == "pass" and cells.measured > 10


# -- a pipe O-grid --------------------------------------------------------------------------------


def test_laminar_pipe_o_grid_has_no_growth_error_at_the_axis(tmp_path):
    """A laminar pipe O-grid (gmsh, tests/wall_meshes.py): the stacks are the 15 radial cells
    growing by 1 / 0.85 = 1.176, below the warning limit; the core is not part of them."""
    from wall_meshes import pipe_o_grid

    mesh = read_mesh(pipe_o_grid(tmp_path / "pipe.msh"))
    case = make_case(model="laminar", kind="internal", velocity=0.02, nu=1e-6, length=0.1,
                     direction=(0.0, 0.0, 1.0), walls=("wall",))
    check, findings, notes = grade(LAYER_GROWTH, mesh, case)
    assert check.outcome == "pass" and findings == []
    assert check.measured == pytest.approx(1 / 0.85, rel=5e-3)
    assert any("15 to 15 layers" in n and "layers shrink 192" in n for n in notes)


# -- cells across the boundary layer through triangles and tetrahedra ----------------------------


def _half_spaces(corners: np.ndarray):
    """Outward normals and a point of each side of every simplex (triangles in the plane
    z = 0, or tetrahedra), from its corners: (cells, sides, 3) each."""
    k = corners.shape[1]
    sides = [tuple(j for j in range(k) if j != skip) for skip in range(k)]
    normals, anchors = [], []
    for skip, side in zip(range(k), sides):
        a = corners[:, side[0]]
        if k == 4:
            n = np.cross(corners[:, side[1]] - a, corners[:, side[2]] - a)
        else:                       # an edge of a triangle: its normal in the plane
            e = corners[:, side[1]] - a
            n = np.stack([e[:, 1], -e[:, 0], np.zeros(len(e))], axis=1)
        away = np.einsum("ij,ij->i", n, corners[:, skip] - a) > 0
        normals.append(np.where(away[:, None], -n, n))
        anchors.append(a)
    return np.stack(normals, axis=1), np.stack(anchors, axis=1)


def reference_count(mesh, faces, delta):
    """Cells across ``delta`` along each face's inward normal, by clipping the line against
    the half-spaces of *every* cell (triangles or tetrahedra, from the corner nodes the file
    gives; no marching, no face adjacency): each cell the line passes through over a
    positive length before delta counts that length, up to delta, over the cell's depth
    along the line (the spread of its corners along it)."""
    (block,) = mesh.data.shapes
    corners = mesh.points[block.connectivity]                       # (cells, k, 3)
    normals, anchors = _half_spaces(corners)
    area = mesh.face_area_vectors[faces]
    counts = np.zeros(len(faces))
    for i, (o, d) in enumerate(zip(mesh.face_centroids[faces],
                                   -area / np.linalg.norm(area, axis=1)[:, None])):
        nd = normals @ d                                            # (cells, sides)
        gap = np.einsum("csj,csj->cs", normals, o - anchors)        # > 0: outside that side
        with np.errstate(divide="ignore", invalid="ignore"):
            t = -gap / nd
        low = np.max(np.where(nd < 0, t, -np.inf), axis=1, initial=0.0)
        high = np.min(np.where(nd > 0, t, np.inf), axis=1)
        parallel_out = np.any((nd == 0) & (gap > 0), axis=1)
        hit = (high > low) & ~parallel_out & (low < delta[i])
        spread = corners[hit] @ d
        depth = spread.max(axis=1) - spread.min(axis=1)
        counts[i] = np.sum((np.minimum(high[hit], delta[i]) - low[hit]) / depth)
    return counts


def test_cylinder_in_triangles_counts_cells_across_its_boundary_layer(tmp_path):
    """A laminar cylinder (D = 0.1 m, Re_D = 100) in gmsh triangles, 1.5 mm at the wall,
    growing fast: the triangles have no layer stack (a count along stacks gives 0), and the
    count along each face's normal agrees with the clipping of the line against every
    triangle to round-off."""
    from caselint.mesh.rays import cells_within
    from caselint.rulekit.thickness import wall_thickness
    from caselint.rulekit.wallflow import flow_data
    from wall_meshes import cylinder_triangles

    mesh = read_mesh(cylinder_triangles(tmp_path / "cylinder.msh"))
    u, nu = 0.015, 1.5e-5
    case = make_case(model="laminar", velocity=u, nu=nu, length=0.1,
                     direction=(1.0, 0.0, 0.0), walls=("cylinder",))
    check, findings, notes = grade(BOUNDARY_LAYER_CELLS, mesh, case)
    faces = np.sort(mesh.group_faces("cylinder"))
    # x from the front of the cylinder, its most upstream node (x = -0.05 m to 6e-6 m: the
    # polygon has no node exactly there), along the flow; 1 % of the diameter at least
    nose = mesh.points[np.unique(mesh.face_point_table(faces)), 0].min()
    assert nose == pytest.approx(-0.05, abs=1e-5)
    x = np.maximum(mesh.face_centroids[faces, 0] - nose, 0.01 * 0.1)
    thick = wall_thickness(flow_data(case), mesh, faces)
    np.testing.assert_allclose(thick.x, x, rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(thick.delta, laminar(x, u, nu), rtol=1e-12)
    ours = cells_within(mesh, faces, thick.delta).cells
    ref = reference_count(mesh, faces, thick.delta)
    np.testing.assert_allclose(ours, ref, rtol=1e-9)
    graded = x >= 0.1 * x.max()
    assert check.measured == pytest.approx(ours[graded].min(), rel=1e-9)
    assert 3.5 < ours[graded].min() < 4 and ours.max() > 7        # 3.8: an error, rightly
    assert (check.outcome, check.severity) == ("fail", "error")
    from caselint.mesh.wall_layers import wall_layers

    assert wall_layers(mesh, faces).n_layers.max() == 0


def test_tetrahedra_graded_to_a_floor_count_cells_across_its_boundary_layer(tmp_path):
    """gmsh tetrahedra, 8 mm at the floor growing to 50 mm: the cells across delta along the
    floor normals agree with the clipping of each line against every tetrahedron; none is
    zero."""
    from caselint.mesh.rays import cells_within
    from wall_meshes import tet_box

    mesh = read_mesh(tet_box(tmp_path / "tets.msh", wall_size=0.008, far_size=0.05))
    faces = np.sort(mesh.group_faces("floor"))
    x = mesh.face_centroids[faces, 0]
    delta = turbulent(np.maximum(x, 0.01), 3.0, 1.5e-5) + 0.02      # 20 to 36 mm
    ours = cells_within(mesh, faces, delta).cells
    picked = np.arange(0, len(faces), 10)                 # every 10th face
    ref = reference_count(mesh, faces[picked], delta[picked])
    np.testing.assert_allclose(ours[picked], ref, rtol=1e-9)
    assert ours.min() > 1
    case = make_case(velocity=3.0, length=0.6, direction=(1.0, 0.0, 0.0), walls=("floor",))
    check, _, _ = grade(BOUNDARY_LAYER_CELLS, mesh, case)
    assert check.measured > 0 and check.outcome == "fail"          # tetrahedra across it
