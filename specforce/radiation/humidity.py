"""Water vapour in air: saturation, relative and specific humidity, dew point.

Amounts follow specforce's conventions: volume mixing ratio [mol mol-1] of water
in moist air, pressures [Pa], temperatures [K], relative humidity as a fraction.
"""

from __future__ import annotations

import numpy as np

from ..constants import DRY_AIR_MOLAR_MASS, WATER_MOLAR_MASS
from ..errors import SettingsError

__all__ = [
    "saturation_vapour_pressure",
    "relative_humidity_from_vmr",
    "vmr_from_relative_humidity",
    "specific_humidity_from_vmr",
    "vmr_from_specific_humidity",
    "dewpoint_from_vmr",
    "manabe_wetherald_relative_humidity",
]


def saturation_vapour_pressure(temperature, phase="liquid"):
    """Saturation vapour pressure of water [Pa].

    Parameters
    ----------
    temperature : array_like
        T [K], 123-332 K for liquid and 110-273.16 K for ice per the source.
    phase : {"liquid", "ice", "auto"}
        Over liquid water, over ice, or ice below 273.16 K and liquid above.

    Notes
    -----
    Murphy & Koop (2005), QJRMS 131, 1539-1565, Eq. (10) for liquid:

    .. math:: \\ln e_w = 54.842763 - 6763.22/T - 4.210 \\ln T + 0.000367 T
              + \\tanh[0.0415 (T - 218.8)] (53.878 - 1331.22/T - 9.44523 \\ln T + 0.014025 T)

    and Eq. (7) for ice: ln e_i = 9.550426 - 5723.265/T + 3.53068 ln T - 0.00728332 T.
    Coefficients from memory (high confidence); the tests check the triple point.
    """
    t = np.asarray(temperature, dtype=float)
    lw = (
        54.842763 - 6763.22 / t - 4.210 * np.log(t) + 0.000367 * t
        + np.tanh(0.0415 * (t - 218.8)) * (53.878 - 1331.22 / t - 9.44523 * np.log(t) + 0.014025 * t)
    )
    li = 9.550426 - 5723.265 / t + 3.53068 * np.log(t) - 0.00728332 * t
    if phase == "liquid":
        return np.exp(lw)
    if phase == "ice":
        return np.exp(li)
    if phase == "auto":
        return np.exp(np.where(t < 273.16, li, lw))
    raise SettingsError(f"phase must be 'liquid', 'ice' or 'auto', got {phase!r}")


def relative_humidity_from_vmr(vmr, pressure, temperature, phase="liquid"):
    """Relative humidity e / e_s [fraction] from a water-vapour volume mixing ratio."""
    return np.asarray(vmr) * np.asarray(pressure) / saturation_vapour_pressure(temperature, phase)


def vmr_from_relative_humidity(rh, pressure, temperature, phase="liquid"):
    """Water-vapour volume mixing ratio [mol mol-1] for relative humidity ``rh`` [fraction].

    x = rh e_s(T) / p (vapour pressure over total pressure).
    """
    return np.asarray(rh) * saturation_vapour_pressure(temperature, phase) / np.asarray(pressure)


def specific_humidity_from_vmr(vmr):
    """Specific humidity q [kg kg-1] from the volume mixing ratio x of water in moist air.

    q = x M_w / (x M_w + (1 - x) M_d).
    """
    x = np.asarray(vmr, dtype=float)
    return x * WATER_MOLAR_MASS / (x * WATER_MOLAR_MASS + (1 - x) * DRY_AIR_MOLAR_MASS)


def vmr_from_specific_humidity(q):
    """Volume mixing ratio [mol mol-1] from specific humidity q [kg kg-1] (inverse of the above)."""
    q = np.asarray(q, dtype=float)
    return q / WATER_MOLAR_MASS / (q / WATER_MOLAR_MASS + (1 - q) / DRY_AIR_MOLAR_MASS)


def dewpoint_from_vmr(vmr, pressure):
    """Dew point [K]: the temperature at which e_s (liquid) equals the vapour pressure x p."""
    from scipy.optimize import brentq

    e = np.atleast_1d(np.asarray(vmr) * np.asarray(pressure)).astype(float)
    out = np.array([brentq(lambda t, ei=ei: saturation_vapour_pressure(t) - ei, 150.0, 380.0) for ei in e])
    return out if np.ndim(vmr) or np.ndim(pressure) else float(out[0])


def manabe_wetherald_relative_humidity(pressure, surface_pressure, rh_surface=0.77):
    """Relative-humidity profile of Manabe & Wetherald (1967) [fraction].

    .. math:: RH = RH_* \\frac{Q - 0.02}{1 - 0.02}, \\quad Q = p / p_s

    Manabe & Wetherald (1967), JAS 24, 241, Eq. (2), with RH* = 0.77; set to 0
    where Q < 0.02 (the caller adds a stratospheric minimum).
    """
    q = np.asarray(pressure, dtype=float) / surface_pressure
    return np.maximum(rh_surface * (q - 0.02) / (1 - 0.02), 0.0)
