"""Property tests of physical invariants (hypothesis): line shapes, transfer bounds, energy, forcing symmetry."""

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from specforce.constants import CP_DRY_AIR, STANDARD_GRAVITY
from specforce.absorption.lineshapes import voigt_profile
from specforce.radiation.transfer import heating_rate, planck, spectral_fluxes

widths = st.floats(min_value=1e-4, max_value=0.2)


@settings(max_examples=60, deadline=None)
@given(alpha=widths, gamma=st.floats(min_value=0.0, max_value=0.2))
def test_voigt_profile_is_non_negative_and_integrates_to_one(alpha, gamma):
    # An area-normalised profile: non-negative everywhere (to the 1e-13 relative accuracy of the
    # 32-term rational approximation of Weideman 1994, from memory; measured -2e-14 of the peak at worst
    # for a pure Doppler line), and its integral over +-D is 1 less the Lorentz tails beyond D,
    # (2/pi) arctan(gamma / D) (the Gaussian tail is negligible at D = 400 alpha). The trapezoid
    # rule on a grid of a twentieth of the narrower width is exact to 1e-6 here.
    d = max(400 * alpha, 400 * gamma, 1.0)
    x = np.linspace(-d, d, int(2 * d / min(alpha, max(gamma, alpha)) * 20) | 1)
    v = voigt_profile(x, alpha, gamma)
    assert np.all(v >= -1e-12 * v.max())
    tails = 2.0 / np.pi * np.arctan(gamma / d)
    assert np.trapezoid(v, x) == pytest.approx(1.0 - tails, abs=2e-5)


@st.composite
def columns(draw, nlay_max=12):
    nlay = draw(st.integers(1, nlay_max))
    n = draw(st.integers(2, 40))
    tau = np.array(draw(st.lists(st.floats(min_value=0.0, max_value=50.0), min_size=nlay * n, max_size=nlay * n)))
    tlev = np.array(draw(st.lists(st.floats(min_value=150.0, max_value=330.0), min_size=nlay + 1,
                                  max_size=nlay + 1)))
    ts = draw(st.floats(min_value=150.0, max_value=330.0))
    eps = draw(st.floats(min_value=0.0, max_value=1.0))
    lo = draw(st.floats(min_value=50.0, max_value=2000.0))
    nu = lo + np.sort(np.array(draw(st.lists(st.floats(min_value=0.0, max_value=50.0), min_size=n, max_size=n,
                                             unique=True))))
    return nu, tau.reshape(nlay, n), tlev, ts, eps


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(columns())
def test_fluxes_lie_between_zero_and_the_warmest_blackbody(col):
    # Transmittances lie in [0, 1] and sources are blackbodies, so every intensity, and every
    # flux, is bounded by zero and pi B at the warmest temperature present (common practice:
    # the Schwarzschild equation mixes sources with non-negative weights summing to at most 1). The
    # transfer interpolates B linearly in nu between points at most 0.32 cm-1 apart (documented error
    # below 1e-6 relative; a chord lies above a convex B: hypothesis found 1.6e-8 above pi B at 99.5 cm-1,
    # 150 K), so the upper bound holds to 1e-6.
    nu, tau, tlev, ts, eps = col
    if np.unique(nu).size < 2:
        return
    fl = spectral_fluxes(nu, tau, tlev, ts, eps)
    top = np.pi * planck(nu, max(tlev.max(), ts))
    for f in (fl.flux_up, fl.flux_down):
        assert np.all(f >= -1e-12 * top)
        assert np.all(f <= top * (1 + 1e-6))
    # nothing comes down at the top of the atmosphere
    assert np.all(fl.flux_down[-1] == 0.0)


@settings(max_examples=100, deadline=None)
@given(up=st.lists(st.floats(0, 500), min_size=3, max_size=20), dn=st.lists(st.floats(0, 500), min_size=3,
                                                                            max_size=20))
def test_heating_rates_conserve_energy(up, dn):
    # Energy: the column's total heating, sum of c_p / g dp dT/dt over layers, equals the net flux
    # into the column, F_net(surface) - F_net(top) with F_net = up - down (dry air, so c_p is that of
    # dry air throughout).
    n = min(len(up), len(dn))
    fu, fd = np.array(up[:n]), np.array(dn[:n])
    p = np.linspace(100000.0, 1000.0, n)
    hr = heating_rate(fu, fd, p)
    stored = np.sum(hr / 86400.0 * CP_DRY_AIR * (p[:-1] - p[1:]) / STANDARD_GRAVITY)
    assert stored == pytest.approx((fu[0] - fd[0]) - (fu[-1] - fd[-1]), abs=1e-9 * (1 + np.abs(fu).sum()))


@pytest.fixture(scope="module")
def spectroscopy():
    from specforce.molecular.builtin import builtin_spectroscopy

    return builtin_spectroscopy()


def _forcing_is_zero_for_no_change_and_antisymmetric(spectroscopy, factor, name):
    # Zero change gives exactly zero forcing (same grid, same optical depths); swapping the base and
    # perturbed states reverses the sign at every level (the states share one grid either way).
    from specforce.forcing.instantaneous import instantaneous_forcing
    from specforce.io.profiles import load_profile
    from specforce.radiation.longwave import Settings
    from specforce.forcing.scenario import apply_perturbations, parse_change

    s = Settings(wavenumber_range=(660.0, 680.0), continuum=False, gases=("CO2", "H2O"))
    base, pert = apply_perturbations(load_profile(name), [parse_change("CO2", f"{factor!r}x")])
    zero = instantaneous_forcing(base, base, spectroscopy, s)
    assert np.all(zero.forcing == 0.0) and np.all(zero.spectral_toa == 0.0)
    a = instantaneous_forcing(base, pert, spectroscopy, s)
    b = instantaneous_forcing(pert, base, spectroscopy, s)
    assert np.allclose(a.forcing, -b.forcing, rtol=0, atol=1e-10)


def _forcing_cases(examples):
    strategy = given(factor=st.floats(min_value=0.2, max_value=8.0), name=st.sampled_from(["mls", "saw", "tropical"]))
    return settings(max_examples=examples, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
                    )(strategy(_forcing_is_zero_for_no_change_and_antisymmetric))


# two cases in the default run; six (three forcings each over the CO2 chi wings' reach) under the slow marker
test_forcing_is_zero_for_no_change_and_antisymmetric = _forcing_cases(2)
test_forcing_is_zero_for_no_change_and_antisymmetric_6_cases = pytest.mark.slow(_forcing_cases(6))
