"""Temperature and pressure dependences of line parameters against hand-worked examples.

Each expected value below was worked by hand (pencil and calculator) from the
formula in the cited paper and then confirmed with scipy.constants; the
tolerance is the precision of that hand arithmetic (5-6 digits).
"""

import pytest

import numpy as np

from specforce.io.linerecords import read_records
from specforce.molecular.lineparams import (doppler_halfwidth, intensity_at_temperature, intensity_from_einstein_a,
                                            lorentz_halfwidth, shifted_wavenumber)
from specforce.molecular.lines import LineList
from specforce.molecular.molecules import isotopologue, partition_function


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


def test_intensity_from_einstein_a_hand_example():
    # Simeckova et al. (2006), JQSRT 98, 130, the A-to-intensity relation: A = 0.2 s-1, nu = 944.19 cm-1,
    # g' = 39, E'' = 1552 cm-1, Q = 286.09, I_a = 0.9842 (a P(20)-like line of the 10.4 um CO2 band, numbers
    # chosen): g'A/(8 pi c nu^2) = 1.16122e-17 cm, exp(-c2 E''/296) = 5.29352e-4, 1 - exp(-c2 nu/296) = 0.989842
    # -> 2.09318e-23 cm-1/(molecule cm-2).
    s = intensity_from_einstein_a(0.2, 944.19, 39.0, 1552.0, 286.09, 0.9842)
    assert s == pytest.approx(2.09318e-23, rel=1e-5)


def test_intensity_from_einstein_a_against_real_water_records(real_lines):
    # The real water list (HITRAN, ../shared/linedata-src) carries each line's A, g' and intensity: the relation
    # with our Q(296) gives every intensity back within 1 % (measured: 0.74 % high throughout, the difference
    # between our partition function and the one the list was made with).
    ll = LineList(read_records(real_lines / "h2o_HITRAN.par"), {})
    ok = (ll.einstein_a > 0) & (ll.g_upper > 0)
    q = float(partition_function("H2O", 1, 296.0))
    s = intensity_from_einstein_a(ll.einstein_a[ok], ll.wavenumber[ok], ll.g_upper[ok], ll.lower_energy[ok], q,
                                  isotopologue("H2O", 1).abundance)
    ratio = s / ll.intensity[ok]
    assert ok.sum() > 19000
    assert np.all(np.abs(ratio - 1.0) < 0.01)
