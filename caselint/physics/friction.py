"""Wall friction: skin-friction and Darcy friction correlations, friction velocity, y+,
the wall distance for a target y+, and boundary-layer thickness estimates.

SI units throughout (m, m/s, m^2/s, Pa, kg/m^3). Every function takes scalars or numpy
arrays and is vectorised. Definitions (Pope, Turbulent Flows, 2000; White, Fluid
Mechanics): ``tau_w = 1/2 Cf rho U^2``, ``u_tau = sqrt(tau_w / rho)``,
``y+ = y u_tau / nu``, ``Re_x = U x / nu``. For internal flow ``tau_w = f rho U_b^2 / 8``
with the Darcy friction factor f, so ``u_tau = U_b sqrt(f / 8)``.

Correlations are used inside the ranges their docstrings give; the callers (the near-wall
rules) say so when a case falls outside them. Nothing here returns NaN for valid input
(positive Reynolds numbers); non-positive input raises ``ValueError``.
"""

from __future__ import annotations

import numpy as np

#: Reynolds number below which pipe flow is laminar (common practice, 2300).
PIPE_LAMINAR_RE = 2300.0
#: Start of the range of the Colebrook and Haaland correlations (fully turbulent pipe flow).
PIPE_TURBULENT_RE = 4000.0
#: Upper end of Schlichting's flat-plate formula (Boundary-Layer Theory, 7th ed., 1979).
SCHLICHTING_MAX_RE = 1e9
#: Flat-plate transition Reynolds number, 5e5 (common textbook value; White, Fluid Mechanics).
PLATE_TRANSITION_RE = 5e5


def _positive(name: str, value) -> np.ndarray:
    """``value`` as a float array, refusing non-positive or non-finite entries."""
    arr = np.asarray(value, dtype=np.float64)
    if not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise ValueError(f"{name} must be positive and finite, got {value!r}")
    return arr


def _out(arr: np.ndarray):
    """A plain float for scalar input, the array otherwise."""
    return float(arr) if arr.ndim == 0 else arr


def reynolds(velocity_m_s, length_m, nu_m2_s):
    """Reynolds number ``U L / nu``."""
    return _out(_positive("velocity", velocity_m_s) * _positive("length", length_m)
                / _positive("kinematic viscosity", nu_m2_s))


# -- external flow: flat plate ---------------------------------------------------------


def cf_schlichting(re_x):
    """Local turbulent flat-plate skin friction ``Cf = (2 log10 Re_x - 0.65)^-2.3``.

    Schlichting, Boundary-Layer Theory, 7th ed. (1979); smooth plate, turbulent from the
    leading edge, Re_x < 1e9.
    """
    re = _positive("Re_x", re_x)
    return _out((2.0 * np.log10(re) - 0.65) ** -2.3)


def cf_blasius(re_x):
    """Local laminar flat-plate skin friction ``Cf = 0.664 / sqrt(Re_x)``.

    Blasius (1908) similarity solution (White, Fluid Mechanics); laminar plate,
    Re_x below transition (about 5e5).
    """
    re = _positive("Re_x", re_x)
    return _out(0.664 / np.sqrt(re))


def delta_turbulent(x_m, re_x):
    """Turbulent flat-plate boundary-layer thickness ``delta = 0.37 x Re_x^-1/5`` (m).

    1/7-power-law estimate (Schlichting 1979; White, Fluid Mechanics) [memory];
    5e5 < Re_x < 1e7.
    """
    return _out(0.37 * _positive("x", x_m) * _positive("Re_x", re_x) ** -0.2)


def delta_laminar(x_m, re_x):
    """Laminar flat-plate thickness ``delta_99 = 5.0 x / sqrt(Re_x)`` (m), Blasius profile."""
    return _out(5.0 * _positive("x", x_m) / np.sqrt(_positive("Re_x", re_x)))


# -- internal flow: Darcy friction factor -----------------------------------------------


def darcy_laminar(re):
    """Darcy friction factor of fully developed laminar pipe flow, ``f = 64 / Re``.

    Hagen-Poiseuille; Re below about 2300.
    """
    return _out(64.0 / _positive("Re", re))


