"""Responses of a column to warming: the Planck and fixed-relative-humidity water-vapour responses,
the no-feedback warming and the emission temperature and altitude.

The Planck response is the change in OLR per kelvin of uniform warming of surface
and troposphere at fixed specific humidity (negative: warming increases OLR, so
lambda = -dOLR/dT < 0); the water-vapour response is the further change at fixed
relative humidity (positive when moistening lowers OLR). The no-feedback
warming is F / -lambda_Planck; the emission temperature is (OLR / sigma)^(1/4).
These need the whole longwave spectrum: :func:`climate_responses` refuses a range
that misses more than 2 % of the surface's blackbody emission (:func:`check_whole_spectrum`,
the one home of that rule, also used for the stratosphere-adjusted forcing and for
a sweep's comparison with the published formulas).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..constants import STEFAN_BOLTZMANN
from ..errors import SettingsError
from .instantaneous import _level_at_pressure, wmo_tropopause
from ..radiation.humidity import relative_humidity_from_vmr, vmr_from_relative_humidity
from ..radiation.longwave import Settings, compute_longwave, compute_longwave_states

__all__ = ["Responses", "planck_response", "water_vapour_response", "emission_temperature", "emission_altitude",
           "climate_responses", "blackbody_fraction", "check_whole_spectrum", "partial_spectrum",
           "WHOLE_SPECTRUM_FRACTION"]


@dataclass(frozen=True)
class Responses:
    """The responses reported next to a forcing (clear-sky, one profile).

    Attributes
    ----------
    planck_response : float
        lambda_Planck = -dOLR/dT at fixed specific humidity [W m-2 K-1] (negative).
    water_vapour_response : float
        The further OLR decrease per kelvin at fixed relative humidity [W m-2 K-1].
    no_feedback_warming : float
        F / -lambda_Planck [K].
    no_feedback_warming_from : str
        "instantaneous" or "adjusted": which tropopause forcing F is.
    emission_temperature : float
        (OLR / sigma)^(1/4) of the base state [K].
    emission_altitude : float
        Lowest altitude where the profile reaches the emission temperature [m]; NaN if none.
    """

    planck_response: float
    water_vapour_response: float
    no_feedback_warming: float
    no_feedback_warming_from: str
    emission_temperature: float
    emission_altitude: float


def blackbody_fraction(wavenumber_range, temperature):
    """Fraction of sigma T^4 emitted within a wavenumber range [dimensionless].

    Parameters
    ----------
    wavenumber_range : (float, float)
        [cm-1].
    temperature : float
        [K].
    """
    from scipy import integrate

    from ..radiation.transfer import planck

    lo, hi = wavenumber_range
    inside = np.pi * integrate.quad(lambda v: float(planck(v, temperature)), lo, hi, limit=200)[0]
    return inside / (STEFAN_BOLTZMANN * temperature**4)


#: A range is "the whole longwave spectrum" when it holds at least this fraction of the surface's
#: blackbody emission (a choice of ours: the default 10-3000 cm-1 holds over 99.5 % at 200-320 K).
WHOLE_SPECTRUM_FRACTION = 0.98


def partial_spectrum(profile, wavenumber_range):
    """Why ``wavenumber_range`` is not the whole longwave spectrum for ``profile``, or None if it is.

    The one rule for every quantity that needs the whole spectrum (responses, the
    stratosphere-adjusted forcing, a sweep's comparison with the published formulas):
    the range must hold at least :data:`WHOLE_SPECTRUM_FRACTION` of the surface's
    blackbody emission.

    Returns
    -------
    str or None
        E.g. "600-700 cm-1 holds only 8 % of the surface's blackbody emission at 294.2 K (profile 'mls')".
    """
    frac = blackbody_fraction(wavenumber_range, profile.surface_temperature)
    if frac >= WHOLE_SPECTRUM_FRACTION:
        return None
    lo, hi = wavenumber_range
    return (f"{lo:g}-{hi:g} cm-1 holds only {frac:.0%} of the surface's blackbody emission at "
            f"{profile.surface_temperature:.1f} K (profile '{profile.name}')")


def check_whole_spectrum(profile, settings,
                         needs="the responses, the no-feedback warming and the emission temperature need"):
    """Raise SettingsError if the range misses more than 2 % of the surface's blackbody emission.

    Parameters
    ----------
    profile : Profile
    settings : Settings
    needs : str
        What needs the whole spectrum, as the start of the message (ending in "need(s)").
    """
    why = partial_spectrum(profile, settings.wavenumber_range)
    if why is not None:
        raise SettingsError(
            f"{needs} the whole longwave spectrum, but {why}; use the default range 10-3000 cm-1 (or one "
            f"holding at least {WHOLE_SPECTRUM_FRACTION:.0%})")


def _warmed_fixed_q(profile, warming, tropopause):
    """The profile with surface and troposphere warmed by ``warming`` [K], specific humidity kept."""
    trop = wmo_tropopause(profile) if tropopause is None else _level_at_pressure(profile, tropopause)
    t = profile.temperature.copy()
    t[: trop + 1] += warming
    warm = profile.copy(temperature=t, surface_temperature=profile.surface_temperature + warming,
                        check_saturation=False)
    return warm, trop


def planck_response(profile, spectroscopy, settings=Settings(), warming=1.0, tropopause=None, base=None):
    """OLR change per kelvin of uniform warming of surface and troposphere, fixed specific humidity.

    Parameters
    ----------
    profile, spectroscopy, settings : as for :func:`specforce.forcing.instantaneous.instantaneous_forcing`
    warming : float
        Warming applied [K].
    tropopause : float, optional
        Tropopause pressure [Pa]; default the WMO tropopause.
    base : LongwaveResult, optional
        The profile's own longwave result with these settings, if already computed.

    Returns
    -------
    (float, LongwaveResult, LongwaveResult)
        lambda_Planck = -dOLR/dT [W m-2 K-1] (negative: warming increases OLR), and the
        base and warmed calculations.
    """
    if base is None:
        base = compute_longwave(profile, spectroscopy, settings)
    warm, _ = _warmed_fixed_q(profile, warming, tropopause)
    res = compute_longwave(warm, spectroscopy, settings, grid=base.grid)
    return -(res.olr - base.olr) / warming, base, res


def water_vapour_response(profile, spectroscopy, settings=Settings(), warming=1.0, tropopause=None,
                          warmed_fixed_q=None):
    """OLR change per kelvin of tropospheric warming from the water-vapour increase at fixed RH.

    The difference between warming at fixed relative humidity and at fixed
    specific humidity [W m-2 K-1] (positive: more water vapour lowers OLR).
    ``warmed_fixed_q`` may pass the fixed-specific-humidity result already computed
    by :func:`planck_response` with the same warming.
    """
    fixed_q, trop = _warmed_fixed_q(profile, warming, tropopause)
    rh = relative_humidity_from_vmr(profile.vmr["H2O"], profile.pressure, profile.temperature)
    h2o = profile.vmr["H2O"].copy()
    h2o[: trop + 1] = vmr_from_relative_humidity(rh, profile.pressure, fixed_q.temperature)[: trop + 1]
    fixed_rh = fixed_q.with_vmr("H2O", np.minimum(h2o, 0.99))
    if warmed_fixed_q is not None:
        a = warmed_fixed_q
        b = compute_longwave(fixed_rh, spectroscopy, settings, grid=warmed_fixed_q.grid)
    else:
        a, b = compute_longwave_states([fixed_q, fixed_rh], spectroscopy, settings)
    return -(b.olr - a.olr) / warming


def emission_temperature(olr):
    """Emission temperature (OLR / sigma)^(1/4) [K] of an OLR [W m-2]."""
    return (olr / STEFAN_BOLTZMANN) ** 0.25


def emission_altitude(profile, temperature):
    """Lowest altitude above the surface where the profile's temperature falls to ``temperature``.

    Parameters
    ----------
    profile : Profile
    temperature : float
        Temperature to find [K], e.g. the emission temperature.

    Returns
    -------
    float
        Altitude [m], interpolated linearly between levels; NaN if no level is
        that cold, or the surface level already is.

    Examples
    --------
    >>> from specforce.io.profiles import load_profile
    >>> round(emission_altitude(load_profile("usstd"), 255.0) / 1000, 1)
    5.1
    """
    t, z = profile.temperature, profile.altitude
    below = np.flatnonzero(t <= temperature)
    if below.size == 0 or below[0] == 0:
        return float("nan")
    k = below[0]
    return float(z[k - 1] + (t[k - 1] - temperature) / (t[k - 1] - t[k]) * (z[k] - z[k - 1]))


def climate_responses(profile, forcing, spectroscopy, settings=Settings(), tropopause=None, base=None,
                      forcing_kind="instantaneous"):
    """The responses reported next to a forcing.

    Parameters
    ----------
    profile : Profile
        Base profile.
    forcing : float
        Forcing to convert into a no-feedback warming [W m-2] (the adjusted
        tropopause forcing where computed, else the instantaneous one).
    spectroscopy, settings : as for :func:`specforce.forcing.instantaneous.instantaneous_forcing`
    tropopause : float, optional
        Tropopause pressure [Pa]; default the WMO tropopause.
    base : LongwaveResult, optional
        The base profile's longwave result with these settings, if already computed.
    forcing_kind : str
        Which forcing ``forcing`` is ("instantaneous" or "adjusted"), for the record.

    Returns
    -------
    Responses
    """
    check_whole_spectrum(profile, settings)
    lam, base, warm = planck_response(profile, spectroscopy, settings, tropopause=tropopause, base=base)
    wv = water_vapour_response(profile, spectroscopy, settings, tropopause=tropopause, warmed_fixed_q=warm)
    t_e = emission_temperature(base.olr)
    return Responses(planck_response=lam, water_vapour_response=wv, no_feedback_warming=forcing / -lam,
                     no_feedback_warming_from=forcing_kind, emission_temperature=t_e,
                     emission_altitude=emission_altitude(profile, t_e))
