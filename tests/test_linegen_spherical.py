"""Generated CH4 lines: tetrahedral species, spin weights, positions and the fine-structure split."""

import math

import numpy as np
import pytest

from specforce.constants import SECOND_RADIATION_CONSTANT_CM_K
from specforce.molecular.linegen.spherical import (band_lines, generate_ch4, hot_band_intensity, load_ch4_table,
                                         spin_rotation_weight, tetrahedral_species, tetrahedral_splitting)
from specforce.molecular.lineparams import intensity_at
from specforce.molecular.molecules import isotopologue


@pytest.fixture(scope="module")
def table():
    return load_ch4_table()[0]


# Rotational species of a spherical top in T_d for J = 0-6 (Herzberg 1945, Molecular Spectra II,
# Table 34 as recalled from memory; also Hougen 1976, in MTP Int. Rev. Sci. Phys. Chem.)
SPECIES = {0: "A1", 1: "F1", 2: "E F2", 3: "A2 F1 F2", 4: "A1 E F1 F2", 5: "E F1 F1 F2", 6: "A1 A2 E F1 F2 F2"}


@pytest.mark.parametrize("j", sorted(SPECIES))
def test_tetrahedral_species(j):
    got = tetrahedral_species(j)
    want = {s: SPECIES[j].split().count(s) for s in ("A1", "A2", "E", "F1", "F2")}
    assert got == want
    dims = {"A1": 1, "A2": 1, "E": 2, "F1": 3, "F2": 3}
    assert sum(dims[s] * n for s, n in got.items()) == 2 * j + 1


def test_spin_weights_average_to_16_over_12():
    # 16 nuclear-spin states over the symmetry number 12: on average 4/3 per rotational
    # function at high J (the classical limit; common practice)
    j = np.arange(40, 60)
    w = np.array([spin_rotation_weight(int(x)) for x in j])
    assert np.mean(w / (2 * j + 1)) == pytest.approx(4.0 / 3.0, rel=0.02)


def test_level_sum_matches_the_tabulated_partition_function(table):
    # Q(296) of 12CH4 in the line-record convention, 590.48 (Gamache et al. 2017, JQSRT 203, 70;
    # the foundation's reference): rotational level sum times the vibrational factor of nu4 (x3)
    # and nu2 (x2)
    g, b, d = table["ground"], table["ground"]["B"], table["ground"]["D"]
    c2t = SECOND_RADIATION_CONSTANT_CM_K / 296.0
    q_rot = sum((2 * j + 1) * spin_rotation_weight(j) * math.exp(-c2t * (b * j * (j + 1) - d * (j * (j + 1)) ** 2))
                for j in range(60))
    q_vib = (1 - math.exp(-c2t * 1310.761)) ** -3 * (1 - math.exp(-c2t * 1533.333)) ** -2
    # tolerance: the partition-function requirement, Q(296) within 1 %; measured 590.6, +0.02 %
    assert g["B"] > 0 and q_rot * q_vib == pytest.approx(isotopologue("CH4", 1).q296_reference, rel=0.01)


def test_nu4_positions(table):
    # nu4: Q branch near 1306 cm-1 and R(0) near 1311.4 cm-1 (from memory of the 7.7 um spectrum;
    # the first-order Coriolis pattern nu0 - 2B zeta + 2B(1 - zeta) m), line spacing 2B(1 - zeta)
    lines = band_lines(table["band"]["nu4"], table["ground"], 10, {"split": False})
    q = lines["wavenumber"][(lines["branch"] == "Q") & (lines["j_lower"] == 1)][0]
    r0 = lines["wavenumber"][(lines["branch"] == "R") & (lines["j_lower"] == 0)][0]
    r1 = lines["wavenumber"][(lines["branch"] == "R") & (lines["j_lower"] == 1)][0]
    assert q == pytest.approx(1306.0, abs=0.5) and r0 == pytest.approx(1311.4, abs=0.3)
    b, zeta = table["band"]["nu4"]["B"], table["band"]["nu4"]["zeta"]
    assert r1 - r0 == pytest.approx(2 * b * (1 - zeta), abs=0.2)  # B' != B'' shifts it slightly


