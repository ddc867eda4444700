"""Constants of the water isotopologues by isotopic substitution of the H2(16O) table.

The potential, the equilibrium structure and the dipole function do not depend on the
isotopes (Born-Oppenheimer approximation); the masses do. So (Wilson, Decius and Cross
1955, Molecular Vibrations, Ch. 8; common practice):

* rotational constants: each of H2(16O)'s effective A, B, C times the ratio of the
  equilibrium constants of the two isotopologues (axes matched by their order, a <= b <= c
  in moment of inertia), from the structure in ``linedata/h2o_constants.toml``;
* the nu2 origin from the ratio rho of the harmonic bending wavenumbers, from one harmonic
  force field (:mod:`specforce.molecular.linegen.normal_modes`) fitted to H2(16O)'s harmonic
  wavenumbers and solved with the other masses: omega' = rho omega, and the anharmonic
  part omega - nu scaled by rho^2 (:func:`_bend_origin`);
* dipoles: the permanent dipole keeps its size and lies along the bisector of the bonds
  (the bond-dipole model, mu = mu_OH (u_1 + u_2)); its components follow from where the
  principal axes lie. The nu2 transition moment is the bond-dipole model's derivative
  along the bending normal coordinate times <1|Q|0> = sqrt(hbar / 2 omega), scaled so that
  it gives H2(16O)'s tabulated transition moment;
* distortion: H2(18O) and H2(17O) keep the fitted Watson constants of H2(16O) (their
  axes and symmetry are the same; the isotopic change is a few per cent of the
  distortion); HDO, whose axes are rotated and whose symmetry is lower, gets the quartic
  distortion of the harmonic force field instead, and no sextic terms.

Equilibrium scaling leaves out the isotopic change of the vibration-rotation constants,
which for B and C is of the order of the isotopic shift itself: positions of high-J
lines can be off by a few cm-1 (HDO's more, with only harmonic distortion). Checks
against remembered constants are in ``tests/test_linegen_water_isotopes.py``.
"""

from __future__ import annotations

import functools
import math

import numpy as np

from ...constants import ATOMIC_MASS_UNIT, PLANCK, SPEED_OF_LIGHT
from ..molecules import atomic_mass
from .normal_modes import normal_modes, quartic_distortion, rotational_constants, valence_force_constants

__all__ = ["isotopic_water_constants", "bond_dipole"]

_HBAR = PLANCK / (2.0 * math.pi)
_MAIN = ("1H", "1H", "16O")


def bond_dipole(positions, mu_oh):
    """The bond-dipole model's dipole of a bent triatomic, mu = mu_OH (u_1 + u_2) [D].

    Parameters
    ----------
    positions : numpy.ndarray
        (3, 3) positions, central atom first [angstrom].
    mu_oh : float
        The bond dipole [D]; 2 mu_OH cos(theta / 2) is the molecule's dipole at angle theta.

    Returns
    -------
    numpy.ndarray
        The dipole vector [D] in the frame of ``positions``; u_1 and u_2 are the unit vectors
        from the central atom along the bonds.
    """
    u1 = positions[1] - positions[0]
    u2 = positions[2] - positions[0]
    return mu_oh * (u1 / np.linalg.norm(u1) + u2 / np.linalg.norm(u2))


def _masses(atoms):
    """Masses [u] in the order of the normal-mode code: the oxygen first, then the two hydrogens."""
    h1, h2, o = atoms
    return [atomic_mass(o), atomic_mass(h1), atomic_mass(h2)]


def _bend_transition_moment(modes, mu_oh):
    """<1|mu|0> of the lowest (bending) mode in the bond-dipole model, as a vector along a, b, c [D]."""
    step = 1e-4  # [u^1/2 angstrom]
    disp = modes.displacements[0]
    plus, minus = modes.positions + step * disp, modes.positions - step * disp
    deriv = (bond_dipole(plus, mu_oh) - bond_dipole(minus, mu_oh)) / (2 * step)
    omega = 2.0 * math.pi * SPEED_OF_LIGHT * 100.0 * modes.wavenumbers[0]  # [s-1]
    q10 = math.sqrt(_HBAR / (2.0 * omega))  # <1|Q|0> [kg^1/2 m]
    return deriv / (math.sqrt(ATOMIC_MASS_UNIT) * 1e-10) * q10


