"""Stratosphere-adjusted forcing by fixed dynamical heating.

Temperatures above the tropopause (up to 1 hPa by default) are changed until
the longwave heating rate at each of those levels is back to its base value, the
shortwave heating being held unchanged (it is not computed) and the troposphere
and surface fixed: the method of Fels, Mahlman, Schwarzkopf & Sinclair (1980),
J. Atmos. Sci. 37, 2265-2297.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from ..radiation.layers import refine
from ..errors import SettingsError, SpecforceError
from ..radiation.longwave import Settings, compute_longwave

__all__ = ["AdjustedForcing", "AdjustmentError", "adjusted_forcing"]


class AdjustmentError(SpecforceError, RuntimeError):
    """The stratospheric adjustment did not converge."""


@dataclass(frozen=True)
class AdjustedForcing:
    """The stratosphere-adjusted forcing of a change.

    Attributes
    ----------
    forcing_tropopause : float
        Adjusted forcing at the tropopause [W m-2].
    forcing : numpy.ndarray
        Adjusted forcing (change in net downward flux) at every level, surface first [W m-2].
    temperature_change : numpy.ndarray
        Temperature change of the adjustment at every level [K] (zero at and below the
        tropopause and above ``top_pressure``).
    iterations : int
        Newton steps taken.
    tolerance : float
        Largest heating-rate mismatch allowed [K day-1].
    top_pressure : float
        Highest adjusted level [Pa].
    residual_history : tuple of float
        Largest mismatch after each evaluation [K day-1].
    perturbed : LongwaveResult
        The adjusted perturbed state.
    shortwave : str
        How shortwave heating is treated.
    """

    forcing_tropopause: float
    forcing: np.ndarray
    temperature_change: np.ndarray
    iterations: int
    tolerance: float
    top_pressure: float
    residual_history: tuple
    perturbed: object = field(repr=False)
    shortwave: str = "shortwave heating held unchanged (not computed)"


def adjusted_forcing(result, perturbed, spectroscopy, settings=Settings(), tolerance=0.02, max_iterations=60,
                     top_pressure=100.0, damping=0.35, log=None):
    """Stratosphere-adjusted forcing by fixed dynamical heating (Fels et al. 1980).

    Temperatures at the levels between the tropopause and ``top_pressure`` are
    adjusted until the longwave heating rate of every layer between them equals
    its base value within ``tolerance`` [K/day]. The shortwave heating is
    assumed unchanged. Levels above ``top_pressure`` keep their temperature:
    there the local-thermodynamic-equilibrium radiative transfer of specforce
    does not hold for CO2 (above about 70 km) and fixed dynamical heating is not
    meaningful. Each step is a damped Newton step with a diagonal Jacobian
    (estimated once from a 1 K warming of the adjusted levels, floored at -0.02
    K/day per K), smoothed with a 1-2-1 filter so that the level-to-level
    (2 dz) temperature mode, to which layer heating rates are nearly blind,
    cannot grow; steps are limited to 10 K.

    Parameters
    ----------
    result : ForcingResult
        The instantaneous result (gives the base heating rates and tropopause).
    perturbed : Profile
        The perturbed profile before adjustment.
    spectroscopy, settings : as for :func:`specforce.forcing.instantaneous.instantaneous_forcing`
    tolerance : float
        Largest allowed heating-rate mismatch [K day-1].
    max_iterations : int
        Iterations before :class:`AdjustmentError` is raised.
    top_pressure : float
        Highest (lowest-pressure) adjusted level [Pa]; default 1 hPa.
    damping : float
        Fraction of the Newton step taken. 0.35 was chosen by measurement: with
        0.7 the 2xCO2 adjustment of the mid-latitude summer profile diverged after
        three iterations; with 0.35 the largest mismatch falls by about a quarter
        per iteration (1.8 K/day to 0.03 K/day in 12 iterations). Each iteration
        costs one longwave calculation.
    log : callable, optional
        Called with (iteration, largest mismatch [K/day], its level pressure [Pa]) after each evaluation.

    Returns
    -------
    AdjustedForcing
    """
    if settings.refine > 1:  # work on the refined levels, as the instantaneous result does
        perturbed = refine(perturbed, settings.refine)
        settings = replace(settings, refine=1, resolve_tau=settings.resolve_tau / settings.refine)
    trop = result.tropopause_level
    levels = np.flatnonzero((np.arange(perturbed.nlevels) > trop) & (perturbed.pressure >= top_pressure))
    if levels.size == 0:
        raise SettingsError(f"adjusted_forcing: no levels between the tropopause "
                            f"({perturbed.pressure[trop] / 100:g} hPa) and top_pressure ({top_pressure / 100:g} hPa)")
    layers_adj = levels - 1  # the layer below each adjusted level
    target = result.base.heating_rate[layers_adj]

    def run(t_adj):
        t = perturbed.temperature.copy()
        t[levels] = t_adj
        prof = perturbed.copy(temperature=t, check_saturation=False)
        return prof, compute_longwave(prof, spectroscopy, settings, keep_levels=(trop,), grid=result.base.grid)

    t0 = perturbed.temperature[levels].copy()
    prof, res = run(t0)
    _, warm = run(t0 + 1.0)
    dq = np.minimum(warm.heating_rate[layers_adj] - res.heating_rate[layers_adj], -0.02)
    t_cur = t0
    history = []
    for it in range(1, max_iterations + 1):
        mismatch = res.heating_rate[layers_adj] - target
        history.append(float(np.max(np.abs(mismatch))))
        if log is not None:
            log(it, history[-1], float(perturbed.pressure[levels[int(np.argmax(np.abs(mismatch)))]]))
        if history[-1] < tolerance:
            forcing = (res.flux_down - res.flux_up) - (result.base.flux_down - result.base.flux_up)
            return AdjustedForcing(forcing_tropopause=float(forcing[trop]), forcing=forcing,
                                   temperature_change=prof.temperature - perturbed.temperature, iterations=it - 1,
                                   tolerance=tolerance, top_pressure=top_pressure, residual_history=tuple(history),
                                   perturbed=res)
        step = _smooth121(-damping * mismatch / dq)
        t_cur = t_cur + np.clip(step, -10.0, 10.0)
        prof, res = run(t_cur)
    worst = int(np.argmax(np.abs(res.heating_rate[layers_adj] - target)))
    raise AdjustmentError(
        f"stratospheric adjustment did not converge in {max_iterations} iterations: the heating rate at "
        f"{perturbed.pressure[levels[worst]] / 100:.3g} hPa is still "
        f"{abs(res.heating_rate[layers_adj][worst] - target[worst]):.3g} K/day from its base value "
        f"(tolerance {tolerance} K/day); try a larger tolerance, a higher top_pressure or finer layers"
    )


def _smooth121(x):
    """1-2-1 smoothing with the end values weighted 3-1 (keeps a uniform step unchanged)."""
    if x.size < 3:
        return x
    y = np.empty_like(x)
    y[1:-1] = 0.25 * x[:-2] + 0.5 * x[1:-1] + 0.25 * x[2:]
    y[0] = 0.75 * x[0] + 0.25 * x[1]
    y[-1] = 0.75 * x[-1] + 0.25 * x[-2]
    return y
