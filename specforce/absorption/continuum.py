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
also significant for a moist atmosphere. Without it OLR comes out too high, the
surface downward flux too low and the CO2 surface forcing too high. Users who have
a published table can bring it (:class:`ContinuumTable`, read by
:func:`specforce.io.continuum_tables.read_continuum_table`, format in the README's
'Your own water continuum'):
it replaces or adds to the window continuum, and the line treatment it assumes
(cut-off, pedestal subtraction) is then applied to the water lines.

References
----------
Roberts, R. E., Selby, J. E. A. and Biberman, L. M. (1976), Infrared continuum
absorption by atmospheric water vapor in the 8-12 um window, Appl. Opt. 15(9),
2085-2090, doi:10.1364/AO.15.002085.
"""

from __future__ import annotations

import numpy as np

from dataclasses import dataclass, field

from ..constants import REFERENCE_TEMPERATURE, STANDARD_ATMOSPHERE

__all__ = [
    "ContinuumTable",
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
    if extend:
        c_self = roberts_self_coefficient(nu, temperature)
        return _broadened(c_self, ROBERTS_FOREIGN_RATIO * c_self, pressure, h2o_vmr, h2o_column)
    lo, hi = ROBERTS_RANGE
    inside = (nu >= lo) & (nu <= hi)
    tau = np.zeros(nu.shape)
    if inside.any():  # evaluated inside the window only (a spectral block often lies outside it)
        c_self = roberts_self_coefficient(nu[inside], temperature)
        tau[inside] = _broadened(c_self, ROBERTS_FOREIGN_RATIO * c_self, pressure, h2o_vmr, h2o_column)
    return tau


def _broadened(c_self, c_foreign, pressure, h2o_vmr, h2o_column):
    """tau = [C_s e + C_f (P - e)] u, with e and P in atm (Roberts et al. 1976, Eq. 4)."""
    e_atm = h2o_vmr * pressure / STANDARD_ATMOSPHERE
    p_atm = pressure / STANDARD_ATMOSPHERE
    return (c_self * e_atm + c_foreign * (p_atm - e_atm)) * h2o_column


@dataclass(frozen=True, eq=False)
class ContinuumTable:
    """A water-vapour continuum given as a table (from the user; format in
    :mod:`specforce.io.continuum_tables`).

    Attributes
    ----------
    wavenumber : numpy.ndarray
        Strictly increasing [cm-1].
    self_coefficient, foreign_coefficient : numpy.ndarray
        C_s and C_f at the reference temperature [cm2 molecule-1 atm-1].
    self_exponent, foreign_exponent : numpy.ndarray
        n in C(T) = C(T_ref) (T_ref / T) ** n [dimensionless].
    reference_temperature : float
        T_ref [K].
    line_cutoff : float
        Line cut-off the table assumes [cm-1]; applied to the water lines.
    pedestal_subtracted : bool
        The table assumes water lines with their value at the cut-off subtracted.
    replaces_window : bool
        The table replaces the built-in window continuum (else it adds to it).
    provenance : dict
        Path, sha256, name and source.
    """

    wavenumber: np.ndarray
    self_coefficient: np.ndarray
    self_exponent: np.ndarray
    foreign_coefficient: np.ndarray
    foreign_exponent: np.ndarray
    reference_temperature: float = REFERENCE_TEMPERATURE
    line_cutoff: float = 25.0
    pedestal_subtracted: bool = False
    replaces_window: bool = True
    provenance: dict = field(default_factory=dict)

    @property
    def coverage(self):
        """(first, last) tabulated wavenumber [cm-1]; outside it the table contributes nothing."""
        return float(self.wavenumber[0]), float(self.wavenumber[-1])

    def coefficients(self, wavenumber, temperature):
        """C_s and C_f at ``wavenumber`` [cm-1] and ``temperature`` [K], linear in wavenumber
        between rows and zero outside the table [cm2 molecule-1 atm-1]."""
        nu = np.asarray(wavenumber, dtype=float)
        ratio = self.reference_temperature / float(temperature)
        out = []
        for c, n in ((self.self_coefficient, self.self_exponent), (self.foreign_coefficient, self.foreign_exponent)):
            ci = np.interp(nu, self.wavenumber, c, left=0.0, right=0.0)
            ni = np.interp(nu, self.wavenumber, n)
            out.append(ci * ratio ** ni)
        return out[0], out[1]

    def optical_depth(self, wavenumber, pressure, temperature, h2o_vmr, h2o_column):
        """Continuum optical depth of a layer from the table [dimensionless]; the arguments and
        their units are those of :func:`continuum_optical_depth`.

        Notes
        -----
        tau = [C_s e + C_f (P - e)] u, e and P in atm (the convention of Roberts et al.
        1976, Eq. 4, that :func:`continuum_optical_depth` uses).
        """
        return _broadened(*self.coefficients(wavenumber, temperature), pressure, h2o_vmr, h2o_column)

    def record(self):
        """What the provenance records of the table (JSON-ready)."""
        lo, hi = self.coverage
        return {**self.provenance, "coverage_cm1": [lo, hi], "rows": int(self.wavenumber.size),
                "reference_temperature_K": self.reference_temperature, "line_cutoff_cm1": self.line_cutoff,
                "line_pedestal": "subtracted" if self.pedestal_subtracted else "kept",
                "window_continuum": "replaced" if self.replaces_window else "kept, table added"}
