"""Line parameters at layer conditions: intensity, widths and shift at (p, T).

These are the standard temperature and pressure dependences that go with the
160-character line record (Rothman et al. 1998, JQSRT 60, 665, Appendix;
Rothman et al. 2005, JQSRT 96, 139). Line parameters keep the record's units:
wavenumber and widths in cm-1, intensity in cm-1/(molecule cm-2), half-widths
per atmosphere. Pressures enter in Pa and temperatures in K, and are converted
to atmospheres here, once.
"""

from __future__ import annotations

import functools

import numpy as np

from ..constants import (
    AVOGADRO,
    BOLTZMANN,
    REFERENCE_PRESSURE,
    REFERENCE_TEMPERATURE,
    SECOND_RADIATION_CONSTANT_CM_K,
    SPEED_OF_LIGHT,
)
from .molecules import DETAILED_MOLECULES, isotopologue_groups, molecule_name, partition_ratio

__all__ = [
    "intensity_from_einstein_a",
    "intensity_at",
    "intensity_at_temperature",
    "partition_ratio_at",
    "lorentz_halfwidth",
    "shifted_wavenumber",
    "doppler_halfwidth",
]


def intensity_at_temperature(intensity_ref, wavenumber, lower_energy, temperature, partition_ratio):
    """Line intensity at temperature T from its value at 296 K.

    Parameters
    ----------
    intensity_ref : array_like
        Intensity at 296 K [cm-1/(molecule cm-2)].
    wavenumber : array_like
        Line position [cm-1].
    lower_energy : array_like
        Lower-state energy E'' [cm-1].
    temperature : float or array_like
        Temperature [K].
    partition_ratio : float or array_like
        Q(296 K) / Q(T) for the line's isotopologue [dimensionless].

    Returns
    -------
    numpy.ndarray
        Intensity at T [cm-1/(molecule cm-2)].

    Notes
    -----
    .. math::
        S(T) = S(T_{ref}) \\frac{Q(T_{ref})}{Q(T)}
               \\frac{e^{-c_2 E''/T}}{e^{-c_2 E''/T_{ref}}}
               \\frac{1 - e^{-c_2 \\nu/T}}{1 - e^{-c_2 \\nu/T_{ref}}}

    Eq. (A11) of Rothman et al. (1998). The last factor is stimulated emission.

    References
    ----------
    Rothman, L. S. et al. (1998), JQSRT 60, 665-710, doi:10.1016/S0022-4073(98)00078-8.
    """
    c2 = SECOND_RADIATION_CONSTANT_CM_K
    t = np.asarray(temperature, dtype=float)
    nu = np.asarray(wavenumber, dtype=float)
    e = np.asarray(lower_energy, dtype=float)
    boltz = np.exp(-c2 * e * (1.0 / t - 1.0 / REFERENCE_TEMPERATURE))
    stim = -np.expm1(-c2 * nu / t) / -np.expm1(-c2 * nu / REFERENCE_TEMPERATURE)
    return np.asarray(intensity_ref, dtype=float) * partition_ratio * boltz * stim


def intensity_from_einstein_a(einstein_a, wavenumber, g_upper, lower_energy, partition, abundance,
                              temperature=REFERENCE_TEMPERATURE):
    r"""Line intensity from the line's Einstein A coefficient.

    Parameters
    ----------
    einstein_a : array_like
        Einstein A coefficient of the line [s-1].
    wavenumber : array_like
        Line position [cm-1].
    g_upper : array_like
        Statistical weight of the upper state [dimensionless].
    lower_energy : array_like
        Lower-state energy E'' [cm-1].
    partition : float
        Total internal partition function Q(T) of the isotopologue [dimensionless].
    abundance : float
        Natural abundance of the isotopologue (the line-record convention weights by it).
    temperature : float
        Temperature [K] (default 296 K, the record's reference).

    Returns
    -------
    numpy.ndarray
        Intensity [cm-1/(molecule cm-2)].

    Notes
    -----
    .. math::
        S = I_a \frac{g' A}{8 \pi c \nu^2} \frac{e^{-c_2 E''/T} (1 - e^{-c_2 \nu/T})}{Q(T)}

    with c in cm s-1. Eq. (20) of Simeckova et al. (2006) (equation number from memory;
    the relation is the textbook one between A and the integrated absorption cross-section).

    References
    ----------
    Simeckova, M., Jacquemart, D., Rothman, L. S. et al. (2006), JQSRT 98, 130-155,
    doi:10.1016/j.jqsrt.2005.07.003.
    """
    c2 = SECOND_RADIATION_CONSTANT_CM_K
    t = float(temperature)
    nu = np.asarray(wavenumber, dtype=float)
    c_cm = SPEED_OF_LIGHT * 100.0
    return (abundance * np.asarray(g_upper, float) * np.asarray(einstein_a, float) / (8.0 * np.pi * c_cm * nu * nu)
            * np.exp(-c2 * np.asarray(lower_energy, float) / t) * -np.expm1(-c2 * nu / t) / partition)


