"""Radiative forcing: the tropopause, instantaneous forcing and its split by gas.

Forcing is the change in net downward longwave flux, F_down - F_up, caused by a
perturbation, at every level (positive: the system below that level gains
energy). specforce reports clear-sky longwave forcing for one profile:
instantaneous here, stratosphere-adjusted in :mod:`specforce.forcing.adjustment`, with
the Planck and water-vapour responses in :mod:`specforce.forcing.responses`; the changes
themselves are described in :mod:`specforce.forcing.scenario`.

The tropopause is the WMO lapse-rate tropopause (WMO 1957, Meteorology - A
three-dimensional science, WMO Bulletin 6, 134-138): the lowest level at which
the lapse rate falls to 2 K/km or less and stays, on average, at or below
2 K/km for the 2 km above it.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..radiation.layers import refine
from ..absorption.continuum import ROBERTS_RANGE
from ..errors import ProfileError, ScenarioError, SettingsError
from ..radiation.longwave import Settings, compute_longwave, compute_longwave_states

__all__ = [
    "ForcingResult",
    "PerGasForcing",
    "wmo_tropopause",
    "tropopause_level",
    "instantaneous_forcing",
    "forcing_from_results",
    "per_gas_forcing",
    "check_changes_active",
]


def _absorbs_in_range(gas, spectroscopy, settings):
    """True if ``gas`` has lines reaching into the range (or, for water, an active continuum there)."""
    lo, hi = settings.wavenumber_range
    if gas == "H2O" and settings.continuum:
        table = getattr(spectroscopy, "continuum", None)
        spans = [] if table is not None and table.replaces_window else [tuple(ROBERTS_RANGE)]
        spans += [tuple(table.coverage)] if table is not None else []
        if any(a < hi and lo < b for a, b in spans):
            return True
    lines = spectroscopy.lines.get(gas)
    if lines is None or len(lines) == 0:
        return False
    opts = settings.line_shape()
    cut = opts.co2_cutoff if gas == "CO2" and opts.co2_chi else opts.cutoff  # the CO2 wings reach further
    reach = (np.inf if cut is None else float(cut)) + 1.0
    return len(lines.window(lo - reach, hi + reach)) > 0


def check_changes_active(perturbations, spectroscopy, settings, what="the change to"):
    """Raise if a gas change cannot change any flux: the gas is not active or has no lines in the range.

    A change to a gas that the calculation leaves out (``settings.gases``), that the
    spectroscopy has no lines for, or whose lines all lie outside the range (with
    their cut-off) would give a forcing of exactly zero, silently. Temperature changes
    always act.

    Parameters
    ----------
    perturbations : sequence of Perturbation
    spectroscopy : Spectroscopy
    settings : Settings
    what : str
        How the message introduces a change, before the gas (e.g. "the sweep of").

    Raises
    ------
    ScenarioError
        Naming the gas and how to make the change count.
    """
    lo, hi = settings.wavenumber_range
    for p in perturbations:
        gas = p.gas
        if gas == "T":
            continue
        change = f"{what} {gas}" + (f" ({p.text})" if p.text else "")
        if gas not in spectroscopy.lines and not (gas == "H2O" and _absorbs_in_range(gas, spectroscopy, settings)):
            raise ScenarioError(f"{change} does nothing: the spectroscopy in use has no {gas} lines (lines for: "
                                f"{', '.join(spectroscopy.gases) or 'none'}); import a line list with {gas} lines "
                                f"(specforce lines import) and pass it with --lines")
        if settings.gases is not None and gas not in settings.gases:
            active = ", ".join(settings.gases) or "none"
            raise ScenarioError(f"{change} does nothing: {gas} is not an active gas (active: {active}); add {gas} "
                                f"to the active gases (--gases {','.join([*settings.gases, gas])}), or leave "
                                f"--gases out to use every gas with lines")
        if not _absorbs_in_range(gas, spectroscopy, settings):
            raise ScenarioError(f"{change} does nothing: the spectroscopy in use has no {gas} lines within reach of "
                                f"{lo:g}-{hi:g} cm-1; widen --range to a band of {gas}, or import a line list with "
                                f"{gas} lines there (specforce lines import) and pass it with --lines")


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
    raise ProfileError(f"profile '{profile.name}': no WMO lapse-rate tropopause found; give a tropopause pressure")


def _level_at_pressure(profile, pressure):
    """The level nearest to ``pressure`` [Pa] in log-pressure; the pressure must lie within the profile."""
    p = profile.pressure
    if not (np.isfinite(pressure) and p[-1] <= pressure <= p[0]):
        raise SettingsError(f"tropopause pressure {pressure / 100:g} hPa is outside the profile "
                            f"'{profile.name}' ({p[-1] / 100:.4g}-{p[0] / 100:.6g} hPa); give a pressure within it "
                            f"[hPa]")
    return int(np.argmin(np.abs(np.log(p / pressure))))


def tropopause_level(base, tropopause=None, settings=Settings()):
    """Tropopause level index on the levels computed (those of ``base`` refined by ``settings.refine``).

    Parameters
    ----------
    base : Profile
    tropopause : float, optional
        Tropopause pressure [Pa]; default the WMO lapse-rate tropopause of ``base``.
    settings : Settings
    """
    if tropopause is not None:
        return _level_at_pressure(refine(base, settings.refine), tropopause)
    # the WMO tropopause of the profile as given, at its index among the refined levels
    return wmo_tropopause(base) * int(settings.refine)


@dataclass(frozen=True)
class PerGasForcing:
    """Instantaneous forcing of each changed gas alone, of all together, and their overlap.

    Attributes
    ----------
    gases : tuple of str
    alone : dict of str to dict
        Per gas, its forcing alone at ``toa``, ``tropopause`` and ``surface`` [W m-2].
    together : dict
        The forcing of all the changes together (same keys) [W m-2].
    overlap : dict
        together - sum of alone (same keys) [W m-2]: negative where the gases absorb
        in the same bands.
    """

    gases: tuple
    alone: dict
    together: dict
    overlap: dict


@dataclass(frozen=True)
class ForcingResult:
    """Forcing of one scenario (clear-sky longwave, one profile).

    Attributes
    ----------
    forcing : numpy.ndarray
        Instantaneous forcing (change in net downward flux) at every level, surface first [W m-2].
    wavenumber : numpy.ndarray
        Output bin centres [cm-1].
    spectral_toa, spectral_tropopause, spectral_surface : numpy.ndarray
        Spectral instantaneous forcing [W m-2 (cm-1)-1].
    tropopause_level : int
        Level index of the tropopause (on the computed levels).
    base, perturbed : LongwaveResult
        The two longwave calculations.
    name : str
        The scenario's name.
    changes : tuple of dict
        What was changed, in amounts (:func:`specforce.forcing.scenario.describe_changes`).
    adjusted : AdjustedForcing or None
        Stratosphere-adjusted forcing (:mod:`specforce.forcing.adjustment`), if asked for.
    responses : Responses or None
        Planck and water-vapour responses (:mod:`specforce.forcing.responses`), if asked for.
    per_gas : PerGasForcing or None
        Each gas alone and the overlap, if asked for.
    convergence : dict or None
        The convergence report (:func:`specforce.forcing.convergence.forcing_convergence`), if asked for.
    provenance : dict
        Settings (a :class:`specforce.radiation.longwave.Settings`), spectroscopy, profile and version
        of the base calculation.
    """

    forcing: np.ndarray
    wavenumber: np.ndarray
    spectral_toa: np.ndarray
    spectral_tropopause: np.ndarray
    spectral_surface: np.ndarray
    tropopause_level: int
    base: object = field(repr=False)
    perturbed: object = field(repr=False)
    name: str = ""
    changes: tuple = ()
    adjusted: object = None
    responses: object = None
    per_gas: PerGasForcing | None = None
    convergence: dict | None = None
    provenance: dict = field(default_factory=dict, repr=False)

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

    def to_dataset(self):
        """The result as an :class:`xarray.Dataset` (CF conventions; see :mod:`specforce.io.results`)."""
        from ..io.results import forcing_dataset

        return forcing_dataset(self)

    def to_dict(self):
        """The scalar results and the record of what was done, JSON-ready."""
        from ..io.results import forcing_summary

        return forcing_summary(self)

    def summary(self):
        """The result in a few lines of text."""
        from ..io.results import forcing_text

        return forcing_text(self)


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
        raise ProfileError("base and perturbed profiles must share their pressure levels")
    trop = tropopause_level(base, tropopause, settings)
    if base_result is not None:
        if trop not in base_result.level_spectra_up or base_result.pressure.size != refine(base, settings.refine).nlevels:
            raise SettingsError("instantaneous_forcing: base_result does not belong to this base profile "
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
    forcing = (r1.flux_down - r1.flux_up) - (r0.flux_down - r0.flux_up)
    spec_toa = -(r1.olr_spectrum - r0.olr_spectrum)
    spec_sfc = r1.surface_down_spectrum - r0.surface_down_spectrum
    spec_trop = (r1.level_spectra_down[trop] - r1.level_spectra_up[trop]) - (
        r0.level_spectra_down[trop] - r0.level_spectra_up[trop])
    return ForcingResult(forcing, r0.wavenumber, spec_toa, spec_trop, spec_sfc, trop, r0, r1,
                         provenance=r0.provenance)


def per_gas_forcing(profile, perturbations, spectroscopy, settings=Settings(), tropopause=None):
    """Forcing of each gas change alone and of all together, with the overlap.

    All the states share one grid and the unchanged gases' optical depths (one call
    of :func:`specforce.radiation.longwave.compute_longwave_states`). Each gas alone goes from
    the common base (every ``from`` amount applied) to that base with only its own
    change.

    Parameters
    ----------
    profile : Profile
        The profile before any change.
    perturbations : sequence of Perturbation
        Gas changes (temperature changes are not split).
    spectroscopy, settings, tropopause : as for :func:`instantaneous_forcing`

    Returns
    -------
    PerGasForcing
    """
    from .scenario import apply_perturbations

    gas_perts = [p for p in perturbations if p.gas != "T"]
    if len(gas_perts) < 1 or len(gas_perts) != len(perturbations):
        raise SettingsError("per-gas forcing splits gas changes only: give one or more gas changes and no warming")
    if len({p.gas for p in gas_perts}) != len(gas_perts):
        raise SettingsError("per-gas forcing needs one change per gas")
    base, together = apply_perturbations(profile, gas_perts)
    alone = []
    for p in gas_perts:
        state = base.with_vmr(p.gas, together.vmr[p.gas])
        alone.append(state)
    trop = tropopause_level(base, tropopause, settings)
    results = compute_longwave_states([base, together, *alone], spectroscopy, settings, keep_levels=(trop,))

    def levels(r):
        f = forcing_from_results(results[0], r, trop)
        return {"toa": f.toa, "tropopause": f.tropopause, "surface": f.surface}

    each = {p.gas: levels(r) for p, r in zip(gas_perts, results[2:])}
    all_ = levels(results[1])
    overlap = {k: all_[k] - sum(v[k] for v in each.values()) for k in all_}
    return PerGasForcing(tuple(p.gas for p in gas_perts), each, all_, overlap)
