"""Harmonic force field, normal modes and quartic centrifugal distortion of a bent triatomic.

Used to carry the water constants over to isotopologues whose symmetry or masses differ
(H2(18O), H2(17O), HDO): the force field is isotope-independent in the Born-Oppenheimer
approximation, so it is fitted once to the harmonic wavenumbers of H2(16O) and then
solved with other masses.

Force field
-----------
Valence coordinates r1, r2 (bond lengths) and theta (the angle)::

    V = 1/2 f_r (dr1^2 + dr2^2) + f_rr dr1 dr2 + 1/2 f_theta dtheta^2,

the stretch-bend interaction set to zero (three constants for three wavenumbers;
Wilson, Decius and Cross 1955, Molecular Vibrations, Ch. 4 and 8). The normal modes
follow from the mass-weighted Cartesian Hessian B^T F B / sqrt(m_i m_j), with B the
Wilson B matrix of the valence coordinates (here by finite differences).

Quartic centrifugal distortion
------------------------------
At fixed angular momentum the molecule stretches until the rotational and potential
energies balance; to lowest order this gives the quartic term
H_d = 1/4 sum tau_{abcd} J_a J_b J_c J_d with::

    tau_{abcd} = -1/2 sum_k a_k^{ab} a_k^{cd} / (lambda_k I_a I_b I_c I_d) (hbar^4),

a_k^{ab} = dI_ab / dQ_k the inertia derivatives along the mass-weighted normal
coordinates and lambda_k = (2 pi c omega_k)^2 (Kivelson and Wilson 1953, J. Chem.
Phys. 21, 1229; the classical derivation in Wilson, Decius and Cross, Ch. 11). Only
the terms in which each axis appears an even number of times are kept: the others,
present when the molecule lacks C2v symmetry (HDO), are removed to this order by a
contact transformation (Watson 1967, J. Chem. Phys. 46, 1935; from memory), which
keeps the four Wang blocks of the asymmetric-rotor Hamiltonian apart.

Checked on H2(16O) against the fitted Watson constants of
``linedata/h2o_constants.toml``: the rigid rotor with this quartic term reproduces the
levels within 0.13 cm-1 at J = 2, 3.3 at J = 5 and 6.5 at J = 8 (the rigid rotor alone:
0.4, 15 and 84 cm-1); water's distortion is larger than harmonic, so the harmonic
terms fall behind at higher J (29 cm-1 at J = 10).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from ...constants import ATOMIC_MASS_UNIT, PLANCK, SPEED_OF_LIGHT

__all__ = ["NormalModes", "valence_force_constants", "normal_modes", "quartic_distortion", "distortion_operator",
           "equilibrium_positions", "rotational_constants"]

_HBAR = PLANCK / (2.0 * math.pi)
#: aJ / (u angstrom^2) in s-2
_LAMBDA_SI = 1e-18 / (ATOMIC_MASS_UNIT * 1e-20)


@dataclass(frozen=True)
class NormalModes:
    """Harmonic normal modes of a triatomic in its equilibrium principal-axis frame.

    Attributes
    ----------
    wavenumbers : numpy.ndarray
        Harmonic wavenumbers omega_k, ascending [cm-1].
    positions : numpy.ndarray
        Equilibrium atom positions (3, 3), centre of mass at the origin, columns along
        the principal axes a, b, c (I_a <= I_b <= I_c) [angstrom].
    moments : numpy.ndarray
        Principal moments I_a, I_b, I_c [u angstrom^2].
    displacements : numpy.ndarray
        (3 modes, 3 atoms, 3 axes): Cartesian displacement per unit mass-weighted normal
        coordinate Q_k [angstrom per (u^1/2 angstrom)].
    masses : numpy.ndarray
        Atomic masses [u].
    """

    wavenumbers: np.ndarray
    positions: np.ndarray
    moments: np.ndarray
    displacements: np.ndarray
    masses: np.ndarray


def equilibrium_positions(bond_length, angle, masses):
    """Atom positions (central atom first) in the principal-axis frame, and the moments.

    Parameters
    ----------
    bond_length : float
        Equilibrium bond length, the same for both bonds [angstrom].
    angle : float
        Equilibrium bond angle [degree].
    masses : sequence of float
        Masses of the central atom and the two end atoms [u].

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Positions (3, 3) [angstrom] along a, b, c, and I_a <= I_b <= I_c [u angstrom^2].
    """
    half = math.radians(angle) / 2.0
    s, c = math.sin(half), math.cos(half)
    x = np.array([[0.0, 0.0, 0.0], [bond_length * s, -bond_length * c, 0.0], [-bond_length * s, -bond_length * c, 0.0]])
    m = np.asarray(masses, dtype=float)
    x -= (m[:, None] * x).sum(0) / m.sum()
    inertia = _inertia(x, m)
    moments, axes = np.linalg.eigh(inertia)
    return x @ axes, moments


def rotational_constants(moments):
    """Rotational constants h / (8 pi^2 c I) [cm-1] of moments of inertia [u angstrom^2]."""
    return PLANCK / (8.0 * math.pi**2 * SPEED_OF_LIGHT * 100.0 * np.asarray(moments) * ATOMIC_MASS_UNIT * 1e-20)


def _inertia(x, m):
    return (m[:, None, None] * ((x**2).sum(1)[:, None, None] * np.eye(3) - x[:, :, None] * x[:, None, :])).sum(0)


def _valence(x):
    d1, d2 = x[1] - x[0], x[2] - x[0]
    r1, r2 = np.linalg.norm(d1), np.linalg.norm(d2)
    return np.array([r1, r2, math.acos(np.clip(d1 @ d2 / (r1 * r2), -1.0, 1.0))])


def _b_matrix(x, step=1e-6):
    b = np.zeros((3, 9))
    flat = x.ravel()
    for i in range(9):
        plus, minus = flat.copy(), flat.copy()
        plus[i] += step
        minus[i] -= step
        b[:, i] = (_valence(plus.reshape(3, 3)) - _valence(minus.reshape(3, 3))) / (2.0 * step)
    return b


def normal_modes(force_constants, bond_length, angle, masses):
    """Harmonic normal modes of a bent triatomic with the valence force field above.

    Parameters
    ----------
    force_constants : sequence of float
        f_r, f_rr [aJ angstrom^-2 = mdyn/angstrom] and f_theta [aJ rad^-2].
    bond_length, angle, masses
        As for :func:`equilibrium_positions` [angstrom, degree, u].

    Returns
    -------
    NormalModes
    """
    m = np.asarray(masses, dtype=float)
    x, moments = equilibrium_positions(bond_length, angle, m)
    f_r, f_rr, f_theta = force_constants
    f = np.array([[f_r, f_rr, 0.0], [f_rr, f_r, 0.0], [0.0, 0.0, f_theta]])
    b = _b_matrix(x)
    m3 = np.repeat(m, 3)
    hessian = b.T @ f @ b / np.sqrt(np.outer(m3, m3))
    lam, vec = np.linalg.eigh(hessian)
    lam, vec = lam[-3:], vec[:, -3:]  # the six zero modes (translations, rotations) come first
    wavenumbers = np.sqrt(lam * _LAMBDA_SI) / (2.0 * math.pi * SPEED_OF_LIGHT * 100.0)
    disp = np.stack([(vec[:, k] / np.sqrt(m3)).reshape(3, 3) for k in range(3)])
    return NormalModes(wavenumbers, x, moments, disp, m)


def valence_force_constants(harmonic, bond_length, angle, masses):
    """f_r, f_rr and f_theta fitted to three harmonic wavenumbers.

    Parameters
    ----------
    harmonic : sequence of float
        The three harmonic wavenumbers omega_1, omega_2, omega_3 [cm-1] (any order).
    bond_length, angle, masses
        As for :func:`equilibrium_positions` [angstrom, degree, u].

    Returns
    -------
    numpy.ndarray
        f_r, f_rr [aJ angstrom^-2] and f_theta [aJ rad^-2]; the fit is exact (three
        constants for three wavenumbers).
    """
    target = np.sort(np.asarray(harmonic, dtype=float))
    fit = least_squares(lambda f: normal_modes(f, bond_length, angle, masses).wavenumbers - target,
                        [8.0, 0.0, 0.7], x_scale=[1.0, 0.1, 0.1], xtol=1e-14, ftol=1e-14)
    return fit.x


def quartic_distortion(modes):
    """tau_{abcd} [cm-1] of the quartic distortion term (Kivelson and Wilson 1953).

    Parameters
    ----------
    modes : NormalModes

    Returns
    -------
    numpy.ndarray
        (3, 3, 3, 3), axes a, b, c.
    """
    x, m = modes.positions, modes.masses
    tau = np.zeros((3, 3, 3, 3))
    for k, omega in enumerate(modes.wavenumbers):
        dx = modes.displacements[k]
        a = (m[:, None, None] * (2.0 * (x * dx).sum(1)[:, None, None] * np.eye(3) - x[:, :, None] * dx[:, None, :]
                                 - dx[:, :, None] * x[:, None, :])).sum(0)
        a_si = a * math.sqrt(ATOMIC_MASS_UNIT) * 1e-10
        lam = (2.0 * math.pi * SPEED_OF_LIGHT * 100.0 * omega) ** 2
        tau += np.einsum("ab,cd->abcd", a_si, a_si) / lam
    i_si = modes.moments * ATOMIC_MASS_UNIT * 1e-20
    tau *= -0.5 * _HBAR**4 / np.einsum("a,b,c,d->abcd", i_si, i_si, i_si, i_si)
    return tau / (PLANCK * SPEED_OF_LIGHT * 100.0)


def _angular_momentum(j):
    """J_z, J_x, J_y in the |J K> basis, K = -J..J (standard phases, J_+ real and positive)."""
    k = np.arange(-j, j + 1, dtype=float)
    up = np.diag(np.sqrt(j * (j + 1.0) - k[:-1] * (k[:-1] + 1.0)), -1).astype(complex)
    return np.diag(k).astype(complex), (up + up.T) / 2.0, (up - up.T) / 2.0j


def distortion_operator(tau, j):
    """H_d = 1/4 sum tau_{abcd} J_a J_b J_c J_d in the |J K> basis of the I^r representation
    (z = a, x = b, y = c) [cm-1], terms with an axis appearing an odd number of times left out.

    Parameters
    ----------
    tau : numpy.ndarray
        From :func:`quartic_distortion` [cm-1].
    j : int
        Rotational quantum number.

    Returns
    -------
    numpy.ndarray
        Real symmetric (2J+1, 2J+1) matrix.
    """
    ops = _angular_momentum(j)
    h = np.zeros((2 * j + 1, 2 * j + 1), dtype=complex)
    for a in range(3):
        for b in range(3):
            pair = ops[a] @ ops[b]
            for c in range(3):
                for d in range(3):
                    if any((a, b, c, d).count(axis) % 2 for axis in range(3)) or tau[a, b, c, d] == 0.0:
                        continue
                    h += 0.25 * tau[a, b, c, d] * pair @ ops[c] @ ops[d]
    return h.real
