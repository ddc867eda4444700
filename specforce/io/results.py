"""Results as files and text: netCDF (CF conventions), JSON-ready dicts and short summaries.

Every output says what it is: clear-sky longwave, for one profile (named), with
which spectroscopy, instantaneous or adjusted, and how that differs from the
global, all-sky, adjusted or effective forcings of assessments (:data:`CAUTION`).

netCDF files follow the CF conventions (version 1.10): ``Conventions``,
``title``, ``source``, ``history`` and ``references`` attributes, ``units`` on
every variable and a ``standard_name`` where CF has one; they carry the
profile's own variables, so that a file can be read on its own, and the
provenance as JSON. They are written through :func:`specforce.io.files.atomic_path`.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import json
import os
import sys

import numpy as np

from ..molecular.gases import gas as gas_record
from .ktables import fast_model_lines
from .files import write_netcdf  # noqa: F401  (part of this module's documented API)

__all__ = ["CAUTION", "spectroscopy_text", "spectroscopy_accuracy", "continuum_text", "to_jsonable", "settings_record",
           "provenance_record", "longwave_summary", "longwave_dataset", "longwave_text", "forcing_summary",
           "forcing_dataset", "forcing_text", "write_netcdf", "read_result", "profile_variables"]

#: What every result is, and is not.
CAUTION = ("research estimate: clear-sky longwave radiation for one profile, not an assessment value; published "
           "assessment forcings (e.g. IPCC AR6: 3.93 W m-2 effective forcing for doubled CO2) are global means, "
           "all-sky (clouds lower CO2 forcing by about a fifth) and stratosphere-adjusted or effective")

_CF = "CF-1.10"


def to_jsonable(obj):
    """Convert numpy scalars and arrays (recursively) to plain Python for JSON."""
    if isinstance(obj, dict):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [to_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [to_jsonable(v) for v in obj.tolist()] if obj.dtype.kind == "f" else obj.tolist()
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not np.isfinite(obj):
        return None  # JSON has no NaN: a quantity that does not exist for this run
    return obj


def settings_record(settings):
    """The settings of a calculation as a plain dict (every field, tuples as lists), for files and text.

    Results keep their :class:`specforce.radiation.longwave.Settings` typed in their
    provenance (``provenance["settings"]``); this is where it becomes a dict.
    ``None``, or a dict already (a provenance read back from a file), is returned as it is.
    """
    if settings is None or isinstance(settings, dict):
        return settings
    return {k: (list(v) if isinstance(v, tuple) else v) for k, v in dataclasses.asdict(settings).items()}


def _wavenumber_range(provenance):
    """The spectral range of a result's settings [cm-1]; (0, 0) when its provenance has none."""
    settings = provenance.get("settings")
    return (0, 0) if settings is None else tuple(settings.wavenumber_range)


def provenance_record(provenance):
    """A result's provenance with its settings as a plain dict (:func:`settings_record`), ready for JSON."""
    if provenance.get("settings") is None:
        return provenance
    return {**provenance, "settings": settings_record(provenance["settings"])}


def spectroscopy_text(prov):
    """Which line data supplied what, and which water continuum, in a line."""
    return f"{_lines_text(prov)}; {continuum_text(prov)}"


def continuum_text(prov):
    """The water continuum in use, and what is missing, in a line."""
    t = prov.get("continuum_table")
    if t:
        lo, hi = t["coverage_cm1"]
        return (f"water continuum: table '{t['name']}' over {lo:g}-{hi:g} cm-1 (window continuum "
                f"{t['window_continuum']}; sha256 {t['sha256'][:12]})")
    return ("water continuum: 800-1250 cm-1 only (Roberts et al. 1976); without the far-infrared and 6.3 um "
            "continua OLR is too high, the surface downward flux too low and the CO2 surface forcing too high")


