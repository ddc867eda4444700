"""Schwarzschild integration against analytic solutions."""

import math

import numpy as np
import pytest
from scipy import integrate

from specforce.constants import STEFAN_BOLTZMANN
from specforce.radiation.transfer import (DIFFUSIVITY, angular_quadrature, heating_rate, planck,
                                         planck_temperature_derivative, spectral_fluxes, trapezoid_weights)


@pytest.mark.parametrize("t", [200.0, 288.0, 320.0])
def test_planck_integral_is_sigma_t4(t):
    # Stefan-Boltzmann law: pi * int_0^inf B_nu dnu = sigma T^4 (exact; Planck 1901).
    val, _ = integrate.quad(lambda v: float(planck(v, t)), 0, np.inf, limit=400, epsrel=1e-12)
    assert math.pi * val == pytest.approx(STEFAN_BOLTZMANN * t**4, rel=1e-6)


def test_planck_temperature_derivative_matches_the_difference_quotient():
    # d B / d T of Planck's law against a central difference of planck() (step 1e-3 K, error
    # O(h^2) ~ 1e-9 relative), from the far infrared to the Wien side; and pi * int dB/dT dnu
    # is 4 sigma T^3 (the derivative of the Stefan-Boltzmann law, exact).
    nu = np.array([10.0, 300.0, 667.0, 1500.0, 2900.0])
    for t in (180.0, 288.0, 320.0):
        h = 1e-3
        numeric = (planck(nu, t + h) - planck(nu, t - h)) / (2 * h)
        np.testing.assert_allclose(planck_temperature_derivative(nu, t), numeric, rtol=1e-7)
        val, _ = integrate.quad(lambda v: float(planck_temperature_derivative(v, t)), 0, np.inf, limit=400,
                                epsrel=1e-12)
        assert math.pi * val == pytest.approx(4 * STEFAN_BOLTZMANN * t**3, rel=1e-6)
    assert planck_temperature_derivative(1e5, 10.0) == 0.0  # far on the Wien side: no overflow


def test_the_transfer_kernels_exp_matches_numpy():
    # The transfer's vectorisable exp(-t) (Cody & Waite reduction, Taylor series) against
    # numpy's exp over the range optical depths take, including 0, the reduction's steps at
    # half-integer multiples of ln 2, and the clamp at 700 (exp(-700) ~ 1e-304 for anything larger).
    from specforce._fastmath import exp_neg

    rng = np.random.default_rng(7)
    t = np.concatenate([[0.0, 1e-300, 1e-12, 0.5 * math.log(2.0), 1.5 * math.log(2.0)],
                        10.0 ** rng.uniform(-12, math.log10(700.0), 200_000)])
    np.testing.assert_allclose(exp_neg(t), np.exp(-t), rtol=2e-15, atol=0)
    assert exp_neg(np.array([0.0]))[0] == 1.0
    np.testing.assert_allclose(exp_neg(np.array([700.0, 800.0, 1e300])), np.exp(-700.0), rtol=2e-15)


def test_kernel_on_an_irregular_grid_matches_exact_sources():
    # The kernel interpolates Planck sources inside segments of points spanning at most 0.32 cm-1
    # and takes exact sources elsewhere (points gathered into segments of their own). On a grid of
    # dense clusters, gaps and lone points, with optical depths from 0 to 900, it must agree with
    # the same transfer with exact sources at every point (source_fluxes, numpy) to the
    # interpolation's error (below 1e-6 of B; measured 1.3e-8 broadband, 1.2e-7 spectral).
    from specforce.radiation.transfer import source_fluxes

    rng = np.random.default_rng(11)
    parts = [np.linspace(600.0, 600.2, 40), [600.9], np.linspace(601.5, 604.0, 300), [605.0, 607.5],
             np.sort(rng.uniform(610.0, 640.0, 70)), np.linspace(650.0, 650.01, 5), [700.0]]
    nu = np.concatenate(parts)
    nlay = 30
    tau = 10.0 ** rng.uniform(-6, 2.9, (nlay, nu.size))
    tau[:, ::7] = 0.0
    tlev = np.linspace(295.0, 200.0, nlay + 1)
    w = trapezoid_weights(nu)
    fl = spectral_fluxes(nu, tau, tlev, 300.0, 0.95, nodes=3, weights=w)
    b = planck(nu[None, :], tlev[:, None]) * w
    up, dn = source_fluxes(tau, b, planck(nu, 300.0) * w, 0.95, nodes=3)
    np.testing.assert_allclose(fl.broadband_up, up.sum(axis=1), rtol=1e-7)
    np.testing.assert_allclose(fl.broadband_down, dn.sum(axis=1), rtol=1e-7, atol=1e-12)
    np.testing.assert_allclose(fl.flux_up * w, up, rtol=1e-6, atol=1e-15)
    np.testing.assert_allclose(fl.flux_down * w, dn, rtol=1e-6, atol=1e-15)
    # runs of every length around the segment and run sizes
    for n in (1, 2, 33, 2049, 2050):
        x = np.linspace(600.0, 600.0 + 0.003 * n, n)
        one = spectral_fluxes(x, np.full((3, n), 0.5), np.array([290.0, 250.0, 220.0, 210.0]), 290.0,
                              weights=np.full(n, 0.003))
        assert np.all(np.isfinite(one.flux_up)) and one.flux_up.shape[1] == n


