"""Humidity: saturation vapour pressure, conversions and the Manabe-Wetherald profile, against named sources."""

import numpy as np
import pytest

from specforce.radiation.humidity import (
    dewpoint_from_vmr,
    manabe_wetherald_relative_humidity,
    relative_humidity_from_vmr,
    saturation_vapour_pressure,
    specific_humidity_from_vmr,
    vmr_from_relative_humidity,
    vmr_from_specific_humidity,
)


def test_saturation_vapour_pressure_reference_points():
    # Triple point of water: 611.657 Pa at 273.16 K (Guildner et al. 1976; Murphy & Koop 2005,
    # Sec. 2); both the liquid and ice formulas of Murphy & Koop (2005) reproduce it to 0.1 %.
    assert saturation_vapour_pressure(273.16) == pytest.approx(611.657, rel=1e-3)
    assert saturation_vapour_pressure(273.16, "ice") == pytest.approx(611.657, rel=1e-3)
    # Steam-table values at 20 and 30 degC: 2339 and 4247 Pa (IAPWS-95 saturation line, Wagner &
    # Pruss 2002, J. Phys. Chem. Ref. Data 31, 387; recalled from memory), within 0.1 %.
    assert saturation_vapour_pressure(293.15) == pytest.approx(2339.0, rel=1e-3)
    assert saturation_vapour_pressure(303.15) == pytest.approx(4247.0, rel=1e-3)
    # Ice is below liquid in supercooled conditions.
    assert saturation_vapour_pressure(250.0, "ice") < saturation_vapour_pressure(250.0)


def test_humidity_conversions_round_trip():
    x = np.array([1e-6, 1e-3, 2e-2])
    assert np.allclose(vmr_from_specific_humidity(specific_humidity_from_vmr(x)), x, rtol=1e-12)
    p, t = 90000.0, 290.0
    rh = relative_humidity_from_vmr(vmr_from_relative_humidity(0.6, p, t), p, t)
    assert rh == pytest.approx(0.6)
    # dew point of saturated air is the air temperature
    assert dewpoint_from_vmr(vmr_from_relative_humidity(1.0, p, t), p) == pytest.approx(t, abs=1e-6)
    # Dew point of air at 30 degC and 50 % relative humidity: 18.4 degC (psychrometric tables; recalled from
    # memory, and the Magnus formula gives 18.44), within 0.2 K.
    dew = dewpoint_from_vmr(vmr_from_relative_humidity(0.5, 101325.0, 303.15), 101325.0)
    assert dew - 273.15 == pytest.approx(18.4, abs=0.2)
    # Saturation mixing ratio at 20 degC and 1000 hPa: 14.9 g/kg (Smithsonian Meteorological Tables;
    # recalled from memory), within 1 %.
    q = specific_humidity_from_vmr(vmr_from_relative_humidity(1.0, 1e5, 293.15))
    assert q / (1.0 - q) == pytest.approx(14.9e-3, rel=0.01)
    # specific humidity ~ 0.622 e / p for small e (e.g. Wallace & Hobbs 2006, Eq. 3.62)
    assert specific_humidity_from_vmr(1e-3) == pytest.approx(0.622 * 1e-3, rel=2e-3)


def test_manabe_wetherald_profile():
    # Manabe & Wetherald (1967), Eq. 2: RH = 0.77 (Q - 0.02)/0.98: 0.77 at the surface, 0 at Q = 0.02,
    # and linear in Q between (the two constants of the paper, and the shape).
    ps = 1e5
    assert manabe_wetherald_relative_humidity(ps, ps) == pytest.approx(0.77)
    assert manabe_wetherald_relative_humidity(2000.0, ps) == pytest.approx(0.0)
    assert manabe_wetherald_relative_humidity(51000.0, ps) == pytest.approx(0.77 * 0.49 / 0.98)
    q = np.linspace(0.02, 1.0, 7)
    assert np.allclose(np.diff(manabe_wetherald_relative_humidity(q * ps, ps), 2), 0.0, atol=1e-15)
