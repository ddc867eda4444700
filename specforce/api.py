"""The scripting API: profiles, spectroscopy, fluxes, forcing and comparisons as xarray Datasets.

Everything here is also reachable as ``specforce.<name>``. Results come back as
:class:`xarray.Dataset` objects with named dimensions (``wavenumber``,
``level``, ``layer``), units in each variable's attributes and the provenance
(settings, spectroscopy, version) as a JSON string in ``attrs["provenance"]``.

Load the spectroscopy once and pass it to every call: line data are then read
(or generated) once per script, not once per calculation::

    import specforce
    spec = specforce.spectroscopy()                 # built-in; or spectroscopy(lines="my.h5")
    base = specforce.load_profile("mls")
    for factor in (0.5, 1, 2, 4):
        ds = specforce.radiative_forcing(base, {"CO2": f"{factor}x"}, spectroscopy=spec)
        print(factor, ds.attrs["forcing_tropopause_W_m2"])

Examples
--------
>>> import specforce
>>> spec = specforce.spectroscopy()
>>> ds = specforce.olr("mls", spectroscopy=spec, wavenumber_range=(660.0, 675.0), continuum=False)
>>> ds["olr_spectrum"].dims, ds["olr_spectrum"].attrs["units"]
(('wavenumber',), 'W m-2 (cm-1)-1')
>>> bool(ds.attrs["olr_W_m2"] > 0)
True
"""

from __future__ import annotations

import os

__all__ = ["compare_olr", "load_state", "olr", "radiative_forcing", "settings", "spectroscopy"]


def settings(base=None, **options):
    """Calculation settings: :class:`specforce.longwave.Settings` with ``options`` changed.

    Parameters
    ----------
    base : Settings, optional
        Start from these (default: the defaults).
    **options
        Any field of :class:`~specforce.longwave.Settings`, e.g.
        ``wavenumber_range=(500.0, 1000.0)``, ``continuum=False``, ``spacing=0.002``.

    Examples
    --------
    >>> settings(wavenumber_range=(500.0, 800.0)).wavenumber_range
    (500.0, 800.0)
    """
    from dataclasses import fields, replace

    from .longwave import Settings

    known = {f.name for f in fields(Settings)}
    unknown = sorted(set(options) - known)
    if unknown:
        raise TypeError(f"unknown setting(s) {unknown}; the settings are {sorted(known)}")
    if "wavenumber_range" in options:
        options["wavenumber_range"] = tuple(float(x) for x in options["wavenumber_range"])
    if "gases" in options and options["gases"] is not None:
        options["gases"] = tuple(str(g).upper() for g in options["gases"])
    return replace(base or Settings(), **options)


def spectroscopy(lines=None, builtin=True):
    """Line data for the calculations; load once and reuse.

    Parameters
    ----------
    lines : str or os.PathLike, optional
        A line store (``specforce lines import``). Its molecules replace the
        built-in ones.
    builtin : bool
        Include the built-in spectroscopy generated from molecular constants
        (see :mod:`specforce.builtin`) for the molecules ``lines`` lacks.

    Returns
    -------
    Spectroscopy
    """
    from .builtin import builtin_spectroscopy
    from .linestore import load_spectroscopy

    if lines is None:
        if not builtin:
            raise ValueError("spectroscopy(): give a line store or keep builtin=True")
        return builtin_spectroscopy()
    imported = load_spectroscopy(lines)
    return builtin_spectroscopy().overridden_by(imported) if builtin else imported


def _profile(profile):
    from .atmosphere import Profile
    from .io.profiles import load_profile

    return profile if isinstance(profile, Profile) else load_profile(profile)


def _settings(given, options):
    if given is not None and options:
        return settings(given, **options)
    return given if given is not None else settings(**options)


