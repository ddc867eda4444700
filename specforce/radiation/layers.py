"""Layers of a profile: homogeneous layers with column amounts for radiative transfer, and
profiles refined (levels inserted) or thinned (levels dropped) before they are layered.

Takes a :class:`~specforce.radiation.atmosphere.Profile`; gives :class:`Layers` (and Profiles).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..constants import AVOGADRO, DRY_AIR_MOLAR_MASS, STANDARD_GRAVITY, WATER_MOLAR_MASS
from ..errors import SettingsError
from .atmosphere import Profile

__all__ = ["Layers", "layers", "refine", "thin"]


@dataclass
class Layers:
    """Homogeneous layers between the levels of a profile (layer 0 at the bottom).

    Attributes
    ----------
    pressure : numpy.ndarray
        Representative (Curtis-Godson, mass-weighted) pressure [Pa].
    temperature : numpy.ndarray
        Representative (mass-weighted) temperature [K].
    pressure_bottom, pressure_top : numpy.ndarray
        Bounding level pressures [Pa].
    column : dict of str to numpy.ndarray
        Column amount of each gas [molecule cm-2].
    air_column : numpy.ndarray
        Column amount of (moist) air [molecule cm-2].
    vmr : dict of str to numpy.ndarray
        Mass-weighted mean mixing ratio of each gas [mol mol-1].
    """

    pressure: np.ndarray
    temperature: np.ndarray
    pressure_bottom: np.ndarray
    pressure_top: np.ndarray
    column: dict
    air_column: np.ndarray
    vmr: dict

    @property
    def nlayers(self):
        """Number of layers."""
        return self.pressure.size


def layers(profile, gravity=STANDARD_GRAVITY):
    """Split a profile into homogeneous layers with column amounts.

    Parameters
    ----------
    profile : Profile
        Levels from the surface upward.
    gravity : float
        Gravitational acceleration [m s-2]; default standard gravity g0 = 9.80665
        (U.S. Standard Atmosphere 1976).

    Returns
    -------
    Layers

    Notes
    -----
    Hydrostatic balance gives the moist-air column of a layer as
    N = (p_bottom - p_top) N_A / (g M), with M the molar mass of moist air,
    M = (1 - x_w) M_d + x_w M_w (M_d = 28.9644 g/mol from the U.S. Standard
    Atmosphere 1976). Temperature and mixing ratios vary linearly in pressure
    within a layer, so their mass-weighted means are the level averages; this
    is the Curtis-Godson approximation (Curtis 1952, QJRMS 78, 165; Godson
    1953, QJRMS 79, 367) for a uniformly mixed absorber, and specforce uses one
    representative (p, T) per layer for all gases.
    """
    p = profile.pressure
    pb, pt = p[:-1], p[1:]
    mean = lambda a: 0.5 * (a[:-1] + a[1:])  # noqa: E731
    vmr = {g: mean(v) for g, v in profile.vmr.items()}
    xw = vmr.get("H2O", np.zeros(pb.size))
    molar = (1.0 - xw) * DRY_AIR_MOLAR_MASS + xw * WATER_MOLAR_MASS
    air = (pb - pt) * AVOGADRO / (gravity * molar) * 1e-4  # m-2 -> cm-2
    return Layers(
        pressure=mean(p), temperature=mean(profile.temperature), pressure_bottom=pb, pressure_top=pt,
        column={g: v * air for g, v in vmr.items()}, air_column=air, vmr=vmr,
    )


def refine(profile, factor):
    """Return a profile with ``factor`` times as many layers, interpolated linearly in log-pressure.

    For convergence checks: results should change little as ``factor`` grows.
    """
    factor = int(factor)
    if factor < 1:
        raise SettingsError("refine: factor must be a positive integer")
    if factor == 1:
        return profile.copy()
    lp = np.log(profile.pressure)
    s = np.arange(profile.nlevels)
    s_new = np.linspace(0, profile.nlevels - 1, (profile.nlevels - 1) * factor + 1)
    interp = lambda a: np.interp(s_new, s, a)  # noqa: E731
    lp_new = interp(lp)
    return Profile(
        pressure=np.exp(lp_new),
        temperature=np.interp(lp_new[::-1], lp[::-1], profile.temperature[::-1])[::-1],
        altitude=np.interp(lp_new[::-1], lp[::-1], profile.altitude[::-1])[::-1],
        vmr={g: np.interp(lp_new[::-1], lp[::-1], v[::-1])[::-1] for g, v in profile.vmr.items()},
        surface_temperature=profile.surface_temperature, surface_emissivity=profile.surface_emissivity,
        name=f"{profile.name} (refined x{factor})", source=profile.source, check_saturation=False,
        check_plausibility=False, accept_unusual=profile.accept_unusual, waived_checks=profile.waived_checks,
    )


def thin(profile, levels):
    """Return a profile with ``levels`` levels, evenly spaced in log-pressure from the surface to the top.

    For profiles with more layers than a calculation allows (``MAX_LAYERS``), e.g. a
    high-resolution radiosonde. Temperature, altitude and mixing ratios are interpolated
    linearly in log-pressure, as :func:`refine` does; the surface and the top level are kept.
    """
    levels = int(levels)
    if not 2 <= levels:
        raise SettingsError(f"thin: levels must be at least 2, got {levels}")
    if levels >= profile.nlevels:
        return profile.copy()
    lp = np.log(profile.pressure)
    lp_new = np.linspace(lp[0], lp[-1], levels)
    interp = lambda a: np.interp(lp_new[::-1], lp[::-1], a[::-1])[::-1]  # noqa: E731
    p_new = np.exp(lp_new)
    p_new[0], p_new[-1] = profile.pressure[0], profile.pressure[-1]
    return Profile(
        pressure=p_new, temperature=interp(profile.temperature), altitude=interp(profile.altitude),
        vmr={g: interp(v) for g, v in profile.vmr.items()},
        surface_temperature=profile.surface_temperature, surface_emissivity=profile.surface_emissivity,
        name=f"{profile.name} (thinned to {levels} levels)", source=profile.source, check_saturation=False,
        check_plausibility=False, accept_unusual=profile.accept_unusual, waived_checks=profile.waived_checks,
    )
