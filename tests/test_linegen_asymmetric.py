"""Generated H2O lines: angular momentum, levels, intensities, and the real water list.

The real list (h2o_HITRAN.par under SPECFORCE_TEST_LINES) is used here only to
measure the generated lines; it never feeds the constants.
"""

import math

import numpy as np
import pytest

from specforce.constants import SECOND_RADIATION_CONSTANT_CM_K
from specforce.linegen.asymmetric import (generate_h2o, line_strengths, load_h2o_table, rotational_levels,
                                          wigner_3j)
from specforce.molecules import isotopologue


@pytest.fixture(scope="module")
def table():
    return load_h2o_table()[0]


@pytest.fixture(scope="module")
def h2o():
    return generate_h2o().columns


@pytest.mark.parametrize("args", [(1, 1, 0, 0, 0, 0), (1, 1, 1, 1, -1, 0), (3, 1, 2, -2, 1, 1), (5, 1, 5, 4, -1, -3),
                                  (7, 1, 8, -3, 0, 3), (10, 1, 9, 9, 1, -10), (2, 1, 3, 0, 0, 0)])
def test_wigner_3j_against_sympy(args):
    # reference: sympy.physics.wigner.wigner_3j (a general-purpose library, exact arithmetic)
    from sympy.physics.wigner import wigner_3j as exact

    assert wigner_3j(*args) == pytest.approx(float(exact(*args)), abs=1e-14)


def _rigid(table):
    c = dict(table["state"]["000"])
    for k in list(c):
        if k not in ("origin", "A", "B", "C"):
            c[k] = 0.0
    return c


def test_rigid_rotor_levels_and_labels(table):
    # closed forms for J = 1 and 2 of the rigid asymmetric rotor (Townes & Schawlow 1955,
    # Microwave Spectroscopy, Table 4-5; from memory, common textbook result)
    c = _rigid(table)
    a, b, cc = c["A"], c["B"], c["C"]
    lv = rotational_levels(c, 2)
    e = {(int(j), int(ka), int(kc)): en for j, ka, kc, en in zip(lv["j"], lv["ka"], lv["kc"], lv["energy"])}
    root = math.sqrt((b - cc) ** 2 + (a - cc) * (a - b))
    expected = {(0, 0, 0): 0.0, (1, 0, 1): b + cc, (1, 1, 1): a + cc, (1, 1, 0): a + b,
                (2, 0, 2): 2 * (a + b + cc) - 2 * root, (2, 1, 2): a + b + 4 * cc, (2, 1, 1): a + 4 * b + cc,
                (2, 2, 1): 4 * a + b + cc, (2, 2, 0): 2 * (a + b + cc) + 2 * root}
    for key, value in expected.items():
        assert e[key] == pytest.approx(value, abs=1e-9), key


# Ground-state levels of H2(16)O [cm-1], recalled from memory of the IUPAC critical evaluation
# (Tennyson et al. 2013, JQSRT 117, 29-58); agreement to 0.01 cm-1 checks the Hamiltonian
# set-up, the labels and the constants together.
PUBLISHED_LEVELS = {(1, 0, 1): 23.794, (1, 1, 1): 37.137, (1, 1, 0): 42.372, (2, 0, 2): 70.091, (2, 1, 2): 79.496,
                    (2, 1, 1): 95.176, (2, 2, 1): 134.902, (2, 2, 0): 136.164, (3, 0, 3): 136.762,
                    (3, 1, 3): 142.278, (3, 1, 2): 173.366}


def test_ground_state_levels_against_published_values(table):
    lv = rotational_levels(table["state"]["000"], 3)
    e = {(int(j), int(ka), int(kc)): en for j, ka, kc, en in zip(lv["j"], lv["ka"], lv["kc"], lv["energy"])}
    for key, value in PUBLISHED_LEVELS.items():
        assert e[key] == pytest.approx(value, abs=0.01), key


def test_line_strength_sum_rule(table):
    # sum over every upper state of R(J' <- J'') is (2J'' + 1) mu^2 (completeness of the
    # rotational states for a fixed-direction dipole; Zare 1988, Eq. 3.119; common practice)
    lv = rotational_levels(table["state"]["000"], 8)
    iu, il, r = line_strengths(lv, lv, 1.0)
    for low in np.flatnonzero(lv["j"] <= 7):
        total = r[il == low].sum()
        assert total == pytest.approx(2 * lv["j"][low] + 1, rel=1e-10)
    # b-type selection rules: Delta Ka and Delta Kc odd
    assert np.all((lv["ka"][iu] - lv["ka"][il]) % 2 == 1) and np.all((lv["kc"][iu] - lv["kc"][il]) % 2 == 1)


