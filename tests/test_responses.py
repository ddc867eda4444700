"""Planck and water-vapour responses, no-feedback warming, emission temperature and altitude."""

import pytest

from specforce.molecular.builtin import builtin_spectroscopy
from specforce.errors import SettingsError
from specforce.io.profiles import load_profile
from specforce.radiation.longwave import Settings
from specforce.forcing.responses import blackbody_fraction, climate_responses, emission_temperature


@pytest.mark.slow  # four whole-spectrum OLR runs (about 150 s on 2 cores)
def test_planck_and_water_vapour_responses_of_the_us_standard_atmosphere():
    # Planck response: between -3 and -4 W m-2 K-1 for a standard clear-sky column (Soden & Held
    # 2006, J. Climate 19, 3354: -3.2 global mean all-sky; the blackbody bound 4 sigma T^3 is 3.76
    # at 255 K). Measured: -3.57 (U.S. Standard 1976, built-in lines with O3, 10-3000 cm-1; -3.78
    # without the O3 lines).
    # Fixed-RH water-vapour response: positive, and Planck + water vapour near the clear-sky OLR
    # slope at fixed RH of about -2.2 W m-2 K-1 (Koll & Cronin 2018, PNAS 115, 10293; from
    # memory, medium confidence), within 0.5 because their slope also carries lapse-rate changes.
    # Measured: +1.29, sum -2.29 (emission temperature 262.7 K, reached at 3.92 km; 152 s). A
    # 0.01 cm-1 grid gave the same figures to 0.001 as the default grid (measured without O3
    # lines) in a third of the time.
    # No-feedback warming for 3.7 W m-2: about 1.2 K (IPCC AR4 WG1, Box 10.2, for a uniform temperature
    # change with no feedbacks; recalled from memory), within 0.25 K, as a clear column has a somewhat
    # stronger Planck response than the all-sky global mean (measured 1.04 K). Emission temperature: the
    # textbook effective emission temperature of Earth is 255 K for 240 W m-2 (e.g. Hartmann 1994, Global
    # Physical Climatology, Ch. 2; from memory), and the clear-sky U.S. Standard column emits more, about 265
    # W m-2 (measured 262.7 K); it is reached where the profile is that cold.
    spec = builtin_spectroscopy()
    prof = load_profile("usstd")
    r = climate_responses(prof, 3.7, spec, Settings(spacing=0.01))
    lam, wv = r.planck_response, r.water_vapour_response
    assert -4.0 < lam < -3.0
    assert wv > 0.0
    assert lam + wv == pytest.approx(-2.2, abs=0.5)
    assert r.no_feedback_warming == pytest.approx(1.2, abs=0.25)
    assert emission_temperature(240.0) == pytest.approx(255.0, abs=0.5)
    t_e = r.emission_temperature
    assert 255.0 < t_e < 270.0
    # U.S. Standard 1976: 6.5 K/km from 288.15 K, so T_e is reached at (288.15 - T_e) / 6.5 km
    assert r.emission_altitude == pytest.approx((288.15 - t_e) / 6.5e-3, rel=0.02)


def test_responses_refuse_a_partial_range():
    # Required: the responses need the whole longwave spectrum; a partial range (500-800 cm-1 here) is
    # refused with a message rather than giving a meaningless Planck response. The blackbody fraction is
    # checked against the tabulated blackbody radiation functions F(0 -> lambda T) (Incropera & DeWitt,
    # Fundamentals of Heat and Mass Transfer, Table 12.1; from memory: 0.4036 at 3600, 0.4434 at 3800,
    # 0.7202 at 5800, 0.7378 at 6000 um K). At 294.2 K, 800 and 500 cm-1 are lambda T = 3678 and 5884 um K: linear
    # interpolation gives 0.4191 and 0.7276, so 0.3085 between (interpolation error well below 0.003).
    assert blackbody_fraction((500.0, 800.0), 294.2) == pytest.approx(0.3085, abs=0.003)
    assert blackbody_fraction((10.0, 3000.0), 294.2) > 0.99
    with pytest.raises(SettingsError, match="need the whole longwave spectrum"):
        climate_responses(load_profile("mls"), 3.7, builtin_spectroscopy(), Settings(wavenumber_range=(500.0, 800.0)))
