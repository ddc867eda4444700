"""The generated CO2 and N2O line lists against published constants, spectroscopic rules and a real list."""

import numpy as np
import pytest

from specforce.constants import SECOND_RADIATION_CONSTANT_CM_K
from specforce.linegen.linear import generate_co2, generate_n2o, honl_london, load_band_table, load_n2o_table
from specforce.linerecords import read_records
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
    # nu2 fundamental of 12C16O2: Q branch at the 667.38 cm-1 band centre, R(0) = nu0 + 2B'_e with
    # B'_e = B' - q'/2 for the e component of 01101 (Rothman et al. 1992, JQSRT 48, 537; Herzberg
    # 1945; constants from memory). Position tolerance 0.01 cm-1 (issue 5).
    fund = _band(co2, b"0 1 1 01", b"0 0 0 01")
    w, lab = co2.wavenumber[fund], np.char.strip(co2.local_lower[fund])
    q = w[np.char.startswith(lab, b"Q")]
    assert q.min() == pytest.approx(667.38, abs=0.01)
    assert w[lab == b"R   0e"][0] == pytest.approx(667.3801 + 2 * (0.390639 - 6.1852e-4 / 2), abs=0.01)


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


# ---------------------------------------------------------------------------- N2O


@pytest.fixture(scope="module")
def n2o():
    return generate_n2o()


def test_n2o_bands_sit_at_their_published_origins(n2o):
    # 14N2(16)O band origins (Toth 1991, Appl. Opt. 30, 5289; from memory): nu2 588.768 with its
    # Q branch there, nu1 1284.903 (no Q branch: Sigma-Sigma), nu3 2223.757; R(0) = nu0 + 2B'.
    nu2 = _band(n2o, b"0 1 1 0", b"0 0 0 0")
    lab = np.char.strip(n2o.local_lower[nu2])
    assert n2o.wavenumber[nu2][np.char.startswith(lab, b"Q")].min() == pytest.approx(588.768, abs=0.01)
    nu1 = _band(n2o, b"1 0 0 0", b"0 0 0 0")
    lab1 = np.char.strip(n2o.local_lower[nu1])
    assert not np.char.startswith(lab1, b"Q").any()
    assert n2o.wavenumber[nu1][lab1 == b"R   0e"][0] == pytest.approx(1284.903 + 2 * 0.41726, abs=0.01)
    nu3 = _band(n2o, b"0 0 0 1", b"0 0 0 0")
    assert n2o.wavenumber[nu3][np.char.strip(n2o.local_lower[nu3]) == b"P   1e"][0] == pytest.approx(
        2223.757 - 2 * 0.41901, abs=0.01)


def test_n2o_keeps_every_rotational_level(n2o):
    # N2O has no centre of symmetry: every J of the ground state exists (Herzberg 1945, Ch. I.3),
    # and the record's statistical weights carry the 14N spin degeneracy 9 (as in the real list).
    nu1 = _band(n2o, b"1 0 0 0", b"0 0 0 0")
    g = n2o.g_lower[nu1]
    j = (g / 9 - 1) / 2
    assert np.allclose(j, np.round(j)) and set(np.unique(np.round(j) % 2)) == {0.0, 1.0}


def test_n2o_level_sum_matches_the_partition_function(n2o):
    # Partition sums from the generated levels against specforce's rotational Q(T) of N2O
    # (foundation issue): within 0.2 % at 200 and 296 K.
    nu1 = _band(n2o, b"1 0 0 0", b"0 0 0 0")
    _, idx = np.unique(n2o.g_lower[nu1], return_index=True)
    e, g = n2o.lower_energy[nu1][idx], n2o.g_lower[nu1][idx]  # weights include the spin factor 9
    for t in (200.0, 296.0):
        level_sum = np.sum(g * np.exp(-SECOND_RADIATION_CONSTANT_CM_K * e / t))
        assert level_sum == pytest.approx(rotational_partition_function("N2O", t), rel=2e-3)


def _n2o_label(raw):
    text = raw.decode().strip()
    branch, rest = text[0], text[1:].strip()
    ef = rest[-1] if rest[-1] in "ef" else "e"
    return branch, int(rest.rstrip("ef")), ef


def _matched(real, gen, upper, lower):
    r, g = _band(real, upper, lower), _band(gen, upper, lower)
    table = {_n2o_label(k): (w, s) for k, w, s in zip(gen.local_lower[g], gen.wavenumber[g], gen.intensity[g])}
    rows = [(_n2o_label(k)[1], w, s, *table[_n2o_label(k)]) for k, w, s in
            zip(real.local_lower[r], real.wavenumber[r], real.intensity[r]) if _n2o_label(k) in table]
    return np.array(rows)  # J'', nu real, S real, nu generated, S generated


@pytest.fixture(scope="module")
def real_n2o(real_lines):
    from specforce.lines import LineList
    return LineList(read_records(real_lines / "sample_N2O.par"), {})


@pytest.mark.parametrize("upper,lower,tol", [(b"0 1 1 0", b"0 0 0 0", 0.05), (b"0 2 2 0", b"0 1 1 0", 0.15),
                                             (b"0 2 0 0", b"0 1 1 0", 0.15)])
def test_n2o_positions_against_the_real_list(real_n2o, n2o, upper, lower, tol):
    # sample_N2O.par (PROVENANCE.md; below 570 cm-1 it holds the nu2 P branch from J'' = 23 and the
    # hot bands' P branches). For J'' <= 40 the fundamental's lines lie within 0.05 cm-1 (measured
    # 0.03: B' of 0110 and D from memory); the hot bands within 0.15 cm-1 (measured 0.11: B of the
    # 2nu2 levels estimated from alpha_2, and their l-type resonance not modelled).
    rows = _matched(real_n2o, n2o, upper, lower)
    low = rows[rows[:, 0] <= 40]
    assert len(low) >= 10
    assert np.abs(low[:, 3] - low[:, 1]).max() < tol


def test_n2o_nu2_intensity_against_the_real_list(real_n2o, n2o):
    # The nu2 fundamental's P lines with J'' >= 23 in sample_N2O.par: their summed intensity against
    # the generated lines with the same labels. The band intensity 8.9e-19 is from memory (low
    # confidence); this measures it: generated/real = 1.09. Tolerance 15 %.
    rows = _matched(real_n2o, n2o, b"0 1 1 0", b"0 0 0 0")
    assert len(rows) >= 60
    assert rows[:, 4].sum() / rows[:, 2].sum() == pytest.approx(1.0, rel=0.15)


def test_n2o_table_is_sourced():
    table, digest = load_n2o_table()
    assert len(digest) == 64
    for band in table["band"]:
        assert band["basis"]