def _bend_origin(origin, omega, rho, quanta=1):
    """A bending term value [cm-1] of the isotopologue: v omega rho - (v omega - G) rho^2 for the
    level of v = ``quanta`` bending quanta and term value G = ``origin`` (omega the harmonic
    wavenumber), the anharmonic part scaling as rho^2 = (omega' / omega)^2 like omega x (Herzberg
    1945, Molecular Spectra II, Ch. II.6; the first-order isotope rule). 0 stays 0."""
    if origin == 0.0:
        return 0.0
    return quanta * omega * rho - (quanta * omega - origin) * rho**2


@functools.lru_cache(maxsize=8)
def _force_field(harmonic, bond_length, angle):
    """The valence force field of H2(16O) fitted to its harmonic wavenumbers (once per table, not once
    per isotopologue)."""
    return valence_force_constants(harmonic, bond_length, angle, _masses(_MAIN))


def isotopic_water_constants(table, atoms):
    """The constants of one water isotopologue from the H2(16O) table.

    Parameters
    ----------
    table : dict
        The H2(16O) constants (``linedata/h2o_constants.toml``).
    atoms : (str, str, str)
        The two hydrogen isotopes and the oxygen isotope, e.g. ("1H", "1H", "18O") or
        ("1H", "2H", "16O").

    Returns
    -------
    dict
        A table of the same layout for :func:`specforce.molecular.linegen.asymmetric.generate_h2o`,
        with ``structure.atoms`` set and, for a molecule without C2v symmetry, ``dipole.
        components`` (axis to moment [D] for the pure rotation and nu2; HDO's bands are
        hybrids of a- and b-type lines), ``distortion`` (the quartic tau tensor [cm-1]),
        no Watson distortion constants and no [herman_wallis] correction (derived for the
        C2v molecule only).
    """
    st = table["structure"]
    r, angle = st["bond_length"], st["angle"]
    ff = _force_field(tuple(st["harmonic"]), r, angle)
    main = normal_modes(ff, r, angle, _masses(_MAIN))
    iso = normal_modes(ff, r, angle, _masses(atoms))
    rho = rotational_constants(iso.moments) / rotational_constants(main.moments)
    rho_bend = iso.wavenumbers[0] / main.wavenumbers[0]
    symmetric = atoms[0] == atoms[1]
    states = {}
    for name, state in table["state"].items():
        scaled = {**state, "A": state["A"] * rho[0], "B": state["B"] * rho[1], "C": state["C"] * rho[2],
                  "origin": _bend_origin(state["origin"], main.wavenumbers[0], rho_bend, int(name[1]))}
        if not symmetric:
            scaled = {k: scaled[k] for k in ("origin", "A", "B", "C")}
        states[name] = scaled
    out = {**table, "state": states,
           "structure": {**st, "atoms": list(atoms), "harmonic": [float(w) for w in iso.wavenumbers]}}
    dip = table["dipole"]
    mu0, tau = dip["pure_rotation"], dip["nu2_transition"]
    half = math.radians(angle) / 2.0
    mu_oh = mu0 / (2.0 * math.cos(half))
    # the bond-dipole model, scaled to the tabulated H2(16O) transition moment
    scale = tau / np.linalg.norm(_bend_transition_moment(main, mu_oh))
    tau_iso = scale * _bend_transition_moment(iso, mu_oh)
    if symmetric:
        out["dipole"] = {**dip, "nu2_transition": float(np.linalg.norm(tau_iso))}
        return out
    permanent = bond_dipole(iso.positions, mu_oh)
    axes = ("a", "b")
    out["dipole"] = {**dip, "components": {
        "pure_rotation": {ax: float(abs(permanent[i])) for i, ax in enumerate(axes)},
        "nu2_transition": {ax: float(abs(tau_iso[i])) for i, ax in enumerate(axes)}}}
    out["distortion"] = quartic_distortion(iso)
    out.pop("herman_wallis", None)
    return out
