"""Radiative forcing: scenarios, instantaneous and stratosphere-adjusted forcing, responses.

Forcing is the change in net downward longwave flux, F_down - F_up, caused by a
perturbation, at every level (positive: the system below that level gains
energy). specforce reports clear-sky longwave forcing for one profile:

* instantaneous forcing, with temperatures unchanged;
* stratosphere-adjusted forcing by the fixed-dynamical-heating method (Fels,
  Mahlman, Schwarzkopf & Sinclair 1980, J. Atmos. Sci. 37, 2265): temperatures
  above the tropopause are changed until the longwave heating rate at each of
  those levels is back to its base value; the shortwave heating is held
  unchanged (it is not computed), and the troposphere and surface are fixed;
* the Planck response (change in OLR per kelvin of uniform warming of surface
  and troposphere at fixed specific humidity), the fixed-relative-humidity
  water-vapour response, the no-feedback warming F / -lambda_Planck, the
  emission temperature (OLR / sigma)^(1/4) and the altitude where the profile
  reaches it.

The tropopause is the WMO lapse-rate tropopause (WMO 1957, Meteorology - A
three-dimensional science, WMO Bulletin 6, 134-138): the lowest level at which
the lapse rate falls to 2 K/km or less and stays, on average, at or below
2 K/km for the 2 km above it.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, field, replace

import numpy as np

from .atmosphere import GASES, Profile, refine
from .io.profiles import load_profile
from .humidity import relative_humidity_from_vmr, vmr_from_relative_humidity
from .constants import STEFAN_BOLTZMANN
from .errors import SpecforceError
from .longwave import Settings, compute_longwave, compute_longwave_states

__all__ = [
    "Perturbation",
    "Scenario",
    "ForcingResult",
    "AdjustmentError",
    "parse_change",
    "apply_perturbations",
    "wmo_tropopause",
    "instantaneous_forcing",
    "forcing_from_results",
    "adjusted_forcing",
    "planck_response",
    "water_vapour_response",
    "emission_temperature",
    "emission_altitude",
    "climate_responses",
    "forcing_with_options",
    "load_scenario",
]


class AdjustmentError(SpecforceError, RuntimeError):
    """The stratospheric adjustment did not converge."""


@dataclass(frozen=True)
class Perturbation:
    """One change to a profile.

    Attributes
    ----------
    gas : str
        Gas formula (``GASES``) or ``"T"`` for temperature.
    kind : {"scale", "set", "ratio", "warm", "warm_surface"}
        Multiply the mixing ratio by ``value``; set it to ``value`` [mol mol-1];
        go from ``base`` to ``value`` (both [mol mol-1], the base profile is first
        set to ``base``); add ``value`` [K] to surface and atmosphere; add it to the
        surface only.
    value : float
    base : float or None
    fixed_rh : bool
        For temperature changes: keep relative humidity fixed.
    """

    gas: str
    kind: str
    value: float
    base: float | None = None
    fixed_rh: bool = False


_CHANGE = re.compile(r"^\s*([0-9.eE+-]+)\s*(x|ppm|ppmv|ppb|ppbv|vmr)?\s*$")
_UNITS = {"ppm": 1e-6, "ppmv": 1e-6, "ppb": 1e-9, "ppbv": 1e-9, "vmr": 1.0}


def _amount(text, what):
    m = _CHANGE.match(text)
    if not m or m.group(2) in (None, "x"):
        raise ValueError(f"{what}: {text!r} is not an amount; write e.g. 280ppm, 722ppb or 4e-4vmr")
    return float(m.group(1)) * _UNITS[m.group(2)]


def parse_change(gas, text):
    """Parse a command-line change such as ``2x``, ``560ppm`` or ``722ppb:1866ppb``.

    Parameters
    ----------
    gas : str
        Gas formula.
    text : str
        ``FACTORx`` (scale), ``AMOUNT`` (set) or ``AMOUNT:AMOUNT`` (from base to
        perturbed), with units ppm, ppb or vmr.

    Returns
    -------
    Perturbation
    """
    gas = gas.upper()
    if gas not in GASES:
        raise ValueError(f"unknown gas {gas!r}; known are {', '.join(GASES)}")
    if ":" in text:
        a, b = text.split(":", 1)
        return Perturbation(gas, "ratio", _amount(b, gas), base=_amount(a, gas))
    m = _CHANGE.match(text)
    if m and m.group(2) == "x":
        factor = float(m.group(1))
        if not factor >= 0:
            raise ValueError(f"{gas}: scale factor must be non-negative, got {text!r}")
        return Perturbation(gas, "scale", factor)
    return Perturbation(gas, "set", _amount(text, gas))


def apply_perturbations(profile, perturbations):
    """Return (base, perturbed) profiles for a list of perturbations.

    ``ratio`` perturbations also change the base (to their ``base`` amount);
    the others leave it as given.
    """
    base = profile.copy()
    for p in perturbations:
        if p.kind == "ratio":
            base = base.with_vmr(p.gas, p.base)
    pert = base.copy()
    for p in perturbations:
        if p.kind == "scale":
            pert = pert.with_vmr(p.gas, pert.vmr[p.gas] * p.value)
        elif p.kind in ("set", "ratio"):
            pert = pert.with_vmr(p.gas, p.value)
        elif p.kind in ("warm", "warm_surface"):
            rh = relative_humidity_from_vmr(pert.vmr["H2O"], pert.pressure, pert.temperature) if p.fixed_rh else None
            t = pert.temperature + (p.value if p.kind == "warm" else 0.0)
            pert = pert.copy(temperature=t, surface_temperature=pert.surface_temperature + p.value,
                             check_saturation=False)
            if rh is not None:
                pert = pert.with_vmr("H2O", np.minimum(vmr_from_relative_humidity(rh, pert.pressure, t), 0.99))
        else:
            raise ValueError(f"unknown perturbation kind {p.kind!r}")
    return base, pert


def wmo_tropopause(profile):
    """Index of the WMO lapse-rate tropopause level (0 = surface).

    The lowest level above 500 hPa where the lapse rate -dT/dz falls to 2 K/km
    or less and the mean lapse rate to every level within the next 2 km stays
    at or below 2 K/km (WMO 1957).
    """
    z, t = profile.altitude, profile.temperature
    for i in range(1, profile.nlevels - 1):
        if profile.pressure[i] > 50000.0:
            continue
        gamma = -(t[i + 1] - t[i]) / (z[i + 1] - z[i]) * 1000.0
        if gamma > 2.0:
            continue
        ok = True
        for j in range(i + 1, profile.nlevels):
            if z[j] - z[i] > 2000.0:
                break
            if -(t[j] - t[i]) / (z[j] - z[i]) * 1000.0 > 2.0:
                ok = False
                break
        if ok:
            return i
    raise ValueError(f"profile '{profile.name}': no WMO lapse-rate tropopause found; give a tropopause pressure")


def _level_at_pressure(profile, pressure):
    return int(np.argmin(np.abs(np.log(profile.pressure / pressure))))


def _tropopause_level(base, tropopause, settings):
    """Tropopause level index on the levels computed (those of ``base`` refined by settings.refine)."""
    if tropopause is not None:
        return _level_at_pressure(refine(base, settings.refine), tropopause)
    # the WMO tropopause of the profile as given, at its index among the refined levels
    return wmo_tropopause(base) * int(settings.refine)


@dataclass
class ForcingResult:
    """Forcing of one scenario.

    Attributes
    ----------
    forcing : numpy.ndarray
        Instantaneous forcing (change in net downward flux) at every level, surface first [W m-2].
    wavenumber : numpy.ndarray
        Output bin centres [cm-1].
    spectral_toa, spectral_tropopause, spectral_surface : numpy.ndarray
        Spectral instantaneous forcing [W m-2 (cm-1)-1].
    tropopause_level : int
        Level index of the tropopause.
    base, perturbed : LongwaveResult
        The two longwave calculations.
    adjusted : dict or None
        Adjusted forcing: ``forcing_tropopause``, ``forcing`` (every level),
        ``temperature_change`` [K] per level, ``iterations``, ``tolerance``.
    per_gas : dict
        Forcing at TOA and tropopause for each perturbed gas alone, and the overlap.
    settings : dict
    convergence : dict or None
        The convergence report (:func:`specforce.convergence.forcing_convergence`), if asked for.
    """

    forcing: np.ndarray
    wavenumber: np.ndarray
    spectral_toa: np.ndarray
    spectral_tropopause: np.ndarray
    spectral_surface: np.ndarray
    tropopause_level: int
    base: object
    perturbed: object
    adjusted: dict | None = None
    per_gas: dict = field(default_factory=dict)
    settings: dict = field(default_factory=dict)
    convergence: dict | None = None

    @property
    def toa(self):
        """Instantaneous forcing at the top of the atmosphere [W m-2]."""
        return float(self.forcing[-1])

    @property
    def tropopause(self):
        """Instantaneous forcing at the tropopause [W m-2]."""
        return float(self.forcing[self.tropopause_level])

    @property
    def surface(self):
        """Instantaneous forcing at the surface [W m-2]."""
        return float(self.forcing[0])

    @property
    def tropopause_pressure(self):
        """Pressure of the tropopause level [Pa]."""
        return float(self.base.pressure[self.tropopause_level])


def _net_down(res):
    return res.flux_down - res.flux_up


def instantaneous_forcing(base, perturbed, spectroscopy, settings=Settings(), tropopause=None, progress=None,
                          base_result=None):
    """Instantaneous forcing of going from ``base`` to ``perturbed``.

    Parameters
    ----------
    base, perturbed : Profile
        The two states (same levels).
    spectroscopy : Spectroscopy
    settings : Settings
        With ``refine`` N the result is on the refined levels (every N-th is one of
        the profiles').
    tropopause : float, optional
        Tropopause pressure [Pa]; default the WMO lapse-rate tropopause of ``base``.
    progress : callable, optional
        Called with the fraction done.
    base_result : LongwaveResult, optional
        The calculation of ``base`` with the same spectroscopy and settings, kept
        at the tropopause level (``compute_longwave(..., keep_levels=(trop,))``),
        to reuse across many perturbations of one base.

    Returns
    -------
    ForcingResult
    """
    if base.nlevels != perturbed.nlevels or not np.allclose(base.pressure, perturbed.pressure):
        raise ValueError("base and perturbed profiles must share their pressure levels")
    trop = _tropopause_level(base, tropopause, settings)
    if base_result is not None:
        if trop not in base_result.level_spectra_up or base_result.pressure.size != refine(base, settings.refine).nlevels:
            raise ValueError("instantaneous_forcing: base_result does not belong to this base profile "
                             "or lacks the tropopause level (compute it with keep_levels=(tropopause_level,))")
        r0 = base_result
        r1 = compute_longwave(perturbed, spectroscopy, settings, keep_levels=(trop,), progress=progress,
                              grid=base_result.grid)
    else:
        r0, r1 = compute_longwave_states([base, perturbed], spectroscopy, settings, keep_levels=(trop,),
                                         progress=progress)
    return forcing_from_results(r0, r1, trop)


def forcing_from_results(base_result, perturbed_result, tropopause_level):
    """The :class:`ForcingResult` of two longwave results of one column.

    Parameters
    ----------
    base_result, perturbed_result : LongwaveResult
        Both with the tropopause level among their kept levels.
    tropopause_level : int
        Level index of the tropopause (0 = surface).
    """
    r0, r1, trop = base_result, perturbed_result, tropopause_level
    forcing = _net_down(r1) - _net_down(r0)
    spec_toa = -(r1.olr_spectrum - r0.olr_spectrum)
    spec_sfc = r1.surface_down_spectrum - r0.surface_down_spectrum
    spec_trop = (r1.level_spectra_down[trop] - r1.level_spectra_up[trop]) - (
        r0.level_spectra_down[trop] - r0.level_spectra_up[trop])
    return ForcingResult(forcing, r0.wavenumber, spec_toa, spec_trop, spec_sfc, trop, r0, r1,
                         settings=r0.settings)


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
    spectroscopy, settings : as for :func:`instantaneous_forcing`
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
    dict
        ``forcing_tropopause`` [W m-2], ``forcing`` per level [W m-2],
        ``temperature_change`` per level [K], ``iterations``, ``tolerance``.
    """
    if settings.refine > 1:  # work on the refined levels, as the instantaneous result does
        perturbed = refine(perturbed, settings.refine)
        settings = replace(settings, refine=1, resolve_tau=settings.resolve_tau / settings.refine)
    trop = result.tropopause_level
    levels = np.flatnonzero((np.arange(perturbed.nlevels) > trop) & (perturbed.pressure >= top_pressure))
    if levels.size == 0:
        raise ValueError("adjusted_forcing: no levels between the tropopause and top_pressure")
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
            forcing = _net_down(res) - _net_down(result.base)
            return {"forcing_tropopause": float(forcing[trop]), "forcing": forcing,
                    "temperature_change": prof.temperature - perturbed.temperature,
                    "iterations": it - 1, "tolerance": tolerance, "top_pressure": top_pressure, "perturbed": res,
                    "residual_history": history,
                    "shortwave": "shortwave heating held unchanged (not computed)"}
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
    profile, spectroscopy, settings : as for :func:`instantaneous_forcing`
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


def climate_responses(profile, forcing, spectroscopy, settings=Settings(), tropopause=None, base=None):
    """The responses reported next to a forcing.

    Parameters
    ----------
    profile : Profile
        Base profile.
    forcing : float
        Forcing to convert into a no-feedback warming [W m-2] (the adjusted
        tropopause forcing where computed, else the instantaneous one).
    spectroscopy, settings : as for :func:`instantaneous_forcing`
    tropopause : float, optional
        Tropopause pressure [Pa]; default the WMO tropopause.
    base : LongwaveResult, optional
        The base profile's longwave result with these settings, if already computed.

    Returns
    -------
    dict
        ``planck_response_W_m2_K`` (lambda_Planck, negative), ``water_vapour_response_W_m2_K``
        (fixed RH, positive when moistening lowers OLR), ``no_feedback_warming_K``
        (F / -lambda_Planck), ``emission_temperature_K`` and ``emission_altitude_m`` of the
        base OLR.
    """
    lam, base, warm = planck_response(profile, spectroscopy, settings, tropopause=tropopause, base=base)
    wv = water_vapour_response(profile, spectroscopy, settings, tropopause=tropopause, warmed_fixed_q=warm)
    t_e = emission_temperature(base.olr)
    return {"planck_response_W_m2_K": lam, "water_vapour_response_W_m2_K": wv,
            "no_feedback_warming_K": forcing / -lam, "emission_temperature_K": t_e,
            "emission_altitude_m": emission_altitude(profile, t_e)}


def forcing_with_options(base, perturbed, spectroscopy, settings=Settings(), tropopause=None, *, adjusted=False,
                         responses=False, convergence=False, progress=None):
    """Instantaneous forcing of a base/perturbed pair, with the adjusted forcing and responses on request.

    The one path behind ``specforce forcing`` and :func:`specforce.api.radiative_forcing`.

    Parameters
    ----------
    base, perturbed, spectroscopy, settings, tropopause, progress : as for :func:`instantaneous_forcing`
    adjusted : bool
        Also compute the stratosphere-adjusted forcing (:func:`adjusted_forcing`), stored in
        ``result.adjusted``.
    responses : bool
        Also compute :func:`climate_responses` of the base profile, the no-feedback warming
        taken from the adjusted tropopause forcing where computed.
    convergence : bool
        Also rerun the instantaneous forcing with finer numerics
        (:func:`specforce.convergence.forcing_convergence`), stored in ``result.convergence``.

    Returns
    -------
    (ForcingResult, dict or None)
        The forcing, and the responses (with ``no_feedback_warming_from``: "adjusted" or
        "instantaneous") or None.
    """
    result = instantaneous_forcing(base, perturbed, spectroscopy, settings, tropopause=tropopause, progress=progress)
    if convergence:
        from .convergence import forcing_convergence

        result.convergence = forcing_convergence(base, perturbed, spectroscopy, settings, result)
    result.adjusted = adjusted_forcing(result, perturbed, spectroscopy, settings) if adjusted else None
    resp = None
    if responses:
        forcing = result.adjusted["forcing_tropopause"] if result.adjusted else result.tropopause
        resp = climate_responses(base, forcing, spectroscopy, settings, tropopause=tropopause, base=result.base)
        resp["no_feedback_warming_from"] = "adjusted" if result.adjusted else "instantaneous"
    return result, resp


@dataclass
class Scenario:
    """A base profile and its perturbations, from a scenario file or the command line."""

    name: str
    profile: Profile
    perturbations: list
    tropopause_pressure: float | None = None


_SCENARIO_KEYS = {"name", "profile", "tropopause_hPa", "change", "surface_emissivity"}
_CHANGE_KEYS = {"gas", "scale", "set", "from", "to", "warming", "surface_warming", "fixed_rh"}


def load_scenario(path):
    """Read a scenario file (TOML).

    Example::

        name = "Kestrel Ridge, doubled CO2"
        profile = "demo"            # bundled name or a file path
        tropopause_hPa = 200        # optional; default WMO lapse-rate tropopause
        [[change]]
        gas = "CO2"
        scale = 2.0                 # or set = "560ppm", or from = "280ppm" and to = "560ppm"
        [[change]]
        warming = 1.0               # K, surface and atmosphere; fixed_rh = true keeps RH
    """
    import os

    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        raise FileNotFoundError(f"{path}: no such scenario file") from None
    except tomllib.TOMLDecodeError as exc:
        raise ValueError(f"{path}: not valid TOML ({exc})") from None
    unknown = set(data) - _SCENARIO_KEYS
    if unknown:
        raise ValueError(f"{path}: unknown key(s) {sorted(unknown)}; allowed are {sorted(_SCENARIO_KEYS)}")
    if "profile" not in data:
        raise ValueError(f"{path}: missing key 'profile' (a bundled name such as 'mls' or a file)")
    prof_ref = str(data["profile"])
    if not os.path.isabs(prof_ref) and os.path.exists(os.path.join(os.path.dirname(path), prof_ref)):
        prof_ref = os.path.join(os.path.dirname(path), prof_ref)
    profile = load_profile(prof_ref)
    if "surface_emissivity" in data:
        profile = profile.copy(surface_emissivity=float(data["surface_emissivity"]))
    perts = []
    for i, ch in enumerate(data.get("change", [])):
        bad = set(ch) - _CHANGE_KEYS
        if bad:
            raise ValueError(f"{path}: change {i + 1}: unknown key(s) {sorted(bad)}; allowed are {sorted(_CHANGE_KEYS)}")
        if "warming" in ch or "surface_warming" in ch:
            kind = "warm" if "warming" in ch else "warm_surface"
            value = float(ch.get("warming", ch.get("surface_warming")))
            if not -30 <= value <= 30:
                raise ValueError(f"{path}: change {i + 1}: warming {value} K is outside -30..30 K")
            perts.append(Perturbation("T", kind, value, fixed_rh=bool(ch.get("fixed_rh", False))))
            continue
        if "gas" not in ch:
            raise ValueError(f"{path}: change {i + 1}: give 'gas' (and scale, set, or from/to) or 'warming'")
        gas = str(ch["gas"])
        if "scale" in ch:
            perts.append(parse_change(gas, f"{float(ch['scale'])}x"))
        elif "set" in ch:
            perts.append(parse_change(gas, str(ch["set"])))
        elif "from" in ch and "to" in ch:
            perts.append(parse_change(gas, f"{ch['from']}:{ch['to']}"))
        else:
            raise ValueError(f"{path}: change {i + 1} ({gas}): give scale, set, or both from and to")
    trop = data.get("tropopause_hPa")
    return Scenario(str(data.get("name", os.path.basename(path))), profile, perts,
                    None if trop is None else float(trop) * 100.0)


def per_gas_forcing(base_profile, perturbations, spectroscopy, settings, tropopause=None):
    """Forcing of each gas change alone and of all together, with the overlap term.

    Returns
    -------
    dict
        ``{gas: {"toa": F, "tropopause": F}, "all": {...}, "overlap": {...}}`` [W m-2],
        where overlap = all - sum of single-gas forcings.
    """
    out = {}
    gas_perts = [p for p in perturbations if p.gas in GASES]
    for p in gas_perts:
        b, q = apply_perturbations(base_profile, [p])
        r = instantaneous_forcing(b, q, spectroscopy, settings, tropopause)
        out[p.gas] = {"toa": r.toa, "tropopause": r.tropopause}
    b, q = apply_perturbations(base_profile, gas_perts)
    r = instantaneous_forcing(b, q, spectroscopy, settings, tropopause)
    out["all"] = {"toa": r.toa, "tropopause": r.tropopause}
    out["overlap"] = {k: out["all"][k] - sum(out[p.gas][k] for p in gas_perts) for k in ("toa", "tropopause")}
    return out
