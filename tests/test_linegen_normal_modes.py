"""Harmonic force field, normal modes and quartic distortion of water (specforce.molecular.linegen.normal_modes)."""

import numpy as np
import pytest

from specforce.molecular.linegen.asymmetric import load_h2o_table
from specforce.molecular.linegen.asymmetric_rotor import _hamiltonian
from specforce.molecular.linegen.normal_modes import (distortion_operator, normal_modes, quartic_distortion,
                                            rotational_constants, valence_force_constants)
from specforce.molecular.linegen.water_isotopes import _bend_origin, _masses

MAIN = ("1H", "1H", "16O")


@pytest.fixture(scope="module")
def structure():
    return load_h2o_table()[0]["structure"]


@pytest.fixture(scope="module")
def force_field(structure):
    return valence_force_constants(structure["harmonic"], structure["bond_length"], structure["angle"], _masses(MAIN))


def _modes(structure, force_field, atoms):
    return normal_modes(force_field, structure["bond_length"], structure["angle"], _masses(atoms))


def test_force_constants_of_water(structure, force_field):
    # The fit reproduces the three harmonic wavenumbers exactly, and the constants are the textbook water
    # values: f_r about 8.45 mdyn/angstrom, f_rr about -0.10, f_theta about 0.70 aJ/rad^2 (Wilson, Decius and
    # Cross 1955, Ch. 8 worked example; from memory, medium confidence, hence the loose tolerances).
    modes = _modes(structure, force_field, MAIN)
    assert np.allclose(modes.wavenumbers, sorted(structure["harmonic"]), atol=1e-6)
    f_r, f_rr, f_theta = force_field
    assert f_r == pytest.approx(8.45, rel=0.03) and -0.2 < f_rr < 0.0 and f_theta == pytest.approx(0.70, rel=0.06)


def test_equilibrium_rotational_constants(structure, force_field):
    # Moments of a symmetric bent XY2 by the textbook formulas: I_b = 2 m_Y (r sin(theta/2))^2 about the C2
    # axis, I_a = (2 m_Y m_X / M) (r cos(theta/2))^2 in plane, I_c = I_a + I_b (planar; common practice).
    modes = _modes(structure, force_field, MAIN)
    m_o, m_h, _ = _masses(MAIN)
    r, half = structure["bond_length"], np.radians(structure["angle"]) / 2
    i_b = 2 * m_h * (r * np.sin(half)) ** 2
    i_a = 2 * m_h * m_o / (m_o + 2 * m_h) * (r * np.cos(half)) ** 2
    assert modes.moments == pytest.approx([i_a, i_b, i_a + i_b], rel=1e-9)
    assert rotational_constants(modes.moments) == pytest.approx([27.39, 14.58, 9.515], abs=0.01)


def test_heavy_water_bend_from_the_force_field(structure, force_field):
    # An isotope the generator does not use, as a check of the mass dependence: D2O nu2 = 1178.4 cm-1 (from
    # memory, high confidence). Measured 1173.0 (-5.4, -0.5 %) with the bend's anharmonic part scaled by
    # rho^2; tolerance 1 % for a harmonic field without a stretch-bend term.
    main = _modes(structure, force_field, MAIN)
    heavy = _modes(structure, force_field, ("2H", "2H", "16O"))
    rho = heavy.wavenumbers[0] / main.wavenumbers[0]
    assert _bend_origin(1594.75, main.wavenumbers[0], rho) == pytest.approx(1178.4, rel=0.01)


def test_quartic_distortion_reproduces_the_fitted_water_levels(structure, force_field):
    # The rigid rotor plus the harmonic quartic term against the Watson Hamiltonian fitted to water's levels
    # (linedata/h2o_constants.toml). Measured maximum differences 0.13, 3.3 and 6.5 cm-1 at J = 2, 5 and 8,
    # where the rigid rotor alone is 0.4, 15 and 84 cm-1 off. Tolerances: the measured values plus a third.
    tau = quartic_distortion(_modes(structure, force_field, MAIN))
    ground = load_h2o_table()[0]["state"]["000"]
    rigid = {k: ground[k] for k in ("origin", "A", "B", "C")}
    for j, limit, rigid_error in ((2, 0.2, 0.3), (5, 4.4, 10.0), (8, 8.7, 60.0)):
        fitted = np.linalg.eigvalsh(_hamiltonian(j, ground))
        plain = np.linalg.eigvalsh(_hamiltonian(j, rigid))
        harmonic = np.linalg.eigvalsh(_hamiltonian(j, rigid) + distortion_operator(tau, j))
        assert np.abs(harmonic - fitted).max() < limit and np.abs(plain - fitted).max() > rigid_error, j


def test_distortion_tensor_symmetries(structure, force_field):
    # tau_abcd = tau_bacd = tau_cdab (definition); for a planar molecule a_k^cc = a_k^aa + a_k^bb makes the
    # out-of-plane elements follow from the in-plane ones; all diagonal elements are negative (-1/2 sum a^2 / ...).
    tau = quartic_distortion(_modes(structure, force_field, ("1H", "2H", "16O")))
    assert np.allclose(tau, tau.transpose(1, 0, 2, 3)) and np.allclose(tau, tau.transpose(2, 3, 0, 1))
    assert all(tau[i, i, i, i] < 0 for i in range(3))
    h = distortion_operator(tau, 6)
    assert np.allclose(h, h.T)