def _lines_text(prov):
    if prov.get("kind") != "combined":
        return f"{prov.get('kind')} {prov.get('store', '')}".strip()
    store = prov.get("imported", {}).get("store", "an imported list")
    parts = []
    for gas, c in prov.get("coverage", {}).items():
        spans = sorted({tuple(s) for v in c["imported"].values() for s in v})
        lo, hi = (min(s[0] for s in spans), max(s[1] for s in spans)) if spans else (0, 0)
        parts.append(f"{gas} from {store} within {lo:.0f}-{hi:.0f} cm-1 where it has lines"
                     + (", built-in elsewhere" if c["built_in"] else ""))
    others = prov.get("built_in_gases", [])
    if others:
        parts.append(f"{', '.join(others)} built-in")
    return "; ".join(parts)


def _history():
    cmd = " ".join(os.path.basename(a) if i == 0 else a for i, a in enumerate(sys.argv)) or "python"
    now = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()
    return f"{now}: written by specforce ({cmd})"


def _global_attrs(title, provenance, kind):
    spec = provenance.get("spectroscopy", {}) or {}
    return {
        "Conventions": _CF,
        "title": title,
        "source": f"specforce {provenance.get('specforce_version', '')}: line-by-line clear-sky longwave radiative "
                  f"transfer; spectroscopy: {spec.get('kind', 'unknown')}",
        "history": _history(),
        "references": "specforce README and DEVELOPERS.md (methods, sources and measured accuracy)",
        "comment": f"{kind}; {CAUTION}",
        "profile": str(provenance.get("profile", "")),
        "provenance": json.dumps(to_jsonable(provenance_record(provenance))),
        "specforce_version": str(provenance.get("specforce_version", "")),
        **_checks(provenance),
    }


def _checks(provenance):
    """The record that a profile's plausibility checks were waived, as {key: text}, or {} (they were applied)."""
    note = provenance.get("profile_checks")
    return {"profile_checks": note if isinstance(note, str) else json.dumps(to_jsonable(note))} if note else {}


def profile_variables(profile, suffix="", long_suffix=""):
    """The profile's own variables (on ``level``), with CF names and units."""
    data = {
        f"air_temperature{suffix}": ("level", profile.temperature,
                                     {"units": "K", "standard_name": "air_temperature",
                                      "long_name": f"air temperature{long_suffix}"}),
        f"altitude{suffix}": ("level", profile.altitude, {"units": "m", "standard_name": "height",
                                                          "long_name": "height above the surface"}),
        f"surface_temperature{suffix}": ((), profile.surface_temperature,
                                         {"units": "K", "standard_name": "surface_temperature"}),
        f"surface_emissivity{suffix}": ((), profile.surface_emissivity,
                                        {"units": "1", "long_name": "broadband longwave emissivity of the surface"}),
    }
    for gas, v in profile.vmr.items():
        data[f"{gas}{suffix}"] = ("level", v, {"units": "1", "standard_name": gas_record(gas).standard_name,
                                                "long_name": f"{gas} volume mixing ratio (mol mol-1){long_suffix}"})
    return data


def _coords(result):
    nlev = result.pressure.size
    return {
        "wavenumber": ("wavenumber", result.wavenumber, {"units": "cm-1", "long_name": "output bin centre"}),
        "level": ("level", np.arange(nlev), {"long_name": "level index, 0 = surface"}),
        "layer": ("layer", np.arange(nlev - 1), {"long_name": "layer index, 0 = lowest"}),
        "pressure": ("level", result.pressure, {"units": "Pa", "standard_name": "air_pressure"}),
    }


def _spectral(values, long_name):
    return ("wavenumber", values, {"units": "W m-2 (cm-1)-1", "long_name": long_name})


