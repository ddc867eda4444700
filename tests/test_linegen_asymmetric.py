"""Generated H2O lines: angular momentum, levels, intensities, and the real water list.

The real list (h2o_HITRAN.par under SPECFORCE_TEST_LINES) is used here only to
measure the generated lines; it never feeds the constants.
"""

import math

import numpy as np
import pytest

from specforce.constants import SECOND_RADIATION_CONSTANT_CM_K
from specforce.molecular.linegen.asymmetric import generate_h2o, load_h2o_table
from specforce.molecular.linegen.asymmetric_rotor import line_strengths, rotational_levels, wigner_3j
from specforce.molecular.molecules import isotopologue


@pytest.fixture(scope="module")
def table():
    return load_h2o_table()[0]


@pytest.fixture(scope="module")
def h2o_all():
    return generate_h2o()


@pytest.fixture(scope="module")
def h2o(h2o_all):
    """The H2(16)O lines (the real list in ../shared holds only that isotopologue)."""
    return h2o_all.take(h2o_all.columns["isotopologue"] == 1).columns


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
    # tolerance: the partition-function requirement, Q(296) within 1 %; measured 174.59, +0.004 %
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
    from specforce.io.linerecords import read_records

    return read_records(real_lines / "h2o_HITRAN.par")


def _bins(c, lo, hi, width=25.0):
    edges = np.arange(lo, hi + 0.5 * width, width)
    sel = (c["wavenumber"] >= lo) & (c["wavenumber"] < hi)
    return np.histogram(c["wavenumber"][sel], edges, weights=c["intensity"][sel])[0]


def test_rotational_band_bins_against_the_real_list(real, h2o):
    # Required: 25 cm-1 bins holding >= 1 % of the band within 20 %, over 20-1000 cm-1.
    # Measured: all 14 such bins within 2 %.
    r, g = _bins(real, 20, 1000), _bins(h2o, 20, 1000)
    big = r >= 0.01 * r.sum()
    assert big.sum() >= 10
    assert np.all(np.abs(g[big] / r[big] - 1.0) <= 0.2)


def test_nu2_band_against_the_real_list(real, h2o):
    # The same criterion over 1250-2000 cm-1. Without the rotational dependence of the nu2 transition
    # moment only 5 of 18 bins were within 20 % (P side 30-50 % low, R side 20-70 % high); with it,
    # derived from the equilibrium structure (linedata/h2o_constants.toml, [herman_wallis]), the
    # bins run 0.70-1.06 of the real ones and 15 of 18 are within 20 %: the P/R shape is right and
    # the band as a whole is 15 % low, which points at the remembered transition moment (0.1235 D).
    r, g = _bins(real, 1250, 2000), _bins(h2o, 1250, 2000)
    assert g.sum() / r.sum() == pytest.approx(0.85, abs=0.05)
    big = r >= 0.01 * r.sum()
    ratio = g[big] / r[big]
    assert big.sum() == 18 and np.all((ratio > 0.65) & (ratio < 1.15)) and (np.abs(ratio - 1) <= 0.2).sum() >= 15
    assert ratio.max() / ratio.min() < 1.6  # shape: without the correction 0.19-2.2 across the band


def _band_sum(c, upper, lower):
    """Summed 296 K intensity of the lines whose global quanta are ``upper`` and ``lower`` (e.g. "0 1 0")."""
    sel = (np.char.strip(c["global_upper"]) == upper.encode()) & (np.char.strip(c["global_lower"]) == lower.encode())
    return float(c["intensity"][sel].sum())


def test_hot_bands_against_the_real_list(real, h2o):
    # The water hot bands of the generator: the pure rotation within 010 (the permanent dipole of
    # 000 on the 010 levels, their Boltzmann factors) and 020-010 (sqrt(2) times nu2's transition moment, the
    # harmonic step v2 = 1 -> 2; 020's A, B, C from memory). Measured against h2o_HITRAN.par (PROVENANCE.md):
    # 2.33e-20 against 2.27e-20 (+3 %) and 7.64e-21 against 9.41e-21 (-19 %, like nu2 itself: -15 %).
    rot_g, rot_r = _band_sum(h2o, "0 1 0", "0 1 0"), _band_sum(real, "0 1 0", "0 1 0")
    hot_g, hot_r = _band_sum(h2o, "0 2 0", "0 1 0"), _band_sum(real, "0 2 0", "0 1 0")
    nu2_g, nu2_r = _band_sum(h2o, "0 1 0", "0 0 0"), _band_sum(real, "0 1 0", "0 0 0")
    assert rot_r > 1e-20 and hot_r > 5e-21  # the real list holds them
    assert rot_g == pytest.approx(rot_r, rel=0.1)
    assert hot_g == pytest.approx(hot_r, rel=0.3)
    # the hot band carries nu2's error and little else: within 10 % once both are divided by nu2's ratio
    assert (hot_g / hot_r) / (nu2_g / nu2_r) == pytest.approx(1.0, abs=0.1)


