"""Published simplified forcing formulas and their refits.

Each check names the paper and table whose number it reproduces. Tolerances:
the papers quote two decimals, so 0.01 W m-2 (half a unit in the last place
plus rounding of the concentrations they used) unless stated otherwise.
"""

import warnings

import numpy as np
import pytest

from specforce.forcing import formula_choice
from specforce.forcing import formulas as fm

# IPCC AR5 WG1 Chapter 8 (Myhre et al. 2013), Table 8.2: 1750 and 2011 concentrations
AR5_1750 = {"CO2": 278.0, "CH4": 722.0, "N2O": 270.0}
AR5_2011 = {"CO2": 390.5, "CH4": 1803.0, "N2O": 324.0}
# IPCC AR6 WG1 Chapter 2 / Annex III: 1750 and 2019 concentrations (recalled from memory)
AR6_1750 = {"CO2": 278.3, "CH4": 729.2, "N2O": 270.1}
AR6_2019 = {"CO2": 409.9, "CH4": 1866.3, "N2O": 332.1}


def test_myhre_doubling_gives_3_71():
    # Myhre et al. 1998, GRL 25, 2715, Table 3: 5.35 ln 2 = 3.71 W m-2, the TAR/AR5 F2x
    assert fm.co2_forcing_myhre1998(556.0, 278.0) == pytest.approx(3.71, abs=0.005)


def test_ar5_1750_2011_values():
    # IPCC AR5 WG1 Table 8.2 (Myhre et al. 2013): CO2 1.82, CH4 0.48, N2O 0.17 W m-2.
    # Overlap convention that reproduces them: the other gas at its 2011 value.
    assert fm.co2_forcing_myhre1998(AR5_2011["CO2"], AR5_1750["CO2"]) == pytest.approx(1.82, abs=0.01)
    assert fm.ch4_forcing_myhre1998(AR5_2011["CH4"], AR5_1750["CH4"], AR5_2011["N2O"]) == pytest.approx(0.48, abs=0.01)
    assert fm.n2o_forcing_myhre1998(AR5_2011["N2O"], AR5_1750["N2O"], AR5_2011["CH4"]) == pytest.approx(0.17, abs=0.01)


def test_overlap_convention_matters():
    # the TAR convention (other gas at its reference) gives 0.492 / 0.177, outside the AR5 rounding
    tar = fm.ch4_forcing_myhre1998(AR5_2011["CH4"], AR5_1750["CH4"], AR5_1750["N2O"])
    assert tar == pytest.approx(0.492, abs=0.002)
    assert fm.n2o_forcing_myhre1998(AR5_2011["N2O"], AR5_1750["N2O"], AR5_1750["CH4"]) == pytest.approx(0.177, abs=0.002)


def test_etminan_methane_0_61():
    # Etminan et al. 2016, GRL 43, 12614, abstract: CH4 1750-2011 forcing 0.61 W m-2 (was 0.48)
    n_mean = 0.5 * (AR5_1750["N2O"] + AR5_2011["N2O"])
    assert fm.ch4_forcing_etminan2016(AR5_2011["CH4"], AR5_1750["CH4"], n_mean) == pytest.approx(0.61, abs=0.01)


def test_etminan_co2_near_ipcc_and_10_percent_higher_at_2000ppm():
    # Etminan et al. 2016, abstract: 1750-2011 CO2 forcing within 1% of IPCC (1.82), about 10% higher at 2000 ppm
    n_mean = 0.5 * (AR5_1750["N2O"] + AR5_2011["N2O"])
    f = fm.co2_forcing_etminan2016(AR5_2011["CO2"], AR5_1750["CO2"], n_mean)
    assert abs(f / 1.82 - 1.0) < 0.01
    with pytest.warns(fm.FormulaRangeWarning):  # 2000 ppm is beyond the range specforce checks for Myhre
        myhre = fm.co2_forcing_myhre1998(2000.0, 278.0)
    ratio = fm.co2_forcing_etminan2016(2000.0, 278.0, 270.0) / myhre
    assert 1.07 < ratio < 1.12


