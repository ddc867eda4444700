"""Molecule table and partition functions, each check against a named source."""

import functools

import numpy as np
import pytest

from specforce.molecular import molecules as M
from specforce.constants import SECOND_RADIATION_CONSTANT_CM_K
from specforce.errors import MoleculeError
from specforce.io.linerecords import read_records

MAIN = ["H2O", "CO2", "O3", "N2O", "CO", "CH4", "O2"]


def test_numbering_of_the_line_record():
    # Rothman et al. (2005), JQSRT 96, 139: molecule 1 = H2O, 2 = CO2, 3 = O3, 4 = N2O,
    # 5 = CO, 6 = CH4, 7 = O2 (from memory, high confidence).
    assert [M.molecule_id(m) for m in MAIN] == [1, 2, 3, 4, 5, 6, 7]
    assert M.molecule_name(2) == "CO2"
    assert M.isotopologue("CO2", 1).code == "626"
    assert M.isotopologue("CO2", 10).code == "838"
    # Isotopologue field codes: 0 = 10, A = 11, B = 12 (Rothman et al. 2005, Table 1 notes).
    assert [M.isotopologue_code_to_local_id(c) for c in "190AB"] == [1, 9, 10, 11, 12]


def test_unknown_names_give_helpful_errors():
    with pytest.raises(MoleculeError, match="unknown; use a formula"):
        M.molecule_id("XYZ")
    with pytest.raises(MoleculeError, match="has no isotopologue 13"):
        M.isotopologue("CO2", 13)
    with pytest.raises(MoleculeError, match="no isotopologue data for NO"):
        M.isotopologue("NO", 1)


def test_molar_mass_from_isotope_masses():
    # 12C16O2: 12 + 2 x 15.99491462 u (AME 2020, Wang et al. 2021) = 43.98982924 g/mol,
    # the value tabulated with the line data (43.98983, from memory).
    assert M.isotopologue("CO2", 1).molar_mass == pytest.approx(43.98983e-3, rel=1e-6)
    # H2(16)O: 18.010565 g/mol (same sources).
    assert M.isotopologue("H2O", 1).molar_mass == pytest.approx(18.010565e-3, rel=1e-6)


@pytest.mark.parametrize("mol", MAIN)
def test_natural_abundances_sum_to_about_one(mol):
    # Natural abundances of all isotopologues of a molecule add to 1 less the rare
    # species not tabulated (De Bievre et al. 1984); the table's rarest omissions
    # are below 1e-4.
    total = sum(i.abundance for i in M.isotopologues(mol))
    assert 0.9999 < total <= 1.0 + 1e-6


@pytest.mark.parametrize("mol", MAIN)
def test_q296_against_tabulated_partition_sums(mol):
    # Tabulated Q(296 K) distributed with the line data (TIPS, Gamache et al. 2017,
    # JQSRT 203, 70), values from memory. The rigid-rotor harmonic-oscillator model
    # omits centrifugal distortion and anharmonicity, which raise Q by up to ~0.7 %
    # for H2O and O3 at 296 K; 1 % is the tolerance the model can honestly claim.
    iso = M.isotopologue(mol, 1)
    assert M.partition_function(mol, 1, 296.0) == pytest.approx(iso.q296_reference, rel=0.01)


def test_minor_isotopologue_is_anchored_to_its_tabulated_value():
    iso = M.isotopologue("CO2", 3)
    assert M.partition_function("CO2", 3, 296.0) == pytest.approx(iso.q296_reference, rel=1e-12)
    assert M.partition_ratio("CO2", 3, 250.0) == pytest.approx(M.partition_ratio("CO2", 1, 250.0))


