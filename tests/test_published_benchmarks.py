"""The built-in spectroscopy against the line-by-line benchmark of Pincus et al. (2020).

Pincus, R. et al. (2020), Benchmark calculations of radiative forcing by greenhouse gases, J. Geophys. Res.
Atmos. 125, e2020JD033483 (numbers in ../shared/design/PUBLISHED.md, section 2): clear-sky, instantaneous,
longwave TOA forcing, global annual mean of 100 reanalysis profiles; 2xCO2 (284.32 -> 568.64 ppm) 2.709,
CH4 (808.2 -> 1831.5 ppb) 0.613, N2O (273.0 -> 327.0 ppb) 0.205 W m-2, the other gases at present day
(CO2 397.55 ppm, CH4 1831.5 ppb, N2O 327.0 ppb).

Those profiles are not available: the proxy here is the five seasonal AFGL models weighted by the area of
the latitude bands they stand for (specforce.forcing.sweep.AREA_WEIGHTS, the --area-mean weights), which by itself
may differ from the reanalysis mean by a few per cent. Nothing in specforce is calibrated against these
values. Each sweep takes about a minute on 2 cores. The CO2 checks, across concentrations from 0.5x to 8x,
are in tests/test_co2_concentrations.py.
"""

import numpy as np
import pytest

from specforce.absorption.linesum import DEFAULT_CUTOFF
from specforce.api import spectroscopy
from specforce.io.profiles import load_profile
from specforce.radiation.longwave import Settings
from specforce.forcing.sweep import AREA_WEIGHTS, concentration_sweep

# Five-profile area-mean sweeps over the whole spectrum (about a minute each on 2 cores).
pytestmark = pytest.mark.slow

PRESENT_DAY = {"CO2": 397.55, "CH4": 1831.5, "N2O": 327.0}


@pytest.fixture(scope="module")
def spec():
    return spectroscopy()


def _area_mean_toa(gas, values, reference, spec, own_lines_only=False):
    """AFGL area-mean TOA forcing [W m-2]. With ``own_lines_only`` the spectrum is limited to the reach of
    the gas's lines (their span plus the 25 cm-1 cut-off): outside it both runs see the same optical depths,
    so the forcing is the same and the sweep is cheaper."""
    names = list(AREA_WEIGHTS)
    settings = Settings()
    if own_lines_only:
        wn = spec.lines[gas].wavenumber
        reach = DEFAULT_CUTOFF + 1.0
        settings = Settings(wavenumber_range=(max(10.0, float(wn[0]) - reach), min(3000.0, float(wn[-1]) + reach)))
    s = concentration_sweep(gas, values, [load_profile(n) for n in names], spec, settings,
                            weights=[AREA_WEIGHTS[n] for n in names], reference=reference, background=PRESENT_DAY)
    toa = s.to_dict()["forcing_toa"]
    return np.array([sum(AREA_WEIGHTS[n] * toa[n][j] for n in names) for j in range(len(values))])


@pytest.mark.xfail(strict=True, reason="CH4 808.2->1831.5 ppb TOA forcing within 8 % of Pincus et al. (2020)'s "
                   "0.613 W m-2 (PUBLISHED.md section 2) fails at an AFGL area mean of 0.397 W m-2 (-35 %), "
                   "because the built-in CH4 fine structure has an estimated width and its bands are from memory")
def test_ch4_toa_forcing_against_the_line_by_line_benchmark(spec):
    # Pincus et al. (2020), PUBLISHED.md section 2: CH4 808.2 -> 1831.5 ppb, 0.613 W m-2; tolerance 8 %.
    assert _area_mean_toa("CH4", [1831.5], 808.2, spec, own_lines_only=True)[0] == pytest.approx(0.613, rel=0.08)


@pytest.mark.xfail(strict=True, reason="N2O 273->327 ppb TOA forcing within 8 % of Pincus et al. (2020)'s "
                   "0.205 W m-2 (PUBLISHED.md section 2) fails at an AFGL area mean of 0.225 W m-2 (+10 %), "
                   "because the built-in N2O band intensities are from memory")
def test_n2o_toa_forcing_against_the_line_by_line_benchmark(spec):
    # Pincus et al. (2020), PUBLISHED.md section 2: N2O 273.0 -> 327.0 ppb, 0.205 W m-2; tolerance 8 %.
    assert _area_mean_toa("N2O", [327.0], 273.0, spec, own_lines_only=True)[0] == pytest.approx(0.205, rel=0.08)
