"""The scripting API: the one layer that orchestrates a calculation. The command line calls only this.

Everything here is also reachable as ``specforce.<name>``. Results are typed
objects (:class:`~specforce.radiation.longwave_result.LongwaveResult`,
:class:`~specforce.forcing.instantaneous.ForcingResult`, :class:`~specforce.forcing.sweep.SweepResult`,
:class:`~specforce.forcing.compare.Comparison`) with ``to_dataset()`` (an
:class:`xarray.Dataset` with named dimensions, units and provenance),
``to_dict()`` (JSON-ready) and ``summary()`` (text).

Load the spectroscopy once and pass it to every call: line data are then read
(or generated) once per script, not once per calculation::

    import specforce
    spec = specforce.spectroscopy()                 # built-in; or spectroscopy(lines="my.h5")
    base = specforce.load_profile("mls")
    for factor in (0.5, 1, 2, 4):
        r = specforce.radiative_forcing(base, {"CO2": f"{factor}x"}, spectroscopy=spec)
        print(factor, r.tropopause)

Examples
--------
>>> import specforce
>>> spec = specforce.spectroscopy()
>>> r = specforce.olr("mls", spectroscopy=spec, wavenumber_range=(660.0, 675.0), continuum=False)
>>> ds = r.to_dataset()
>>> ds["olr_spectrum"].dims, ds["olr_spectrum"].attrs["units"]
(('wavenumber',), 'W m-2 (cm-1)-1')
>>> bool(r.olr > 0)
True
"""

from __future__ import annotations

import os
import warnings
from dataclasses import replace

__all__ = ["compare_olr", "load_profile", "load_state", "olr", "radiative_forcing", "settings", "spectroscopy",
           "sweep_concentrations"]


def load_profile(name_or_path, accept_unusual=False):
    """A bundled profile by name (``mls``, ``tropical``, ...) or a profile file; see
    :func:`specforce.io.profiles.load_profile`. ``accept_unusual`` waives the plausibility
    checks (a high plateau, a very dry column); the outputs record the waiver."""
    from .io.profiles import load_profile as _load

    return _load(name_or_path, accept_unusual=accept_unusual)


def settings(base=None, **options):
    """Calculation settings: :class:`specforce.radiation.longwave.Settings` with ``options`` changed.

    Parameters
    ----------
    base : Settings, optional
        Start from these (default: the defaults).
    **options
        Any field of :class:`~specforce.radiation.longwave.Settings`, e.g.
        ``wavenumber_range=(500.0, 1000.0)``, ``continuum=False``, ``spacing=0.002``.

    Examples
    --------
    >>> settings(wavenumber_range=(500.0, 800.0)).wavenumber_range
    (500.0, 800.0)
    """
    from dataclasses import fields

    from .errors import SettingsError
    from .radiation.longwave import Settings

    known = {f.name for f in fields(Settings)}
    unknown = sorted(set(options) - known)
    if unknown:
        raise SettingsError(f"unknown setting(s) {unknown}; the settings are {sorted(known)}")
    if "wavenumber_range" in options:
        try:
            options["wavenumber_range"] = tuple(float(x) for x in options["wavenumber_range"])
        except (TypeError, ValueError):
            raise SettingsError(f"wavenumber_range must be two numbers [cm-1], got {options['wavenumber_range']!r}") \
                from None
        if len(options["wavenumber_range"]) != 2:
            raise SettingsError(f"wavenumber_range must be two numbers [cm-1], got {options['wavenumber_range']!r}")
    if "gases" in options and options["gases"] is not None:
        options["gases"] = _gas_tuple(options["gases"])
    return replace(base or Settings(), **options)


def _gas_tuple(gases):
    from .radiation.atmosphere import GASES
    from .errors import SettingsError

    out = tuple(str(g).strip().upper() for g in gases)
    unknown = [g for g in out if g not in GASES]
    if unknown:
        raise SettingsError(f"{', '.join(unknown)} is not a gas specforce knows; the gases are {', '.join(GASES)}")
    return out


