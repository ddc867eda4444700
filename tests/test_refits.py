"""Refits of the formulas' functional forms: they recover known coefficients and flag poor fits."""

import warnings

import numpy as np
import pytest

import specforce.forcing.formulas as fm
import specforce.forcing.refits as rf


def test_refit_recovers_myhre_exactly():
    c = 278.0 * 2.0 ** np.linspace(-3, 4, 20)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", fm.FormulaRangeWarning)
        f = fm.co2_forcing_myhre1998(c, 278.0)
    fit = rf.fit_logarithmic(c, f, 278.0)
    assert fit.coefficients["alpha"] == pytest.approx(5.35, rel=1e-12)
    assert fit.max_residual < 1e-12 and fit.warning is None


def test_refit_recovers_etminan_form_exactly():
    c = np.linspace(180.0, 2000.0, 20)
    f = fm.co2_forcing_etminan2016(c, 278.0, 270.0)
    fit = rf.fit_logarithmic(c, f, 278.0, quadratic=True)
    assert fit.coefficients["alpha"] == pytest.approx(5.36 - 2.1e-4 * 270.0, rel=1e-10)
    assert fit.coefficients["a"] == pytest.approx(-2.4e-7, rel=1e-8)
    assert fit.coefficients["b"] == pytest.approx(7.2e-4, rel=1e-8)


def test_refit_square_root_recovers_coefficient():
    m = np.linspace(300.0, 5000.0, 20)
    f = 0.036 * (np.sqrt(m) - np.sqrt(722.0))
    fit = rf.fit_square_root(m, f, 722.0)
    assert fit.coefficients["a"] == pytest.approx(0.036, rel=1e-12)


def test_refit_uncertainty_and_poor_fit_warning():
    rng = np.random.default_rng(1)
    c = 278.0 * 2.0 ** np.linspace(-2, 3, 20)
    noisy = 5.0 * np.log(c / 278.0) + rng.normal(0, 0.01, c.size)
    fit = rf.fit_logarithmic(c, noisy, 278.0)
    assert fit.coefficients["alpha"] == pytest.approx(5.0, abs=5 * fit.standard_errors["alpha"])
    assert 0 < fit.standard_errors["alpha"] < 0.01 and fit.warning is None
    # a square-root dependence forced into a log form leaves structured residuals
    bad = rf.fit_logarithmic(c, 0.5 * (np.sqrt(c) - np.sqrt(278.0)), 278.0)
    assert bad.warning is not None and "does not fit" in bad.warning


def test_forcing_per_doubling_of_log_and_sqrt():
    c = 278.0 * 2.0 ** np.arange(-3, 5)
    assert np.allclose(rf.forcing_per_doubling(c, 5.35 * np.log(c / 278.0)), 5.35 * np.log(2.0))
    grow = rf.forcing_per_doubling(c, np.sqrt(c))
    assert np.all(np.diff(grow) > 0)
    with pytest.raises(ValueError, match="increasing"):
        rf.forcing_per_doubling(c[::-1], c)