def test_fraction_outside_default_range_matches_analytic_tails():
    # The share of sigma T^4 outside 10-3000 cm-1 at 288 K, against the closed-form tails of
    # the Planck integral (e.g. Goody & Yung 1989, Sec. 2.2): with x = c2 nu / T,
    # above x: (15/pi^4) e^-x (x^3 + 3x^2 + 6x + 6) (Wien series, leading term);
    # below x: (15/pi^4) (x^3/3 - x^4/8 + x^5/60) (Rayleigh-Jeans series).
    # Reported figure: about 2.0e-4 of sigma T^4 lies outside the default range.
    t = 288.0
    inside, _ = integrate.quad(lambda v: float(planck(v, t)), 10, 3000, limit=400, epsrel=1e-12)
    missing = 1 - math.pi * inside / (STEFAN_BOLTZMANN * t**4)
    xh, xl = 1.438776877 * 3000 / t, 1.438776877 * 10 / t
    k = 15 / math.pi**4
    analytic = k * math.exp(-xh) * (xh**3 + 3 * xh**2 + 6 * xh + 6) + k * (xl**3 / 3 - xl**4 / 8 + xl**5 / 60)
    assert missing == pytest.approx(analytic, rel=1e-3)
    assert missing == pytest.approx(2.0e-4, rel=0.05)


def test_transparent_atmosphere_gives_surface_emission():
    nu = np.linspace(10, 3000, 3001)
    f = spectral_fluxes(nu, np.zeros((8, nu.size)), np.linspace(290, 210, 9), 295.0, 0.92)
    assert np.allclose(f.flux_up[-1], 0.92 * math.pi * planck(nu, 295.0), rtol=1e-12)
    assert np.allclose(f.flux_down, 0.0)
    # broadband: epsilon times the blackbody's share of sigma T^4 in the range
    inside = math.pi * integrate.quad(lambda v: float(planck(v, 295.0)), 10, 3000, limit=200)[0]
    assert f.broadband_up[-1] == pytest.approx(0.92 * inside, rel=1e-6)


def test_isothermal_thick_atmosphere_emits_its_planck_function():
    nu = np.linspace(100, 2000, 500)
    f = spectral_fluxes(nu, np.full((5, nu.size), 40.0), np.full(6, 230.0), 300.0)
    assert np.allclose(f.flux_up[-1], math.pi * planck(nu, 230.0), rtol=1e-12)
    # and the surface sees the atmosphere's emission back
    assert np.allclose(f.flux_down[0], math.pi * planck(nu, 230.0), rtol=1e-12)


def test_gauss_weights_integrate_mu():
    # 2 pi int_0^1 mu dmu = pi: the flux of unit isotropic radiance.
    for n in (1, 2, 3, 8):
        mu, w = angular_quadrature(n)
        assert w.sum() == pytest.approx(math.pi, rel=1e-14)
    mu, w = angular_quadrature(diffusivity=True)
    assert mu[0] == pytest.approx(1 / DIFFUSIVITY) and w[0] == pytest.approx(math.pi)