def olr(profile, spectroscopy=None, settings=None, label=None, convergence=False, **options):
    """Clear-sky longwave fluxes of a profile, as a Dataset.

    Parameters
    ----------
    profile : Profile or str
        A profile, or a bundled name or file for :func:`specforce.atmosphere.load_profile`.
    spectroscopy : Spectroscopy, optional
        From :func:`spectroscopy`; default the built-in set (pass one to reuse it).
    settings : Settings, optional
        From :func:`settings`; ``options`` change single fields.
    label : str, optional
        Name of this state in comparisons (default the profile name).
    convergence : bool
        Also rerun with finer numerics and put the report (JSON) in ``attrs["convergence"]``
        (:mod:`specforce.convergence`).

    Returns
    -------
    xarray.Dataset
        ``olr_spectrum`` and ``surface_down_spectrum`` by ``wavenumber``, ``flux_up``,
        ``flux_down`` by ``level``, ``heating_rate`` by ``layer``; attributes
        ``olr_W_m2``, ``surface_down_W_m2``, ``label``, ``provenance``.
    """
    from .io.results import longwave_dataset
    from .longwave import compute_longwave

    prof = _profile(profile)
    spec = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    sett = _settings(settings, options)
    res = compute_longwave(prof, spec, sett)
    if convergence:
        from .convergence import longwave_convergence

        res.convergence = longwave_convergence(prof, spec, sett, res)
    ds = longwave_dataset(res)
    ds.attrs["label"] = label or prof.name
    return ds


def _default_spectroscopy():
    from .builtin import builtin_spectroscopy

    return builtin_spectroscopy()


def radiative_forcing(profile, changes, spectroscopy=None, settings=None, adjusted=False, tropopause=None,
                      responses=False, convergence=False, **options):
    """Forcing of a change to a profile, as a Dataset.

    Parameters
    ----------
    profile : Profile or str
        Base profile (or a bundled name or file).
    changes : dict or list
        ``{"CO2": "2x", "CH4": "722ppb:1866ppb"}`` (the command line's forms), or a
        list of :class:`specforce.forcing.Perturbation`.
    spectroscopy, settings, options : as for :func:`olr`
    adjusted : bool
        Also compute the stratosphere-adjusted forcing.
    responses : bool
        Also compute the Planck and fixed-RH water-vapour responses, the no-feedback
        warming (from the adjusted forcing where computed) and the emission temperature
        and altitude (:func:`specforce.forcing.climate_responses`), as attributes.
    tropopause : float, optional
        Tropopause pressure [Pa]; default the WMO lapse-rate tropopause.
    convergence : bool
        Also rerun the instantaneous forcing with finer numerics and put the report (JSON)
        in ``attrs["convergence"]`` (:mod:`specforce.convergence`).

    Returns
    -------
    xarray.Dataset
        ``forcing`` by ``level``; spectral forcing at the top, tropopause and
        surface and both OLR spectra by ``wavenumber``; attributes
        ``forcing_toa_W_m2``, ``forcing_tropopause_W_m2``, ``forcing_surface_W_m2``
        (and ``adjusted_forcing_tropopause_W_m2``, ``adjusted_iterations``), ``provenance``.
    """
    from .forcing import apply_perturbations, forcing_with_options, parse_change
    from .io.results import forcing_dataset

    prof = _profile(profile)
    perts = [parse_change(g, str(v)) for g, v in changes.items()] if isinstance(changes, dict) else list(changes)
    if not perts:
        raise ValueError("radiative_forcing(): give at least one change, e.g. {'CO2': '2x'}")
    spec = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    sett = _settings(settings, options)
    base, pert = apply_perturbations(prof, perts)
    result, resp = forcing_with_options(base, pert, spec, sett, tropopause=tropopause, adjusted=adjusted,
                                        responses=responses, convergence=convergence)
    name = f"{prof.name}: " + ", ".join(f"{p.gas} {p.kind} {p.value:g}" for p in perts)
    ds = forcing_dataset(result, name)
    ds.attrs.update({"forcing_toa_W_m2": result.toa, "forcing_tropopause_W_m2": result.tropopause,
                     "forcing_surface_W_m2": result.surface, "olr_base_W_m2": result.base.olr,
                     "olr_perturbed_W_m2": result.perturbed.olr})
    if result.adjusted:
        ds.attrs["adjusted_forcing_tropopause_W_m2"] = result.adjusted["forcing_tropopause"]
        ds.attrs["adjusted_iterations"] = result.adjusted["iterations"]
    if resp:
        ds.attrs.update(resp)
    return ds