def longwave_summary(result):
    """The scalar results, heating rates and provenance of a longwave result, JSON-ready."""
    p = result.provenance
    return to_jsonable({
        "kind": "clear-sky longwave fluxes, one profile",
        "olr_W_m2": result.olr,
        "surface_down_W_m2": result.surface_down,
        "surface_up_W_m2": float(result.flux_up[0]),
        "level_pressure_Pa": result.pressure,
        "flux_up_W_m2": result.flux_up,
        "flux_down_W_m2": result.flux_down,
        "heating_rate_K_day": result.heating_rate,
        "profile": p.get("profile"),
        "settings": settings_record(p.get("settings")),
        "gases": p.get("gases"),
        "spectroscopy": p.get("spectroscopy"),
        "grid_points": p.get("grid_points"),
        "run_seconds": p.get("seconds"),
        "specforce_version": p.get("specforce_version"),
        "spectral_model": p.get("spectral_model", "lbl"),
        **({"fast_model": fast_model_lines([p])} if p.get("kdist") else {}),
        "caution": CAUTION,
        **_checks(p),
        **({"convergence": result.convergence} if result.convergence else {}),
    })


def longwave_dataset(result):
    """An :class:`xarray.Dataset` of a longwave result (CF conventions, the profile included).

    Dimensions: ``wavenumber`` (output bin centres), ``level`` (surface first) and
    ``layer``. Provenance is in the ``provenance`` attribute (JSON).
    """
    import xarray as xr

    data = {
        "olr": ((), result.olr, {"units": "W m-2", "standard_name": "toa_outgoing_longwave_flux"}),
        "surface_downwelling_longwave": ((), result.surface_down, {
            "units": "W m-2", "standard_name": "surface_downwelling_longwave_flux_in_air"}),
        "olr_spectrum": _spectral(result.olr_spectrum, "upward flux at the top of the atmosphere"),
        "surface_down_spectrum": _spectral(result.surface_down_spectrum, "downward flux at the surface"),
        "flux_up": ("level", result.flux_up, {"units": "W m-2", "standard_name": "upwelling_longwave_flux_in_air"}),
        "flux_down": ("level", result.flux_down,
                      {"units": "W m-2", "standard_name": "downwelling_longwave_flux_in_air"}),
        "heating_rate": ("layer", result.heating_rate, {
            "units": "K day-1", "standard_name": "tendency_of_air_temperature_due_to_longwave_heating",
            "long_name": "longwave heating rate"}),
    }
    if result.profile is not None:
        data.update(profile_variables(result.profile))
    ds = xr.Dataset(data, coords=_coords(result), attrs=_global_attrs(
        f"specforce clear-sky longwave fluxes, profile {result.provenance.get('profile')}", result.provenance,
        "clear-sky longwave fluxes"))
    ds.attrs["olr_W_m2"] = result.olr
    ds.attrs["surface_down_W_m2"] = result.surface_down
    if result.provenance.get("kdist"):
        ds.attrs["fast_model"] = "; ".join(fast_model_lines([result.provenance]))
    if result.convergence:
        ds.attrs["convergence"] = json.dumps(to_jsonable(result.convergence))
    return ds


def longwave_text(result):
    """A few lines of text on a longwave result."""
    p = result.provenance
    s = p.get("settings")
    lo, hi = _wavenumber_range(p)
    lines = [
        f"profile {p.get('profile')}: {p.get('profile_source', '')}",
        *[f"  {v}" for v in _checks(p).values()],
        f"  spectroscopy: {spectroscopy_text(p.get('spectroscopy', {}))}",
        f"  gases: {', '.join(p.get('gases', [])) or 'none'}; range {lo:g}-{hi:g} cm-1; continuum "
        f"{'on' if getattr(s, 'continuum', False) else 'off'}; method {getattr(s, 'method', None)}, "
        f"{getattr(s, 'grid', None)} grid",
        f"  OLR                   {result.olr:10.3f} W m-2",
        f"  surface downward LW   {result.surface_down:10.3f} W m-2",
        f"  surface upward LW     {result.flux_up[0]:10.3f} W m-2",
        f"  ({p.get('grid_points')} spectral points, {p.get('seconds', 0):.1f} s)",
    ]
    if result.convergence:
        lines += _convergence_lines(result.convergence)
    lines += [f"  {x}" for x in fast_model_lines([p])]
    lines.append(f"  {CAUTION}")
    return "\n".join(lines)


