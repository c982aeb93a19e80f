"""Time-step physics on meshes and inputs with known answers.

References: Co on a box cell is U dt / dx exactly and dt (|u|/dx + |v|/dy + |w|/dz) for a
skewed velocity [computed, REFERENCES.md section 4]; for a convex cell, sum_f |n . S_f| is
twice the area of the cell's shadow on a plane normal to n, checked with
scipy.spatial.ConvexHull; explicit stability limits are checked against the spectral radius
of the actual Runge-Kutta step matrix of periodic upwind/central advection and explicit
diffusion (numpy eigenvalues), independent of caselint's amplification polynomial;
imaginary-axis limits sqrt(3) (RK3) and 2 sqrt(2) (RK4) are analytic [computed]; real-axis
intervals 2.5127 (RK3) and 2.7853 (RK4) and the upwind limits 1.256 / 1.393 of Baldauf 2008
are [memory].
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.spatial import ConvexHull

from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import structured_hex, structured_quad, tetrahedralise
from caselint.physics import timestep

DX, DY, DZ = 0.125, 0.25, 0.5     # exact in binary


def box(nx=4, ny=3, nz=2, dx=DX, dy=DY, dz=DZ):
    return mesh_from_meshio(structured_hex(np.arange(nx + 1) * dx, np.arange(ny + 1) * dy,
                                           np.arange(nz + 1) * dz))


def rotation(axis, angle_deg):
    axis = np.asarray(axis, float) / np.linalg.norm(axis)
    a = math.radians(angle_deg)
    k = np.array([[0, -axis[2], axis[1]], [axis[2], 0, -axis[0]], [-axis[1], axis[0], 0]])
    return np.eye(3) + math.sin(a) * k + (1 - math.cos(a)) * (k @ k)


# -- Courant number on box cells ----------------------------------------------------------


def test_courant_on_uniform_hex_block_is_u_dt_over_dx():
    mesh = box()
    co = timestep.courant_numbers(mesh, 2e-3, np.array([10.0, 0.0, 0.0]))
    # [computed] U dt / dx = 10 * 2e-3 / 0.125 = 0.16 in every cell
    assert co == pytest.approx(np.full(mesh.n_cells, 0.16), rel=1e-12)


def test_courant_with_skewed_velocity_sums_the_directions():
    mesh = box()
    u = np.array([3.0, -4.0, 12.0])
    dt = 1e-3
    co = timestep.courant_numbers(mesh, dt, u)
    expected = dt * (3.0 / DX + 4.0 / DY + 12.0 / DZ)      # [computed] = 0.064
    assert expected == pytest.approx(0.064, rel=1e-12)
    assert co == pytest.approx(np.full(mesh.n_cells, expected), rel=1e-12)


def test_courant_is_independent_of_the_orientation_of_mesh_and_flow():
    m = structured_hex(np.arange(4) * DX, np.arange(3) * DY, np.arange(3) * DZ)
    r = rotation([1.0, 2.0, 0.5], 37.0)
    m.points = m.points @ r.T
    mesh = mesh_from_meshio(m)
    u = np.array([3.0, -4.0, 12.0])
    co = timestep.courant_numbers(mesh, 1e-3, r @ u)
    assert co == pytest.approx(np.full(mesh.n_cells, 0.064), rel=1e-10)
    isq = timestep.inverse_spacing_squared(mesh)
    assert isq == pytest.approx(np.full(mesh.n_cells, DX**-2 + DY**-2 + DZ**-2), rel=1e-10)


def test_courant_on_2d_quads_uses_unit_depth():
    mesh = mesh_from_meshio(structured_quad(np.arange(5) * DX, np.arange(3) * DY))
    co = timestep.courant_numbers(mesh, 1e-3, np.array([3.0, -4.0, 0.0]))
    assert co == pytest.approx(np.full(mesh.n_cells, 1e-3 * (3.0 / DX + 4.0 / DY)), rel=1e-12)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_courant_of_convex_cells_matches_the_shadow_area(seed):
    # [scipy.spatial.ConvexHull] for a convex cell sum_f |n . S_f| = 2 A_shadow(n), so
    # Co = dt |u| A_shadow / V, with V and A_shadow from the hull of the vertices.
    rng = np.random.default_rng(seed)
    m = tetrahedralise(structured_hex(np.linspace(0, 1, 3), np.linspace(0, 0.6, 3),
                                      np.linspace(0, 0.3, 2)))
    m.points = m.points + rng.uniform(-0.05, 0.05, m.points.shape)   # keeps tets valid
    mesh = mesh_from_meshio(m)
    u = np.array([2.0, -1.0, 0.5])
    dt = 1e-3
    co = timestep.courant_numbers(mesh, dt, u)
    n = u / np.linalg.norm(u)
    e1 = np.cross(n, [0.0, 0.0, 1.0])
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(n, e1)
    tets = mesh.data.shapes[0].connectivity
    for cell in (0, 7, len(tets) - 1):
        xyz = mesh.points[tets[cell]]
        volume = ConvexHull(xyz).volume
        shadow = ConvexHull(np.column_stack([xyz @ e1, xyz @ e2])).volume   # 2-D: area
        assert co[cell] == pytest.approx(dt * np.linalg.norm(u) * shadow / volume, rel=1e-9)


def test_parallelepiped_courant_matches_the_shadow_area():
    # an affine image of a box has planar faces, so the hull check holds for hexahedra too
    m = structured_hex([0, 0.3], [0, 0.2], [0, 0.1])
    a = np.array([[1.0, 0.4, 0.1], [0.0, 1.0, 0.3], [0.2, 0.0, 1.0]])
    m.points = m.points @ a.T
    mesh = mesh_from_meshio(m)
    u = np.array([1.0, 2.0, -3.0])
    co = timestep.courant_numbers(mesh, 1e-2, u)
    n = u / np.linalg.norm(u)
    e1 = np.cross(n, [1.0, 0.0, 0.0])
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(n, e1)
    xyz = mesh.points
    shadow = ConvexHull(np.column_stack([xyz @ e1, xyz @ e2])).volume
    expected = 1e-2 * np.linalg.norm(u) * shadow / ConvexHull(xyz).volume
    assert co[0] == pytest.approx(expected, rel=1e-12)


def test_degenerate_cells_get_zero_not_nan():
    m = structured_hex([0, 1, 2], [0, 1], [0, 1])
    m.points[m.points[:, 0] == 2.0, 0] = 1.0          # the second cell collapses to zero volume
    mesh = mesh_from_meshio(m)
    co = timestep.courant_numbers(mesh, 0.1, np.array([1.0, 0.0, 0.0]))
    assert np.all(np.isfinite(co))
    assert co[0] == pytest.approx(0.1) and co[1] == 0.0
    assert np.all(np.isfinite(timestep.inverse_spacing_squared(mesh)))


# -- acoustic and diffusion numbers --------------------------------------------------------


def test_acoustic_courant_on_box_cells():
    mesh = box()
    u, c, dt = np.array([30.0, 0.0, 0.0]), 340.0, 1e-5
    values = timestep.acoustic_courant_numbers(mesh, dt, u, c)
    # [computed] dt sum_i (|u_i| + c) / dx_i
    expected = dt * ((30.0 + c) / DX + c / DY + c / DZ)
    assert values == pytest.approx(np.full(mesh.n_cells, expected), rel=1e-12)


def test_acoustic_courant_of_a_slab_tends_to_the_1d_form():
    h = 0.01
    mesh = box(3, 1, 1, dx=h, dy=1e4 * h, dz=1e4 * h)
    values = timestep.acoustic_courant_numbers(mesh, 1e-5, np.array([20.0, 0.0, 0.0]), 340.0)
    exact = 1e-5 * ((20.0 + 340.0) / h + 2 * 340.0 / (1e4 * h))    # box form [computed]
    assert values[1] == pytest.approx(exact, rel=1e-9)
    assert values[1] == pytest.approx((20.0 + 340.0) * 1e-5 / h, rel=2e-4)   # (|u|+c) dt/dx


@pytest.mark.parametrize("dims, limit", [(1, 0.5), (2, 0.25), (3, 1.0 / 6.0)])
def test_explicit_diffusion_limit_on_equal_spacing(dims, limit):
    # largest nu dt / dx^2 with nu dt sum_i 1/dx_i^2 <= 1/2: 1/2, 1/4, 1/6 [computed]
    h, nu = 0.02, 1.5e-5
    dt_max = 0.5 / (nu * dims / h**2)
    assert timestep.diffusion_number(nu, dt_max, (h,) * dims) == pytest.approx(0.5)
    assert nu * dt_max / h**2 == pytest.approx(limit, rel=1e-12)
    if dims == 1:
        mesh = box(3, 1, 1, dx=h, dy=1e4 * h, dz=1e4 * h)     # a slab: 1-D spacing
    elif dims == 2:
        mesh = mesh_from_meshio(structured_quad(np.arange(4) * h, np.arange(3) * h))
    else:
        mesh = box(3, 2, 2, dx=h, dy=h, dz=h)
    values = timestep.diffusion_numbers(mesh, dt_max, nu)
    assert values == pytest.approx(np.full(mesh.n_cells, 0.5), rel=1e-7)


@pytest.mark.parametrize("dims", [1, 2, 3])
def test_diffusion_limit_agrees_with_the_ftcs_spectral_radius(dims):
    # [numpy eigenvalues] forward Euler on the periodic 2nd-order Laplacian of 4^d nodes:
    # spectral radius <= 1 exactly up to nu dt / dx^2 = 1/(2d)
    n = 4
    lap1 = -2 * np.eye(n) + np.roll(np.eye(n), 1, 1) + np.roll(np.eye(n), -1, 1)
    lap = np.zeros((n**dims, n**dims))
    for k in range(dims):
        parts = [np.eye(n)] * dims
        parts[k] = lap1
        term = parts[0]
        for p in parts[1:]:
            term = np.kron(term, p)
        lap += term
    for r, stable in ((1.0 / (2 * dims), True), (1.02 / (2 * dims), False)):
        radius = np.max(np.abs(np.linalg.eigvals(np.eye(n**dims) + r * lap)))
        assert bool(radius <= 1 + 1e-12) is stable


# -- explicit stability table --------------------------------------------------------------


@pytest.mark.parametrize("key", sorted(timestep.ADVECTION_LIMITS))
def test_stability_table_matches_the_amplification_polynomial(key):
    computed = timestep.advection_stability_limit(*key)
    assert 0.0 <= computed - timestep.ADVECTION_LIMITS[key] < 1e-4


def test_stability_limits_against_analytic_and_published_values():
    limit = timestep.advection_stability_limit
    assert limit("forward-euler", "upwind") == pytest.approx(1.0, abs=1e-9)   # [computed]
    assert limit("rk3", "central") == pytest.approx(math.sqrt(3), abs=1e-9)   # [computed]
    assert limit("rk4", "central") == pytest.approx(2 * math.sqrt(2), abs=1e-9)
    assert limit("rk3", "upwind") == pytest.approx(1.256, abs=5e-4)          # Baldauf [memory]
    assert limit("rk4", "upwind") == pytest.approx(1.393, abs=5e-4)          # Baldauf [memory]
    assert limit("forward-euler", "central") == 0.0 and limit("rk2", "central") == 0.0
    interval = timestep.real_axis_stability_interval
    assert interval("forward-euler") == pytest.approx(2.0, abs=1e-9)
    assert interval("rk3") == pytest.approx(2.5127, abs=1e-4)                 # [memory]
    assert interval("rk4") == pytest.approx(2.7853, abs=1e-4)                 # [memory]
    # the diffusion limit 1/2 is safe for rk3/rk4: their real intervals exceed 2
    assert interval("rk3") / 4 > 0.5 and interval("rk4") / 4 > 0.5


@pytest.mark.parametrize("scheme, advection", [("rk3", "upwind"), ("rk4", "upwind"),
                                               ("rk4", "central"), ("forward-euler", "upwind")])
def test_stability_table_against_the_rk_step_matrix(scheme, advection):
    # [numpy eigenvalues] the RK step matrix sum_k (dt L)^k / k! of periodic 1-D advection
    n = 64
    shift = np.roll(np.eye(n), 1, 1)                  # (S phi)_j = phi_{j-1}
    if advection == "upwind":
        op = -(np.eye(n) - shift)
    else:
        op = -0.5 * (shift.T - shift)
    stages = timestep.EXPLICIT_STAGES[scheme]
    limit = timestep.ADVECTION_LIMITS[(scheme, advection)]

    def radius(courant):
        step, term = np.eye(n), np.eye(n)
        for k in range(1, stages + 1):
            term = term @ (courant * op) / k
            step = step + term
        return np.max(np.abs(np.linalg.eigvals(step)))

    assert radius(limit) <= 1 + 1e-9
    assert radius(limit * 1.01) > 1 + 1e-9


def test_explicit_limit_defaults_to_forward_euler_upwind():
    assert timestep.explicit_courant_limit(None, None) == 1.0
    rk4_upwind = timestep.ADVECTION_LIMITS[("rk4", "upwind")]
    assert timestep.explicit_courant_limit("rk4", None) == rk4_upwind


# -- face velocities from fields -----------------------------------------------------------


def test_face_velocity_from_points_and_cells():
    m = tetrahedralise(structured_hex([0, 1, 2], [0, 1], [0, 1]))     # padded triangle faces
    mesh = mesh_from_meshio(m)
    a = np.array([[1.0, 0.5, 0.0], [0.0, 2.0, 0.3], [0.1, 0.0, -1.0]])
    point_u = mesh.points @ a.T                  # a linear field: face mean = value at mean
    faces = timestep.face_velocity_from_points(mesh, point_u)
    tri_mean = mesh.points[mesh.face_point_table()[:, :3]].mean(axis=1)
    assert faces == pytest.approx(tri_mean @ a.T, abs=1e-12)
    cell_u = np.arange(mesh.n_cells * 3, dtype=float).reshape(-1, 3)
    faces = timestep.face_velocity_from_cells(mesh, cell_u)
    inner = mesh.neighbour >= 0
    assert faces[inner] == pytest.approx(0.5 * (cell_u[mesh.owner[inner]]
                                                + cell_u[mesh.neighbour[inner]]))
    assert faces[~inner] == pytest.approx(cell_u[mesh.owner[~inner]])


def test_uniform_fields_give_the_reference_courant_number():
    mesh = box()
    u = np.array([3.0, -4.0, 12.0])
    from_points = timestep.face_velocity_from_points(mesh, np.tile(u, (mesh.n_points, 1)))
    from_cells = timestep.face_velocity_from_cells(mesh, np.tile(u, (mesh.n_cells, 1)))
    for faces in (from_points, from_cells):
        assert timestep.courant_numbers(mesh, 1e-3, faces) == pytest.approx(
            np.full(mesh.n_cells, 0.064), rel=1e-12)


# -- time scales ---------------------------------------------------------------------------


def test_cylinder_shedding_period_and_steps():
    # D = 0.1 m, U = 10 m/s, St 0.2 (Williamson 1996 [memory]): T = 0.05 s [computed]
    period = timestep.shedding_period(0.1, 10.0, 0.2)
    assert period == pytest.approx(0.05, rel=1e-12)
    assert period / 5e-4 == pytest.approx(100.0, rel=1e-12)     # 100 steps per period


def test_roshko_strouhal():
    # St = 0.212 (1 - 21.2/Re) (Roshko 1954 [memory]); Re = 100 -> 0.167056 [computed]
    assert timestep.roshko_strouhal(100.0) == pytest.approx(0.167056, rel=1e-12)
    with pytest.raises(ValueError, match="50 <= Re <= 150"):
        timestep.roshko_strouhal(1000.0)


def test_flow_through_and_nyquist():
    assert timestep.flow_through_time(2.0, 4.0) == 0.5
    assert timestep.nyquist_interval(50.0) == pytest.approx(0.01)
    assert timestep.max_time_step(1e-3, 4.0, 1.0) == pytest.approx(2.5e-4)