def load_state(source, spectroscopy=None, settings=None, label=None, **options):
    """An OLR state for :func:`compare_olr` from a profile, a scenario file or a saved result.

    Parameters
    ----------
    source : str, Profile or xarray.Dataset
        - a Dataset from :func:`olr` (returned as it is);
        - a netCDF file written by ``specforce olr --netcdf`` (read, not recomputed);
        - a netCDF file written by ``specforce forcing --netcdf``: its perturbed
          state, or its base state with ``#base`` after the file name;
        - a scenario file (``.toml``): its perturbed profile, computed;
        - a profile (a Profile, a bundled name or a profile file), computed.
    spectroscopy, settings, label, options : as for :func:`olr`

    Returns
    -------
    xarray.Dataset
        With ``olr_spectrum`` by ``wavenumber`` and a ``label`` attribute.
    """
    import xarray as xr

    if isinstance(source, xr.Dataset):
        out = source.copy()
        out.attrs = dict(source.attrs)
        if label:
            out.attrs["label"] = label
        return out
    text = os.fspath(source) if isinstance(source, (str, os.PathLike)) else None
    if text is not None:
        path, _, which = text.partition("#")
        if path.lower().endswith((".nc", ".nc4")) and os.path.exists(path):
            with xr.open_dataset(path, engine="h5netcdf") as ds:
                ds = ds.load()
            if "olr_spectrum" in ds:
                ds.attrs.setdefault("label", label or os.path.basename(path))
                return ds
            if "olr_perturbed" in ds:
                key = "olr_base" if which == "base" else "olr_perturbed"
                out = xr.Dataset({"olr_spectrum": ds[key]}, attrs={
                    "label": label or f"{os.path.basename(path)} ({key[4:]})",
                    "provenance": ds.attrs.get("provenance", "")})
                return out
        if path.lower().endswith(".toml"):
            from .forcing import apply_perturbations, load_scenario

            scen = load_scenario(path)
            _, pert = apply_perturbations(scen.profile, scen.perturbations)
            return olr(pert, spectroscopy, settings, label=label or scen.name, **options)
    return olr(source, spectroscopy, settings, label=label, **options)


def compare_olr(a, b, bands=None, resolution=None, spectroscopy=None, spectroscopy_b=None, settings=None, **options):
    """Compare the OLR of two states (B minus A): broadband, by band, brightness temperature.

    Parameters
    ----------
    a, b : str, Profile or xarray.Dataset
        States as accepted by :func:`load_state`.
    bands : sequence of (name, lower, upper), optional
        [cm-1]; default :data:`specforce.compare.DEFAULT_BANDS`.
    resolution : float, optional
        Also smooth the brightness-temperature difference to this resolution [cm-1].
    spectroscopy : Spectroscopy, optional
        Used for the states that are computed.
    spectroscopy_b : Spectroscopy, optional
        Used for B instead (to compare two line-data sources for one atmosphere).
    settings, options : as for :func:`olr`

    Returns
    -------
    xarray.Dataset
        See :func:`specforce.compare.compare_spectra`.

    Examples
    --------
    >>> import specforce
    >>> spec = specforce.spectroscopy()
    >>> d = specforce.compare_olr("mls", "mls", spectroscopy=spec, wavenumber_range=(660.0, 675.0), continuum=False)
    >>> float(d.attrs["olr_difference_W_m2"])
    0.0
    """
    from .compare import DEFAULT_BANDS, compare_spectra

    spec_a = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    spec_b = spectroscopy_b if spectroscopy_b is not None else spec_a
    sa = load_state(a, spec_a, settings, **options)
    sb = load_state(b, spec_b, settings, **options)
    if sa.attrs.get("label") == sb.attrs.get("label"):
        sa.attrs["label"] = f"A: {sa.attrs.get('label', '')}"
        sb.attrs["label"] = f"B: {sb.attrs.get('label', '')}"
    return compare_spectra(sa, sb, bands or DEFAULT_BANDS, resolution)