def spectroscopy(lines=None, builtin=True, continuum_table=None):
    """Line data (and a continuum table of your own) for the calculations; load once and reuse.

    Parameters
    ----------
    lines : str or os.PathLike, optional
        A line store (``specforce lines import``). Per molecule and isotopologue, over
        the wavenumbers its lines cover, it replaces the built-in lines; elsewhere
        the built-in lines stay (see :meth:`specforce.molecular.lines.Spectroscopy.overridden_by`),
        with a :class:`~specforce.errors.CoverageWarning` naming the built-in bands
        the imported list does not cover, and the coverage in the provenance.
    builtin : bool
        Include the built-in spectroscopy generated from molecular constants
        (see :mod:`specforce.molecular.builtin`) where ``lines`` has none.
    continuum_table : str or os.PathLike or ContinuumTable, optional
        A water-vapour continuum table (the format of
        :mod:`specforce.io.continuum_tables`): it replaces or adds to the built-in
        800-1250 cm-1 continuum as the table says, its line treatment (cut-off,
        pedestal) is applied to the water lines, and its path and sha256 go into
        the provenance.

    Returns
    -------
    Spectroscopy
    """
    spec = _line_data(lines, builtin)
    if continuum_table is None:
        return spec
    from dataclasses import replace as _replace

    from .absorption.continuum import ContinuumTable
    from .io.continuum_tables import read_continuum_table

    table = continuum_table if isinstance(continuum_table, ContinuumTable) else read_continuum_table(continuum_table)
    return _replace(spec, continuum=table, provenance={**spec.provenance, "continuum_table": table.record()})


def _line_data(lines, builtin):
    from .molecular.builtin import builtin_spectroscopy
    from .errors import CoverageWarning, SettingsError
    from .io.linestore import load_spectroscopy

    if lines is None:
        if not builtin:
            raise SettingsError("spectroscopy(): give a line store or keep builtin=True")
        return builtin_spectroscopy()
    imported = load_spectroscopy(lines)
    if not builtin:
        return imported
    combined = builtin_spectroscopy().overridden_by(imported)
    for note in combined.provenance["warnings"]:
        warnings.warn(CoverageWarning(note), stacklevel=2)
    return combined


def _profile(profile, accept_unusual=False):
    from .radiation.atmosphere import Profile

    return profile if isinstance(profile, Profile) else load_profile(profile, accept_unusual=accept_unusual)


def _record_checks(result, prof):
    """Record in the result's provenance that the profile's plausibility checks were waived."""
    if prof is not None and prof.checks_note:
        result.provenance["profile_checks"] = prof.checks_note
    return result


def _settings(given, options):
    if given is not None and options:
        return settings(given, **options)
    return given if given is not None else settings(**options)


def _default_spectroscopy():
    from .molecular.builtin import builtin_spectroscopy

    return builtin_spectroscopy()


def olr(profile, spectroscopy=None, settings=None, convergence=False, progress=None, *, accept_unusual=False,
        **options):
    """Clear-sky longwave fluxes of a profile.

    Parameters
    ----------
    profile : Profile or str
        A profile, or a bundled name or file for :func:`load_profile`.
    spectroscopy : Spectroscopy, optional
        From :func:`spectroscopy`; default the built-in set (pass one to reuse it).
    settings : Settings, optional
        From :func:`settings`; ``options`` change single fields.
    convergence : bool
        Also rerun with finer numerics; the report is ``result.convergence``
        (:mod:`specforce.forcing.convergence`).
    progress : callable, optional
        Called with the fraction done.
    accept_unusual : bool
        Waive the plausibility checks of a profile read from a name or file (see
        :class:`specforce.radiation.atmosphere.Profile`); the result's provenance records it.

    Returns
    -------
    LongwaveResult
    """
    from .radiation.longwave import compute_longwave

    prof = _profile(profile, accept_unusual)
    spec = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    sett = _settings(settings, options)
    res = compute_longwave(prof, spec, sett, progress=progress)
    if convergence:
        from .forcing.convergence import longwave_convergence

        res = replace(res, convergence=longwave_convergence(prof, spec, sett, res))
    return _record_checks(res, prof)