def _assignments(c):
    glob = [b"".join(u.split()) + b"<" + b"".join(lo.split()) for u, lo in zip(c["global_upper"], c["global_lower"])]
    return [g + b":" + b" ".join(u[:9].split()) + b"<" + b" ".join(lo[:9].split())
            for g, u, lo in zip(glob, c["local_upper"], c["local_lower"])]


def test_strongest_lines_matched_in_position(real, h2o):
    # Required: at least 80 % of the 300 strongest lines (20-1000 and 1250-2000 cm-1)
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


@pytest.fixture(scope="module")
def water_fluxes(real_lines):
    """H2O-only OLR and surface downward flux (10-3000 cm-1, no continuum, 4 angles), generated against real lines."""
    import specforce
    from specforce.io.linerecords import read_records
    from specforce.molecular.lines import LineList, Spectroscopy

    real_spec = Spectroscopy({"H2O": LineList(read_records(real_lines / "h2o_HITRAN.par"), {})}, {"kind": "real"})
    gen = generate_h2o()
    gen_spec = Spectroscopy({"H2O": gen.take(gen.columns["isotopologue"] == 1)}, {"kind": "generated"})
    opts = dict(gases=["H2O"], continuum=False, nodes=4)
    out = {}
    for prof in ("mls", "tropical"):
        g, r = specforce.olr(prof, gen_spec, **opts), specforce.olr(prof, real_spec, **opts)
        out[prof] = (g.olr / r.olr - 1.0, g.surface_down / r.surface_down - 1.0)
    return out


@pytest.mark.slow  # four whole-spectrum OLR runs (generated and real water, two profiles)
def test_water_fluxes_against_the_real_list(water_fluxes):
    # h2o_HITRAN.par (PROVENANCE.md), main isotopologue like the generated list. Measured: OLR +0.90 % (MLS)
    # and +1.07 % (tropical), surface downward flux -2.88 % and -3.01 %. This records the level reached, so
    # that a change making the generated water worse fails here.
    for prof, (olr, down) in water_fluxes.items():
        assert 0 < olr < 0.015 and -0.04 < down < 0, (prof, olr, down)


@pytest.mark.xfail(strict=True, reason="H2O-only OLR within 1 % and surface downward flux within 2 % of the real "
                   "list h2o_HITRAN.par (PROVENANCE.md) fails at OLR +0.90/+1.07 % and downward flux -2.9/-3.0 % "
                   "(MLS/tropical), because the generated nu2 band is 15 % weak, high-Ka levels are off by up to "
                   "25 cm-1, the stretch-bend hot bands are missing and the widths follow our own rule")
@pytest.mark.slow  # the same four whole-spectrum runs
def test_water_fluxes_within_1_and_2_percent_of_the_real_list(water_fluxes):
    # Required of the generated water: H2O-only OLR within 1 % and surface downward flux within 2 % of the
    # real list, MLS and tropical.
    for olr, down in water_fluxes.values():
        assert abs(olr) <= 0.01 and abs(down) <= 0.02


def test_rotational_correction_reduces_to_herman_wallis():
    # With W = c J^2 (the same for every axis) the correction must be the Herman-Wallis factor of a linear
    # rotor, R = R0 (1 + kappa c [J'(J'+1) - J''(J''+1)])^2 (Herman and Wallis 1955; from memory).
    table, _ = load_h2o_table()
    ground = rotational_levels(table["state"]["000"], 6)
    kappa, c = 0.004, 2.5
    w = lambda j: np.eye(2 * j + 1) * c * j * (j + 1)  # noqa: E731
    iu0, il0, r0 = line_strengths(ground, ground, 1.0)
    iu1, il1, r1 = line_strengths(ground, ground, 1.0, correction=(kappa, -kappa, w))
    assert np.array_equal(iu0, iu1) and np.array_equal(il0, il1)
    dj = ground["j"][iu0] * (ground["j"][iu0] + 1) - ground["j"][il0] * (ground["j"][il0] + 1)
    assert np.allclose(r1, r0 * (1 + kappa * c * dj) ** 2, rtol=1e-10)


