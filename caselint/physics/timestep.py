"""Time-step physics: Courant, acoustic and diffusion numbers per cell, explicit stability
limits, and the time scales a transient run must resolve (shedding period, flow-through).

SI units throughout (m, s, m/s, m^2/s, Hz). Per-cell numbers are vectorised over the faces
of a :class:`~caselint.mesh.model.Mesh`: each face adds its term to its owner and, when it
has one, to its neighbour (``np.bincount``), never a Python loop over cells or faces.

Definitions (finite volume, cell P with faces f, area vectors S_f and volume V):

- Courant number ``Co = 1/2 dt sum_f |u_f . S_f| / V`` (Courant, Friedrichs, Lewy 1928). On
  a box cell of sides dx, dy, dz this is exactly ``dt (|u|/dx + |v|/dy + |w|/dz)``.
- Cell widths: ``1/dx_eff = 1/2 sum_f |S_f| / V`` and
  ``sum_i 1/dx_i^2 = 1/2 sum_f |S_f|^2 / V^2``. Both hold exactly on a box cell (each pair of
  opposite faces has area V/dx_i), for any orientation of the box: ``1/dx_eff`` is then
  ``1/dx + 1/dy + 1/dz`` and the second is ``1/dx^2 + 1/dy^2 + 1/dz^2``.
- Acoustic Courant number ``1/2 dt sum_f (|u_f . S_f| + c |S_f|) / V = Co + c dt / dx_eff``:
  ``(|u| + c) dt / dx`` in 1-D; on a box, ``dt sum_i (|u_i| + c) / dx_i``, the summed
  wave-speed form of unsplit explicit finite-volume schemes (Blazek, Computational Fluid
  Dynamics: Principles and Applications, local time step [memory]).
- Diffusion (Fourier) number ``kappa dt sum_i 1/dx_i^2``; forward Euler with central
  differences is stable up to 1/2, i.e. ``kappa dt / dx^2 <= 1/(2d)`` on equal spacing in d
  dimensions [computed].
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

#: Explicit Runge-Kutta schemes of the case file and their number of stages (= order).
EXPLICIT_STAGES: dict[str, int] = {"forward-euler": 1, "rk2": 2, "rk3": 3, "rk4": 4}
#: Implicit schemes of the case file: no stability limit on the time step.
IMPLICIT_SCHEMES: tuple[str, ...] = ("backward-euler", "bdf2", "crank-nicolson")
#: Spatial schemes of the advection term the stability table knows.
ADVECTION_SCHEMES: tuple[str, ...] = ("upwind", "central")

#: Largest stable Courant number of linear advection, by (time scheme, advection scheme):
#: first-order upwind or second-order central differences in space, classical s-stage
#: Runge-Kutta of order s in time. [computed] from the amplification polynomial by
#: :func:`advection_stability_limit` and cut (not rounded) to 4 decimals, so a limit is
#: never above the true one (a test keeps the two within 1e-4); the upwind values agree
#: with Baldauf, J. Comput. Phys. 227 (2008), 1.256 and 1.393 [memory]. 0.0 means unstable
#: at any time step (central differences have purely imaginary symbols, and the forward
#: Euler and RK2 polynomials exceed 1 in modulus all along the imaginary axis).
ADVECTION_LIMITS: dict[tuple[str, str], float] = {
    ("forward-euler", "upwind"): 1.0,
    ("forward-euler", "central"): 0.0,
    ("rk2", "upwind"): 1.0,
    ("rk2", "central"): 0.0,
    ("rk3", "upwind"): 1.2563,
    ("rk3", "central"): 1.7320,   # sqrt(3)
    ("rk4", "upwind"): 1.3926,
    ("rk4", "central"): 2.8284,   # 2 sqrt(2)
}

#: Strouhal number of a circular cylinder, 300 < Re < 2e5 (Williamson, Annu. Rev. Fluid
#: Mech. 28, 1996) [memory]; used for bluff bodies in general as common practice.
BLUFF_BODY_STROUHAL = 0.2
#: Reynolds-number range of Roshko's laminar shedding fit (NACA Rep. 1191, 1954) [memory].
ROSHKO_RANGE: tuple[float, float] = (50.0, 150.0)


# -- explicit stability from the amplification polynomial ------------------------------


def amplification(scheme: str, z: np.ndarray) -> np.ndarray:
    """R(z) = sum_{k<=s} z^k / k! of an s-stage, order-s explicit Runge-Kutta scheme."""
    stages = EXPLICIT_STAGES[scheme]
    out = np.ones_like(z, dtype=complex)
    term = np.ones_like(z, dtype=complex)
    for k in range(1, stages + 1):
        term = term * z / k
        out = out + term
    return out


def _advection_eigenvalues(advection: str, courant: float, theta: np.ndarray) -> np.ndarray:
    """Fourier symbols dt * L(theta) of 1-D linear advection at Courant number ``courant``."""
    if advection == "upwind":
        return -courant * (1.0 - np.exp(-1j * theta))
    if advection == "central":
        return -1j * courant * np.sin(theta)
    raise ValueError(f"advection scheme must be one of {ADVECTION_SCHEMES}, got {advection!r}")


def _largest_stable(stable, upper: float) -> float:
    """Largest x in [0, upper] with stable(x), by bisection (stable on [0, x*] assumed).

    0.0 when already unstable at x = 0.01: the growth there (|R| - 1 >= 1e-9 for the
    schemes above) is far above round-off, so "unstable at any step" is not a rounding.
    """
    if not stable(0.01):
        return 0.0
    lo, hi = 0.01, upper
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if stable(mid) else (lo, mid)
    return lo


def advection_stability_limit(scheme: str, advection: str) -> float:
    """Largest stable Courant number of 1-D linear advection (von Neumann analysis)."""
    theta = np.linspace(0.0, math.pi, 20001)

    def stable(courant: float) -> bool:
        z = _advection_eigenvalues(advection, courant, theta)
        return bool(np.max(np.abs(amplification(scheme, z))) <= 1.0 + 1e-12)

    return _largest_stable(stable, 4.0)


def real_axis_stability_interval(scheme: str) -> float:
    """Length a of the stable interval [-a, 0] of the real axis (governs pure diffusion)."""

    def stable(a: float) -> bool:
        z = -np.linspace(0.0, a, 4001).astype(complex)
        return bool(np.max(np.abs(amplification(scheme, z))) <= 1.0 + 1e-12)

    return _largest_stable(stable, 4.0)


def explicit_courant_limit(scheme: str | None, advection: str | None) -> float:
    """Stability limit for an explicit run; forward Euler and upwind when not declared."""
    return ADVECTION_LIMITS[(scheme or "forward-euler", advection or "upwind")]


# -- per-cell numbers --------------------------------------------------------------------


def face_sum(mesh: "Mesh", per_face: np.ndarray) -> np.ndarray:
    """(C,) sum over each cell's faces of a per-face value (owner and neighbour alike)."""
    total = np.bincount(mesh.owner, weights=per_face, minlength=mesh.n_cells)
    inner = mesh.neighbour >= 0
    total += np.bincount(mesh.neighbour[inner], weights=per_face[inner], minlength=mesh.n_cells)
    return total