def radiative_forcing(profile=None, changes=None, spectroscopy=None, settings=None, *, scenario=None, adjusted=False,
                      responses=False, per_gas=False, convergence=False, tropopause=None, progress=None,
                      accept_unusual=False, **options):
    """Forcing of a change to a profile.

    Parameters
    ----------
    profile : Profile or str, optional
        Base profile (or a bundled name or file); not with ``scenario``.
    changes : dict or list, optional
        ``{"CO2": "2x", "CH4": "722ppb:1866ppb"}`` (the command line's forms), or a
        list of :class:`specforce.forcing.scenario.Perturbation`; not with ``scenario``.
    spectroscopy, settings, options : as for :func:`olr`
    scenario : str or Scenario, optional
        A scenario file (TOML) or a :class:`specforce.forcing.scenario.Scenario`: its profile,
        changes and tropopause.
    adjusted : bool
        Also compute the stratosphere-adjusted forcing (``result.adjusted``). Needs the
        whole longwave range (its heating rates are band-limited otherwise).
    responses : bool
        Also compute the Planck and fixed-RH water-vapour responses, the no-feedback
        warming (from the adjusted forcing where computed) and the emission temperature
        and altitude (``result.responses``). Needs the whole longwave range.
    per_gas : bool
        Also compute each changed gas's forcing alone and the overlap (``result.per_gas``).
    convergence : bool
        Also rerun the instantaneous forcing with finer numerics (``result.convergence``).
    tropopause : float, optional
        Tropopause pressure [Pa]; default the scenario's, else the WMO lapse-rate tropopause.
    progress : callable, optional
        Called with the fraction of the instantaneous forcing done.
    accept_unusual : bool
        Waive the plausibility checks of the profile (given by name or file, or the
        scenario's); the result's provenance records it.

    Returns
    -------
    ForcingResult
    """
    from .errors import ScenarioError
    from .forcing.instantaneous import check_changes_active, instantaneous_forcing, per_gas_forcing
    from .forcing.scenario import Scenario, apply_perturbations, describe_changes, load_scenario, parse_change

    if scenario is not None:
        if profile is not None or changes:
            raise ScenarioError("give a scenario, or a profile and its changes, not both (the scenario has its own)")
        scen = scenario if isinstance(scenario, Scenario) else load_scenario(scenario, accept_unusual=accept_unusual)
        prof, perts, name = scen.profile, list(scen.perturbations), scen.name
        if tropopause is None:
            tropopause = scen.tropopause_pressure
    else:
        if profile is None:
            raise ScenarioError("radiative_forcing(): give a profile and its changes, or a scenario")
        prof = _profile(profile, accept_unusual)
        if isinstance(changes, dict):
            perts = [parse_change(g, str(v)) for g, v in changes.items()]
        else:
            perts = list(changes or [])
        name = f"{prof.name}: " + ", ".join(f"{p.gas} {p.text or p.kind}" for p in perts)
    if not perts:
        raise ScenarioError("give at least one change, e.g. {'CO2': '2x'} (or a scenario file with [[change]] tables)")
    spec = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    sett = _settings(settings, options)
    base, pert = apply_perturbations(prof, perts)
    check_changes_active(perts, spec, sett)
    _check_whole_spectrum_for(base, sett, adjusted, responses)
    result = instantaneous_forcing(base, pert, spec, sett, tropopause=tropopause, progress=progress)
    result = replace(result, name=name, changes=tuple(describe_changes(base, pert, perts)))
    if adjusted:
        from .forcing.adjustment import adjusted_forcing

        result = replace(result, adjusted=adjusted_forcing(result, pert, spec, sett))
    if responses:
        from .forcing.responses import climate_responses

        f, kind = ((result.adjusted.forcing_tropopause, "adjusted") if result.adjusted is not None
                   else (result.tropopause, "instantaneous"))
        result = replace(result, responses=climate_responses(base, f, spec, sett, tropopause=tropopause,
                                                             base=result.base, forcing_kind=kind))
    if per_gas:
        result = replace(result, per_gas=per_gas_forcing(prof, perts, spec, sett, tropopause=tropopause))
    if convergence:
        from .forcing.convergence import forcing_convergence

        result = replace(result, convergence=forcing_convergence(base, pert, spec, sett, result))
    return _record_checks(result, prof)


