"""Water isotopologues by isotopic substitution (specforce.molecular.linegen.water_isotopes) and their generated lines."""

import numpy as np
import pytest

from specforce.molecular.linegen.asymmetric import generate_h2o, load_h2o_table
from specforce.molecular.linegen.asymmetric_rotor import rotational_levels
from specforce.molecular.linegen.water_isotopes import isotopic_water_constants
from specforce.molecular.molecules import isotopologue


@pytest.fixture(scope="module")
def table():
    return load_h2o_table()[0]


@pytest.fixture(scope="module")
def lines():
    return generate_h2o()


@pytest.mark.parametrize("atoms, nu2, tol", [(("1H", "1H", "18O"), 1588.28, 1.5), (("1H", "1H", "17O"), 1591.33, 1.5),
                                             (("1H", "2H", "16O"), 1403.48, 5.0)])
def test_bend_origins(table, atoms, nu2, tol):
    # nu2 band origins from memory (medium-high confidence). Measured: 1589.09 (+0.8), 1591.76 (+0.4) and
    # 1401.03 cm-1 (-2.5): a harmonic force field without a stretch-bend term and the first-order isotope rule
    # for the anharmonic part; the tolerances are about twice the measured differences.
    assert isotopic_water_constants(table, atoms)["state"]["010"]["origin"] == pytest.approx(nu2, abs=tol)


def test_hdo_rotational_constants_and_dipole(table):
    # HDO ground state A, B, C about 23.41, 9.10 and 6.42 cm-1 and dipole components mu_a 0.657 D, mu_b 1.732 D
    # (from memory, medium confidence). Measured: 23.54, 9.086, 6.379 (within 0.7 %) and 0.668, 1.730 D: the
    # axes rotate when D replaces H, and the dipole along the bonds' bisector turns with them.
    hdo = isotopic_water_constants(table, ("1H", "2H", "16O"))
    g = hdo["state"]["000"]
    assert [g["A"], g["B"], g["C"]] == pytest.approx([23.41, 9.10, 6.42], rel=0.01)
    mu = hdo["dipole"]["components"]["pure_rotation"]
    assert mu["a"] == pytest.approx(0.657, abs=0.02) and mu["b"] == pytest.approx(1.732, abs=0.02)
    assert np.hypot(mu["a"], mu["b"]) == pytest.approx(table["dipole"]["pure_rotation"], rel=1e-9)


def test_hdo_low_lines(table):
    # HDO 1_01 - 0_00 at 464.925 GHz (15.508 cm-1) and 1_10 - 1_11 at 80.578 GHz (2.688 cm-1), from memory
    # (medium confidence). Measured 15.462 and 2.710 cm-1 (-0.3 %, +0.8 %); tolerance 1 %, the size of the
    # vibration-rotation differences that equilibrium scaling leaves out.
    hdo = isotopic_water_constants(table, ("1H", "2H", "16O"))
    lev = rotational_levels(hdo["state"]["000"], 2, hdo["distortion"])
    e = {(j, a, c): x for j, a, c, x in zip(lev["j"], lev["ka"], lev["kc"], lev["energy"])}
    assert e[(1, 0, 1)] - e[(0, 0, 0)] == pytest.approx(15.508, rel=0.01)
    assert e[(1, 1, 0)] - e[(1, 1, 1)] == pytest.approx(2.688, rel=0.01)


def test_band_sums_follow_the_abundances(lines):
    # H2(18O) and H2(17O): each band over the main isotopologue's near the abundance ratio (internal
    # consistency: partition function and the 17O spin weights cancel; a missing or doubled spin factor
    # would be 6 times off); the small isotopic changes of the levels move it by under 5 %.
    bands = {(b["isotopologue"], b["upper"]): b["intensity_296K"] for b in lines.provenance["generator"]["bands"]}
    main = isotopologue("H2O", 1).abundance
    for local_id, code in ((2, "181"), (3, "171")):
        ratio = isotopologue("H2O", local_id).abundance / main
        for upper in ("000", "010"):
            assert bands[(code, upper)] / bands[("161", upper)] == pytest.approx(ratio, rel=0.05), (code, upper)
    # HDO: a- and b-type lines both present in the pure rotation (selection rules: Delta Ka even or odd)
    c = lines.columns
    hdo = (c["isotopologue"] == 4) & (c["global_upper"] == c["global_lower"])
    dka = np.array([abs(int(u[3:6]) - int(lo[3:6])) for u, lo in zip(c["local_upper"][hdo], c["local_lower"][hdo])])
    assert (dka % 2 == 0).sum() > 100 and (dka % 2 == 1).sum() > 100


def test_spin_weights(lines):
    # Line-record convention: prod(2I + 1) of the nuclei, split by exchange symmetry when the hydrogens are equal:
    # H2(18O) 1 and 3, H2(17O) 6 and 18 (17O: I = 5/2), HDO 6 for every level (common practice).
    c = lines.columns
    for local_id, weights in ((1, {1.0, 3.0}), (2, {1.0, 3.0}), (3, {6.0, 18.0}), (4, {6.0})):
        sel = c["isotopologue"] == local_id
        g = c["g_lower"][sel] / (2 * np.array([int(s[0:3]) for s in c["local_lower"][sel]]) + 1)
        assert set(np.unique(g)) == weights, local_id
