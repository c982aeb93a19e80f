"""Face and cell geometry against closed forms, exact integrals and scipy's ConvexHull.

References are named beside each test: closed-form volumes and centroids of boxes, prisms,
pyramids and tetrahedra; Gauss-Legendre quadrature of the trilinear Jacobian; the
divergence theorem; ``scipy.spatial.ConvexHull`` volumes.
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest
from scipy.spatial import ConvexHull

from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import graded, shuffled, structured_hex, structured_quad, tetrahedralise

# every test here runs with the numpy kernels and with the compiled ones
pytestmark = pytest.mark.usefixtures("kernel_mode")

RNG_SEED = 20240611


def perturbed_block(n=5, amplitude=0.2, seed=RNG_SEED):
    """Unit-cube hex block with interior nodes moved by up to ``amplitude`` cell sizes."""
    m = structured_hex(*(np.linspace(0.0, 1.0, n + 1),) * 3)
    inner = np.all((m.points > 1e-9) & (m.points < 1 - 1e-9), axis=1)
    rng = np.random.default_rng(seed)
    m.points[inner] += rng.uniform(-amplitude / n, amplitude / n, (inner.sum(), 3))
    return m


def one(cell, pts):
    pts = np.asarray(pts, dtype=float)
    return mesh_from_meshio(meshio.Mesh(pts, [(cell, np.arange(len(pts))[None, :])]))


def test_uniform_block_volumes_areas_centroids():
    # Closed form: a 4 x 3 x 2 block of 0.5 x 1 x 2 m boxes.
    mesh = mesh_from_meshio(structured_hex(np.linspace(0, 2, 5), np.linspace(0, 3, 4),
                                           np.linspace(0, 4, 3)))
    assert np.allclose(mesh.cell_volumes, 1.0, rtol=1e-14)
    assert mesh.cell_volumes.sum() == pytest.approx(24.0, rel=1e-14)
    boundary_area = mesh.face_areas[mesh.boundary_faces].sum()
    assert boundary_area == pytest.approx(2 * (2 * 3 + 2 * 4 + 3 * 4), rel=1e-14)
    assert np.allclose(mesh.in_file_order(mesh.cell_centroids)[0], [0.25, 0.5, 1.0], atol=1e-15)
    lo, hi = mesh.bounds
    assert np.allclose(lo, 0) and np.allclose(hi, [2, 3, 4])


def test_graded_block_volumes_are_products_of_spacings():
    # Closed form: V_ijk = dx_i dy_j dz_k on a tensor grid.
    xs, ys, zs = graded(0, 1, 6, 1.3), graded(0, 2, 4, 0.8), np.array([0.0, 0.5])
    mesh = mesh_from_meshio(structured_hex(xs, ys, zs))
    expected = (np.diff(zs)[:, None, None] * np.diff(ys)[None, :, None]
                * np.diff(xs)[None, None, :]).ravel()
    assert np.allclose(mesh.in_file_order(mesh.cell_volumes), expected, rtol=1e-13)
    centres = (xs[:-1] + xs[1:]) / 2
    assert np.allclose(mesh.in_file_order(mesh.cell_centroids)[:6, 0], centres, rtol=1e-13)


def test_closed_form_tet_wedge_pyramid_volumes_and_centroids():
    # Closed forms: tet det/6; oblique prism = base area x height; pyramid = base x h / 3
    # with centroid at 1/4 of the height, wherever the apex sits over the base plane.
    rng = np.random.default_rng(RNG_SEED)
    p = rng.uniform(-1, 1, (4, 3))
    det = np.linalg.det(np.array([p[1] - p[0], p[2] - p[0], p[3] - p[0]]))
    if det < 0:
        p[[1, 2]] = p[[2, 1]]
    tet = one("tetra", p)
    assert tet.cell_volumes[0] == pytest.approx(abs(det) / 6, rel=1e-13)
    assert np.allclose(tet.cell_centroids[0], p.mean(axis=0), atol=1e-14)
    tri = np.array([(0, 0, 0), (3, 0, 0), (1, 2, 0)], float)
    shift = np.array([0.7, -0.4, 1.5])
    wedge = one("wedge", np.vstack([tri, tri + shift]))
    assert wedge.cell_volumes[0] == pytest.approx(3.0 * 1.5, rel=1e-14)  # area 3, height 1.5
    assert np.allclose(wedge.cell_centroids[0], tri.mean(axis=0) + shift / 2, atol=1e-14)
    base = [(0, 0, 0), (2, 0, 0), (2, 3, 0), (0, 3, 0)]
    pyr = one("pyramid", base + [(3.5, -1.0, 1.2)])
    assert pyr.cell_volumes[0] == pytest.approx(6.0 * 1.2 / 3, rel=1e-14)
    assert pyr.cell_centroids[0][2] == pytest.approx(1.2 / 4, rel=1e-13)


def test_trapezoid_face_centroid_and_triangle_face_area():
    # Closed form: centroid of a trapezoid with parallel sides a (y=0) and b (y=h) lies at
    # y = h (a + 2b) / (3 (a + b)); a padded triangle face gets its exact area.
    pts = [(0, 0, 0), (4, 0, 0), (3, 1, 0), (1, 1, 0), (0, 0, 1), (4, 0, 1), (3, 1, 1), (1, 1, 1)]
    mesh = one("hexahedron", pts)
    bottom = np.flatnonzero(np.isclose(mesh.face_centroids[:, 2], 0))[0]
    assert mesh.face_centroids[bottom][1] == pytest.approx((4 + 2 * 2) / (3 * 6), rel=1e-14)
    assert mesh.face_areas[bottom] == pytest.approx(3.0, rel=1e-14)
    assert mesh.cell_volumes[0] == pytest.approx(3.0, rel=1e-14)
    tet = one("tetra", [(0, 0, 0), (2, 0, 0), (0, 3, 0), (0, 0, 1)])
    z0 = np.flatnonzero(np.isclose(tet.face_centroids[:, 2], 0))[0]
    assert tet.face_areas[z0] == pytest.approx(3.0, rel=1e-14)
    assert np.allclose(tet.face_centroids[z0], [2 / 3, 1, 0], atol=1e-15)


def _trilinear_volume(p):
    """Reference: integral of det J of the trilinear map, Gauss-Legendre 3 points per axis."""
    g, w = np.polynomial.legendre.leggauss(3)
    g, w = (g + 1) / 2, w / 2
    corner = np.array([(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0),
                       (0, 0, 1), (1, 0, 1), (1, 1, 1), (0, 1, 1)], float)
    total = 0.0
    for a, wa in zip(g, w):
        for b, wb in zip(g, w):
            for c, wc in zip(g, w):
                u = np.array([a, b, c])
                f = np.where(corner == 1, u, 1 - u)       # per-axis linear factors
                dn = np.empty((8, 3))
                for k in range(3):
                    d = np.where(corner[:, k] == 1, 1.0, -1.0)
                    others = [j for j in range(3) if j != k]
                    dn[:, k] = d * f[:, others[0]] * f[:, others[1]]
                total += wa * wb * wc * np.linalg.det(p.T @ dn)
    return total


def test_warped_hex_volume_equals_trilinear_integral():
    # Reference: the exact volume of the trilinear hexahedron (bilinear faces), by
    # quadrature; the face-pyramid split about face vertex means reproduces it exactly.
    m = perturbed_block(n=2, amplitude=0.3)
    m.points += np.random.default_rng(1).uniform(-0.05, 0.05, m.points.shape)
    mesh = mesh_from_meshio(m)
    volumes = mesh.in_file_order(mesh.cell_volumes)
    for c, conn in enumerate(m.cells[0].data):
        assert volumes[c] == pytest.approx(_trilinear_volume(m.points[conn]), rel=1e-12)


def test_total_volume_of_perturbed_block_is_the_box():
    # Divergence theorem: moving only interior nodes cannot change the enclosed volume.
    mesh = mesh_from_meshio(perturbed_block(n=6, amplitude=0.3))
    assert mesh.cell_volumes.sum() == pytest.approx(1.0, rel=1e-13)
    assert mesh.cell_volumes.min() > 0


def test_tet_volumes_equal_convex_hull():
    # Reference: scipy.spatial.ConvexHull volume of each tetrahedron (exact for simplices).
    m = tetrahedralise(perturbed_block(n=4, amplitude=0.25))
    mesh = mesh_from_meshio(m)
    hull = np.array([ConvexHull(m.points[c]).volume for c in m.cells[0].data])
    assert np.allclose(mesh.in_file_order(mesh.cell_volumes), hull, rtol=1e-12)


def test_hex_volumes_against_convex_hull():
    # Reference: ConvexHull. Affine images of boxes have planar faces: equal volumes. With
    # warped faces the cell lies inside the hull of its nodes: 0 <= hull - V, and the gap
    # grows with the warp (about 5 % of V for nodes moved by up to 10 % of a cell).
    affine = structured_hex(np.linspace(0, 1, 4), np.linspace(0, 2, 3), np.linspace(0, 1, 3))
    a = np.array([[1.0, 0.3, -0.2], [0.1, 0.9, 0.4], [0.2, -0.3, 1.2]])
    affine.points = affine.points @ a.T + [3.0, -1.0, 2.0]
    mesh = mesh_from_meshio(affine)
    hull = np.array([ConvexHull(affine.points[c]).volume for c in affine.cells[0].data])
    assert np.allclose(mesh.in_file_order(mesh.cell_volumes), hull, rtol=1e-12)
    warped = perturbed_block(n=4, amplitude=0.1)
    mesh = mesh_from_meshio(warped)
    hull = np.array([ConvexHull(warped.points[c]).volume for c in warped.cells[0].data])
    gap = (hull - mesh.in_file_order(mesh.cell_volumes)) / hull
    assert gap.min() > -1e-12 and gap.max() < 0.06


def test_numbering_does_not_change_geometry():
    # Renumbering points and cells is a relabelling: same volumes, areas and centroids.
    m = perturbed_block(n=4)
    a, b = mesh_from_meshio(m), mesh_from_meshio(shuffled(m, seed=5))
    assert np.allclose(np.sort(a.cell_volumes), np.sort(b.cell_volumes), rtol=1e-12)
    assert np.allclose(np.sort(a.face_areas), np.sort(b.face_areas), rtol=1e-12)
    assert a.n_faces == b.n_faces
    ca = a.cell_centroids[np.lexsort(a.cell_centroids.T)]
    cb = b.cell_centroids[np.lexsort(b.cell_centroids.T)]
    assert np.allclose(ca, cb, atol=1e-12)


def test_2d_quad_and_triangle_areas_and_edge_lengths():
    # Closed form: unit depth, so "volume" = area and face "area" = edge length.
    m = structured_quad(graded(0, 3, 3, 2.0), np.array([0.0, 0.5, 2.0]))
    mesh = mesh_from_meshio(m)
    assert mesh.dim == 2
    dx, dy = np.diff(graded(0, 3, 3, 2.0)), np.array([0.5, 1.5])
    assert np.allclose(mesh.in_file_order(mesh.cell_volumes), (dy[:, None] * dx[None, :]).ravel(),
                       rtol=1e-14)
    assert mesh.face_areas[mesh.boundary_faces].sum() == pytest.approx(2 * (3 + 2), rel=1e-14)
    assert np.allclose(mesh.face_area_vectors[:, 2], 0)
    out = np.einsum("ij,ij->i", mesh.face_area_vectors[mesh.boundary_faces],
                    mesh.face_centroids[mesh.boundary_faces]
                    - mesh.cell_centroids[mesh.owner[mesh.boundary_faces]])
    assert np.all(out > 0)
    tri = meshio.Mesh(np.array([(0, 0), (4, 0), (0, 3), (4, 3)], float),
                      [("triangle", np.array([[0, 1, 2], [1, 3, 2]]))])
    mesh = mesh_from_meshio(tri)
    assert np.allclose(mesh.cell_volumes, [6.0, 6.0], rtol=1e-14)
    assert np.allclose(mesh.cell_centroids[0], [4 / 3, 1, 0], atol=1e-15)
    assert np.allclose(np.sort(mesh.face_areas), [3, 3, 4, 4, 5], rtol=1e-14)
    assert mesh.n_faces == 5 and len(mesh.boundary_faces) == 4
