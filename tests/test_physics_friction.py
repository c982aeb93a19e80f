"""Wall-friction correlations against published and independently computed numbers.

Sources (see shared REFERENCES.md §2): Schlichting, Boundary-Layer Theory, 7th ed. (1979),
local Cf = (2 log10 Re_x - 0.65)^-2.3; Blasius Cf = 0.664 / sqrt(Re_x); Colebrook (1939)
and Haaland (1983) Darcy friction factors. Values tagged [computed] were worked out from
the published formulas outside caselint; Colebrook is also solved independently here with
scipy's Brent root finder.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from caselint.physics import friction as fr


# Schlichting local Cf [computed from the formula, REFERENCES.md §2]
@pytest.mark.parametrize("re_x, cf", [(1e5, 0.005850), (1e6, 0.003745), (1e7, 0.002579),
                                      (1e8, 0.001870)])
def test_schlichting_cf_matches_reference_values(re_x, cf):
    assert fr.cf_schlichting(re_x) == pytest.approx(cf, abs=5e-7)


def test_schlichting_is_vectorised_and_decreasing():
    re = np.array([1e5, 1e6, 1e7, 1e8])
    cf = fr.cf_schlichting(re)
    assert cf.shape == (4,)
    assert np.all(np.diff(cf) < 0)
    assert cf[1] == pytest.approx(0.0037455, rel=1e-4)


def test_schlichting_agrees_with_the_one_seventh_power_law_in_its_range():
    # 1/7-power law Cf = 0.0576 Re_x^-1/5, 5e5 < Re_x < 1e7 [confirmed, REFERENCES.md §2]:
    # the two correlations agree within 3 % at Re_x = 5e5-1e6 and drift apart to 12.5 % at
    # 1e7, the power law falling off faster [computed]
    re = np.array([5e5, 1e6, 3e6, 1e7])
    ratio = fr.cf_schlichting(re) / (0.0576 * re ** -0.2)
    np.testing.assert_allclose(ratio, [1.0170, 1.0306, 1.0663, 1.1245], atol=5e-4)


def test_blasius_cf_and_thickness():
    # Blasius: Cf = 0.664/sqrt(Re_x), delta99 = 5.0 x/sqrt(Re_x) [confirmed]
    assert fr.cf_blasius(1e4) == pytest.approx(0.00664, rel=1e-12)
    assert fr.cf_blasius(np.array([1e4, 1e6]))[1] == pytest.approx(0.000664, rel=1e-12)
    assert fr.delta_laminar(0.5, 1e4) == pytest.approx(0.025, rel=1e-12)


def test_turbulent_thickness():
    # delta = 0.37 x Re_x^-1/5 [memory]; at Re_x = 1e5 exactly 0.37 x / 10
    assert fr.delta_turbulent(2.0, 1e5) == pytest.approx(0.074, rel=1e-12)


# Colebrook, smooth pipe [computed, REFERENCES.md §2]
@pytest.mark.parametrize("re, f", [(1e4, 0.03088), (1e5, 0.01799)])
def test_colebrook_smooth_matches_reference_values(re, f):
    assert fr.darcy_colebrook(re) == pytest.approx(f, abs=6e-6)


def _colebrook_brent(re: float, eps: float) -> float:
    """Colebrook solved for x = 1/sqrt(f) with scipy's Brent method (independent check)."""
    g = lambda x: x + 2.0 * math.log10(eps / 3.7 + 2.51 * x / re)  # noqa: E731
    return brentq(g, 1.0, 100.0, xtol=1e-15) ** -2


def test_colebrook_agrees_with_an_independent_root_finder():
    re = np.array([4e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e5, 1e6])
    eps = np.array([0, 0, 0, 0, 0, 0, 1e-3, 0.05])
    f = fr.darcy_colebrook(re, eps)
    expected = [_colebrook_brent(r, e) for r, e in zip(re, eps)]
    np.testing.assert_allclose(f, expected, rtol=1e-10)


def test_colebrook_rough_fully_turbulent_limit():
    # At very high Re Colebrook tends to von Karman's rough-pipe law
    # 1/sqrt(f) = -2 log10(eps/3.7) [computed from the equation with 2.51/Re -> 0]
    eps = 0.01
    assert fr.darcy_colebrook(1e12, eps) == pytest.approx((-2 * math.log10(eps / 3.7)) ** -2,
                                                          rel=1e-6)


def test_haaland_within_two_percent_of_colebrook():
    # Haaland (1983) states agreement with Colebrook within about 1.5 % [memory]
    re = np.geomspace(4e3, 1e8, 30)
    for eps in (0.0, 1e-4, 1e-3, 1e-2, 0.05):
        ratio = fr.darcy_haaland(re, eps) / fr.darcy_colebrook(re, eps)
        assert np.all(np.abs(ratio - 1) < 0.02)
    assert fr.darcy_haaland(1e5) == pytest.approx(0.017825, rel=1e-4)   # [computed]


def test_laminar_pipe_friction():
    assert fr.darcy_laminar(1600.0) == pytest.approx(0.04, rel=1e-12)   # 64/Re


def test_air_flat_plate_first_cell_for_y_plus_one():
    # [computed, REFERENCES.md §2] air nu = 1.5e-5 m^2/s, U = 10 m/s, x = 1 m, Schlichting:
    # Cf = 4.0271e-3, u_tau = 0.44873 m/s, wall distance for y+ = 1 is 3.3428e-5 m
    re = fr.reynolds(10.0, 1.0, 1.5e-5)
    cf = fr.cf_schlichting(re)
    u_tau = fr.u_tau_from_cf(cf, 10.0)
    assert cf == pytest.approx(4.0271e-3, rel=2e-5)
    assert u_tau == pytest.approx(0.44873, rel=2e-5)
    y = fr.distance_for_y_plus(1.0, u_tau, 1.5e-5)
    assert y == pytest.approx(3.3428e-5, rel=2e-5)
    assert fr.y_plus(y, u_tau, 1.5e-5) == pytest.approx(1.0, rel=1e-12)


def test_friction_velocity_from_shear_and_darcy():
    # tau_w = 0.24 Pa in air of 1.2 kg/m^3: u_tau = sqrt(0.2) m/s
    assert fr.u_tau_from_shear(-0.24, 1.2) == pytest.approx(math.sqrt(0.2), rel=1e-12)
    # u_tau = U_b sqrt(f/8): f = 0.02, U_b = 2 m/s -> 0.1 m/s
    assert fr.u_tau_from_darcy(0.02, 2.0) == pytest.approx(0.1, rel=1e-12)


@pytest.mark.parametrize("call", [
    lambda: fr.cf_schlichting(0.0), lambda: fr.cf_blasius(-1.0),
    lambda: fr.darcy_colebrook(float("nan")), lambda: fr.darcy_haaland(1e5, -0.1),
    lambda: fr.reynolds(10.0, 1.0, 0.0),
])
def test_non_physical_input_is_refused(call):
    with pytest.raises(ValueError):
        call()
