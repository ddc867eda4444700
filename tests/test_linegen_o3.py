"""Generated O3 lines: spin statistics, selection rules, microwave lines and partition sums."""

import numpy as np
import pytest

from specforce.constants import SECOND_RADIATION_CONSTANT_CM_K, SPEED_OF_LIGHT
from specforce.molecular.linegen.asymmetric import generate_o3, load_o3_table
from specforce.molecular.linegen.asymmetric_rotor import line_strengths, rotational_levels
from specforce.molecular.molecules import isotopologue, rotational_partition_function

GHZ_PER_CM = SPEED_OF_LIGHT * 100.0 / 1e9


@pytest.fixture(scope="module")
def table():
    return load_o3_table()[0]


@pytest.fixture(scope="module")
def o3():
    return generate_o3()


def _labels(raw):
    j, ka, kc = (np.array([int(x[i:i + 3]) for x in raw]) for i in (0, 3, 6))
    return j, ka, kc


def _band(o3, upper, lower):
    c = o3.columns
    return (np.char.strip(c["global_upper"]) == upper) & (np.char.strip(c["global_lower"]) == lower)


@pytest.mark.parametrize("upper,lower,frequency_ghz", [((1, 1, 1), (0, 0, 0), 118.364), ((6, 1, 5), (6, 0, 6), 110.836),
                                                       ((10, 1, 9), (10, 0, 10), 142.175)])
def test_ground_state_microwave_lines(table, upper, lower, frequency_ghz):
    # Pure-rotation lines of 16O3 used by ground-based ozone radiometers and limb sounders:
    # 1(1,1)-0(0,0) at 118.364 GHz, 6(1,5)-6(0,6) at 110.836 GHz and 10(1,9)-10(0,10) at 142.175 GHz
    # (published microwave frequencies, from memory, high confidence). Measured: within 0.005 GHz
    # (1.7e-4 cm-1); tolerance 0.02 GHz.
    lv = rotational_levels(table["state"]["000"], 12)

    def energy(j, ka, kc):
        return lv["energy"][(lv["j"] == j) & (lv["ka"] == ka) & (lv["kc"] == kc)][0]

    assert (energy(*upper) - energy(*lower)) * GHZ_PER_CM == pytest.approx(frequency_ghz, abs=0.02)


def test_spin_statistics_and_selection_rules(o3):
    # 16O has spin 0: only Ka + Kc even in the A1 states 000, 100, 010 and odd in the B2 state 001
    # (Herzberg 1945, Ch. I.4). nu3 is a-type (Delta Ka even, Delta Kc odd), nu1 b-type (both odd).
    c = o3.columns
    jl, kal, kcl = _labels(c["local_lower"])
    ju, kau, kcu = _labels(c["local_upper"])
    assert np.all((kal + kcl) % 2 == 0)
    nu3 = _band(o3, b"0 0 1", b"0 0 0")
    assert np.all((kau[nu3] + kcu[nu3]) % 2 == 1)
    assert np.all((kau[nu3] - kal[nu3]) % 2 == 0) and np.all((kcu[nu3] - kcl[nu3]) % 2 == 1)
    nu1 = _band(o3, b"1 0 0", b"0 0 0")
    assert np.all((kau[nu1] - kal[nu1]) % 2 == 1) and np.all((kcu[nu1] - kcl[nu1]) % 2 == 1)
    assert np.all(np.abs(ju - jl) <= 1)


def test_a_type_line_strength_sum_rule(table):
    # sum over every upper state of R(J' <- J'') is (2J'' + 1) mu^2 for a dipole along a as for
    # one along b (Zare 1988, Eq. 3.119; common practice), the spin-forbidden levels included.
    low = rotational_levels(table["state"]["000"], 9)
    up = rotational_levels(table["state"]["001"], 10)
    iu, il, r = line_strengths(up, low, 1.0, axis="a")
    for k in np.flatnonzero(low["j"] <= 9):
        assert r[il == k].sum() == pytest.approx(2 * low["j"][k] + 1, rel=1e-10)
    assert np.all((up["ka"][iu] - low["ka"][il]) % 2 == 0) and np.all((up["kc"][iu] - low["kc"][il]) % 2 == 1)


def test_band_sums_and_the_j_cut(o3, table):
    # Each vibration-rotation band sums to its tabulated 296 K intensity (internal consistency), less
    # what the 1e-23 intensity threshold drops (measured 0.04 % of nu3, 1.4 % of nu1, 0.5 % of nu2,
    # 1.1 % of the pure rotation band); the pure rotation band's absolute intensity comes from the dipole.
    for band, spec in zip(o3.provenance["generator"]["bands"], table["band"]):
        if spec["intensity"] != "dipole":
            assert band["intensity_296K"] == pytest.approx(spec["intensity"], rel=1e-10)
        assert band["kept_intensity_296K"] == pytest.approx(band["intensity_296K"], rel=0.02)
    c = o3.columns
    jl = _labels(c["local_lower"])[0]
    assert c["intensity"][jl > 55].sum() / c["intensity"].sum() < 0.002  # measured 0.11 %


@pytest.mark.parametrize("t", [200.0, 250.0, 296.0])
def test_level_sum_matches_the_partition_function(table, t):
    # The spin-allowed ground-state levels to J = 60 against specforce's rigid-rotor Q_rot of O3
    # (symmetry number 2): measured +0.13 to +0.15 % (centrifugal distortion
    # lowers high levels); tolerance 0.5 %. At 296 K with the vibrational factor the level sum
    # is within 1 % of the tabulated Q(296) = 3483.71 (Gamache et al. 2017; from memory).
    lv = rotational_levels(table["state"]["000"], 60)
    keep = (lv["ka"] + lv["kc"]) % 2 == 0
    q = float(np.sum((2 * lv["j"][keep] + 1) * np.exp(-SECOND_RADIATION_CONSTANT_CM_K * lv["energy"][keep] / t)))
    assert q == pytest.approx(rotational_partition_function("O3", t), rel=0.005)
    if t == 296.0:
        c2t = SECOND_RADIATION_CONSTANT_CM_K / t
        q_vib = np.prod([1 / (1 - np.exp(-c2t * table["state"][s]["origin"])) for s in ("100", "010", "001")])
        assert q * q_vib == pytest.approx(isotopologue("O3", 1).q296_reference, rel=0.01)


def test_table_is_sourced(table):
    for band in table["band"]:
        assert band["basis"]
    assert {s["symmetry"] for s in table["state"].values()} == {"A1", "B2"}
