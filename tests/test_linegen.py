"""Linear-molecule bands (Honl-London factors) and the generated N2O list against published constants and a real list;
the CO2 list is tested in test_linegen_co2.py."""

import numpy as np
import pytest

from specforce.constants import SECOND_RADIATION_CONSTANT_CM_K
from specforce.molecular.linegen.linear import generate_n2o, honl_london, load_n2o_table
from specforce.io.linerecords import read_records
from specforce.molecular.molecules import rotational_partition_function


def _band(ll, upper, lower, iso=1):
    return (np.char.strip(ll.global_upper) == upper) & (np.char.strip(ll.global_lower) == lower) & (
        ll.isotopologue == iso)


@pytest.mark.parametrize("l_lower,delta_l", [(0, 0), (1, 0), (0, 1), (1, 1), (1, -1), (2, -1)])
def test_honl_london_sum_rule(l_lower, delta_l):
    # Herzberg (1945), Ch. IV: for every J'' the factors of the P, Q and R branches add to 2J''+1.
    j = np.arange(max(l_lower, 1) + 1, 60)
    total = sum(honl_london(j, dj, l_lower, delta_l) for dj in (-1, 0, 1))
    assert np.allclose(total, 2 * j + 1, rtol=1e-12)


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
    # (the partition-function requirement): within 0.2 % at 200 and 296 K.
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
    from specforce.molecular.lines import LineList
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


@pytest.fixture(scope="module")
def real_n2o_nu3(real_lines):
    from specforce.molecular.lines import LineList
    return LineList(read_records(real_lines / "n2o_iso1_2000-3200.par"), {})


@pytest.mark.parametrize("upper,lower,tol,ratio,spread", [(b"0 0 0 1", b"0 0 0 0", 0.01, 0.88, 1.03),
                                                          (b"0 1 1 1", b"0 1 1 0", 0.15, 0.90, 1.10)])
def test_n2o_nu3_system_against_the_real_list(real_n2o_nu3, n2o, upper, lower, tol, ratio, spread):
    # n2o_iso1_2000-3200.par (PROVENANCE.md): the nu3 fundamental and its first hot band, lines
    # matched by label. Measured: nu3 positions within 0.004 cm-1 for J'' <= 40, the hot band's within 0.10
    # (its l-type doubling is first-order only); intensities 0.88 and 0.90 of the real ones at every J,
    # i.e. the remembered nu3 band intensity is 12 % low (not changed to fit: the list only measures it);
    # per line the ratio spreads by 1 % (nu3) and 6 % (the hot band, J'' up to 84) across the band.
    rows = _matched(real_n2o_nu3, n2o, upper, lower)
    low = rows[rows[:, 0] <= 40]
    assert len(low) >= 40
    assert np.abs(low[:, 3] - low[:, 1]).max() < tol
    assert rows[:, 4].sum() / rows[:, 2].sum() == pytest.approx(ratio, abs=0.03)
    per_line = rows[:, 4] / rows[:, 2]
    assert per_line.max() / per_line.min() < spread  # the J dependence is right: about one factor per band


def test_n2o_nu3_system_has_the_bands_that_carry_it(real_n2o_nu3, n2o):
    # Of the real list's Delta v3 = 1 bands with unchanged spectator quanta (the nu3 system), the two the
    # generator makes (nu3 and 0111-0110) carry 98.9 % of the intensity; 0221-0220, 0201-0200 and 1001-1000
    # (0.6, 0.3 and 0.2 %) are not generated (their term values we do not have). Measured, with a bound
    # that fails if the hot band 0111-0110 (9.9 %) goes missing.
    real = {}
    for u, lo, s in zip(real_n2o_nu3.global_upper, real_n2o_nu3.global_lower, real_n2o_nu3.intensity):
        u, lo = u.split(), lo.split()
        if int(u[3]) == int(lo[3]) + 1 and u[:3] == lo[:3]:
            key = (b" ".join(u), b" ".join(lo))
            real[key] = real.get(key, 0.0) + s
    generated = {(b" ".join(u.split()), b" ".join(lo.split())) for u, lo in zip(n2o.global_upper, n2o.global_lower)}
    covered = sum(s for k, s in real.items() if k in generated) / sum(real.values())
    assert covered > 0.98