def _convergence_lines(report):
    keys = list(report["baseline"])
    out = ["  convergence: change when the numerics are made finer [W m-2]",
           "    " + " " * 8 + "".join(f"{k.replace('_W_m2', ''):>20s}" for k in keys)]
    for name, v in report["variants"].items():
        out.append(f"    {name:8s}" + "".join(f"{v['changes'][k]:+20.4f}" for k in keys))
    for name, v in report["variants"].items():
        out.append(f"    {name}: {v['description']}")
    return out


def spectroscopy_accuracy(result):
    """The measured accuracy of the built-in lines for the gases a forcing changed (a warming: every
    active gas), from :data:`specforce.molecular.builtin.BUILTIN_ACCURACY`; empty for gases from an imported list."""
    from ..molecular.builtin import accuracy_statements

    gases = [c["gas"] for c in result.changes if c.get("gas") != "T"]
    if any(c.get("gas") == "T" for c in result.changes):
        gases += list(result.provenance.get("gases", []))
    return accuracy_statements(gases, result.provenance.get("spectroscopy", {}) or {})


def _kind(result):
    return "instantaneous" + (" and stratosphere-adjusted" if result.adjusted is not None else "") + \
        " clear-sky longwave forcing, one profile"


def forcing_summary(result):
    """The scalar results of a forcing and the record of what was done, JSON-ready."""
    p = result.provenance
    out = {
        "scenario": result.name,
        "changes": [c["text"] for c in result.changes],
        "change_amounts": list(result.changes),
        "kind": _kind(result),
        "forcing_toa_W_m2": result.toa,
        "forcing_tropopause_W_m2": result.tropopause,
        "forcing_surface_W_m2": result.surface,
        "tropopause_pressure_Pa": result.tropopause_pressure,
        "olr_base_W_m2": result.base.olr,
        "olr_perturbed_W_m2": result.perturbed.olr,
        "settings": settings_record(p.get("settings")),
        "spectroscopy": p.get("spectroscopy"),
        "profile": p.get("profile"),
        "specforce_version": p.get("specforce_version"),
        "spectroscopy_accuracy": spectroscopy_accuracy(result),
        "spectral_model": p.get("spectral_model", "lbl"),
        "caution": CAUTION,
        **_checks(p),
    }
    fast = _forcing_fast_lines(result)
    if fast:
        out["fast_model"] = fast
    a = result.adjusted
    if a is not None:
        out.update({"adjusted_forcing_tropopause_W_m2": a.forcing_tropopause, "adjusted_iterations": a.iterations,
                    "adjusted_temperature_change_K": a.temperature_change, "adjusted_note": a.shortwave})
    r = result.responses
    if r is not None:
        out.update({"planck_response_W_m2_K": r.planck_response, "water_vapour_response_W_m2_K":
                    r.water_vapour_response, "no_feedback_warming_K": r.no_feedback_warming,
                    "no_feedback_warming_from": r.no_feedback_warming_from,
                    "emission_temperature_K": r.emission_temperature, "emission_altitude_m": r.emission_altitude})
    g = result.per_gas
    if g is not None:
        out["per_gas_W_m2"] = {"alone": g.alone, "together": g.together, "overlap": g.overlap}
    if result.convergence:
        out["convergence"] = result.convergence
    return to_jsonable(out)


