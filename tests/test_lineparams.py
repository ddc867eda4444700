"""Temperature and pressure dependences of line parameters against hand-worked examples.

Each expected value below was worked by hand (pencil and calculator) from the
formula in the cited paper and then confirmed with scipy.constants; the
tolerance is the precision of that hand arithmetic (5-6 digits).
"""

import pytest

from specforce.molecular.lineparams import doppler_halfwidth, intensity_at_temperature, lorentz_halfwidth, shifted_wavenumber


def test_intensity_at_temperature_hand_example():
    # Rothman et al. (1998), JQSRT 60, 665, Eq. (A11). S(296) = 1e-20, nu = 667 cm-1,
    # E'' = 500 cm-1, T = 250 K, Q(296)/Q(250) = 1.2 (chosen):
    # Boltzmann factor exp(-1.4387769*500*(1/250-1/296)) = 0.63943,
    # stimulated emission (1-e^-3.83866)/(1-e^-3.24209) = 1.018262 -> 7.8133e-21.
    s = intensity_at_temperature(1e-20, 667.0, 500.0, 250.0, 1.2)
    assert s == pytest.approx(7.8133e-21, rel=1e-4)


def test_intensity_unchanged_at_reference_temperature():
    assert intensity_at_temperature(3e-21, 1500.0, 1200.0, 296.0, 1.0) == pytest.approx(3e-21, rel=1e-14)


def test_lorentz_halfwidth_hand_example():
    # Rothman et al. (1998), Eq. (A12). gamma_air 0.0700, gamma_self 0.0900, n 0.75,
    # p = 50000 Pa (0.493462 atm), p_self = 500 Pa, T = 250 K:
    # (296/250)^0.75 = 1.135048; 0.07*0.488527 + 0.09*0.004935 = 0.034641 -> 0.039319 cm-1.
    g = lorentz_halfwidth(0.07, 0.09, 0.75, 50000.0, 250.0, partial_pressure=500.0)
    assert g == pytest.approx(0.039319, rel=1e-4)


def test_pressure_shift():
    # Rothman et al. (1998), Eq. (A13): nu + delta p; -0.003 cm-1/atm at 1 atm.
    assert shifted_wavenumber(1000.0, -0.003, 101325.0) == pytest.approx(999.997, abs=1e-12)


def test_doppler_halfwidth_hand_example():
    # Doppler HWHM (nu/c) sqrt(2 k T ln2 / m) (Goody & Yung 1989, Eq. 3.14) for 12C16O2
    # (m = 43.98983 u) at 667 cm-1 and 296 K: sqrt(2*1.380649e-23*296*0.693147/7.30465e-26)
    # = 278.49 m/s, / c * 667 = 6.1961e-4 cm-1.
    assert doppler_halfwidth(667.0, 296.0, 43.98983e-3) == pytest.approx(6.1961e-4, rel=1e-4)