def test_branch_fractions_add_to_one_and_split_keeps_intensity(table):
    band = dict(table["band"]["nu4"])
    whole = band_lines(band, table["ground"], 20, {"split": False})
    split = band_lines(band, table["ground"], 20, {"split": True, "tetrahedral_width": 2e-5})
    even = band_lines(band, table["ground"], 20, {"split": True, "tetrahedral_width": 2e-5, "pattern": "even"})
    assert whole["intensity"].sum() == pytest.approx(band["intensity"], rel=1e-12)
    assert split["intensity"].sum() == pytest.approx(band["intensity"], rel=1e-12)
    assert even["intensity"].sum() == pytest.approx(band["intensity"], rel=1e-12)
    for j in (0, 5, 12):
        sel_w = (whole["j_lower"] == j) & (whole["branch"] == "R")
        sel_s = (split["j_lower"] == j) & (split["branch"] == "R")
        sel_e = (even["j_lower"] == j) & (even["branch"] == "R")
        assert split["intensity"][sel_s].sum() == pytest.approx(whole["intensity"][sel_w].sum(), rel=1e-12)
        # the even sub-lines are centred on the unsplit position; the operator's levels span 1.5 c times the
        # eigenvalue range of Omega_4, (2/3) [J(J+1)]^2 at large J but less at low J (0.79 c J^4 at J = 5,
        # 0.83 at J = 12, measured), hence the loose bound
        assert np.mean(even["wavenumber"][sel_e]) == pytest.approx(whole["wavenumber"][sel_w][0], abs=1e-9)
        span = np.ptp(split["wavenumber"][sel_s])
        assert span == pytest.approx(2e-5 * j**4, rel=0.5, abs=1e-12)


def test_tetrahedral_splitting_species_and_weights():
    # Internal consistency, named as such: the eigenspaces of Omega_4, classified by the characters of the
    # equivalent rotations, hold exactly the species that tetrahedral_species counts from D^J, and their spin
    # weights add to W(J), for every J to 40 (near-degenerate high-J clusters merged).
    for j in range(41):
        _, weights, species = tetrahedral_splitting(j)
        total = {}
        for counts in species:
            for s, n in counts.items():
                total[s] = total.get(s, 0) + n
        assert total == {s: n for s, n in tetrahedral_species(j).items() if n}, j
        assert weights.sum() == pytest.approx(spin_rotation_weight(j), abs=1e-9)


def test_tetrahedral_splitting_matches_the_cubic_crystal_field_patterns():
    # A rank-4 cubic operator splits l = 2 as the crystal field splits d orbitals: t2 (F2) at -4 Dq and e (E)
    # at +6 Dq about the barycentre (textbook ligand-field theory; common practice); and l = 3 as f orbitals:
    # a2 -12, t2 -2, t1 +6 (from memory, medium confidence). Omega_4 carries the pattern up to scale and sign.
    def centred(j):
        pos, _, species = tetrahedral_splitting(j)
        dims = {"A1": 1, "A2": 1, "E": 2, "F1": 3, "F2": 3}
        names = [next(iter(s)) for s in species]
        bary = sum(p * dims[n] for p, n in zip(pos, names)) / (2 * j + 1)
        return {n: p - bary for p, n in zip(pos, names)}

    d = centred(2)
    assert d["F2"] / d["E"] == pytest.approx(-4.0 / 6.0, rel=1e-9)
    f = centred(3)
    assert f["A2"] / f["F1"] == pytest.approx(-12.0 / 6.0, rel=1e-9)
    assert f["F2"] / f["F1"] == pytest.approx(-2.0 / 6.0, rel=1e-9)


def test_generated_set(table):
    ll = generate_ch4()
    c, bands = ll.columns, ll.provenance["generator"]["bands"]
    assert np.all(np.diff(c["wavenumber"]) >= 0)
    assert c["intensity"].sum() == pytest.approx(sum(b["intensity_296K"] for b in bands), rel=1e-9)
    assert {b["band"] for b in bands} == set(table["band"]) | set(table["hot_band"]) | set(table["isotopic_band"])
    assert 1000 < c["wavenumber"].min() and c["wavenumber"].max() < 3400


def _fock(n_modes, max_quanta):
    """Occupation-number basis of n_modes oscillators with at most max_quanta in all."""
    import itertools
    return [s for s in itertools.product(range(max_quanta + 1), repeat=n_modes) if sum(s) <= max_quanta]