def test_linear_rotor_sum_against_the_high_temperature_expansion():
    # McDowell (1988), J. Chem. Phys. 88, 356, Eq. (11):
    # Q_rot = (kT/hcB) [1 + (1/3) x + (1/15) x^2 + (4/315) x^3], x = hcB/kT, for a rigid
    # linear rotor without symmetry. The level sum of CO (D set to 0 here) must agree.
    b = 1.92253
    for t in (150.0, 250.0, 350.0):
        x = SECOND_RADIATION_CONSTANT_CM_K * b / t
        expansion = (1 / x) * (1 + x / 3 + x**2 / 15 + 4 * x**3 / 315)
        j = np.arange(0, 200)
        direct = np.sum((2 * j + 1) * np.exp(-x * j * (j + 1)))
        assert direct == pytest.approx(expansion, rel=1e-6)
        # and the module's own sum (with D) stays within the size of the D term
        assert M.rotational_partition_function("CO", t) == pytest.approx(expansion, rel=2e-3)


def _level_sum(energy, weight, t):
    return np.sum(weight * np.exp(-SECOND_RADIATION_CONSTANT_CM_K * energy / t))


@pytest.mark.parametrize("t", [200.0, 250.0])
def test_h2o_ratio_against_level_sum_of_real_line_list(real_lines, t):
    # The distinct lower states (E'', g'') of the real water list (h2o_HITRAN.par; see
    # its PROVENANCE.md) form the published level set; their sum reproduces the
    # tabulated Q(296) = 174.58 to 0.01 %, so its ratio Q(296)/Q(T) is a published
    # value in all but name. Required: specforce's ratio within 1 % (issue 2).
    c = read_records(real_lines / "h2o_HITRAN.par")
    key = np.char.add(c["global_lower"], c["local_lower"])
    _, idx = np.unique(key, return_index=True)
    e, g = c["lower_energy"][idx], c["g_lower"][idx]
    assert _level_sum(e, g, 296.0) == pytest.approx(174.58, rel=1e-3)
    published_ratio = _level_sum(e, g, 296.0) / _level_sum(e, g, t)
    assert M.partition_ratio("H2O", 1, t) == pytest.approx(published_ratio, rel=0.01)


@pytest.mark.parametrize("t", [200.0, 250.0])
def test_n2o_rotational_ratio_against_real_line_list(real_lines, t):
    # Ground-state rotational levels of 14N2(16)O are the lower states of its pure-rotation
    # lines in sample_N2O.par (J'' = 0..53). Their level sum, against the model's rotational
    # sum: within 1 % (the list stops at J'' = 53, which alone costs ~0.3 % at 296 K).
    c = read_records(real_lines / "sample_N2O.par")
    sel = (c["isotopologue"] == 1) & (np.char.strip(c["global_lower"]) == b"0 0 0 0") & (
        c["global_lower"] == c["global_upper"]
    )
    _, idx = np.unique(c["local_lower"][sel], return_index=True)
    e, g = c["lower_energy"][sel][idx], c["g_lower"][sel][idx]
    published_ratio = _level_sum(e, g, 296.0) / _level_sum(e, g, t)
    model = M.rotational_partition_function("N2O", 296.0) / M.rotational_partition_function("N2O", t)
    assert model == pytest.approx(published_ratio, rel=0.01)


def test_partition_function_is_increasing_in_temperature():
    t = np.linspace(150, 350, 41)
    for mol in MAIN:
        q = M.partition_function(mol, 1, t)
        assert np.all(np.diff(q) > 0)


def test_bad_temperature_is_rejected():
    with pytest.raises(ValueError, match="temperature must be finite and positive"):
        M.partition_function("CO2", 1, -5.0)


# ---------------------------------------------------------------- NIST-JANAF tables
# Published reference: Chase (1998), NIST-JANAF Thermochemical Tables, 4th ed.,
# J. Phys. Chem. Ref. Data Monograph 9, gas-phase tables read through the `janaf`
# package (PyPI). For an ideal gas, -(G - H(0)) / RT = ln(q / N) (standard statistical
# thermodynamics, e.g. McQuarrie 1976, Statistical Mechanics, ch. 8; from memory), and at
# fixed pressure the translational part q_tr / N grows as T^(5/2) (Sackur-Tetrode). So
# ln Q_int(T) = gef(T)/R - (H(Tr) - H(0))/(R T) - 2.5 ln T + const, with gef the table's
# -[G - H(Tr)]/T column and H(Tr) - H(0) minus its 0 K enthalpy entry. The constant
# (symmetry number, nuclear spin, mass) cancels in Q(296)/Q(T). JANAF uses sigma in place
# of the spin statistics, which matches the full spin-weighted sum at these temperatures.
JANAF_TABLES = {"H2O": "H-064", "CO2": "C-095", "CH4": "C-067", "N2O": "N-026", "O3": "O-056"}
GAS_CONSTANT = 8.314462618  # J mol-1 K-1 (CODATA 2018, exact)