def test_centrifugal_distortion_dipole_with_an_isotropic_operator():
    # The pure-rotation correction is symmetric in the two levels: with W = c J^2 it multiplies each
    # amplitude by 1 + k c [J'(J'+1) + J''(J''+1)] (follows from the definition in line_strengths;
    # the centrifugal-distortion term of a linear rotor's dipole, mu_0 (1 + const J^2), has this form).
    table, _ = load_h2o_table()
    ground = rotational_levels(table["state"]["000"], 6)
    k, c = 3e-5, 8.0
    w = lambda j: np.eye(2 * j + 1) * c * j * (j + 1)  # noqa: E731
    iu0, il0, r0 = line_strengths(ground, ground, 1.0)
    iu1, il1, r1 = line_strengths(ground, ground, 1.0, correction=(k, k, w))
    assert np.array_equal(iu0, iu1) and np.array_equal(il0, il1)
    js = ground["j"][iu0] * (ground["j"][iu0] + 1) + ground["j"][il0] * (ground["j"][il0] + 1)
    assert np.allclose(r1, r0 * (1 + k * c * js) ** 2, rtol=1e-10)


def _matched_ratio_by_delta_ka(real, gen, lo, hi):
    """Sum of generated over real intensity of the 000-000 lines of [lo, hi) cm-1 (real positions),
    matched by assignment, by |Delta Ka|."""
    index = {k: i for i, k in enumerate(_assignments(gen))}
    wn = real["wavenumber"]
    sel = np.flatnonzero((wn >= lo) & (wn < hi) & (real["isotopologue"] == 1))
    keys = _assignments({k: real[k][sel] for k in ("global_upper", "global_lower", "local_upper", "local_lower")})
    sums = {}
    for i, key in zip(sel, keys):
        if not key.startswith(b"000<000:") or key not in index:
            continue
        up, low = (part.split() for part in key.split(b":")[1].split(b"<"))
        d = abs(int(up[1]) - int(low[1]))
        g, r = sums.get(d, (0.0, 0.0))
        sums[d] = (g + gen["intensity"][index[key]], r + real["intensity"][i])
    return {d: g / r for d, (g, r) in sums.items()}


def test_centrifugal_distortion_dipole_against_the_real_list(real, h2o, table):
    # The weak high-J rotational lines with |Delta Ka| = 3 and 5 that absorb in the 600-1000 cm-1 window,
    # matched by assignment. The correction is derived (the bend's 010 admixture in the ground state; no
    # constant taken from the list). Measured: without it 0.87 (Delta Ka = 3) and 0.68 (Delta Ka = 5) of
    # the real intensity, with it 1.00 and 0.90.
    without = generate_h2o({**table, "herman_wallis": {**table["herman_wallis"], "pure_rotation": False}}).columns
    before, after = (_matched_ratio_by_delta_ka(real, c, 600, 1000) for c in (without, h2o))
    assert before[3] < 0.9 and before[5] < 0.75
    assert after[3] == pytest.approx(1.0, abs=0.05) and after[5] == pytest.approx(0.9, abs=0.05)
    assert abs(after[1] - 1) < 0.08  # the allowed Delta Ka = 1 lines barely move (0.97 -> 1.05)


def test_bending_derivatives_follow_the_geometry():
    # Opening the angle moves the hydrogens off the C2 axis: I_b grows and I_a shrinks (so b_a > 0 > b_b), and
    # for a planar molecule I_c = I_a + I_b. Rigid-structure values for water (Hoy and Bunker 1979 geometry):
    # B_e of 27.4, 14.6 and 9.5 cm-1 against the effective 27.9, 14.5 and 9.3 of the ground state.
    from specforce.molecular.linegen.asymmetric_rotor import bending_derivatives

    b_a, b_b, b_c = bending_derivatives(0.95784, 104.50, 1648.5)
    assert b_a > 0 > b_b and abs(b_c) < abs(b_b)
    assert b_a == pytest.approx(0.282, abs=0.002) and b_b == pytest.approx(-0.169, abs=0.002)