def test_harmonic_hot_band_moments_of_a_triply_degenerate_oscillator(table):
    # The moment ratios of 2nu4 <- nu4 in the table (4/3 in all, 1/6 to l = 0 and 5/6 to l = 2; the
    # isotropic-oscillator rule, derived in specforce.molecular.linegen.spherical), checked here by brute force:
    # q_a = a_a + a_a^dagger on a 3-mode occupation basis, the l = 0 state (sum_a a_a^dagger^2)|0> / sqrt(6).
    basis = _fock(3, 2)
    index = {s: i for i, s in enumerate(basis)}
    n = len(basis)

    def q(a):
        m = np.zeros((n, n))
        for s, i in index.items():
            for step in (1, -1):
                t = list(s)
                t[a] += step
                if min(t) >= 0 and tuple(t) in index:
                    m[index[tuple(t)], i] = math.sqrt(max(s[a], t[a]))
        return m

    ops = [q(a) for a in range(3)]
    ground = np.eye(n)[index[(0, 0, 0)]]
    ones = [np.eye(n)[index[s]] for s in ((1, 0, 0), (0, 1, 0), (0, 0, 1))]
    twos = [np.eye(n)[i] for s, i in index.items() if sum(s) == 2]
    s0 = sum(np.eye(n)[index[s]] * math.sqrt(2.0) for s in ((2, 0, 0), (0, 2, 0), (0, 0, 2))) / math.sqrt(6.0)
    fundamental = sum((u @ op @ ground) ** 2 for op in ops for u in ones)
    hot = sum((u @ op @ lo) ** 2 for op in ops for u in twos for lo in ones) / 3.0
    hot_l0 = sum((s0 @ op @ lo) ** 2 for op in ops for lo in ones) / 3.0
    assert hot / fundamental == pytest.approx(4.0 / 3.0, rel=1e-12)
    assert hot_l0 / hot == pytest.approx(1.0 / 6.0, rel=1e-12)
    ratios = {name.split("(")[1][:2].rstrip(")"): h["moment_ratio"] for name, h in table["hot_band"].items()
              if name.startswith("2nu4")}
    assert ratios["A1"] == pytest.approx(hot_l0 / fundamental, rel=1e-8)
    assert ratios["E"] + ratios["F2"] == pytest.approx((hot - hot_l0) / fundamental, rel=1e-8)
    assert ratios["F2"] / ratios["E"] == pytest.approx(1.5, rel=1e-8)  # by degeneracy, 3 : 2
    assert sum(h["moment_ratio"] for n_, h in table["hot_band"].items() if n_.startswith("nu2+nu4")) == \
        pytest.approx(1.0, rel=1e-12)  # a nu4 quantum beside a nu2 quantum: the fundamental's moment


def test_hot_bands_carry_their_lower_level_in_temperature(table):
    # Internal consistency, named as such: the hot-band intensity of the model at 220 K (fundamental and
    # populations at 220 K) equals the generated lines scaled to 220 K by the record conversion, which sees
    # the hot band only through its lower-state energies. A hot band filed with ground-state energies would be
    # 1 / exp(-c2 1310.8 (1/220 - 1/296)) = 4.6 times too strong at 220 K.
    ll = generate_ch4()
    c = ll.columns
    bands = {b["band"]: b for b in ll.provenance["generator"]["bands"]}
    label = np.char.strip(c["global_upper"].astype(str))
    t = 220.0
    s_t = intensity_at(c, t)
    nu4 = {"origin": table["band"]["nu4"]["origin"], "intensity": s_t[label == "nu4 F2"].sum()}
    for name, hot in table["hot_band"].items():
        sel = label == f"{name} {hot['degeneracy']}"
        lower = table["band"][hot["lower"]]
        want = hot_band_intensity(nu4, hot["moment_ratio"], bands[name]["origin"], lower["origin"],
                                  {"F2": 3, "E": 2}[lower["degeneracy"]], temperature=t)
        assert sel.sum() > 100 and s_t[sel].sum() == pytest.approx(want, rel=1e-3), name  # measured 2e-5


def test_13ch4_nu4_is_the_12ch4_band_moved_and_scaled_by_abundance(table):
    # 13CH4 nu4 at 1302.78 cm-1 (from memory, medium confidence) with the abundance ratio of the isotopologue
    # table (1.11031e-2 / 0.988274, the line-record convention's natural abundances; the first assertion only
    # pins that table, it is no outside check): its lines are the 12CH4 nu4 lines moved by the origin
    # difference and scaled by that ratio times the radiation term's ratio (internal consistency).
    ll = generate_ch4()
    c = ll.columns
    label = np.char.strip(c["global_upper"].astype(str))
    main, minor = label == "nu4 F2", label == "13CH4 nu4 F2"
    assert np.all(c["isotopologue"][minor] == 2) and np.all(c["isotopologue"][main] == 1)
    ratio = isotopologue("CH4", 2).abundance / isotopologue("CH4", 1).abundance
    assert ratio == pytest.approx(0.011235, rel=1e-4)
    c2t = SECOND_RADIATION_CONSTANT_CM_K / 296.0
    radiation = 1302.78 * -math.expm1(-c2t * 1302.78) / (1310.761 * -math.expm1(-c2t * 1310.761))
    assert c["intensity"][minor].sum() / c["intensity"][main].sum() == pytest.approx(ratio * radiation, rel=1e-6)
    shift = np.sort(c["wavenumber"][minor]) - np.sort(c["wavenumber"][main])
    assert np.allclose(shift, 1302.78 - 1310.761, atol=1e-9)
    assert np.all(c["g_lower"][minor] == 2 * c["g_lower"][main])  # the 13C nuclear spin
    s220 = intensity_at(c, 220.0)  # the minor isotopologue's partition function is known to the record conversion
    assert np.all(np.isfinite(s220[minor])) and s220[minor].sum() > 0
