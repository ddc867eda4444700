"""The asymmetric rotor: rotational levels from Watson's Hamiltonian, line strengths from 3j
symbols, and the bend's vibration-rotation operator. The line lists of H2O and O3 built from
them are in :mod:`specforce.molecular.linegen.asymmetric`.

Levels
------
For each vibrational state the rotational levels come from Watson's A-reduced
Hamiltonian in the I^r representation (z = a, x = b, y = c; Watson 1977, in
Vibrational Spectra and Structure vol. 6, Eqs. 95-96), with quartic and sextic
centrifugal distortion::

    H = A Jz^2 + B Jx^2 + C Jy^2 - DeltaJ J^4 - DeltaJK J^2 Jz^2 - DeltaK Jz^4
        - 2 deltaJ J^2 (Jx^2 - Jy^2) - deltaK [Jz^2 (Jx^2 - Jy^2) + (Jx^2 - Jy^2) Jz^2]
        + HJ J^6 + HJK J^4 Jz^2 + HKJ J^2 Jz^4 + HK Jz^6 + 2 hJ J^4 (Jx^2 - Jy^2)
        + hJK J^2 [Jz^2 (Jx^2 - Jy^2) + ...] + hK [Jz^4 (Jx^2 - Jy^2) + ...]

set up in the symmetric-top basis |J K> and diagonalised per J in the four
Wang blocks (K even or odd; symmetric or antisymmetric combinations of |K> and
|-K>), which the Hamiltonian does not mix (King, Hainer & Cross 1943, J. Chem.
Phys. 11, 27). A block fixes the parity of Ka (that of K) and the symmetry under
the C2 rotation about b, (-1)^(Ka+Kc) = s (-1)^J for the Wang sign s; within a
block the levels rise with Ka (the correlation rule), which labels each level
J_{Ka Kc}.

Line strengths
--------------
The line strength of a b-type transition (dipole along b, Delta Ka and Delta Kc
odd) is, summed over M and the three space directions (Zare 1988, Angular
Momentum, Eq. 3.119 and Ch. 6)::

    R = (2J' + 1)(2J'' + 1) | sum_{K'K''} c'_K' c''_K'' (J' 1 J''; -K' q K'') mu_q |^2,

with q = K' - K'' = +-1 and mu_{+-1} = -+ mu_b / sqrt(2); for an a-type
transition (dipole along a = z, Delta Ka even, Delta Kc odd) q = 0 and
mu_0 = mu_a (:func:`line_strengths`; the intensities made of them are in
:mod:`specforce.molecular.linegen.asymmetric`).
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from ...constants import ATOMIC_MASS_UNIT, PLANCK, SPEED_OF_LIGHT
from ..molecules import atomic_mass
from .normal_modes import distortion_operator, equilibrium_positions

__all__ = ["wigner_3j", "rotational_levels", "line_strengths", "rotation_vibration_operator", "bending_derivatives"]


@lru_cache(maxsize=None)
def _log_factorial(n):
    return math.lgamma(n + 1)


def wigner_3j(j1, j2, j3, m1, m2, m3):
    """Wigner 3j symbol for integer arguments, by Racah's formula.

    Notes
    -----
    Racah (1942), Phys. Rev. 62, 438, Eq. 16'; Edmonds (1957), Angular Momentum
    in Quantum Mechanics, Eq. 3.7.3.

    Examples
    --------
    >>> round(wigner_3j(1, 1, 0, 0, 0, 0), 6)  # -1/sqrt(3)
    -0.57735
    """
    if m1 + m2 + m3 != 0 or abs(m1) > j1 or abs(m2) > j2 or abs(m3) > j3:
        return 0.0
    if j3 < abs(j1 - j2) or j3 > j1 + j2:
        return 0.0
    lf = _log_factorial
    pre = 0.5 * (lf(j1 + j2 - j3) + lf(j1 - j2 + j3) + lf(-j1 + j2 + j3) - lf(j1 + j2 + j3 + 1)
                 + lf(j1 + m1) + lf(j1 - m1) + lf(j2 + m2) + lf(j2 - m2) + lf(j3 + m3) + lf(j3 - m3))
    kmin = max(0, j2 - j3 - m1, j1 - j3 + m2)
    kmax = min(j1 + j2 - j3, j1 - m1, j2 + m2)
    total = 0.0
    for k in range(kmin, kmax + 1):
        term = pre - (lf(k) + lf(j1 + j2 - j3 - k) + lf(j1 - m1 - k) + lf(j2 + m2 - k)
                      + lf(j3 - j2 + m1 + k) + lf(j3 - j1 - m2 + k))
        total += (-1) ** k * math.exp(term)
    return (-1) ** (j1 - j2 - m3) * total


#: Watson's quartic and sextic distortion constants (absent ones are 0).
_DISTORTION_CONSTANTS = ("DeltaJ", "DeltaJK", "DeltaK", "deltaJ", "deltaK", "HJ", "HJK", "HKJ", "HK", "hJ", "hJK", "hK")


def _hamiltonian(j, c):
    """Watson A-reduced Hamiltonian matrix in the |J K> basis, K = -J..J [cm-1] (absent distortion terms are 0)."""
    c = {**dict.fromkeys(_DISTORTION_CONSTANTS, 0.0), **c}
    k = np.arange(-j, j + 1, dtype=float)
    x = j * (j + 1.0)
    diag = (0.5 * (c["B"] + c["C"]) * (x - k**2) + c["A"] * k**2
            - c["DeltaJ"] * x**2 - c["DeltaJK"] * x * k**2 - c["DeltaK"] * k**4
            + c["HJ"] * x**3 + c["HJK"] * x**2 * k**2 + c["HKJ"] * x * k**4 + c["HK"] * k**6)
    h = np.diag(diag)
    kk = k[:-2]
    k2 = kk + 2.0
    f = 0.5 * np.sqrt(np.clip((j - kk) * (j - kk - 1) * (j + kk + 1) * (j + kk + 2), 0.0, None))
    off = f * (0.5 * (c["B"] - c["C"]) - 2.0 * c["deltaJ"] * x - c["deltaK"] * (kk**2 + k2**2)
               + 2.0 * c["hJ"] * x**2 + c["hJK"] * x * (kk**2 + k2**2) + c["hK"] * (kk**4 + k2**4))
    idx = np.arange(2 * j - 1)
    h[idx, idx + 2] = off
    h[idx + 2, idx] = off
    return h


def _wang_blocks(j):
    """Orthonormal Wang-basis columns for each block (K parity, s), in the |J K> basis."""
    n = 2 * j + 1
    blocks = {}
    for parity in (0, 1):
        for s in (1, -1):
            cols = []
            for kk in range(parity, j + 1, 2):
                v = np.zeros(n)
                if kk == 0:
                    if s == -1:
                        continue
                    v[j] = 1.0
                else:
                    v[j + kk] = 1.0 / math.sqrt(2.0)
                    v[j - kk] = s / math.sqrt(2.0)
                cols.append(v)
            if cols:
                blocks[(parity, s)] = np.array(cols).T
    return blocks


def rotational_levels(constants, j_max, distortion=None):
    """Rotational levels J_{Ka Kc} of one vibrational state.

    Parameters
    ----------
    constants : dict
        ``origin``, ``A``, ``B``, ``C`` and the distortion constants of
        ``linedata/h2o_constants.toml`` [cm-1].
    j_max : int
        Highest J.
    distortion : numpy.ndarray, optional
        A quartic distortion tensor tau [cm-1] added as
        :func:`specforce.molecular.linegen.normal_modes.distortion_operator` (used where no fitted
        Watson constants exist).

    Returns
    -------
    dict
        ``j``, ``ka``, ``kc`` (int arrays), ``energy`` [cm-1, including the origin]
        and ``vectors`` (list: the eigenvector of each level in the |J K> basis,
        K = -J..J).
    """
    js, kas, kcs, es, vecs = [], [], [], [], []
    for j in range(j_max + 1):
        h = _hamiltonian(j, constants)
        if distortion is not None:
            h = h + distortion_operator(distortion, j)
        for (parity, s), w in _wang_blocks(j).items():
            e, v = np.linalg.eigh(w.T @ h @ w)
            even_sum = s * (-1) ** j == 1  # (-1)^(Ka + Kc) = s (-1)^J
            labels = []
            for ka in range(parity, j + 1, 2):
                for kc in (j - ka, j - ka + 1):
                    if 0 <= kc <= j and ((ka + kc) % 2 == 0) == even_sum:
                        labels.append((ka, kc))
            if len(labels) != e.size:
                raise RuntimeError(f"J={j}: {e.size} levels but {len(labels)} labels in block {(parity, s)}")
            for (ka, kc), energy, col in zip(labels, e, v.T):
                js.append(j)
                kas.append(ka)
                kcs.append(kc)
                es.append(energy + constants["origin"])
                vecs.append(w @ col)
    return {"j": np.array(js), "ka": np.array(kas), "kc": np.array(kcs), "energy": np.array(es), "vectors": vecs}


#: Spherical components q and mu_q / mu of a dipole along each inertial axis (I^r: z = a, x = b).
_DIPOLE_COMPONENTS = {"a": ((0, 1.0),), "b": ((1, -1.0 / math.sqrt(2.0)), (-1, 1.0 / math.sqrt(2.0)))}


@lru_cache(maxsize=None)
def _dipole_matrix(j_up, j_low, axis):
    """Matrix of sum_q (J' 1 J''; -K' q K'') mu_q / mu for a dipole along ``axis`` ("a" or "b")."""
    m = np.zeros((2 * j_up + 1, 2 * j_low + 1))
    for i, k_up in enumerate(range(-j_up, j_up + 1)):
        for q, mu_q in _DIPOLE_COMPONENTS[axis]:
            k_low = k_up - q
            if -j_low <= k_low <= j_low:
                m[i, k_low + j_low] = mu_q * wigner_3j(j_up, 1, j_low, -k_up, q, k_low)
    return m


def rotation_vibration_operator(constants, derivatives, j):
    """W = sum_alpha B_alpha b_alpha J_alpha^2 in the |J K> basis [cm-1]: how the rotational
    Hamiltonian changes along a vibration's dimensionless normal coordinate q, with
    b_alpha = d ln B_alpha / dq (see :func:`bending_derivatives`)."""
    b_a, b_b, b_c = derivatives
    return _hamiltonian(j, {"A": constants["A"] * b_a, "B": constants["B"] * b_b, "C": constants["C"] * b_c})


def _bend_g(bond_length, theta, m_h, m_o):
    """G_tt of the bend at fixed bonds [u-1 angstrom-2]: 2 / (m_H r^2) + 2 (1 - cos theta) / (m_O r^2)
    (Wilson, Decius and Cross 1955, Ch. 4)."""
    return 2.0 / (m_h * bond_length**2) + 2.0 * (1.0 - math.cos(theta)) / (m_o * bond_length**2)


def bending_derivatives(bond_length, angle, omega, oxygen="16O"):
    """d ln B_alpha / dq2 (alpha = a, b, c) of a symmetric triatomic H2O-like molecule for its bend.

    Parameters
    ----------
    bond_length : float
        Equilibrium O-H distance [angstrom].
    angle : float
        Equilibrium H-O-H angle [degree].
    omega : float
        Harmonic bending wavenumber [cm-1] (the scale of the dimensionless coordinate).
    oxygen : str
        Oxygen isotope ("16O", "17O", "18O"); the hydrogens are 1H.

    Notes
    -----
    The bend is taken as a pure change of angle at fixed bonds (for water nu2 is
    mostly that), with d theta / dq2 = sqrt(G_tt hbar / (2 pi c omega)) and
    G_tt = 2 / (m_H r^2) + 2 (1 - cos theta) / (m_O r^2) (Wilson, Decius and Cross
    1955, Ch. 4); the moments of inertia are those of the rigid geometry.
    """
    mh, mo = atomic_mass("1H"), atomic_mass(oxygen)
    theta, d = math.radians(angle), 1e-6

    def moments(t):  # I_a (in plane), I_b (the C2 axis), I_c of the rigid molecule at angle t [rad]
        return equilibrium_positions(bond_length, math.degrees(t), (mo, mh, mh))[1]

    inertia = moments(theta)
    di = (moments(theta + d) - moments(theta - d)) / (2 * d)
    g_tt = _bend_g(bond_length, theta, mh, mo) / (ATOMIC_MASS_UNIT * 1e-20)  # [kg-1 m-2]
    hbar = PLANCK / (2 * math.pi)
    dtheta_dq = math.sqrt(g_tt * hbar / (2 * math.pi * SPEED_OF_LIGHT * omega * 100.0))
    return tuple(float(x) for x in -di * dtheta_dq / inertia)


def line_strengths(upper, lower, dipole, axis="b", correction=None):
    """Line strengths R [D^2] of every a- or b-type transition between two sets of levels.

    Parameters
    ----------
    upper, lower : dict
        From :func:`rotational_levels`.
    dipole : float
        Dipole (or transition) moment along ``axis`` [D].
    axis : {"b", "a"}
        Inertial axis of the dipole: "b" (Delta Ka, Delta Kc odd) or "a" (Delta Ka
        even, Delta Kc odd).
    correction : (float, float, callable), optional
        (k_upper [cm], k_lower [cm], W): the amplitude <v'|Phi|v> becomes
        <v'|Phi|v> + k_upper <W v'|Phi|v> + k_lower <v'|Phi|W v>, with W(J) the matrix
        of :func:`rotation_vibration_operator`. For a fundamental, k_upper = -k_lower =
        mu_0 / (sqrt(2) tau omega) (the rotational dependence of its transition
        moment); for the pure rotation, k_upper = k_lower = -tau / (sqrt(2) omega mu_0)
        (the centrifugal distortion of the dipole); see the module docstring.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray, numpy.ndarray)
        Indices into ``upper`` and ``lower`` and R, for pairs with Delta J = 0, +-1
        and R > 1e-12 mu^2 (the rest are forbidden and zero to rounding).
    """
    iu, il, rr = [], [], []
    by_j_up = {j: np.flatnonzero(upper["j"] == j) for j in np.unique(upper["j"])}
    by_j_low = {j: np.flatnonzero(lower["j"] == j) for j in np.unique(lower["j"])}
    for jl, low_idx in by_j_low.items():
        vl = np.array([lower["vectors"][i] for i in low_idx]).T
        for ju in (jl - 1, jl, jl + 1):
            if ju < 0 or ju not in by_j_up:
                continue
            up_idx = by_j_up[ju]
            vu = np.array([upper["vectors"][i] for i in up_idx]).T
            phi = _dipole_matrix(int(ju), int(jl), axis)
            t = vu.T @ phi @ vl
            if correction is not None:
                k_up, k_low, w = correction
                t = t + k_up * (w(int(ju)) @ vu).T @ phi @ vl + k_low * vu.T @ phi @ (w(int(jl)) @ vl)
            r = (2 * ju + 1) * (2 * jl + 1) * (dipole * t) ** 2
            a, b = np.nonzero(r > 1e-12 * dipole**2)
            iu.append(up_idx[a])
            il.append(low_idx[b])
            rr.append(r[a, b])
    if not iu:
        return np.zeros(0, int), np.zeros(0, int), np.zeros(0)
    return np.concatenate(iu), np.concatenate(il), np.concatenate(rr)
