"""Physical bounds a computed column must meet: optical depths finite and non-negative, and every
flux between zero and the blackbody emission of the warmest level over the range computed."""

from __future__ import annotations

import numpy as np

from ..errors import InternalError
from ._depth_check import first_invalid
from .transfer import planck

__all__ = ["PLANCK_BOUND_TOLERANCE", "planck_bound", "check_planck_bound"]

#: Relative allowance of :func:`check_planck_bound` for quadrature error (spectral trapezoid and
#: angular nodes; both are far below it at the grids specforce uses).
PLANCK_BOUND_TOLERANCE = 1e-3


def planck_bound(temperature, wavenumber_range):
    """The largest flux any level can carry: pi times the integral of B(T) over a range [W m-2].

    Parameters
    ----------
    temperature : float
        The warmest temperature of the column (air or surface) [K].
    wavenumber_range : (float, float)
        [cm-1].
    """
    from scipy import integrate

    lo, hi = (float(x) for x in wavenumber_range)
    return float(np.pi * integrate.quad(lambda v: float(planck(v, temperature)), lo, hi, limit=400,
                                        epsabs=0.0, epsrel=1e-10)[0])


def _check_optical_depth(tau, wavenumber, profile):
    """Raise InternalError where the pipeline made an optical depth that is negative or not finite."""
    layer, point = first_invalid(tau, 0, tau.shape[1])
    if layer >= 0:
        bad = ~np.isfinite(tau) | (tau < 0)
        raise InternalError(
            f"internal error: profile '{profile.name}': optical depth {tau[layer, point]:.6g} in layer {layer} at "
            f"{wavenumber[point]:.4f} cm-1 ({int(bad.sum())} value(s) negative or not finite); the line data or the "
            f"line sum are corrupt (e.g. a negative line intensity); no result is given. Please report this with "
            f"the command that produced it")


def check_planck_bound(profile, wavenumber_range, flux_up, flux_down):
    """Raise InternalError if any flux is not finite, negative, or above the Planck bound.

    In local thermodynamic equilibrium no upward or downward flux (OLR included) can
    exceed the blackbody emission of the warmest level or the surface over the range
    computed, nor fall below zero: a flux that does is a bug or corrupt optical
    properties (e.g. a negative optical depth), never a result.

    Parameters
    ----------
    profile : Profile
        The column computed.
    wavenumber_range : (float, float)
        The range the fluxes cover [cm-1].
    flux_up, flux_down : numpy.ndarray
        Broadband fluxes at every level, surface first [W m-2].
    """
    t_max = max(float(np.max(profile.temperature)), float(profile.surface_temperature))
    bound = planck_bound(t_max, wavenumber_range)
    allowed = bound * (1.0 + PLANCK_BOUND_TOLERANCE) + 1e-9
    lo, hi = wavenumber_range
    for name, flux in (("upward", flux_up), ("downward", flux_down)):
        bad = np.flatnonzero(~np.isfinite(flux) | (flux > allowed) | (flux < -1e-9 - PLANCK_BOUND_TOLERANCE * bound))
        if bad.size:
            k = int(bad[0])
            where = "the top of the atmosphere (OLR)" if name == "upward" and k == flux.size - 1 else f"level {k}"
            raise InternalError(
                f"internal error: profile '{profile.name}': the {name} flux at {where} is {flux[k]:.6g} W m-2, "
                f"outside 0..{bound:.6g} W m-2, the blackbody emission over {lo:g}-{hi:g} cm-1 at the warmest "
                f"temperature of the column ({t_max:.2f} K); {bad.size} level(s) affected. The optical properties "
                f"are impossible (e.g. a negative optical depth or a corrupt line intensity); no result is given. "
                f"Please report this with the command that produced it")
