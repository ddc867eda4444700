"""Line shapes against scipy.special.wofz (a general reference library) and analytic limits."""

import numpy as np
import pytest
from scipy import integrate
from scipy.special import wofz

from specforce.absorption.lineshapes import (
    CHI_PERRIN_HARTMANN_296K, chi_factor_co2, chi_parameters_co2, doppler_profile, lorentz_profile, radiation_term, voigt_function,
    voigt_halfwidth, voigt_profile,
)


def test_voigt_function_against_wofz_on_a_dense_grid():
    # Required: better than 1e-4 relative, or 1e-8 of the peak absolute, everywhere,
    # far wings and the Doppler and Lorentz limits included. Reference: scipy.special.wofz.
    x = np.concatenate([-np.logspace(-4, 4, 300)[::-1], [0.0], np.logspace(-4, 4, 300)])
    y = np.concatenate([[0.0], np.logspace(-8, 4, 250)])
    xx, yy = np.meshgrid(x, y)
    k = voigt_function(xx, yy)
    ref = wofz(xx + 1j * yy).real
    peak = wofz(1j * yy).real
    err = np.abs(k - ref)
    ok = (err <= 1e-4 * np.abs(ref)) | (err <= 1e-8 * peak)
    assert ok.all(), f"{(~ok).sum()} points fail, e.g. x={xx[~ok][:3]}, y={yy[~ok][:3]}"
    # and where the function is not negligible the relative error is far smaller
    big = ref > 1e-6 * peak
    assert np.max(err[big] / ref[big]) < 1e-5


def test_the_continued_fractions_between_6_and_15_against_wofz():
    # The 12th and 8th convergents of the Laplace continued fraction serve 6 <= |x| + y < 8 and
    # 8 <= |x| + y < 15. Measured against scipy.special.wofz: within 2.4e-10 relative where K
    # exceeds 1e-6 of its peak K(0, y), and 5e-11 of the peak absolute elsewhere; required 1e-9
    # and 1e-10.
    x = np.linspace(-15.0, 15.0, 1501)
    y = np.concatenate([[0.0], np.logspace(-8, np.log10(15.0), 150)])
    xx, yy = np.meshgrid(x, y)
    s = np.abs(xx) + yy
    band = (s >= 6.0) & (s < 15.0)
    got, ref = voigt_function(xx[band], yy[band]), wofz(xx[band] + 1j * yy[band]).real
    peak = wofz(1j * yy[band]).real
    err = np.abs(got - ref)
    big = ref > 1e-6 * peak
    assert np.max(err[big] / ref[big]) < 1e-9
    assert np.max(err[~big] / peak[~big]) < 1e-10


@pytest.mark.parametrize("alpha,gamma", [(1e-3, 0.0), (1e-3, 1e-4), (1e-3, 1e-3), (5e-4, 0.05), (1e-4, 0.08)])
def test_voigt_profile_integrates_to_one(alpha, gamma):
    # Area normalisation within 1e-6, no cut-off, over the whole real line (adaptive quadrature).
    f = lambda v: float(voigt_profile(np.array([v]), alpha, gamma)[0])  # noqa: E731
    w = float(voigt_halfwidth(alpha, gamma))
    pts = [-w * 10, -w, 0.0, w, w * 10]
    inner, _ = integrate.quad(f, -w * 50, w * 50, points=pts, limit=500, epsabs=0, epsrel=1e-12)
    left, _ = integrate.quad(f, -np.inf, -w * 50, limit=500, epsabs=0, epsrel=1e-10)
    right, _ = integrate.quad(f, w * 50, np.inf, limit=500, epsabs=0, epsrel=1e-10)
    assert inner + left + right == pytest.approx(1.0, abs=1e-6)


def test_profile_properties():
    d = np.linspace(-2, 2, 4001)
    for a, g in [(1e-3, 1e-4), (1e-3, 0.1), (1e-2, 1e-2)]:
        v = voigt_profile(d, a, g)
        assert np.all(v >= 0)
        assert np.allclose(v, v[::-1], rtol=1e-12, atol=0)  # symmetric without shift
        assert np.argmax(v) == 2000


