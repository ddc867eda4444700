"""Absorption: the fast method against the direct sum, and a homogeneous-path check."""

import numpy as np
import pytest
from scipy.special import i0e, i1e

from specforce.absorption import LayerState, LineShapeOptions, cross_section, recommended_spacing, spectral_grid
from specforce.linestore import LineList, import_lines, open_store


def synthetic_lines(n, lo, hi, seed=0, molecule=1):
    """Invented lines with realistic ranges of parameters (not real transitions)."""
    rng = np.random.default_rng(seed)
    cols = {
        "molecule": np.full(n, molecule, np.uint8),
        "isotopologue": np.ones(n, np.uint8),
        "wavenumber": np.sort(rng.uniform(lo, hi, n)),
        "intensity": 10 ** rng.uniform(-24, -19, n),
        "lower_energy": rng.uniform(0, 2000, n),
        "gamma_air": rng.uniform(0.02, 0.1, n),
        "gamma_self": rng.uniform(0.1, 0.5, n),
        "n_air": rng.uniform(0.5, 0.8, n),
        "delta_air": rng.uniform(-0.01, 0.005, n),
    }
    return LineList(cols)


def _compare(lines, lo, hi, state, column, options=LineShapeOptions()):
    h = recommended_spacing(lines, state)
    grid = spectral_grid(lo, hi, h)
    direct = cross_section(lines, grid, state, method="direct", options=options)
    fast = cross_section(lines, grid, state, method="fast", options=options)
    tau = direct * column
    window = (tau > 1e-3) & (tau < 10)
    assert window.sum() > 100, "test set-up gives too few points with 1e-3 < tau < 10"
    return np.max(np.abs(fast - direct)[window] / direct[window])


@pytest.mark.parametrize("pressure,temperature", [(95000.0, 290.0), (20000.0, 220.0), (300.0, 240.0)])
def test_fast_matches_direct_on_synthetic_lines(pressure, temperature):
    # Required (issue 3): within 0.1 % wherever a layer's optical depth is between 1e-3 and 10.
    lines = synthetic_lines(400, 480, 620)
    state = LayerState(pressure, temperature, 0.01 * pressure)
    err = _compare(lines, 500, 600, state, column=2e21 * pressure / 1e5)
    assert err < 1e-3


@pytest.mark.parametrize("options", [
    LineShapeOptions(cutoff=None),
    LineShapeOptions(cutoff=10.0, taper=0.5, subtract_cutoff=True),
    LineShapeOptions(radiation_term=False, co2_chi=True),
])
def test_fast_matches_direct_for_each_line_shape_option(options):
    lines = synthetic_lines(150, 560, 640, seed=3, molecule=2)
    state = LayerState(50000.0, 250.0, 20.0)
    assert _compare(lines, 580, 620, state, column=1e21, options=options) < 1e-3


def test_fast_matches_direct_on_real_water_lines(real_lines, tmp_path):
    import_lines([real_lines / "h2o_HITRAN.par"], tmp_path / "h2o.h5")
    with open_store(tmp_path / "h2o.h5") as st:
        lines = st.select(wavenumber_range=(150 - 25, 250 + 25))
    for p, t in [(90000.0, 288.0), (5000.0, 215.0)]:
        state = LayerState(p, t, 0.005 * p)
        assert _compare(lines, 150, 250, state, column=1e21 * p / 1e5) < 1e-3


def test_single_lorentz_line_equivalent_width_ladenburg_reiche():
    # Ladenburg & Reiche (1913), Ann. Phys. 347, 181; Goody & Yung (1989), Atmospheric Radiation,
    # Eq. 4.37: a Lorentz line of intensity S, half-width gamma, absorber amount m has equivalent
    # width W = 2 pi gamma L(u), u = S m / (2 pi gamma), L(u) = u exp(-u) [I0(u) + I1(u)].
    s, gamma = 1e-20, 0.1
    lines = LineList({
        "molecule": np.array([1], np.uint8), "isotopologue": np.array([1], np.uint8),
        "wavenumber": np.array([1000.0]), "intensity": np.array([s]), "lower_energy": np.array([0.0]),
        "gamma_air": np.array([gamma]), "gamma_self": np.array([gamma]), "n_air": np.array([0.0]),
        "delta_air": np.array([0.0]),
    })
    state = LayerState(101325.0, 296.0, 0.0)  # gamma(p, T) = gamma exactly at 1 atm, 296 K
    half = 60.0
    grid = spectral_grid(1000 - half, 1000 + half, 0.002)
    sigma = cross_section(lines, grid, state, method="direct",
                          options=LineShapeOptions(cutoff=None, radiation_term=False))
    for u in (0.1, 1.0, 10.0):
        m = u * 2 * np.pi * gamma / s
        w_num = np.trapezoid(1 - np.exp(-sigma * m), grid)
        w_num += 2 * s * m * gamma / (np.pi * half)  # wings beyond the grid, weak-line limit
        w_lr = 2 * np.pi * gamma * u * (i0e(u) + i1e(u))  # i0e(u) = exp(-u) I0(u)
        # Tolerance 2e-4: the Doppler core (alpha_D ~ 1e-3 cm-1, y ~ 80) and the grid's finite span.
        assert w_num == pytest.approx(w_lr, rel=2e-4), u


def test_errors_are_clear():
    lines = synthetic_lines(5, 500, 510)
    with pytest.raises(ValueError, match="grid must be uniform"):
        cross_section(lines, np.array([500.0, 501.0, 503.0]), LayerState(1e5, 280.0))
    with pytest.raises(ValueError, match="temperature must lie in 100-400 K"):
        LayerState(1e5, 20.0)
    with pytest.raises(ValueError, match="cutoff must be positive"):
        LineShapeOptions(cutoff=-1.0)