def face_fluxes(mesh: "Mesh", face_velocity: np.ndarray) -> np.ndarray:
    """(F,) volume flux magnitudes |u_f . S_f| (m^3/s); ``face_velocity`` is (3,) or (F, 3)."""
    s = mesh.face_area_vectors
    u = np.asarray(face_velocity, dtype=np.float64)
    if u.ndim == 1:
        return np.abs(s @ u)
    return np.abs(s[:, 0] * u[:, 0] + s[:, 1] * u[:, 1] + s[:, 2] * u[:, 2])


def valid_cells(mesh: "Mesh") -> np.ndarray:
    """(C,) True where the cell has a positive volume (others have no Courant number)."""
    return mesh.cell_volumes > 0.0


def _per_volume(mesh: "Mesh", summed: np.ndarray) -> np.ndarray:
    """``summed / V`` on cells of positive volume, 0 elsewhere (never inf or NaN)."""
    volumes = mesh.cell_volumes
    ok = volumes > 0.0
    return np.where(ok, summed / np.where(ok, volumes, 1.0), 0.0)


def courant_numbers(mesh: "Mesh", dt_s: float, face_velocity: np.ndarray) -> np.ndarray:
    """(C,) Co = 1/2 dt sum_f |u_f . S_f| / V; 0 on cells of non-positive volume."""
    return 0.5 * dt_s * _per_volume(mesh, face_sum(mesh, face_fluxes(mesh, face_velocity)))


