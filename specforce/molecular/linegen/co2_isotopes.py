"""Isotopic scaling of the CO2 polyad model: harmonic frequency ratios, dipole-derivative
ratios and rotational constants of the other isotopologues from their masses.

The stretch force constants follow from 626's w1 and w3 with a valence force field, and the
bend from the G element 1/m1 + 1/m3 + 4/mC for equal bonds (Wilson, Decius and Cross 1955,
the GF method); dipole derivatives along the normal coordinates follow from equal bond dipole
derivatives (Crawford 1952, J. Chem. Phys. 20, 977; from memory). Used by
:mod:`specforce.molecular.linegen.co2`, whose docstring gives how the ratios scale the model.
"""

from __future__ import annotations

import numpy as np

from ..molecules import atomic_mass

__all__ = ["isotopic_ratios", "rotational_b"]

_ATOMS = {"6": "16O", "7": "17O", "8": "18O"}


def _masses(code):
    return atomic_mass(_ATOMS[code[0]]), atomic_mass(f"1{code[1]}C"), atomic_mass(_ATOMS[code[2]])


def _stretch_modes(m1, mc, m3, k, k12):
    """Stretch eigenvalues (ascending: symmetric, antisymmetric) and the squared dipole
    derivative of each along its normal coordinate, for bond dipole derivatives -1, +1."""
    g = np.array([[1 / m1 + 1 / mc, -1 / mc], [-1 / mc, 1 / m3 + 1 / mc]])
    f = np.array([[k, k12], [k12, k]])
    # symmetric form: G^1/2 F G^1/2 y = lambda y, L = G^1/2 y
    wg, vg = np.linalg.eigh(g)
    gh = vg @ np.diag(np.sqrt(wg)) @ vg.T
    lam, y = np.linalg.eigh(gh @ f @ gh)
    ell = gh @ y
    dmu = np.array([-1.0, 1.0]) @ ell
    return lam, dmu ** 2


def isotopic_ratios(code, model626):
    """Harmonic frequency ratios (rho1, rho2, rho3) of an isotopologue to 626, and the
    ratios of squared dipole derivatives of its bend and antisymmetric stretch.

    Parameters
    ----------
    code : str
        Isotopologue code ("636", "628", ...).
    model626 : PolyadModel
        Supplies the 626 frequencies that fix the stretch force constants.
    """
    mo, mc, _ = _masses("626")
    m1, mc2, m3 = _masses(code)
    bend = lambda a, c, b: 1 / a + 1 / b + 4 / c  # noqa: E731  (G element of the bend, equal bonds)
    g_b626, g_b = bend(mo, mc, mo), bend(m1, mc2, m3)
    # force constants of the stretches from 626's w1, w3: lambda_s = (k + k12)/mO, lambda_a = (k - k12)(1/mO + 2/mC)
    ls, la = model626.w1 ** 2, model626.w3 ** 2
    kp, km = ls * mo, la / (1 / mo + 2 / mc)
    k, k12 = (kp + km) / 2, (kp - km) / 2
    lam0, d0 = _stretch_modes(mo, mc, mo, k, k12)
    lam, d = _stretch_modes(m1, mc2, m3, k, k12)
    rho = (float(np.sqrt(lam[0] / lam0[0])), float(np.sqrt(g_b / g_b626)), float(np.sqrt(lam[1] / lam0[1])))
    return rho, {"bend": g_b / g_b626, "stretch": float(d[1] / d0[1])}


def rotational_b(code, b0_626):
    """Ground-state B of an isotopologue from the moment of inertia, with the C-O bond
    length implied by 626's B0 [cm-1] (equal bonds)."""
    mo, mc, _ = _masses("626")
    m1, mc2, m3 = _masses(code)

    def inertia(a, c, b):  # masses on the z axis at -r, 0, +r; r = 1
        m = np.array([a, c, b])
        z = np.array([-1.0, 0.0, 1.0])
        zc = (m * z).sum() / m.sum()
        return (m * (z - zc) ** 2).sum()

    return b0_626 * inertia(mo, mc, mo) / inertia(m1, mc2, m3)