def test_level_sum_matches_the_tabulated_partition_function(table):
    # Q(296) of H2(16)O tabulated in the line-record convention (spin weights 1 and 3): 174.58
    # (Gamache et al. 2017, JQSRT 203, 70; the foundation's reference). Rotational levels of 000
    # up to J = 20 times the vibrational factor of the bending mode.
    lv = rotational_levels(table["state"]["000"], 20)
    g = np.where((lv["ka"] + lv["kc"]) % 2 == 1, 3, 1) * (2 * lv["j"] + 1)
    c2t = SECOND_RADIATION_CONSTANT_CM_K / 296.0
    q_rot = float(np.sum(g * np.exp(-c2t * lv["energy"])))
    q_vib = 1.0 / (1.0 - math.exp(-c2t * 1594.746))
    # tolerance: issue 2's criterion for Q(296) (within 1 %); measured 174.59, +0.004 %
    assert q_rot * q_vib == pytest.approx(isotopologue("H2O", 1).q296_reference, rel=0.01)


def test_generated_set_shape(h2o):
    wn = h2o["wavenumber"]
    assert np.all(np.diff(wn) >= 0) and wn[0] > 0
    rot = h2o["global_upper"] == h2o["global_lower"]
    # sanity ranges of the band intensities at 296 K [cm-1/(molecule cm-2)]: the rotational band
    # a few times 1e-17 (the real-list tests below check it bin by bin) and nu2 near 1.0e-17
    # (the transition moment in the table was chosen for that)
    assert 2e-17 < h2o["intensity"][rot].sum() < 1e-16
    assert 0.8e-17 < h2o["intensity"][~rot].sum() < 1.2e-17
    assert np.all(h2o["gamma_air"] > 0) and np.all(h2o["gamma_self"] > h2o["gamma_air"])


def test_missing_intensity_from_the_j_cut_is_small(table):
    # carrying J to 20 leaves less than 1 % of each band's 296 K intensity out (against J = 24)
    small = generate_h2o(table).columns["intensity"].sum()
    bigger = dict(table)
    bigger["generation"] = dict(table["generation"], j_max=24)
    big = generate_h2o(bigger).columns["intensity"].sum()
    assert small / big > 0.99


# ------------------------------------------------------------------ against the real water list


@pytest.fixture(scope="module")
def real(real_lines):
    from specforce.linerecords import read_records

    return read_records(real_lines / "h2o_HITRAN.par")


def _bins(c, lo, hi, width=25.0):
    edges = np.arange(lo, hi + 0.5 * width, width)
    sel = (c["wavenumber"] >= lo) & (c["wavenumber"] < hi)
    return np.histogram(c["wavenumber"][sel], edges, weights=c["intensity"][sel])[0]


def test_rotational_band_bins_against_the_real_list(real, h2o):
    # issue 5 criterion: 25 cm-1 bins holding >= 1 % of the band within 20 %, over 20-1000 cm-1.
    # Measured: all 14 such bins within 2 %.
    r, g = _bins(real, 20, 1000), _bins(h2o, 20, 1000)
    big = r >= 0.01 * r.sum()
    assert big.sum() >= 10
    assert np.all(np.abs(g[big] / r[big] - 1.0) <= 0.2)


def test_nu2_band_against_the_real_list_falls_short(real, h2o):
    # The same criterion over 1250-2000 cm-1 is NOT met: 5 of 18 bins are within 20 %. The
    # P-branch side is 30-50 % low and the R-branch side 20-70 % high: the rotational dependence
    # of water's nu2 transition moment (Herman-Wallis-type terms) is missing. This test records
    # the level reached: the band total within 15 % and every bin within a factor 2.
    r, g = _bins(real, 1250, 2000), _bins(h2o, 1250, 2000)
    assert g.sum() / r.sum() == pytest.approx(1.0, abs=0.15)
    big = r >= 0.01 * r.sum()
    assert np.all((g[big] / r[big] > 0.45) & (g[big] / r[big] < 2.0))


def _assignments(c):
    glob = [b"".join(u.split()) + b"<" + b"".join(lo.split()) for u, lo in zip(c["global_upper"], c["global_lower"])]
    return [g + b":" + b" ".join(u[:9].split()) + b"<" + b" ".join(lo[:9].split())
            for g, u, lo in zip(glob, c["local_upper"], c["local_lower"])]


def test_strongest_lines_matched_in_position(real, h2o):
    # issue 5 criterion: at least 80 % of the 300 strongest lines (20-1000 and 1250-2000 cm-1)
    # within 0.5 cm-1, matched by assignment (upper and lower J Ka Kc and vibrational state).
    # Measured: 271 of 300 (90 %), median offset 0.06 cm-1; the misses are high-Ka levels
    # where the Watson series fails.
    wn = real["wavenumber"]
    sel = np.flatnonzero((((wn >= 20) & (wn < 1000)) | ((wn >= 1250) & (wn < 2000))) & (real["isotopologue"] == 1))
    top = sel[np.argsort(real["intensity"][sel])[::-1][:300]]
    gen = {k: i for i, k in enumerate(_assignments(h2o))}
    keys = _assignments({k: real[k][top] for k in ("global_upper", "global_lower", "local_upper", "local_lower")})
    matched = [i for i, k in zip(top, keys) if k in gen and abs(h2o["wavenumber"][gen[k]] - wn[i]) <= 0.5]
    assert len(matched) >= 240