@functools.cache
def _janaf_rows(mol):
    """The gas-phase JANAF table of ``mol``, rows keyed by temperature [K] (read once)."""
    import janaf

    table = janaf.Table(JANAF_TABLES[mol])
    assert table.formula.endswith("(g)")
    return {float(r["T(K)"]): r for r in table.df.iter_rows(named=True)}


def _janaf_ln_q(mol, temperature):
    """ln Q_int(T) + const from the JANAF table of ``mol``, 200 <= T <= 298.15 K.

    Rows the table lacks (296 K everywhere, 250 K for CO2, H2O and O3) come from
    integrating Cp from 298.15 K with Cp quadratic on [200, 298.15] K, fixed by the
    tabulated Cp at both ends and the tabulated H(298.15) - H(200).
    """
    from scipy.integrate import quad

    rows = _janaf_rows(mol)
    tr, lo = 298.15, 200.0
    h0 = -1000.0 * rows[0.0]["H-H(Tr)"]  # H(Tr) - H(0) [J mol-1]
    if temperature in rows:
        gef = rows[temperature]["-[G-H(Tr)]/T"]
    else:
        span = tr - lo
        dh = 1000.0 * (rows[tr]["H-H(Tr)"] - rows[lo]["H-H(Tr)"])
        lhs = [[1, 0, 0], [1, span, span**2], [span, span**2 / 2, span**3 / 3]]
        c0, c1, c2 = np.linalg.solve(lhs, [rows[lo]["Cp"], rows[tr]["Cp"], dh])

        def cp(t):
            return c0 + c1 * (t - lo) + c2 * (t - lo) ** 2

        s = rows[tr]["S"] - quad(lambda t: cp(t) / t, temperature, tr)[0]
        h = -quad(cp, temperature, tr)[0]  # H(T) - H(Tr)
        gef = s - h / temperature
    return gef / GAS_CONSTANT - h0 / (GAS_CONSTANT * temperature) - 2.5 * np.log(temperature)


@pytest.mark.parametrize("mol", ["CH4", "N2O"])
def test_janaf_interpolation_reproduces_the_tabulated_250k_rows(mol):
    # Where JANAF does tabulate 250 K, the interpolation (which never reads that row
    # when asked for 249.999999 K) must land on it: the check on the interpolation
    # used for CO2, H2O and O3 below. Measured: 3e-5 in ln Q. The bound, 2e-4 in ln Q (0.02 % in
    # the ratio), keeps the interpolation fifty times below the 1 % the ratio test allows.
    assert _janaf_ln_q(mol, 250.0 - 1e-9) == pytest.approx(_janaf_ln_q(mol, 250.0), abs=2e-4)


@pytest.mark.parametrize("mol", list(JANAF_TABLES))
@pytest.mark.parametrize("t", [200.0, 250.0])
def test_partition_ratio_against_janaf(mol, t):
    # Required by issue 2: Q(296)/Q(T) of the main isotopologue within 1 % of published
    # values at 200 and 250 K. Measured deviations: CO2 +0.1 %, H2O -0.2 %, CH4 -0.2 %,
    # N2O +0.03 %, O3 +0.35 % (at 200 K; smaller at 250 K).
    published = np.exp(_janaf_ln_q(mol, 296.0) - _janaf_ln_q(mol, t))
    assert M.partition_ratio(mol, 1, t) == pytest.approx(published, rel=0.01)
