"""The generated CO2 line list against published constants and spectroscopic rules."""

import numpy as np
import pytest

from specforce.constants import SECOND_RADIATION_CONSTANT_CM_K
from specforce.linegen.linear import generate_co2, honl_london, load_band_table
from specforce.molecules import rotational_partition_function


@pytest.fixture(scope="module")
def co2():
    return generate_co2()


def _band(ll, upper, lower, iso=1):
    return (np.char.strip(ll.global_upper) == upper) & (np.char.strip(ll.global_lower) == lower) & (
        ll.isotopologue == iso)


@pytest.mark.parametrize("l_lower,delta_l", [(0, 0), (1, 0), (0, 1), (1, 1), (1, -1), (2, -1)])
def test_honl_london_sum_rule(l_lower, delta_l):
    # Herzberg (1945), Ch. IV: for every J'' the factors of the P, Q and R branches add to 2J''+1.
    j = np.arange(max(l_lower, 1) + 1, 60)
    total = sum(honl_london(j, dj, l_lower, delta_l) for dj in (-1, 0, 1))
    assert np.allclose(total, 2 * j + 1, rtol=1e-12)


def test_nu2_q_branch_and_low_j_lines(co2):
    # nu2 fundamental of 12C16O2: Q branch at the 667.38 cm-1 band centre, R(0) = nu0 + 2B'
    # (Rothman et al. 1992, JQSRT 48, 537; Herzberg 1945). Position tolerance 0.01 cm-1 (issue 5).
    fund = _band(co2, b"0 1 1 01", b"0 0 0 01")
    w, lab = co2.wavenumber[fund], np.char.strip(co2.local_lower[fund])
    q = w[np.char.startswith(lab, b"Q")]
    assert q.min() == pytest.approx(667.38, abs=0.01)
    assert w[lab == b"R   0e"][0] == pytest.approx(667.3801 + 2 * 0.390639, abs=0.01)


def test_626_nuclear_spin_removes_odd_j_of_the_ground_state(co2):
    # 16O has nuclear spin 0: only even J exist in the ground state of 16O12C16O (Herzberg 1945, Ch. I.3),
    # while 16O12C18O keeps every J.
    fund626 = _band(co2, b"0 1 1 01", b"0 0 0 01", iso=1)
    j626 = co2.g_lower[fund626]
    assert np.all(((j626 - 1) / 2) % 2 == 0)
    fund628 = _band(co2, b"0 1 1 01", b"0 0 0 01", iso=3)
    j628 = (co2.g_lower[fund628] - 1) / 2
    assert set(np.unique(j628 % 2)) == {0.0, 1.0}


def test_band_sums_match_the_table(co2):
    # Internal consistency (not an outside check): each generated band sums to the 296 K band
    # intensity that linedata/co2_bands.toml gives or derives for it.
    for band in co2.provenance["generator"]["bands"]:
        iso = {"626": 1, "636": 2, "628": 3}[band["iso"]]
        up = " ".join([band["upper"][0], band["upper"][1], band["upper"][2], band["upper"][3:]]).encode()
        lo = " ".join([band["lower"][0], band["lower"][1], band["lower"][2], band["lower"][3:]]).encode()
        m = _band(co2, up, lo, iso)
        assert co2.intensity[m].sum() == pytest.approx(band["intensity_296K"], rel=1e-10)


def test_hot_band_intensity_from_harmonic_scaling(co2):
    # The 02201<-01101 hot band: harmonic 2-D oscillator scaling (Herzberg 1945, Ch. II.5) gives
    # S = S_fund x N(01101)/N(00001) x nu ratio x stimulated-emission ratio; its value near
    # 6.2e-19 cm-1/(molecule cm-2) is what the 1992 compilation lists (from memory).
    bands = {(b["upper"], b["lower"], b["iso"]): b["intensity_296K"] for b in co2.provenance["generator"]["bands"]}
    assert bands[("02201", "01101", "626")] == pytest.approx(6.2e-19, rel=0.05)


def test_ground_state_level_sum_matches_the_partition_function(co2):
    # Partition sums from the generated levels against specforce's Q(T) (foundation issue): the
    # ground-state rotational levels of 626 (even J, E'' from the fundamental's lower states)
    # reproduce the rotational partition function of the model within 0.1 %.
    fund = _band(co2, b"0 1 1 01", b"0 0 0 01")
    _, idx = np.unique(co2.g_lower[fund], return_index=True)
    e, g = co2.lower_energy[fund][idx], co2.g_lower[fund][idx]
    for t in (200.0, 296.0):
        level_sum = np.sum(g * np.exp(-SECOND_RADIATION_CONSTANT_CM_K * e / t))
        assert level_sum == pytest.approx(rotational_partition_function("CO2", t), rel=2e-3)


def test_table_is_sourced():
    table, digest = load_band_table()
    assert len(digest) == 64
    for band in table["band"]:
        assert band["basis"], band