def test_grey_radiative_equilibrium_two_stream():
    # Grey atmosphere in radiative equilibrium, diffusivity (two-stream) approximation with
    # factor D: sigma T^4(tau) = (OLR/2)(1 + D tau), F_down(tau) = OLR D tau / 2, F_net = OLR
    # everywhere, and the ground at sigma Tg^4 = OLR (1 + D tau*/2) (e.g. Pierrehumbert 2010,
    # Principles of Planetary Climate, Sec. 4.6; Goody & Yung 1989, Ch. 2). Here the
    # "grey" source is a single wavenumber whose Planck function we make linear in tau by
    # choosing level temperatures through the inverse Planck function; the linear-in-tau
    # layer solution is then exact for any layer thickness.
    nu = np.array([600.0])
    tau_total, nlay = 4.0, 7
    tau_lev = np.linspace(tau_total, 0.0, nlay + 1)  # from the surface up
    olr_b = 1.0  # upward radiance scale: B(tau) = (olr/2)(1 + D tau)/pi with olr = pi * olr_b
    b = 0.5 * olr_b * (1 + DIFFUSIVITY * tau_lev)
    c1, c2 = 1e8 * 1.191042972e-16 * nu**3, 1.438776877 * nu
    temps = c2 / np.log1p(c1 / b)
    b_ground = olr_b * (1 + DIFFUSIVITY * tau_total / 2)
    tg = (c2 / np.log1p(c1 / b_ground)).item()
    tau = -np.diff(tau_lev)[:, None]  # layer optical thicknesses, bottom layer first
    f = spectral_fluxes(nu, tau, temps, tg, diffusivity=True, weights=np.ones(1))
    net = f.flux_up[:, 0] - f.flux_down[:, 0]
    assert np.allclose(net, math.pi * olr_b, rtol=1e-12)
    assert f.flux_down[-1, 0] == 0.0
    assert np.allclose(f.flux_down[:, 0], math.pi * olr_b * DIFFUSIVITY * tau_lev / 2, rtol=1e-12)


def test_heating_rate_against_the_heat_capacity_of_air_from_janaf():
    # A dry layer from 1000 to 900 hPa that keeps 1 W m-2 of net flux heats at g dF / (cp dp) (Petty 2006,
    # Eq. 10.53). The outside numbers: g = 9.80665 m s-2 (standard gravity, exact by convention) and cp of
    # dry air from the JANAF tables (Chase 1998, through the `janaf` package) at 298.15 K, Cp of N2, O2, Ar
    # and CO2 weighted by the U.S. Standard Atmosphere 1976 mole fractions 0.78084, 0.209476, 0.00934 and
    # 0.000314 (its Table 3, recalled from memory) over its molar mass 28.9644 g/mol: 1004.8 J kg-1 K-1,
    # hence 0.0843 K/day. Within 0.2 %: the cp of dry air varies by 0.2 % between 250 and 300 K (JANAF).
    # The layer above, with no net flux divergence, does not heat.
    import janaf

    fractions = {"N-023": 0.78084, "O-029": 0.209476, "Ar-001": 0.00934, "C-095": 0.000314}
    cp_molar = 0.0
    for table, x in fractions.items():
        rows = {float(r["T(K)"]): r for r in janaf.Table(table).df.iter_rows(named=True)}
        cp_molar += x * rows[298.15]["Cp"]
    cp = cp_molar / sum(fractions.values()) / 0.0289644
    expect = 9.80665 * 1.0 / (cp * 1e4) * 86400.0
    hr = heating_rate(np.array([300.0, 299.0, 299.0]), np.zeros(3), np.array([1e5, 9e4, 8e4]))
    assert hr[0] == pytest.approx(expect, rel=2e-3)
    assert hr[0] == pytest.approx(0.0843, abs=5e-4)
    assert hr[1] == 0.0


def test_refinement_of_layers_converges():
    # Smooth temperature and optical depth: fluxes converge as layers are refined.
    nu = np.linspace(500, 800, 301)
    k = 1 + np.sin(nu / 7) ** 2

    def run(n):
        z = np.linspace(0, 1, n + 1)
        t = 290 - 80 * z
        dtau = np.outer(-np.diff(np.exp(-3 * z)), k) * 3
        return spectral_fluxes(nu, dtau, t, 290.0).broadband_up[-1]

    a, b, c = run(10), run(40), run(160)
    assert abs(c - b) < abs(b - a) / 4 + 1e-12
    assert abs(c - b) / c < 1e-3


def test_trapezoid_weights():
    nu = np.array([0.0, 1.0, 3.0])
    assert np.allclose(trapezoid_weights(nu), [0.5, 1.5, 1.0])


def test_bad_inputs():
    with pytest.raises(ValueError, match="shape"):
        spectral_fluxes(np.arange(3.0) + 1, np.zeros((2, 4)), np.ones(3) * 250, 250.0)
    with pytest.raises(ValueError, match="non-negative"):
        spectral_fluxes(np.arange(3.0) + 1, -np.ones((2, 3)), np.ones(3) * 250, 250.0)