def darcy_haaland(re, relative_roughness=0.0):
    """Darcy friction factor from Haaland's explicit formula.

    ``1/sqrt(f) = -1.8 log10[(eps/D / 3.7)^1.11 + 6.9 / Re]`` (Haaland, J. Fluids Eng. 105,
    1983) [memory]; turbulent pipe flow, 4e3 < Re < 1e8, within about 2 % of Colebrook.
    """
    re = _positive("Re", re)
    eps = np.asarray(relative_roughness, dtype=np.float64)
    if np.any(eps < 0) or not np.all(np.isfinite(eps)):
        raise ValueError(f"relative roughness must be >= 0, got {relative_roughness!r}")
    inv_sqrt_f = -1.8 * np.log10((eps / 3.7) ** 1.11 + 6.9 / re)
    return _out(inv_sqrt_f ** -2.0)


def darcy_colebrook(re, relative_roughness=0.0, *, tol=1e-13, max_iter=100):
    """Darcy friction factor solving Colebrook's implicit equation by Newton iteration.

    ``1/sqrt(f) = -2 log10[(eps/D) / 3.7 + 2.51 / (Re sqrt(f))]`` (Colebrook, J. Inst. Civ.
    Eng. 11, 1939) [memory]; turbulent pipe flow, Re > 4e3. Started from Haaland's value;
    all entries iterate together (vectorised) until the largest relative change < ``tol``.
    """
    re = _positive("Re", re)
    eps = np.broadcast_to(np.asarray(relative_roughness, dtype=np.float64), re.shape)
    x = np.asarray(darcy_haaland(re, eps), dtype=np.float64) ** -0.5    # x = 1/sqrt(f)
    ln10 = np.log(10.0)
    for _ in range(max_iter):
        arg = eps / 3.7 + 2.51 * x / re
        g = x + 2.0 * np.log10(arg)
        dg = 1.0 + 2.0 * (2.51 / re) / (arg * ln10)
        step = g / dg
        # Far below the turbulent range (Re of order 1) a Newton step from Haaland's start
        # can overshoot below zero, where the log is undefined: halve x there instead.
        x = np.where(x - step > 0.0, x - step, 0.5 * x)
        if np.all(np.abs(step) <= tol * np.abs(x)):
            break
    return _out(x ** -2.0)


# -- friction velocity and y+ ------------------------------------------------------------


def u_tau_from_cf(cf, velocity_m_s):
    """Friction velocity ``u_tau = U sqrt(Cf / 2)`` (m/s) from a skin-friction coefficient."""
    return _out(_positive("velocity", velocity_m_s) * np.sqrt(_positive("Cf", cf) / 2.0))


def u_tau_from_darcy(f, bulk_velocity_m_s):
    """Friction velocity ``u_tau = U_b sqrt(f / 8)`` (m/s) from a Darcy friction factor."""
    return _out(_positive("bulk velocity", bulk_velocity_m_s) * np.sqrt(_positive("f", f) / 8.0))


def u_tau_from_shear(tau_w_pa, density_kg_m3):
    """Friction velocity ``u_tau = sqrt(|tau_w| / rho)`` (m/s) from a wall shear stress."""
    tau = np.abs(np.asarray(tau_w_pa, dtype=np.float64))
    return _out(np.sqrt(tau / _positive("density", density_kg_m3)))


def y_plus(distance_m, u_tau_m_s, nu_m2_s):
    """Dimensionless wall distance ``y+ = y u_tau / nu``."""
    y = np.asarray(distance_m, dtype=np.float64)
    u = np.asarray(u_tau_m_s, dtype=np.float64)
    return _out(y * u / _positive("kinematic viscosity", nu_m2_s))


def distance_for_y_plus(target, u_tau_m_s, nu_m2_s):
    """Wall distance (m) at which ``y+`` equals ``target``: ``y = y+ nu / u_tau``."""
    return _out(np.asarray(target, dtype=np.float64) * _positive("kinematic viscosity", nu_m2_s)
                / _positive("friction velocity", u_tau_m_s))
