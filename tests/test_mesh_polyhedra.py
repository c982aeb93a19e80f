"""Geometry and metrics of polyhedral meshes against answers derived by hand and scipy.

- a 2:1 refinement interface (hanging faces): non-orthogonality and skewness across it;
- a unit cube cut into two polyhedra of known volume and centroid;
- random convex polyhedra (triangulated and with polygonal faces) against scipy's
  ConvexHull volumes and a tetrahedral decomposition's centroids;
- a warped face with a known warp angle.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.spatial import ConvexHull

from caselint.mesh import Mesh, quality
from caselint.mesh.build import mesh_from_faces
from caselint.mesh.refined import refined_block

# every test here runs with the numpy kernels and with the compiled ones
pytestmark = pytest.mark.usefixtures("kernel_mode")


def one_cell(points, faces) -> Mesh:
    """A mesh of one cell with the given polygonal faces (outward), all on the boundary."""
    sizes = [len(f) for f in faces]
    return Mesh(mesh_from_faces(
        path="cell", points=np.asarray(points, float), dim=3,
        face_offsets=np.concatenate([[0], np.cumsum(sizes)]),
        face_points=np.concatenate(faces), owner=np.zeros(len(faces), int),
        neighbour=np.full(len(faces), -1), n_cells=1))


# -- 2:1 refinement ------------------------------------------------------------------------


@pytest.fixture(scope="module")
def octree() -> Mesh:
    # 4^3 cubes of side 1; the middle 2^3 split into cubes of side 1/2
    axis = np.linspace(0.0, 4.0, 5)
    return Mesh(refined_block(axis, axis, axis, ((1, 3),) * 3))


def test_refined_block_cells_and_volumes(octree):
    # 56 unrefined cubes (48 of them next to the refined ones, so polyhedra) + 64 fine cubes
    assert octree.cell_counts == {"hexahedron": 8 + 64, "polyhedron": 48}
    vol = octree.cell_volumes
    assert vol.sum() == pytest.approx(64.0, rel=1e-14)
    assert sorted(np.unique(np.round(vol, 12)).tolist()) == [0.125, 1.0]
    # closed cells: each cell's outward area vectors sum to zero
    net = np.zeros((octree.n_cells, 3))
    np.add.at(net, octree.owner, octree.face_area_vectors)
    n = octree.n_internal
    np.add.at(net, octree.neighbour[:n], -octree.face_area_vectors[:n])
    assert np.abs(net).max() < 1e-14
    # a coarse cell touching the refined block on one face has 6 - 1 + 4 = 9 faces
    counts = octree.cell_faces.counts()
    assert counts.max() == 9 and set(counts[octree.cell_shape >= 0]) == {6}


def test_hanging_faces_non_orthogonality_and_skewness(octree):
    """Derived by hand: a coarse cube of side h (centre at h/2 from the interface) meets
    fine cubes of side h/2 (centres at h/4 beyond it, offset h/4 in each tangential
    direction). d = (3h/4, h/4, h/4) against the face normal (1, 0, 0):
    angle = atan(sqrt(2) (h/4) / (3h/4)) = atan(sqrt(2)/3) = 25.2394 deg. The line from the
    coarse centre crosses the interface at (h/6, h/6) from the coarse face's centre, while
    the fine face's centroid is at (h/4, h/4): |x_f - x_i| = sqrt(2) h/12, over
    |d| = h sqrt(11)/4: skewness sqrt(2)/3/sqrt(11) = 0.14213."""
    non_orth = quality.non_orthogonality_deg(octree)[: octree.n_internal]
    skew = quality.skewness(octree)[: octree.n_internal]
    hanging = non_orth > 1e-9
    # each of the 6 sides of the refined 2 x 2 x 2 block has 4 coarse neighbours x 4 fine faces
    assert np.count_nonzero(hanging) == 6 * 4 * 4
    np.testing.assert_allclose(non_orth[hanging], math.degrees(math.atan(math.sqrt(2) / 3)),
                               rtol=1e-12)
    np.testing.assert_allclose(skew[hanging], math.sqrt(2) / 3 / math.sqrt(11), rtol=1e-12)
    assert np.abs(skew[~hanging]).max() < 1e-12
    # the size ratio across the interface is 2 (a coarse cube h thick against fine cubes
    # h/2 thick), exactly on every hanging face; the volume ratio is 8
    growth = quality.growth_ratio(octree)[: octree.n_internal]
    np.testing.assert_allclose(growth[hanging], 2.0, rtol=1e-12)
    assert np.abs(growth[~hanging] - 1.0).max() < 1e-12
    assert quality.volume_ratio(octree)[: octree.n_internal].max() == pytest.approx(8.0)


def test_hanging_edge_midpoints_make_five_point_faces(octree):
    sizes = np.diff(octree.face_offsets)
    assert set(sizes.tolist()) == {4, 5}
    assert np.all(quality.face_warp_deg(octree) < 1e-6)           # every face is planar


# -- a cube cut into two polyhedra ---------------------------------------------------------


def cut_cube() -> Mesh:
    """The unit cube cut by the plane x + y + z = 1/2: a corner tetrahedron (cell 1) and a
    10-point, 7-faced polyhedron (cell 0) sharing the triangular cut face."""
    pts = [(1, 0, 0), (1, 1, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (1, 1, 1), (0, 1, 1),
           (0.5, 0, 0), (0, 0.5, 0), (0, 0, 0.5), (0, 0, 0)]
    a, b, c, o = 7, 8, 9, 10                  # cut points on x, y, z; the origin
    faces = [
        [a, c, b],                            # cut face, normal -(1,1,1): out of cell 0
        [a, 0, 4, 3, c],                      # y = 0 pentagon (normal -y)
        [b, 2, 1, 0, a],                      # z = 0 pentagon (normal -z)
        [c, 3, 6, 2, b],                      # x = 0 pentagon (normal -x)
        [0, 1, 5, 4],                         # x = 1
        [1, 2, 6, 5],                         # y = 1
        [3, 4, 5, 6],                         # z = 1
        [o, a, c], [o, b, a], [o, c, b],      # the tetrahedron's three cube faces
    ]
    owner = [0] * 7 + [1] * 3
    neighbour = [1] + [-1] * 9
    sizes = [len(f) for f in faces]
    return Mesh(mesh_from_faces(
        path="cut", points=np.array(pts, float), dim=3,
        face_offsets=np.concatenate([[0], np.cumsum(sizes)]), face_points=np.concatenate(faces),
        owner=np.array(owner), neighbour=np.array(neighbour)))


def test_cube_cut_into_polyhedra_of_known_volume():
    mesh = cut_cube()
    # [computed] corner tetrahedron (1/2)^3 / 6 = 1/48, centroid (1/8, 1/8, 1/8); the rest
    # 47/48 with centroid (1/2 - (1/48)(1/8)) / (47/48) = 191/376 in each coordinate
    np.testing.assert_allclose(mesh.cell_volumes, [47 / 48, 1 / 48], rtol=1e-14)
    np.testing.assert_allclose(mesh.cell_centroids[1], [1 / 8] * 3, rtol=1e-14)
    np.testing.assert_allclose(mesh.cell_centroids[0], [191 / 376] * 3, rtol=1e-14)
    assert mesh.cell_counts == {"polyhedron": 2}
    assert not quality.folded_polyhedra(mesh).any()
    # the link from the polyhedron's centroid to the tetrahedron's is along (1,1,1): normal
    assert quality.non_orthogonality_deg(mesh)[0] == pytest.approx(0.0, abs=1e-9)
    assert np.all(np.isnan(quality.scaled_jacobian(mesh)))      # not defined, never 0


def test_a_polyhedron_seen_from_behind_is_folded():
    mesh = cut_cube()
    data = mesh.data
    # push the cut face's points through the far corner: cell 0 now folds over itself
    pts = data.points.copy()
    pts[[7, 8, 9]] = [(1.6, 0, 0), (0, 1.6, 0), (0, 0, 1.6)]
    import dataclasses
    folded = Mesh(dataclasses.replace(data, points=pts))
    assert quality.folded_polyhedra(folded)[0]


# -- random convex polyhedra against scipy -------------------------------------------------


def hull_cell(points: np.ndarray) -> tuple[Mesh, ConvexHull]:
    """One cell bounded by the convex hull of ``points``; coplanar hull triangles merged
    into one polygon per facet plane."""
    hull = ConvexHull(points)
    planes = np.round(hull.equations, 9)
    _, facet = np.unique(planes, axis=0, return_inverse=True)
    faces = []
    for f in np.unique(facet):
        tris = hull.simplices[facet.ravel() == f]
        ids = np.unique(tris)
        normal = hull.equations[np.flatnonzero(facet.ravel() == f)[0], :3]
        centre = points[ids].mean(axis=0)
        u = points[ids[0]] - centre
        u /= np.linalg.norm(u)
        v = np.cross(normal, u)
        angle = np.arctan2((points[ids] - centre) @ v, (points[ids] - centre) @ u)
        faces.append(ids[np.argsort(angle)])          # counter-clockwise about the normal
    return one_cell(points, faces), hull


def tet_centroid(points: np.ndarray, hull: ConvexHull) -> np.ndarray:
    """Centroid of the hull from the tetrahedra joining an interior point to each facet."""
    inner = points[hull.vertices].mean(axis=0)
    tri = points[hull.simplices]
    vol = np.abs(np.einsum("ij,ij->i", tri[:, 0] - inner,
                           np.cross(tri[:, 1] - inner, tri[:, 2] - inner))) / 6
    cent = (tri.sum(axis=1) + inner) / 4
    return (vol[:, None] * cent).sum(axis=0) / vol.sum()


@pytest.mark.parametrize("seed", range(8))
def test_random_convex_polyhedra_match_scipy(seed):
    rng = np.random.default_rng(seed)
    points = rng.normal(size=(12 + 4 * seed, 3)) * rng.uniform(0.1, 3.0, 3)
    mesh, hull = hull_cell(points)
    # Reference: scipy.spatial.ConvexHull volume (Qhull)
    assert mesh.cell_volumes[0] == pytest.approx(hull.volume, rel=1e-12)
    np.testing.assert_allclose(mesh.cell_centroids[0], tet_centroid(points, hull),
                               rtol=1e-10, atol=1e-12)
    assert mesh.face_areas.sum() == pytest.approx(hull.area, rel=1e-12)


@pytest.mark.parametrize("n", [3, 5, 8, 13])
def test_oblique_prisms_with_polygonal_faces_match_scipy(n):
    # a random convex n-gon extruded along a slanted vector: two n-gon faces and n quads
    rng = np.random.default_rng(n)
    angles = np.sort(rng.uniform(0, 2 * np.pi, n))
    base = np.column_stack([np.cos(angles), np.sin(angles) * 0.6, np.zeros(n)])
    points = np.vstack([base, base + [0.3, -0.2, 1.7]])
    mesh, hull = hull_cell(points)
    assert set(np.diff(mesh.face_offsets).tolist()) == ({n, 4} if n != 4 else {4})
    assert mesh.cell_volumes[0] == pytest.approx(hull.volume, rel=1e-12)
    np.testing.assert_allclose(mesh.cell_centroids[0], tet_centroid(points, hull), rtol=1e-10,
                               atol=1e-12)
    assert quality.face_warp_deg(mesh).max() < 1e-6


# -- face warp -------------------------------------------------------------------------------


@pytest.mark.parametrize("h", [0.0, 0.01, 0.1, 0.3])
def test_warped_square_warps_by_atan_2h_over_side(h):
    """Derived by hand: a square of side a with corners lifted alternately by +h and -h has
    its vertex mean at the centre; the fan triangle (m, x0, x1) has the area vector
    (a h, 0, a^2 / 2) / 2 in the frame of its edge, at atan(2 h / a) to the face normal
    (0, 0, 1), and by symmetry so do the other three."""
    a = 2.0
    top = [(0, 0, h), (a, 0, -h), (a, a, h), (0, a, -h)]
    # a slab cell: the warped square on top of a flat one, closed by four side quads
    points = np.array([(0, 0, -1.0), (a, 0, -1.0), (a, a, -1.0), (0, a, -1.0), *top])
    faces = [[0, 3, 2, 1], [4, 5, 6, 7], [0, 1, 5, 4], [1, 2, 6, 5], [2, 3, 7, 6], [3, 0, 4, 7]]
    mesh = one_cell(points, faces)
    warp = quality.face_warp_deg(mesh)
    assert warp[1] == pytest.approx(math.degrees(math.atan(2 * h / a)), abs=1e-12)
    assert warp[0] == pytest.approx(0.0, abs=1e-12)
    assert mesh.cell_volumes[0] == pytest.approx(a * a * 1.0, rel=1e-12)   # +h and -h cancel


# -- rules, rays and wall stacks on polyhedra -------------------------------------------------


def test_mesh_rules_on_a_refined_block(octree):
    from pathlib import Path

    from caselint.engine.runner import check_rule
    from caselint.manifest.case import Case, CaseInfo, MeshSpec
    from caselint.rules import cell_growth, cell_quality, mesh_integrity, mesh_quality

    case = Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="octree"),
                mesh=MeshSpec(file=Path("mesh.vtu")))
    values, details = {}, {}
    for rule in mesh_quality.RULES + cell_quality.RULES + cell_growth.RULES + mesh_integrity.RULES:
        result = check_rule(rule, case, octree)
        assert result.skipped is None, (rule.id, result.skipped)
        values[rule.id] = result.measurements[0].value
        details[rule.id] = result.measurements[0].detail
    assert values["inverted-cells"] == 0 and values["open-cells"] == 0
    assert values["non-orthogonality"] == pytest.approx(25.2394018, rel=1e-8)
    assert values["skewness"] == pytest.approx(0.1421338, rel=1e-6)
    assert values["face-warp"] == pytest.approx(0.0, abs=1e-6)
    assert values["growth-ratio"] == pytest.approx(2.0, rel=1e-12)     # an octree's 2:1 step
    assert values["volume-ratio"] == pytest.approx(8.0)
    # cubes everywhere the shape is known; the 48 polyhedra are not measured
    assert values["aspect-ratio"] == pytest.approx(1.0)
    assert "not defined for 48 general polyhedra" in details["aspect-ratio"]
    assert values["cell-shape"] == pytest.approx(1.0)
    assert "not defined for 48 general polyhedra" in details["cell-shape"]
    for rule in ("duplicate-points", "non-manifold-faces", "degenerate-faces",
                 "unmatched-boundary-elements"):
        assert values[rule] == 0, rule
    assert values["disconnected-pieces"] == 1


def test_rays_cross_the_refined_cells(octree):
    from caselint.mesh.rays import WALL, wall_rays

    hits = wall_rays(octree, ("xmin", "xmax"))
    assert np.all(hits.status == WALL)
    np.testing.assert_allclose(hits.width, 4.0, rtol=1e-12)
    start = octree.face_centroids[hits.start_face]
    middle = (np.abs(start[:, 1] - 2) < 1) & (np.abs(start[:, 2] - 2) < 1)
    # through the refined middle: coarse, 4 fine, coarse; elsewhere 4 coarse cubes
    assert set(hits.cells[middle].tolist()) == {6} and set(hits.cells[~middle].tolist()) == {4}


def test_a_wall_stack_goes_on_through_a_hanging_face():
    from caselint.mesh.blocks import graded
    from caselint.mesh.wall_layers import wall_layers

    zs = np.concatenate([graded(0.0, 0.362, 3, 1.2), [1.0, 2.0]])   # 0.1, 0.12, 0.144, ...
    axis = np.linspace(0.0, 4.0, 5)
    # the second and third layers are split 2:1 above the middle of the wall
    mesh = Mesh(refined_block(axis, axis, zs, ((1, 3), (1, 3), (0.15, 0.3))))
    wall = mesh.group_faces("zmin")
    # the split halves the layer heights (0.12 to 0.06): let the stack go on through a
    # shrink to 0.6 of the layer below (the default ends it below 0.9)
    layers = wall_layers(mesh, wall, max_aspect=1.0, min_ratio=0.5)
    centre = np.abs(mesh.face_centroids[wall, :2] - 2.0).max(axis=1) < 1
    h = np.diff(zs)
    # outside: three coarse layers 0.1, 0.12, 0.144; inside the coarse first layer (a
    # polyhedron with a split top), then two fine cells per refined layer
    np.testing.assert_allclose(layers.heights[~centre, :3], np.tile(h[:3], (12, 1)), rtol=1e-9)
    inside = np.array([h[0], h[1] / 2, h[1] / 2, h[2] / 2, h[2] / 2])
    np.testing.assert_allclose(layers.heights[centre, :5], np.tile(inside, (4, 1)), rtol=1e-9)
    assert np.all(layers.n_layers[centre] >= 5) and np.all(layers.n_layers[~centre] >= 3)