def forcing_dataset(result):
    """An :class:`xarray.Dataset` of a forcing result (CF conventions, both profiles included)."""
    import xarray as xr

    data = {
        "forcing": ("level", result.forcing, {"units": "W m-2", "long_name": "instantaneous forcing (net downward)"}),
        "spectral_forcing_toa": _spectral(result.spectral_toa, "instantaneous forcing at the top of the atmosphere"),
        "spectral_forcing_tropopause": _spectral(result.spectral_tropopause, "instantaneous forcing at the tropopause"),
        "spectral_forcing_surface": _spectral(result.spectral_surface, "instantaneous forcing at the surface"),
        "olr_base": _spectral(result.base.olr_spectrum, "OLR spectrum, base state"),
        "olr_perturbed": _spectral(result.perturbed.olr_spectrum, "OLR spectrum, perturbed state"),
        "flux_up_base": ("level", result.base.flux_up,
                         {"units": "W m-2", "standard_name": "upwelling_longwave_flux_in_air"}),
        "flux_down_base": ("level", result.base.flux_down,
                           {"units": "W m-2", "standard_name": "downwelling_longwave_flux_in_air"}),
        "heating_rate_base": ("layer", result.base.heating_rate, {
            "units": "K day-1", "standard_name": "tendency_of_air_temperature_due_to_longwave_heating"}),
        "heating_rate_perturbed": ("layer", result.perturbed.heating_rate, {
            "units": "K day-1", "standard_name": "tendency_of_air_temperature_due_to_longwave_heating"}),
        "tropopause_pressure": ((), result.tropopause_pressure,
                                {"units": "Pa", "standard_name": "tropopause_air_pressure"}),
    }
    if result.adjusted is not None:
        data["adjusted_forcing"] = ("level", result.adjusted.forcing, {"units": "W m-2"})
        data["adjusted_temperature_change"] = ("level", result.adjusted.temperature_change, {"units": "K"})
    if result.base.profile is not None:
        data.update(profile_variables(result.base.profile))
        data.update(profile_variables(result.perturbed.profile, "_perturbed", ", perturbed state"))
    ds = xr.Dataset(data, coords=_coords(result.base), attrs=_global_attrs(
        f"specforce clear-sky longwave forcing: {result.name}", result.provenance, _kind(result)))
    summary = forcing_summary(result)
    for key in ("forcing_toa_W_m2", "forcing_tropopause_W_m2", "forcing_surface_W_m2", "tropopause_pressure_Pa",
                "olr_base_W_m2", "olr_perturbed_W_m2", "adjusted_forcing_tropopause_W_m2", "adjusted_iterations"):
        if key in summary:
            ds.attrs[key] = summary[key]
    ds.attrs["scenario"] = result.name
    ds.attrs["changes"] = "; ".join(c["text"] for c in result.changes)
    ds.attrs["change_amounts"] = json.dumps(to_jsonable(list(result.changes)))
    if summary["spectroscopy_accuracy"]:
        ds.attrs["spectroscopy_accuracy"] = "; ".join(summary["spectroscopy_accuracy"])
    if summary.get("fast_model"):
        ds.attrs["fast_model"] = "; ".join(summary["fast_model"])
    for key in ("planck_response_W_m2_K", "water_vapour_response_W_m2_K", "no_feedback_warming_K",
                "no_feedback_warming_from", "emission_temperature_K", "emission_altitude_m"):
        if key in summary and summary[key] is not None:
            ds.attrs[key] = summary[key]
    if result.per_gas is not None:
        ds.attrs["per_gas_W_m2"] = json.dumps(to_jsonable(summary["per_gas_W_m2"]))
    if result.convergence:
        ds.attrs["convergence"] = json.dumps(to_jsonable(result.convergence))
    return ds