def test_ar6_1750_2019_effective_forcing():
    # IPCC AR6 WG1 Chapter 7 (Forster et al. 2021), Table 7.8 (from memory): ERF 1750-2019
    # CO2 2.16, CH4 0.54, N2O 0.21 W m-2, from Meinshausen et al. 2020 SARF times the AR6 factors.
    # Convention: the start year is the reference concentration and the other gases take
    # their 2019 values.
    a, b = AR6_1750, AR6_2019
    co2 = fm.co2_forcing_meinshausen2020(b["CO2"], a["CO2"], n=b["N2O"])
    ch4 = fm.ch4_forcing_meinshausen2020(b["CH4"], a["CH4"], n=b["N2O"])
    n2o = fm.n2o_forcing_meinshausen2020(b["N2O"], a["N2O"], c=b["CO2"], m=b["CH4"])
    assert fm.effective_forcing_ar6("CO2", co2) == pytest.approx(2.16, abs=0.01)
    assert fm.effective_forcing_ar6("CH4", ch4) == pytest.approx(0.54, abs=0.01)
    assert fm.effective_forcing_ar6("N2O", n2o) == pytest.approx(0.21, abs=0.01)


def test_ar6_doubling_erf():
    # IPCC AR6 WG1 section 7.3.2.1: 2xCO2 ERF 3.93 +- 0.47 W m-2
    sarf = fm.co2_forcing_meinshausen2020(2 * 277.15)
    assert fm.effective_forcing_ar6("CO2", sarf) == pytest.approx(3.93, abs=0.01)


def test_meinshausen_alpha_capped_above_c_alpha_max():
    # Meinshausen et al. 2020, Table 3: alpha' is constant above C_alpha_max = C0 - b1/(2 a1) = 1808 ppm,
    # so F/ln(C/C0) is the same at 3000 and 5000 ppm, and continuous at C_alpha_max
    c0 = 277.15
    per_ln = [fm.co2_forcing_meinshausen2020(c) / np.log(c / c0) for c in (3000.0, 5000.0)]
    assert per_ln[0] == pytest.approx(per_ln[1], rel=1e-12)
    cmax = c0 + 7.5906e-4 / (2 * 2.4785e-7)
    assert fm.co2_forcing_meinshausen2020(cmax - 1e-6) == pytest.approx(fm.co2_forcing_meinshausen2020(cmax + 1e-6),
                                                                       abs=1e-6)


@pytest.mark.parametrize("formula", sorted(formula_choice.FORMULAS))
@pytest.mark.parametrize("gas, ref, lo, hi", [("CO2", 278.0, 200.0, 1000.0), ("CH4", 722.0, 400.0, 3000.0),
                                              ("N2O", 270.0, 210.0, 500.0)])
def test_formulas_monotonic_and_zero_at_reference(formula, gas, ref, lo, hi):
    # physics: more absorber, more forcing (inside the fitted ranges); no change, no forcing
    x = np.linspace(lo, hi, 60)
    f = formula_choice.formula_forcing(formula, gas, x, ref)
    assert np.all(np.diff(f) > 0)
    assert abs(float(formula_choice.formula_forcing(formula, gas, ref, ref))) < 1e-12


@pytest.mark.parametrize("call", [
    lambda: fm.co2_forcing_etminan2016(3000.0),
    lambda: fm.co2_forcing_myhre1998(100.0),
    lambda: fm.ch4_forcing_etminan2016(5000.0),
    lambda: fm.n2o_forcing_etminan2016(600.0),
    lambda: fm.co2_forcing_meinshausen2020(10000.0),
])
def test_outside_range_warns(call):
    with pytest.warns(fm.FormulaRangeWarning, match="outside the range"):
        value = call()
    assert np.isfinite(value)


def test_inside_range_is_silent():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fm.co2_forcing_etminan2016(560.0)
        fm.ch4_forcing_meinshausen2020(1900.0)


def test_bad_inputs():
    with pytest.raises(ValueError, match="must be positive"):
        fm.co2_forcing_myhre1998(-1.0)
    with pytest.raises(ValueError, match="unknown formula"):
        formula_choice.formula_forcing("nope", "CO2", 500.0, 278.0)
    with pytest.raises(ValueError, match="no factor"):
        fm.effective_forcing_ar6("O3", 1.0)


# ------------------------------------------------------------------ refits