def test_limits():
    # y -> 0: the Doppler profile (Gaussian of HWHM alpha_D), within 3 alpha_D; further out
    # even a tiny Lorentz width gives the Voigt its gamma / (pi dnu^2) tail.
    d3 = np.linspace(-3e-3, 3e-3, 101)
    assert np.allclose(voigt_profile(d3, 1e-3, 1e-12), doppler_profile(d3, 1e-3), rtol=1e-6)
    d = np.linspace(-0.01, 0.01, 101)
    # y large: the Lorentz profile; above y = 100 specforce uses it directly
    assert np.allclose(voigt_profile(d, 1e-5, 0.01), lorentz_profile(d, 0.01), rtol=1e-12)
    # below y = 100 the Voigt stays a Voigt: at line centre K(0, y) = (1 - 1/(2y^2)) / (sqrt(pi) y)
    # to leading order (asymptotic expansion of w, Abramowitz & Stegun 7.1.23), so the relative
    # difference from Lorentz is 1/(2y^2) = 2.9e-4 for y = sqrt(ln2) 0.05/1e-3 = 41.6.
    y = np.sqrt(np.log(2)) * 0.05 / 1e-3
    rel = voigt_profile(d, 1e-3, 0.05) / lorentz_profile(d, 0.05) - 1
    assert np.max(np.abs(rel)) == pytest.approx(1 / (2 * y * y), rel=0.02)
    # half-widths: the Olivero & Longbothum (1977) formula recovers both limits
    assert voigt_halfwidth(1e-3, 0.0) == pytest.approx(1e-3)
    assert voigt_halfwidth(0.0, 0.1) == pytest.approx(0.1, rel=2e-4)


def test_voigt_halfwidth_matches_the_profile():
    # Olivero & Longbothum (1977) state 0.02 % accuracy for their formula.
    a, g = 1e-3, 7e-4
    w = voigt_halfwidth(a, g)
    peak = voigt_profile(np.array([0.0]), a, g)[0]
    assert voigt_profile(np.array([w]), a, g)[0] / peak == pytest.approx(0.5, rel=5e-4)


def test_radiation_term_limits():
    # nu tanh(c2 nu / 2T): -> nu for c2 nu >> T, -> c2 nu^2 / (2T) for c2 nu << T
    # (Clough, Kneizys & Davies 1989).
    assert radiation_term(3000.0, 250.0) == pytest.approx(3000.0, rel=1e-6)
    assert radiation_term(0.01, 250.0) == pytest.approx(1.4387769 * 1e-4 / 500.0, rel=1e-6)


def test_chi_factor_functional_form():
    # Perrin & Hartmann (1989): chi = 1 within 3 cm-1, then piecewise exponential with
    # breakpoints at 30 and 120 cm-1; continuous, non-increasing, <= 1.
    b1, b2, b3 = CHI_PERRIN_HARTMANN_296K
    d = np.linspace(0, 300, 30001)
    chi = chi_factor_co2(d)
    assert np.all(chi[d <= 3] == 1.0)
    assert np.all(np.diff(chi) <= 1e-15) and np.all(chi <= 1.0) and np.all(chi > 0)
    assert chi_factor_co2(30.0) == pytest.approx(np.exp(-27 * b1))
    assert chi_factor_co2(120.0) == pytest.approx(np.exp(-27 * b1 - 90 * b2))
    assert chi_factor_co2(200.0) == pytest.approx(np.exp(-27 * b1 - 90 * b2 - 80 * b3))
    for edge in (3.0, 30.0, 120.0):
        assert chi_factor_co2(edge - 1e-9) == pytest.approx(chi_factor_co2(edge + 1e-9), rel=1e-6)
    assert chi_factor_co2(-10.0) == chi_factor_co2(10.0)


def test_chi_parameters_follow_the_temperature_dependent_fit():
    # Perrin & Hartmann (1989): B_i(T) = alpha_i + beta_i exp(-epsilon_i T) with (alpha, beta, epsilon) =
    # (0.0888, -0.160, 0.0041), (0, 0.0526, 0.00152), (0.0232, 0, 0) (from memory, medium confidence);
    # evaluated here by hand at 296 and 200 K (a self-consistency check: it catches a mistyped coefficient,
    # not a wrong memory). B1 grows with temperature (the near wing falls faster when warm), B2 shrinks
    # slowly, B3 is constant. Below the fit's 193 K the 193 K values hold: the fitted B1 would turn negative
    # below 143.5 K and chi exceed 1.
    assert CHI_PERRIN_HARTMANN_296K == pytest.approx((0.0888 - 0.160 * np.exp(-0.0041 * 296.0),
                                                      0.0526 * np.exp(-0.00152 * 296.0), 0.0232), rel=1e-12)
    b_cold = chi_parameters_co2(200.0)
    assert b_cold == pytest.approx((0.0888 - 0.160 * np.exp(-0.82), 0.0526 * np.exp(-0.304), 0.0232), rel=1e-12)
    assert b_cold[0] < CHI_PERRIN_HARTMANN_296K[0] and b_cold[1] > CHI_PERRIN_HARTMANN_296K[1]
    assert chi_parameters_co2(150.0) == chi_parameters_co2(100.0) == chi_parameters_co2(193.0)
    assert chi_parameters_co2(350.0) == CHI_PERRIN_HARTMANN_296K
    assert chi_parameters_co2(100.0)[0] > 0
    # at 296 K the factor is about 0.33 at 30 cm-1 and 0.016 at 120 cm-1 (derived from the fit)
    assert chi_factor_co2(30.0) == pytest.approx(0.329, abs=0.002)
    assert chi_factor_co2(120.0) == pytest.approx(0.0162, abs=0.0005)
