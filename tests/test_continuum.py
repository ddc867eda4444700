"""The water-vapour window continuum of Roberts, Selby & Biberman (1976), worked by hand."""

import math

import numpy as np
import pytest

from specforce.absorption.continuum import ROBERTS_FOREIGN_RATIO, ROBERTS_RANGE, continuum_optical_depth, roberts_self_coefficient


def test_self_coefficient_at_296_k():
    # Roberts et al. (1976), Appl. Opt. 15, 2085, Eqs. 5-6: C_s = a + b exp(-beta nu) with a = 1.25e-22,
    # b = 1.67e-19 cm2 molecule-1 atm-1, beta = 7.87e-3 cm. By hand: at 1000 cm-1,
    # exp(-7.87) = exp(-8) exp(0.13) = 3.3546e-4 x 1.13883 = 3.8203e-4, so C_s = 1.25e-22 + 6.380e-23
    # = 1.8880e-22 (the 1.89e-22 the fit gives there); at 800 cm-1, exp(-6.296) = 2.47875e-3 x 0.74379
    # = 1.8437e-3 and C_s = 4.329e-22. Four figures by hand, hence 1e-4.
    assert roberts_self_coefficient(1000.0, 296.0) == pytest.approx(1.8880e-22, rel=1e-4)
    assert roberts_self_coefficient(800.0, 296.0) == pytest.approx(4.329e-22, rel=1e-4)


def test_temperature_dependence():
    # The same paper: times exp[1800 K (1/T - 1/296 K)], so colder air has more continuum. At 260 K,
    # 1800 (1/260 - 1/296) = 0.84199, exp = 2.3210 by hand.
    ratio = roberts_self_coefficient(1000.0, 260.0) / roberts_self_coefficient(1000.0, 296.0)
    assert ratio == pytest.approx(2.3210, rel=1e-4)


def test_optical_depth_of_a_layer_and_its_range():
    # tau = C_s (e + gamma (P - e)) u with pressures in atm (Roberts et al. 1976, Eq. 4; the foreign
    # ratio gamma = 0.002 from memory). A layer at 1 atm, 296 K, 2 % water, column 4e22 molecule cm-2:
    # e = 0.02 atm, e + 0.002 x 0.98 = 0.02196 atm, so tau(1000) = 1.8880e-22 x 0.02196 x 4e22 = 0.16584.
    nu = np.array([790.0, 1000.0, 1260.0])
    tau = continuum_optical_depth(nu, 101325.0, 296.0, 0.02, 4e22)
    assert ROBERTS_FOREIGN_RATIO == 0.002
    assert tau[1] == pytest.approx(0.16584, rel=1e-4)
    # outside 800-1250 cm-1 the fit does not apply, and specforce adds nothing (unless asked to extend)
    assert ROBERTS_RANGE == (800.0, 1250.0) and tau[0] == 0.0 and tau[2] == 0.0
    assert continuum_optical_depth(nu, 101325.0, 296.0, 0.02, 4e22, extend=True)[0] > 0.0


def test_self_continuum_dominates_and_scales_with_the_square_of_vapour():
    # With gamma = 0.002 the self term dominates: doubling the water (its partial pressure and its
    # column) nearly quadruples the optical depth. By hand for 1 % -> 2 % at 1 atm:
    # (0.02 + 0.002 x 0.98) / (0.01 + 0.002 x 0.99) = 1.8331, times 2 for the column.
    t1 = continuum_optical_depth(np.array([1000.0]), 101325.0, 290.0, 0.01, 2e22)[0]
    t2 = continuum_optical_depth(np.array([1000.0]), 101325.0, 290.0, 0.02, 4e22)[0]
    assert t2 / t1 == pytest.approx(2 * 0.02196 / 0.01198, rel=1e-6)
    assert math.isfinite(t1) and t1 > 0
