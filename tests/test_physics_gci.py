"""Richardson extrapolation and the GCI (caselint.physics.gci) against a published worked
example and against solutions of the exact form phi = phi0 + C h^p, whose answers are known.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from caselint.physics import gci

# Celik et al., ASME J. Fluids Eng. 130(7) 078001 (2008), Table 1, first column (2-D, h
# from N): [memory, reproduced by computation] per docs REFERENCES.md section 1.
CELIK_N = np.array([18000.0, 8000.0, 4500.0])
CELIK_PHI = np.array([6.063, 5.972, 5.863])


def celik():
    return gci.three_grid(gci.representative_size(CELIK_N, 1.0, 2), CELIK_PHI)


def test_celik_2008_table_1_first_column():
    res = celik()
    assert res.refinement_ratios == pytest.approx([1.5, 4.0 / 3.0], rel=1e-14)
    assert res.convergence == ("monotonic",)
    # the published values, to the digits printed: p = 1.53, phi_ext = 6.1685,
    # e_a21 = 1.5 %, e_ext21 = 1.7 %, GCI_fine21 = 2.2 %
    assert round(res.apparent_order[0], 2) == 1.53
    assert round(res.extrapolated_value[0], 4) == 6.1685
    assert round(100 * res.relative_error[0], 1) == 1.5
    assert round(100 * res.extrapolated_error[0], 1) == 1.7
    assert round(100 * res.gci_fine[0], 1) == 2.2
    # and the longer digits of REFERENCES.md (p = 1.53397, GCI 2.17499 %) [computed]
    assert res.apparent_order[0] == pytest.approx(1.53397, abs=5e-6)
    assert 100 * res.gci_fine[0] == pytest.approx(2.17499, abs=5e-6)
    assert res.safety_factor == 1.25 and not res.order_assumed
    assert res.messages == ("",)


def test_representative_size():
    # 1000 cells filling 1 m^3: h = 0.1 m; 400 cells on 4 m^2: h = 0.1 m [computed]
    assert gci.representative_size(1000, 1.0, 3) == pytest.approx(0.1, rel=1e-14)
    assert gci.representative_size(400, 4.0, 2) == pytest.approx(0.1, rel=1e-14)
    with pytest.raises(ValueError):
        gci.representative_size(0, 1.0, 3)
    with pytest.raises(ValueError):
        gci.representative_size(10, 1.0, 1)


def test_constant_ratio_closed_form():
    # r constant: q = 0 and p = ln(e32/e21)/ln r exactly [computed]
    h = [1.0, 2.0, 4.0]
    res = gci.three_grid(h, [1.0, 1.1, 1.35])
    assert res.apparent_order[0] == pytest.approx(math.log(0.25 / 0.1) / math.log(2.0), rel=1e-12)
    # phi = 1 + 0.5 h^2: p = 2 and the extrapolation returns phi0 = 1 exactly [computed]
    res = gci.three_grid(h, [1.5, 3.0, 9.0])
    assert res.apparent_order[0] == pytest.approx(2.0, rel=1e-12)
    assert res.extrapolated_value[0] == pytest.approx(1.0, rel=1e-12)
    # e_a = 1.5/1.5 = 1; GCI = 1.25 * 1 / (2^2 - 1) [computed]
    assert res.relative_error[0] == pytest.approx(1.0)
    assert res.gci_fine[0] == pytest.approx(1.25 / 3.0, rel=1e-12)
    assert res.gci_fine_absolute[0] == pytest.approx(1.25 * 1.5 / 3.0, rel=1e-12)


@pytest.mark.parametrize("p, h", [(1.7, [1.0, 1.5, 1.95]), (0.8, [0.01, 0.0115, 0.016]),
                                  (2.0, [2.0, 2.6, 4.16])])
def test_varying_ratio_recovers_the_exact_order(p, h):
    # phi = 3 - 0.4 h^p exactly: the fixed-point iteration must return p and phi0 = 3,
    # and GCI32/(r21^p GCI21) equals phi1/phi2 for this form [computed]
    h = np.array(h)
    phi = 3.0 - 0.4 * h**p
    res = gci.three_grid(h, phi)
    assert res.convergence == ("monotonic",)
    assert res.apparent_order[0] == pytest.approx(p, rel=1e-10)
    assert res.extrapolated_value[0] == pytest.approx(3.0, rel=1e-10)
    assert res.asymptotic_ratio[0] == pytest.approx(phi[0] / phi[1], rel=1e-9)


def test_oscillatory_convergence_with_constant_ratio():
    # e21 = -0.1, e32 = +0.4: s = -1, R = -0.25, q = 0 so p = ln 4 / ln 2 = 2 [computed]
    res = gci.three_grid([1.0, 2.0, 4.0], [1.0, 0.9, 1.3])
    assert res.convergence == ("oscillatory",)
    assert res.ratio[0] == pytest.approx(-0.25)
    assert res.apparent_order[0] == pytest.approx(2.0, rel=1e-12)
    assert "oscillatory convergence" in res.messages[0]


def test_two_grids_use_the_assumed_order_and_safety_factor_3():
    # phi = 10 + 0.1 h^2 at h = 1, 2: phi_ext = (4 * 10.1 - 10.4)/3 = 10, e_a = 0.3/10.1,
    # GCI = 3 e_a / (2^2 - 1) = e_a (Roache 1994, Fs = 3) [computed]
    res = gci.two_grid([1.0, 2.0], [10.1, 10.4], 2.0)
    assert res.safety_factor == 3.0 and res.order_assumed
    assert math.isnan(res.apparent_order[0]) and res.order[0] == 2.0
    assert res.extrapolated_value[0] == pytest.approx(10.0, rel=1e-13)
    assert res.relative_error[0] == pytest.approx(0.3 / 10.1, rel=1e-12)
    assert res.gci_fine[0] == pytest.approx(0.3 / 10.1, rel=1e-12)
    assert res.extrapolated_error[0] == pytest.approx(0.1 / 10.0, rel=1e-12)
    assert res.convergence == ("undetermined",) and math.isnan(res.asymptotic_ratio[0])
    with pytest.raises(ValueError):
        gci.two_grid([1.0, 2.0], [1.0, 2.0], 0.0)


def test_divergent_study_gives_no_order_and_says_why():
    # e21 = 0.2, e32 = 0.1: R = 2, the differences grow with refinement [computed]
    res = gci.three_grid([1.0, 2.0, 4.0], [1.0, 1.2, 1.3])
    assert res.convergence == ("divergent",)
    assert res.ratio[0] == pytest.approx(2.0)
    for values in (res.apparent_order, res.extrapolated_value, res.gci_fine,
                   res.asymptotic_ratio, res.extrapolated_error):
        assert math.isnan(values[0])
    assert res.relative_error[0] == pytest.approx(0.2)      # still defined
    assert "divergent" in res.messages[0] and "R = e21/e32 = 2" in res.messages[0]
    # oscillation of constant amplitude (R = -1) is not convergence either
    res = gci.three_grid([1.0, 2.0, 4.0], [1.0, 1.1, 1.0])
    assert res.convergence == ("divergent",) and "oscillating" in res.messages[0]


@pytest.mark.parametrize("phi, words", [
    ([2.0, 2.0, 2.0], "e21 = e32 = 0"),
    ([2.0, 2.0, 2.5], "e21 = 0"),
    ([2.0, 2.1, 2.1], "e32 = 0"),
])
def test_zero_differences_break_the_procedure_with_a_message(phi, words):
    res = gci.three_grid([1.0, 1.5, 2.25], phi)
    assert res.convergence == ("undetermined",)
    assert math.isnan(res.apparent_order[0]) and math.isnan(res.gci_fine[0])
    assert words in res.messages[0]


def test_round_off_differences_count_as_zero():
    res = gci.three_grid([1.0, 1.5, 2.25], [2.0, 2.0 + 1e-13, 2.0 - 1e-13])
    assert "e21 = e32 = 0" in res.messages[0]


def test_zero_fine_value_leaves_the_absolute_gci():
    # phi = 0.4 h^2 - 0.4: phi1 = 0 at h = 1; p = 2 still observed [computed]
    h = np.array([1.0, 2.0, 4.0])
    res = gci.three_grid(h, 0.4 * h**2 - 0.4)
    assert res.apparent_order[0] == pytest.approx(2.0)
    assert math.isnan(res.relative_error[0]) and math.isnan(res.gci_fine[0])
    assert res.gci_fine_absolute[0] == pytest.approx(1.25 * 1.2 / 3.0)
    assert "phi1 = 0" in res.messages[0]


def test_several_quantities_at_once_match_one_at_a_time():
    h = gci.representative_size(CELIK_N, 1.0, 2)
    rows = np.array([CELIK_PHI, [1.0, 1.2, 1.3], [1.0, 0.9, 1.3], [2.0, 2.0, 2.0],
                     3.0 - 0.4 * h**1.7])
    together = gci.three_grid(h, rows)
    assert together.n_quantities == 5
    for i, row in enumerate(rows):
        alone = gci.three_grid(h, row)
        assert together.convergence[i] == alone.convergence[0]
        assert together.messages[i] == alone.messages[0]
        for field in ("apparent_order", "extrapolated_value", "gci_fine", "asymptotic_ratio"):
            np.testing.assert_array_equal(getattr(together, field)[i], getattr(alone, field)[0])


def test_classify_limits():
    R = np.array([0.5, -0.5, 1.0, -1.0, 1.5, -3.0, 0.0, np.nan])
    assert gci.classify(R) == ("monotonic", "oscillatory", "divergent", "divergent", "divergent",
                               "divergent", "undetermined", "undetermined")


def test_apparent_order_reports_whether_it_settled():
    p, settled = gci.apparent_order([0.1, 0.0], [0.2, 0.3], 1.5, 1.3)
    assert settled.tolist() == [True, False]
    assert p[0] > 0 and math.isnan(p[1])


def test_malformed_input_is_rejected():
    with pytest.raises(ValueError, match="finest first"):
        gci.three_grid([2.0, 1.0, 4.0], [1.0, 2.0, 3.0])
    with pytest.raises(ValueError, match="one column per mesh"):
        gci.three_grid([1.0, 2.0, 4.0], [1.0, 2.0])
    with pytest.raises(ValueError, match="three meshes"):
        gci.three_grid([1.0, 2.0], [1.0, 2.0])
    with pytest.raises(ValueError, match="finite"):
        gci.three_grid([1.0, 2.0, 4.0], [1.0, np.nan, 2.0])
