"""Water-vapour continuum absorption.

What is here
------------
The self- and foreign-broadened water-vapour continuum of the 8-12 um window
from Roberts, Selby & Biberman (1976), with its temperature dependence. The
paper's fit covers the atmospheric window, 800-1250 cm-1; outside it the
continuum is zero unless the caller asks to extend the formula
(``extend=True``), which is a crude but common practice for sensitivity
studies and is labelled as such in the provenance.

What is missing
---------------
A published continuum for the far infrared (the rotational band, below about
600 cm-1) and for the nu2 band region (1300-2000 cm-1), where the continuum is
also significant for a moist atmosphere. Until a sourced one is added, results
with the continuum switched on include it only in the window.

References
----------
Roberts, R. E., Selby, J. E. A. and Biberman, L. M. (1976), Infrared continuum
absorption by atmospheric water vapor in the 8-12 um window, Appl. Opt. 15(9),
2085-2090, doi:10.1364/AO.15.002085.
"""

from __future__ import annotations

import numpy as np

from .constants import REFERENCE_TEMPERATURE, STANDARD_ATMOSPHERE

__all__ = [
    "ROBERTS_RANGE",
    "roberts_self_coefficient",
    "continuum_optical_depth",
]

#: Wavenumber range of the Roberts et al. (1976) fit [cm-1] (the 8-12 um window).
ROBERTS_RANGE = (800.0, 1250.0)
_A, _B, _BETA, _T0 = 1.25e-22, 1.67e-19, 7.87e-3, 1800.0
#: Foreign-to-self broadening efficiency of Roberts et al. (1976) (from memory, medium confidence).
ROBERTS_FOREIGN_RATIO = 0.002


def roberts_self_coefficient(wavenumber, temperature):
    """Self-continuum coefficient of water vapour [cm2 molecule-1 atm-1].

    Parameters
    ----------
    wavenumber : array_like
        nu [cm-1].
    temperature : float or array_like
        T [K].

    Returns
    -------
    numpy.ndarray
        C_s(nu, T) [cm2 molecule-1 atm-1].

    Notes
    -----
    .. math:: C_s(\\nu, T) = [a + b e^{-\\beta \\nu}] \\, e^{T_0 (1/T - 1/296)}

    with a = 1.25e-22, b = 1.67e-19 cm2 molecule-1 atm-1, beta = 7.87e-3 cm and
    T0 = 1800 K (Roberts et al. 1976, Eqs. 5-6).
    """
    nu = np.asarray(wavenumber, dtype=float)
    return (_A + _B * np.exp(-_BETA * nu)) * np.exp(_T0 * (1.0 / np.asarray(temperature) - 1.0 / REFERENCE_TEMPERATURE))


def continuum_optical_depth(wavenumber, pressure, temperature, h2o_vmr, h2o_column, *, extend=False):
    """Continuum optical depth of water vapour in a layer.

    Parameters
    ----------
    wavenumber : numpy.ndarray
        Grid [cm-1].
    pressure : float
        Layer pressure [Pa].
    temperature : float
        Layer temperature [K].
    h2o_vmr : float
        Water-vapour volume mixing ratio [mol mol-1].
    h2o_column : float
        Water-vapour column amount of the layer [molecule cm-2].
    extend : bool
        Apply the window formula outside its range of validity too.

    Returns
    -------
    numpy.ndarray
        Optical depth [dimensionless] on the grid.

    Notes
    -----
    tau = C_s(nu, T) [e + gamma (P - e)] u, with e and P in atm, gamma the
    foreign-to-self ratio and u the water column (Roberts et al. 1976, Eq. 4).
    """
    nu = np.asarray(wavenumber, dtype=float)
    e_atm = h2o_vmr * pressure / STANDARD_ATMOSPHERE
    p_atm = pressure / STANDARD_ATMOSPHERE
    tau = roberts_self_coefficient(nu, temperature) * (e_atm + ROBERTS_FOREIGN_RATIO * (p_atm - e_atm)) * h2o_column
    if not extend:
        lo, hi = ROBERTS_RANGE
        tau = np.where((nu >= lo) & (nu <= hi), tau, 0.0)
    return tau