def inverse_width(mesh: "Mesh") -> np.ndarray:
    """(C,) 1/dx_eff = 1/2 sum_f |S_f| / V (1/m); 1/dx + 1/dy + 1/dz on a box."""
    return 0.5 * _per_volume(mesh, face_sum(mesh, mesh.face_areas))


def inverse_spacing_squared(mesh: "Mesh") -> np.ndarray:
    """(C,) sum_i 1/dx_i^2 = 1/2 sum_f |S_f|^2 / V^2 (1/m^2); exact on a box cell."""
    areas = mesh.face_areas
    volumes = mesh.cell_volumes
    return 0.5 * _per_volume(mesh, face_sum(mesh, areas * areas) / np.where(
        volumes > 0.0, volumes, 1.0))


def acoustic_courant_numbers(mesh: "Mesh", dt_s: float, face_velocity: np.ndarray,
                             sound_speed: float) -> np.ndarray:
    """(C,) 1/2 dt sum_f (|u_f . S_f| + c |S_f|) / V: (|u| + c) dt / dx in 1-D."""
    return courant_numbers(mesh, dt_s, face_velocity) + sound_speed * dt_s * inverse_width(mesh)


def diffusion_numbers(mesh: "Mesh", dt_s: float, diffusivity: float) -> np.ndarray:
    """(C,) kappa dt sum_i 1/dx_i^2 for a diffusivity kappa (m^2/s)."""
    return diffusivity * dt_s * inverse_spacing_squared(mesh)


def diffusion_number(diffusivity: float, dt_s: float, spacings: tuple[float, ...]) -> float:
    """kappa dt sum_i 1/dx_i^2 for explicit spacings (one per resolved direction)."""
    return diffusivity * dt_s * sum(1.0 / (h * h) for h in spacings)


def max_time_step(dt_s: float, measured: float, limit: float) -> float:
    """The time step that brings a number proportional to dt from ``measured`` to ``limit``."""
    return dt_s * limit / measured


# -- face velocities from a field carried by the mesh ------------------------------------


def face_velocity_from_points(mesh: "Mesh", point_velocity: np.ndarray) -> np.ndarray:
    """(F, 3) mean of each face's vertex velocities."""
    from caselint.mesh.topology import face_point_mean

    out = np.empty((mesh.n_faces, 3))
    faces = np.arange(mesh.n_faces)
    # column by column: gathers from contiguous columns are faster than from (P, 3) rows
    for k in range(3):
        col = np.ascontiguousarray(point_velocity[:, k], dtype=np.float64)
        out[:, k] = face_point_mean(mesh.data, col, faces)
    return out


def face_velocity_from_cells(mesh: "Mesh", cell_velocity: np.ndarray) -> np.ndarray:
    """(F, 3) mean of owner and neighbour velocities; the owner's on boundary faces."""
    out = cell_velocity[mesh.owner].copy()
    inner = mesh.neighbour >= 0
    out[inner] = 0.5 * (out[inner] + cell_velocity[mesh.neighbour[inner]])
    return out


# -- time scales ---------------------------------------------------------------------------


def shedding_period(length_m: float, velocity_m_s: float, strouhal: float) -> float:
    """Period T = L / (St U) of vortex shedding (s), from St = f L / U."""
    return length_m / (strouhal * velocity_m_s)


def roshko_strouhal(reynolds: float) -> float:
    """St = 0.212 (1 - 21.2 / Re) for 50 <= Re <= 150 (Roshko 1954 [memory])."""
    lo, hi = ROSHKO_RANGE
    if not lo <= reynolds <= hi:
        raise ValueError(f"Roshko's fit holds for {lo:g} <= Re <= {hi:g}, got Re = {reynolds:g}")
    return 0.212 * (1.0 - 21.2 / reynolds)


def flow_through_time(length_m: float, velocity_m_s: float) -> float:
    """Time (s) for the flow to cross a domain of ``length_m`` at ``velocity_m_s``."""
    return length_m / velocity_m_s


def nyquist_interval(frequency_hz: float) -> float:
    """Longest sampling interval (s) that resolves ``frequency_hz``: 1 / (2 f)."""
    return 1.0 / (2.0 * frequency_hz)
