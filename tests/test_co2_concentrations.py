"""CO2 forcing across concentrations with the built-in spectroscopy: the shape from 0.5x to 8x.

Against the line-by-line benchmark of Pincus et al. (2020), J. Geophys. Res. Atmos. 125, e2020JD033483
(numbers derived from the paper's data, ../shared/design/PUBLISHED.md sections 2 and 4): at the top of the
atmosphere the forcing per doubling of CO2 (n x 284.32 ppm, CH4 1831.5 ppb and N2O 327.0 ppb) is nearly
constant and rises by 1-3 % from 0.5x->1x to 4x->8x; at the surface it rises steeply with concentration;
2xCO2 gives 2.709 W m-2 at TOA.

The proxy for their 100 reanalysis profiles is the five seasonal AFGL models weighted by the area of the
latitude bands they stand for (specforce.forcing.sweep.AREA_WEIGHTS), which by itself may differ by a few
per cent. One area-mean sweep for the module (five profiles x five concentrations, about two minutes on
2 cores); ``benchmarks/diag_co2_shape.py --area-mean`` prints the same table with the spectral detail.
"""

import numpy as np
import pytest

from specforce.api import spectroscopy
from specforce.forcing.sweep import AREA_WEIGHTS, with_surface_value
from specforce.io.profiles import load_profile
from specforce.radiation.longwave import Settings, compute_longwave_states

pytestmark = pytest.mark.slow

PRE_INDUSTRIAL_CO2 = 284.32e-6  # Pincus et al. (2020) protocol [mol mol-1]
FACTORS = (0.5, 1.0, 2.0, 4.0, 8.0)


@pytest.fixture(scope="module")
def per_doubling():
    """AFGL area-mean forcing per doubling, (TOA, surface), each for 0.5x-1x, 1x-2x, 2x-4x, 4x-8x [W m-2]."""
    spec = spectroscopy()
    w = np.array(list(AREA_WEIGHTS.values()))
    w = w / w.sum()
    toa, sfc = np.zeros(4), np.zeros(4)
    for weight, name in zip(w, AREA_WEIGHTS):
        prof = with_surface_value(load_profile(name), "CH4", 1831.5e-9)
        prof = with_surface_value(prof, "N2O", 327.0e-9)
        states = [with_surface_value(prof, "CO2", f * PRE_INDUSTRIAL_CO2) for f in FACTORS]
        results = compute_longwave_states(states, spec, Settings())
        toa += weight * -np.diff([r.olr for r in results])
        sfc += weight * np.diff([r.flux_down[0] - r.flux_up[0] for r in results])
    return toa, sfc


_MEASURED_2X = ("fails at 2.928 W m-2 (+8.1 %, AFGL area mean) since the 10 um laser bands take their intensities "
                "from an Einstein A (about 30 times the earlier values) and the chi factor its temperature dependence; "
                "it was 2.738 (+1.1 %) before both")


@pytest.mark.parametrize("tolerance", [
    pytest.param(0.03, marks=pytest.mark.xfail(strict=True, reason=f"the issue's 3 % {_MEASURED_2X}")),
    pytest.param(0.08, marks=pytest.mark.xfail(strict=True, reason=f"the 8 % asked of the built-in spectroscopy "
                                               f"(as for CH4 and N2O in test_published_benchmarks.py) {_MEASURED_2X}"))])
def test_2xco2_toa_forcing_against_the_line_by_line_benchmark(per_doubling, tolerance):
    # Pincus et al. (2020), PUBLISHED.md section 2: 2.709 W m-2 (six models 2.659-2.743).
    assert per_doubling[0][1] == pytest.approx(2.709, rel=tolerance)


@pytest.mark.xfail(strict=True, reason="TOA forcing per doubling within 3 % of its mean from 0.5x to 8x fails at "
                   "3.7 % (2.952, 2.928, 2.852, 2.767 W m-2, AFGL area mean; 9.4 % before the laser bands and the "
                   "chi factor's temperature dependence)")
def test_toa_forcing_per_doubling_is_nearly_constant(per_doubling):
    # Pincus et al. (2020) line-by-line models, derived from their data (PUBLISHED.md section 4): nearly
    # constant; the issue asks for the four values within 3 % of their mean.
    toa = per_doubling[0]
    assert np.max(np.abs(toa / toa.mean() - 1.0)) <= 0.03


@pytest.mark.xfail(strict=True, reason="TOA forcing per doubling 4x->8x no more than 1 % below 0.5x->1x fails at "
                   "-6.3 % (2.767 against 2.952 W m-2, AFGL area mean; -15.6 % before the laser bands and the chi "
                   "factor's temperature dependence), where line-by-line models rise by 1-3 %")
def test_toa_forcing_per_doubling_does_not_fall(per_doubling):
    # Pincus et al. (2020), derived from their data (PUBLISHED.md section 4): rising by 1-3 % from 0.5x->1x to
    # 4x->8x; the issue allows the last to be at most 1 % below the first.
    toa = per_doubling[0]
    assert toa[-1] >= 0.99 * toa[0]


def test_toa_forcing_per_doubling_shape_is_within_the_built_in_accuracy(per_doubling):
    # What the built-in CO2 states (BUILTIN_ACCURACY): the forcing per doubling falls about 6 % from 0.5x->1x
    # to 4x->8x (measured -6.3 %); a fall of more than 8 % would contradict that statement.
    toa = per_doubling[0]
    assert toa[-1] / toa[0] - 1.0 > -0.08


def test_surface_forcing_per_doubling_rises_at_high_concentration(per_doubling):
    # Pincus et al. (2020), derived from their data (PUBLISHED.md section 4): at the surface the forcing per
    # doubling rises steeply with concentration. The source gives no number; "steeply" is read here as more
    # than the 1-3 % rise of the same models at TOA, hence more than 5 % from 1x->2x to 4x->8x.
    # Measured: 3.162 (1x->2x) and 3.558 W m-2 (4x->8x), +12.5 %.
    sfc = per_doubling[1]
    assert sfc[3] > 1.05 * sfc[1] and sfc[3] > sfc[2]


def test_the_10um_bands_share_of_the_2xco2_tropopause_forcing():
    # Augustsson & Ramanathan (1977), J. Atmos. Sci. 34, 448 (PUBLISHED.md section 4): adding the 10 and 7.6 um
    # bands to the 12-18 um bands raises the 2xCO2 surface warming of a radiative-convective model from 1.9 K to
    # "about 2 K", some 3-8 % given the rounding. A radiative-convective model's warming follows the forcing at
    # the tropopause, so the share of the 10 um bands (the only ones of the two that the built-in CO2 has) in the
    # mid-latitude summer 2xCO2 tropopause forcing should fall in 2.5-8 %. Measured: 5.9 % (5.790 against 5.451
    # W m-2 without them; at TOA 10.5 %, at the surface 18.3 %).
    import copy

    from specforce.api import radiative_forcing
    from specforce.molecular.linegen.co2 import generate_co2, load_co2_table
    from specforce.molecular.lines import Spectroscopy

    spec = spectroscopy()
    table = copy.deepcopy(load_co2_table()[0])
    table["fixed_band"] = []
    without = Spectroscopy({**spec.lines, "CO2": generate_co2(table)}, spec.provenance)
    full = radiative_forcing("mls", {"CO2": "2x"}, spec).tropopause
    share = 1.0 - radiative_forcing("mls", {"CO2": "2x"}, without).tropopause / full
    assert 0.025 < share < 0.08
