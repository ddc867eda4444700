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

from ..radiation.depthstore import DepthStore
from ..radiation.layers import refine
from ..errors import SettingsError, SpecforceError
from ..radiation.longwave import Settings, compute_longwave
from ..radiation.transfer import heating_rate, planck_temperature_derivative, source_fluxes

__all__ = ["AdjustedForcing", "AdjustmentError", "adjusted_forcing", "planck_jacobian"]

#: About how many spectral points the Planck Jacobian of the adjustment samples.
JACOBIAN_POINTS = 10000


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
                     top_pressure=100.0, damping=None, log=None, jacobian=None):
    """Stratosphere-adjusted forcing by fixed dynamical heating (Fels et al. 1980).

    Temperatures at the levels between the tropopause and ``top_pressure`` are
    adjusted until the longwave heating rate of every layer between them equals
    its base value within ``tolerance`` [K/day]. The shortwave heating is
    assumed unchanged. Levels above ``top_pressure`` keep their temperature:
    there the local-thermodynamic-equilibrium radiative transfer of specforce
    does not hold for CO2 (above about 70 km) and fixed dynamical heating is not
    meaningful.

    The steps are Newton steps, limited to 10 K. On the graded line-by-line path:

    * the Jacobian is the full matrix of heating-rate responses to each adjusted
      level's temperature through its Planck source, with the optical depths held
      (:func:`planck_jacobian`, on a sample of about ``JACOBIAN_POINTS`` of the
      calculation's spectral points); after each step its rows are scaled to the
      change the step made (the Planck Jacobian overstates the response near 1 hPa
      by up to 1.6 times, measured for MLS 2xCO2), and the step solves it by
      least squares. It needs no smoothing: it converges to the heating rates' own
      solution, which in the lower stratosphere zig-zags from level to level by up to
      0.6 K (MLS 2xCO2; layer heating rates see the mean of their two levels), where
      the filtered diagonal iteration stopped at a smoothed profile within the same
      tolerance (the tropopause forcing differs by 0.0003 W m-2);
    * the layers the adjustment does not change keep their optical depths from the
      first calculation (:class:`~specforce.radiation.depthstore.DepthStore`), so
      each iteration computes the line sums of the changed layers only (with either
      Jacobian).

    Elsewhere (the uniform reference grid, the fast model), or when asked for, the
    Jacobian is diagonal, estimated once from a 1 K warming of the adjusted levels
    (floored at -0.02 K/day per K), and the step is smoothed with a 1-2-1 filter
    against the 2 dz mode. The Jacobian sets how fast the iteration converges and,
    within the tolerance, where it stops: the filtered iteration stops at a smoother
    profile than the heating rates' own solution.

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
    damping : float, optional
        Fraction of the Newton step taken; default 1 with the full Jacobian and 0.35 with
        the diagonal one. 0.35 was chosen by measurement: with 0.7 the 2xCO2 adjustment of
        the mid-latitude summer profile diverged after three iterations; with 0.35 the
        largest mismatch falls by about a third per iteration (2.8 K/day to 0.018 K/day in
        14 iterations). With the full Jacobian the same case takes 3 iterations. Each
        iteration costs one longwave calculation.
    log : callable, optional
        Called with (iteration, largest mismatch [K/day], its level pressure [Pa]) after each evaluation.
    jacobian : {"planck", "diagonal"}, optional
        The Jacobian (see above); default "planck" on the graded line-by-line path, where
        it is available, else "diagonal".

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
    available = settings.grid != "uniform" and settings.spectral_model == "lbl"
    if jacobian not in (None, "planck", "diagonal"):
        raise SettingsError(f"adjusted_forcing: jacobian must be 'planck' or 'diagonal', got {jacobian!r}")
    if jacobian == "planck" and not available:
        raise SettingsError("adjusted_forcing: the Planck Jacobian needs the graded line-by-line path "
                            "(grid='graded', spectral_model='lbl'); use jacobian='diagonal'")
    full = available and jacobian != "diagonal"
    store = None
    if available:  # the layers that touch no adjusted level keep their optical depths
        changed = {int(j) for lev in levels for j in (lev - 1, lev)}
        store = DepthStore(layers=[j for j in range(perturbed.nlevels - 1) if j not in changed],
                           sample=JACOBIAN_POINTS if full else 0)
    if damping is None:
        damping = 1.0 if full else 0.35

    def run(t_adj):
        t = perturbed.temperature.copy()
        t[levels] = t_adj
        prof = perturbed.copy(temperature=t, check_saturation=False)
        return prof, compute_longwave(prof, spectroscopy, settings, keep_levels=(trop,), grid=result.base.grid,
                                      store=store)

    t0 = perturbed.temperature[levels].copy()
    prof, res = run(t0)
    if full:
        planck = planck_jacobian(store.sample, prof, levels, layers_adj, settings)
        scale = np.ones(layers_adj.size)
    else:
        _, warm = run(t0 + 1.0)
        dq = np.minimum(warm.heating_rate[layers_adj] - res.heating_rate[layers_adj], -0.02)
    t_cur = t0
    history = []
    step, mismatch = None, None
    for it in range(1, max_iterations + 1):
        previous, mismatch = mismatch, res.heating_rate[layers_adj] - target
        if full and step is not None:
            scale = _rescale_rows(scale, planck, step, mismatch - previous)
        history.append(float(np.max(np.abs(mismatch))))
        if log is not None:
            log(it, history[-1], float(perturbed.pressure[levels[int(np.argmax(np.abs(mismatch)))]]))
        if history[-1] < tolerance:
            forcing = (res.flux_down - res.flux_up) - (result.base.flux_down - result.base.flux_up)
            return AdjustedForcing(forcing_tropopause=float(forcing[trop]), forcing=forcing,
                                   temperature_change=prof.temperature - perturbed.temperature, iterations=it - 1,
                                   tolerance=tolerance, top_pressure=top_pressure, residual_history=tuple(history),
                                   perturbed=res)
        if full:
            step = -damping * np.linalg.lstsq(scale[:, None] * planck, mismatch, rcond=1e-6)[0]
        else:
            step = _smooth121(-damping * mismatch / dq)
        step = np.clip(step, -10.0, 10.0)
        t_cur = t_cur + step
        prof, res = run(t_cur)
    worst = int(np.argmax(np.abs(res.heating_rate[layers_adj] - target)))
    raise AdjustmentError(
        f"stratospheric adjustment did not converge in {max_iterations} iterations: the heating rate at "
        f"{perturbed.pressure[levels[worst]] / 100:.3g} hPa is still "
        f"{abs(res.heating_rate[layers_adj][worst] - target[worst]):.3g} K/day from its base value "
        f"(tolerance {tolerance} K/day); try a larger tolerance, a higher top_pressure or finer layers"
    )


def planck_jacobian(sample, profile, levels, layers, settings=Settings()):
    """Heating-rate responses to level temperatures through the Planck source alone.

    Parameters
    ----------
    sample : DepthSample
        Spectral points, their weights [cm-1] and every layer's optical depth there
        (from a :class:`~specforce.radiation.depthstore.DepthStore`).
    profile : Profile
        The column the optical depths belong to (its levels and temperatures).
    levels : numpy.ndarray
        The levels whose temperature varies (0 = surface).
    layers : numpy.ndarray
        The layers whose heating rates respond.
    settings : Settings
        The angular quadrature (``nodes``, ``diffusivity``).

    Returns
    -------
    numpy.ndarray
        d(heating rate of ``layers[i]``)/d(temperature of ``levels[j]``) [K day-1 K-1],
        shape (layers, levels), for dry air's heat capacity and optical depths held fixed.
    """
    x, w, tau = sample.wavenumber, sample.weight, sample.optical_depth
    jac = np.empty((len(layers), len(levels)))
    source = np.zeros((profile.nlevels, x.size))
    for k, lev in enumerate(levels):
        source[lev] = planck_temperature_derivative(x, profile.temperature[lev]) * w
        up, dn = source_fluxes(tau, source, np.zeros(x.size), profile.surface_emissivity, nodes=settings.nodes,
                               diffusivity=settings.diffusivity)
        source[lev] = 0.0
        jac[:, k] = heating_rate(up.sum(axis=1), dn.sum(axis=1), profile.pressure)[layers]
    return jac


def _rescale_rows(scale, planck, step, change):
    """Row scales of the Planck Jacobian ``planck`` updated so that scale * planck predicts the
    heating-rate ``change`` [K/day] the temperature ``step`` [K] made (a secant correction by rows:
    the Planck Jacobian misses how the optical depths follow temperature). Rows whose predicted
    change is under a tenth of the largest, or under 1e-4 K/day, keep their scale; the scales
    stay within 0.3-1.5."""
    predicted = scale * (planck @ step)
    new = scale.copy()
    ok = np.abs(predicted) > max(0.1 * np.abs(predicted).max(), 1e-4)
    new[ok] = np.clip(scale[ok] * change[ok] / predicted[ok], 0.3, 1.5)
    return new


def _smooth121(x):
    """1-2-1 smoothing with the end values weighted 3-1 (keeps a uniform step unchanged)."""
    if x.size < 3:
        return x
    y = np.empty_like(x)
    y[1:-1] = 0.25 * x[:-2] + 0.5 * x[1:-1] + 0.25 * x[2:]
    y[0] = 0.75 * x[0] + 0.25 * x[1]
    y[-1] = 0.75 * x[-1] + 0.25 * x[-2]
    return y