def _check_whole_spectrum_for(profile, settings, adjusted, responses):
    """Refuse the quantities that need the whole longwave spectrum over a partial range."""
    from .forcing.responses import check_whole_spectrum

    if responses:
        check_whole_spectrum(profile, settings)
    if adjusted:
        # the adjustment balances the stratosphere's heating rates, which a band-limited range misrepresents
        check_whole_spectrum(profile, settings, needs="the stratosphere-adjusted forcing (--adjusted) balances "
                                                      "heating rates, which need")


def sweep_concentrations(gas, concentrations, profiles=("mls",), spectroscopy=None, settings=None, *, weights=None, area_mean=False,
          reference=None, adjusted=False, quadratic=False, tropopause=None, progress=None, accept_unusual=False,
          **options):
    """Forcing of one gas across concentrations, next to the published formulas, with refits.

    Parameters
    ----------
    gas : {"CO2", "CH4", "N2O"}
    concentrations : sequence of float
        [ppm for CO2, ppb otherwise]; see :func:`specforce.forcing.sweep.sweep_values`.
    profiles : sequence of Profile or str
        The profiles (ignored with ``area_mean``).
    spectroscopy, settings, options : as for :func:`olr`
    weights : sequence of float, optional
        One per profile (default equal).
    area_mean : bool
        The five seasonal AFGL models with the area weights of :data:`specforce.forcing.sweep.AREA_WEIGHTS`.
    reference : float, optional
        Reference concentration of the swept gas (default pre-industrial).
    adjusted : bool
        Compare stratosphere-adjusted forcing (about ten times slower); needs the whole longwave range.
    quadratic : bool
        CO2 refit with the Etminan et al. (2016) quadratic form.

    Over a partial range (less than 98 % of the surface's blackbody emission) the result
    has no formula comparison and no refits (``result.comparison_omitted`` says why): the
    formulas describe the whole spectrum.
    tropopause : float, optional
        Tropopause pressure [Pa].
    accept_unusual : bool
        Waive the plausibility checks of profiles given by name or file; the provenance records it.

    Returns
    -------
    SweepResult
        With ``refits`` filled in.
    """
    from .errors import SettingsError
    from .forcing.sweep import AREA_WEIGHTS, concentration_sweep, refit_sweep

    if area_mean:
        if tuple(profiles) not in ((), ("mls",)) or weights is not None:
            raise SettingsError("give either area_mean or profiles (and weights), not both")
        profiles, weights = list(AREA_WEIGHTS), list(AREA_WEIGHTS.values())
    profs = [_profile(p, accept_unusual) for p in profiles]
    spec = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    sett = _settings(settings, options)
    for prof in profs:
        _check_whole_spectrum_for(prof, sett, adjusted, False)
    result = concentration_sweep(gas, concentrations, profs, spec, sett, weights=weights,
                                 reference=reference, adjusted=adjusted, tropopause=tropopause, progress=progress)
    notes = {p.name: p.checks_note for p in profs if p.checks_note}
    if notes and isinstance(getattr(result, "provenance", None), dict):
        result.provenance["profile_checks"] = notes
    if result.comparison_omitted:
        return result  # no refits of a band-limited forcing (see SweepResult.comparison_omitted)
    return replace(result, refits=refit_sweep(result, quadratic=quadratic))