def lorentz_halfwidth(gamma_air, gamma_self, n_air, pressure, temperature, partial_pressure=0.0):
    """Pressure-broadened (Lorentz) half-width at half maximum.

    Parameters
    ----------
    gamma_air : array_like
        Air-broadened half-width at 296 K [cm-1 atm-1].
    gamma_self : array_like
        Self-broadened half-width at 296 K [cm-1 atm-1].
    n_air : array_like
        Temperature exponent of the air width [dimensionless].
    pressure : float
        Total pressure [Pa].
    temperature : float
        Temperature [K].
    partial_pressure : float, optional
        Partial pressure of the absorbing gas [Pa]; default 0.

    Returns
    -------
    numpy.ndarray
        Lorentz HWHM [cm-1].

    Notes
    -----
    .. math::
        \\gamma(p, T) = (T_{ref}/T)^{n_{air}}
                        [\\gamma_{air} (p - p_s) + \\gamma_{self} p_s]

    with pressures in atm; Eq. (A12) of Rothman et al. (1998). As there, the
    air exponent is applied to the self width too.
    """
    p_atm = pressure / REFERENCE_PRESSURE
    ps_atm = partial_pressure / REFERENCE_PRESSURE
    scale = (REFERENCE_TEMPERATURE / temperature) ** np.asarray(n_air, dtype=float)
    return scale * (np.asarray(gamma_air) * (p_atm - ps_atm) + np.asarray(gamma_self) * ps_atm)


def shifted_wavenumber(wavenumber, delta_air, pressure):
    """Line position shifted by air pressure.

    Parameters
    ----------
    wavenumber : array_like
        Vacuum line position [cm-1].
    delta_air : array_like
        Air pressure shift at 296 K [cm-1 atm-1].
    pressure : float
        Total pressure [Pa].

    Returns
    -------
    numpy.ndarray
        Shifted position nu + delta_air p [cm-1]; Eq. (A13) of Rothman et al. (1998).
    """
    return np.asarray(wavenumber, dtype=float) + np.asarray(delta_air) * (
        pressure / REFERENCE_PRESSURE
    )


def doppler_halfwidth(wavenumber, temperature, molar_mass):
    """Doppler (Gaussian) half-width at half maximum.

    Parameters
    ----------
    wavenumber : array_like
        Line position [cm-1].
    temperature : float
        Temperature [K].
    molar_mass : array_like
        Molar mass of the absorber [kg mol-1].

    Returns
    -------
    numpy.ndarray
        Doppler HWHM [cm-1].

    Notes
    -----
    .. math:: \\alpha_D = \\frac{\\nu}{c} \\sqrt{\\frac{2 k T \\ln 2}{m}}

    with m the molecular mass; Eq. (A4) of Rothman et al. (1998) and any
    spectroscopy text (e.g. Goody & Yung 1989, Atmospheric Radiation, Eq. 3.14).
    """
    m = np.asarray(molar_mass, dtype=float) / AVOGADRO
    return np.asarray(wavenumber, dtype=float) / SPEED_OF_LIGHT * np.sqrt(
        2.0 * BOLTZMANN * temperature * np.log(2.0) / m
    )


@functools.lru_cache(maxsize=4096)
def partition_ratio_at(name, local_id, temperature):
    """:func:`specforce.molecular.molecules.partition_ratio` (Q(296 K) / Q(T) of the isotopologue
    ``local_id`` of the molecule ``name`` at ``temperature`` [K]), remembered: a calculation asks
    for the same layers' temperatures once per spectral block."""
    return partition_ratio(name, local_id, temperature)


def intensity_at(columns, temperature, groups=None):
    """Intensities of lines of any molecules at a temperature.

    Parameters
    ----------
    columns : mapping
        Line columns with ``molecule``, ``isotopologue``, ``intensity`` [cm-1/(molecule
        cm-2) at 296 K], ``wavenumber`` [cm-1] and ``lower_energy`` [cm-1].
    temperature : float
        T [K].
    groups : list, optional
        The lines' isotopologues as [(molecule number, isotopologue number, rows)]
        (:meth:`specforce.molecular.lines.LineList.isotopologue_rows`), if known.

    Returns
    -------
    numpy.ndarray
        Intensity at T [cm-1/(molecule cm-2)].

    Notes
    -----
    :func:`intensity_at_temperature` with each isotopologue's partition-function
    ratio (:func:`specforce.molecular.molecules.partition_ratio`). For molecules without
    partition data the classical non-linear-rotor ratio (296/T)^1.5 is used (an
    approximation, stated here). Lines whose E'' is the placeholder -1 are scaled
    as if E'' were 0.
    """
    t = float(temperature)
    mol = columns["molecule"]
    iso = columns["isotopologue"]
    ratio = np.full(mol.size, (REFERENCE_TEMPERATURE / t) ** 1.5)
    if groups is None:
        groups = isotopologue_groups(mol, iso)
    for m, i, rows in groups:
        name = molecule_name(m)
        if name in DETAILED_MOLECULES:
            ratio[rows] = partition_ratio_at(name, i, t)
    e = np.where(columns["lower_energy"] < 0, 0.0, columns["lower_energy"])
    return intensity_at_temperature(columns["intensity"], columns["wavenumber"], e, t, ratio)