def forcing_text(result):
    """A few lines of text on a forcing result."""
    p = result.provenance
    lo, hi = _wavenumber_range(p)
    lines = [f"scenario: {result.name}", *[f"  profile {v}" for v in _checks(p).values()]]
    lines += [f"  change: {c['text']}" for c in result.changes]
    lines.append(f"  spectroscopy: {spectroscopy_text(p.get('spectroscopy', {}))}")
    lines += [f"  accuracy: {a}" for a in spectroscopy_accuracy(result)]
    lines += [
        f"  clear-sky longwave forcing, range {lo:g}-{hi:g} cm-1 [W m-2]",
        f"    instantaneous, top of atmosphere  {result.toa:9.3f}",
        f"    instantaneous, tropopause         {result.tropopause:9.3f}   ({result.tropopause_pressure / 100:.0f} hPa)",
        f"    instantaneous, surface            {result.surface:9.3f}",
    ]
    a = result.adjusted
    if a is not None:
        lines.append(f"    adjusted, tropopause              {a.forcing_tropopause:9.3f}   "
                     f"({a.iterations} iterations; shortwave heating held unchanged)")
    lines.append(f"  OLR base {result.base.olr:.3f}, perturbed {result.perturbed.olr:.3f} W m-2")
    r = result.responses
    if r is not None:
        lines.append(f"  Planck response {r.planck_response:.3f} W m-2 K-1; fixed-RH water-vapour response "
                     f"{r.water_vapour_response:+.3f} W m-2 K-1")
        lines.append(f"  no-feedback warming {r.no_feedback_warming:.3f} K (from the {r.no_feedback_warming_from} "
                     f"tropopause forcing); emission temperature {r.emission_temperature:.2f} K, reached at "
                     f"{r.emission_altitude / 1000:.2f} km")
    g = result.per_gas
    if g is not None:
        lines.append("  per gas [W m-2]:            TOA   tropopause    surface")
        for gas in g.gases:
            v = g.alone[gas]
            lines.append(f"    {gas + ' alone':20s} {v['toa']:9.3f} {v['tropopause']:12.3f} {v['surface']:10.3f}")
        for label, v in (("together", g.together), ("overlap", g.overlap)):
            lines.append(f"    {label:20s} {v['toa']:9.3f} {v['tropopause']:12.3f} {v['surface']:10.3f}")
    if result.convergence:
        lines += _convergence_lines(result.convergence)
    lines += [f"  {x}" for x in _forcing_fast_lines(result)]
    lines.append(f"  {CAUTION}")
    return "\n".join(lines)


def _forcing_fast_lines(result):
    gases = [c["gas"] for c in result.changes if c.get("gas") != "T"]
    if any(c.get("gas") == "T" for c in result.changes):
        gases = None
    return fast_model_lines([result.base.provenance, result.perturbed.provenance], gases)


def read_result(path):
    """Read a result file written by specforce (``olr --netcdf`` or ``forcing --netcdf``).

    Parameters
    ----------
    path : str
        The file; for a forcing file, ``#base`` after the name picks its base state
        (default the perturbed state).

    Returns
    -------
    xarray.Dataset
        With ``olr_spectrum`` on ``wavenumber`` and a ``label`` attribute.

    Raises
    ------
    ResultFileError
        If the file is not netCDF, or not a specforce result (saying what it holds).
    """
    import xarray as xr

    from ..errors import ResultFileError

    name, _, which = os.fspath(path).partition("#")
    if not os.path.exists(name):
        raise FileNotFoundError(f"{name}: no such file")
    try:
        with xr.open_dataset(name, engine="h5netcdf") as ds:
            ds = ds.load()
    except (OSError, ValueError) as exc:
        raise ResultFileError(f"{name}: not a netCDF file specforce can read ({exc})") from None
    if "olr_spectrum" in ds:
        ds.attrs.setdefault("label", os.path.basename(name))
        return ds
    if "olr_perturbed" in ds:
        key = "olr_base" if which == "base" else "olr_perturbed"
        return xr.Dataset({"olr_spectrum": ds[key]}, attrs={
            "label": f"{os.path.basename(name)} ({key[4:]})", "provenance": ds.attrs.get("provenance", "")})
    held = ", ".join(list(ds.data_vars)[:8]) or "no variables"
    raise ResultFileError(f"{name}: a netCDF file, but not a specforce result (it holds {held}); give a profile, a "
                          f"scenario, or a file written by 'specforce olr --netcdf' or 'forcing --netcdf'")