def load_state(source, spectroscopy=None, settings=None, label=None, *, accept_unusual=False, **options):
    """An OLR state for :func:`compare_olr` from a profile, a scenario file or a saved result.

    Parameters
    ----------
    source : str, Profile, LongwaveResult or xarray.Dataset
        - a :class:`LongwaveResult` or a Dataset from its ``to_dataset()`` (used as it is);
        - a netCDF file written by ``specforce olr --netcdf`` (read, not recomputed);
        - a netCDF file written by ``specforce forcing --netcdf``: its perturbed
          state, or its base state with ``#base`` after the file name;
        - a scenario file (``.toml``): its perturbed profile, computed;
        - a profile (a Profile, a bundled name or a profile file), computed.
    spectroscopy, settings, options : as for :func:`olr`
    label : str, optional
        Name of the state in the comparison.
    accept_unusual : bool
        Waive the plausibility checks of a profile (or a scenario's profile) that is computed.

    Returns
    -------
    xarray.Dataset
        With ``olr_spectrum`` by ``wavenumber`` and a ``label`` attribute.
    """
    import xarray as xr

    from .radiation.longwave_result import LongwaveResult

    if isinstance(source, LongwaveResult):
        ds = source.to_dataset()
        ds.attrs["label"] = label or str(source.provenance.get("profile", "A"))
        return ds
    if isinstance(source, xr.Dataset):
        out = source.copy()
        out.attrs = dict(source.attrs)
        if label:
            out.attrs["label"] = label
        return out
    text = os.fspath(source) if isinstance(source, (str, os.PathLike)) else None
    if text is not None:
        path = text.partition("#")[0]
        if path.lower().endswith((".nc", ".nc4")):
            from .io.results import read_result

            ds = read_result(text)
            if label:
                ds.attrs["label"] = label
            return ds
        if path.lower().endswith(".toml"):
            from .forcing.scenario import apply_perturbations, load_scenario

            scen = load_scenario(path, accept_unusual=accept_unusual)
            _, pert = apply_perturbations(scen.profile, scen.perturbations)
            ds = _record_checks(olr(pert, spectroscopy, settings, **options), scen.profile).to_dataset()
            ds.attrs["label"] = label or scen.name
            return ds
    from .errors import ProfileError

    try:
        prof = _profile(source, accept_unusual)
    except ProfileError as exc:
        raise (_state_error(text, exc) if text is not None else exc) from None
    ds = olr(prof, spectroscopy, settings, **options).to_dataset()
    ds.attrs["label"] = label or ds.attrs.get("profile", "state")
    return ds


def _state_error(text, exc):
    """A profile error for a state given as a file, saying what the file is instead."""
    from .errors import ProfileError
    from .io.profiles import describe_file

    path = text.partition("#")[0]
    if os.path.isfile(path) and not isinstance(exc, FileNotFoundError):
        what = describe_file(path)
        reason = str(exc).removeprefix(f"{path}: ")
        message = f"{path} is {what}; a state must be a profile, a scenario (.toml) or a saved result (.nc)"
        return ProfileError(message if what in reason else f"{message}. Read as a profile: {reason}")
    return exc


def compare_olr(a, b, bands=None, resolution=None, spectroscopy=None, spectroscopy_b=None, settings=None, *,
                accept_unusual=False, **options):
    """Compare the OLR of two states (B minus A): broadband, by band, brightness temperature.

    Parameters
    ----------
    a, b : str, Profile, LongwaveResult or xarray.Dataset
        States as accepted by :func:`load_state`.
    bands : sequence of (name, lower, upper), optional
        [cm-1]; default :data:`specforce.forcing.compare.DEFAULT_BANDS`.
    resolution : float, optional
        Also smooth the brightness-temperature difference to this resolution [cm-1].
    spectroscopy : Spectroscopy, optional
        Used for the states that are computed.
    spectroscopy_b : Spectroscopy, optional
        Used for B instead (to compare two line-data sources for one atmosphere).
    settings, options, accept_unusual : as for :func:`olr`

    Returns
    -------
    Comparison

    Examples
    --------
    >>> import specforce
    >>> spec = specforce.spectroscopy()
    >>> d = specforce.compare_olr("mls", "mls", spectroscopy=spec, wavenumber_range=(660.0, 675.0), continuum=False)
    >>> d.olr_difference
    0.0
    """
    from .forcing.compare import DEFAULT_BANDS, compare_spectra

    spec_a = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    spec_b = spectroscopy_b if spectroscopy_b is not None else spec_a
    sa = load_state(a, spec_a, settings, accept_unusual=accept_unusual, **options)
    sb = load_state(b, spec_b, settings, accept_unusual=accept_unusual, **options)
    if sa.attrs.get("label") == sb.attrs.get("label"):
        sa.attrs["label"] = f"A: {sa.attrs.get('label', '')}"
        sb.attrs["label"] = f"B: {sb.attrs.get('label', '')}"
    return compare_spectra(sa, sb, bands or DEFAULT_BANDS, resolution)
