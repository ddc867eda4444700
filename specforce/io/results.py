"""Outputs: JSON-ready summaries and netCDF files, each carrying its provenance.

netCDF files are written with xarray through h5netcdf, to a temporary name
beside the target, and renamed when complete.
"""

from __future__ import annotations

import json

import numpy as np

from .files import atomic_path

__all__ = ["longwave_summary", "longwave_dataset", "forcing_summary", "forcing_dataset", "write_netcdf", "to_jsonable"]


def to_jsonable(obj):
    """Convert numpy scalars and arrays (recursively) to plain Python for JSON."""
    if isinstance(obj, dict):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [to_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not np.isfinite(obj):
        return None  # JSON has no NaN: a quantity that does not exist for this run
    return obj


def longwave_summary(result):
    """Scalar results of a longwave calculation, as a JSON-ready dict."""
    return to_jsonable({
        "olr_W_m2": result.olr,
        "surface_down_W_m2": result.surface_down,
        "surface_up_W_m2": float(result.flux_up[0]),
        "profile": result.settings["profile"],
        "settings": result.settings["settings"],
        "gases": result.settings["gases"],
        "spectroscopy": result.settings["spectroscopy"],
        "grid_points": result.settings["grid_points"],
        "run_seconds": result.settings["seconds"],
        "specforce_version": result.settings["specforce_version"],
        **({"convergence": result.convergence} if result.convergence else {}),
    })


def longwave_dataset(result):
    """An :class:`xarray.Dataset` of a longwave result with named dimensions and units.

    Dimensions: ``wavenumber`` (output bin centres), ``level`` (surface first) and
    ``layer``. Provenance is in the ``provenance`` attribute (JSON).
    """
    import xarray as xr

    nlev = result.pressure.size
    ds = xr.Dataset(
        {
            "olr_spectrum": ("wavenumber", result.olr_spectrum,
                             {"units": "W m-2 (cm-1)-1", "long_name": "upward flux at the top of the atmosphere"}),
            "surface_down_spectrum": ("wavenumber", result.surface_down_spectrum,
                                      {"units": "W m-2 (cm-1)-1", "long_name": "downward flux at the surface"}),
            "flux_up": ("level", result.flux_up, {"units": "W m-2", "long_name": "broadband upward flux"}),
            "flux_down": ("level", result.flux_down, {"units": "W m-2", "long_name": "broadband downward flux"}),
            "heating_rate": ("layer", result.heating_rate, {"units": "K day-1", "long_name": "longwave heating rate"}),
        },
        coords={
            "wavenumber": ("wavenumber", result.wavenumber, {"units": "cm-1", "long_name": "output bin centre"}),
            "level": ("level", np.arange(nlev), {"long_name": "level index, 0 = surface"}),
            "layer": ("layer", np.arange(nlev - 1), {"long_name": "layer index, 0 = lowest"}),
            "pressure": ("level", result.pressure, {"units": "Pa"}),
        },
        attrs={
            "title": f"specforce clear-sky longwave fluxes, profile {result.settings['profile']}",
            "olr_W_m2": result.olr,
            "surface_down_W_m2": result.surface_down,
            "provenance": json.dumps(to_jsonable(result.settings)),
            "specforce_version": result.settings["specforce_version"],
        },
    )
    if result.convergence:
        ds.attrs["convergence"] = json.dumps(to_jsonable(result.convergence))
    return ds


def write_netcdf(dataset, path):
    """Write a Dataset to netCDF-4 (h5netcdf), atomically (:func:`specforce.io.files.atomic_path`)."""
    with atomic_path(path) as tmp:
        dataset.to_netcdf(tmp, engine="h5netcdf")


def forcing_summary(result, name, responses=None):
    """Scalar results of a forcing calculation, as a JSON-ready dict."""
    out = {
        "scenario": name,
        "forcing_toa_W_m2": result.toa,
        "forcing_tropopause_W_m2": result.tropopause,
        "forcing_surface_W_m2": result.surface,
        "tropopause_pressure_Pa": result.tropopause_pressure,
        "olr_base_W_m2": result.base.olr,
        "olr_perturbed_W_m2": result.perturbed.olr,
        "kind": "clear-sky longwave, one profile; instantaneous unless stated",
        "settings": result.settings["settings"],
        "spectroscopy": result.settings["spectroscopy"],
        "profile": result.settings["profile"],
        "specforce_version": result.settings["specforce_version"],
    }
    if result.adjusted:
        out["adjusted_forcing_tropopause_W_m2"] = result.adjusted["forcing_tropopause"]
        out["adjusted_iterations"] = result.adjusted["iterations"]
        out["adjusted_temperature_change_K"] = result.adjusted["temperature_change"]
        out["adjusted_note"] = result.adjusted["shortwave"]
    if responses:
        out.update(responses)
    if result.convergence:
        out["convergence"] = result.convergence
    return to_jsonable(out)


def forcing_dataset(result, name):
    """An :class:`xarray.Dataset` of a forcing result (spectral and level-resolved)."""
    import xarray as xr

    nlev = result.forcing.size
    data = {
        "forcing": ("level", result.forcing, {"units": "W m-2", "long_name": "instantaneous forcing (net downward)"}),
        "spectral_forcing_toa": ("wavenumber", result.spectral_toa, {"units": "W m-2 (cm-1)-1"}),
        "spectral_forcing_tropopause": ("wavenumber", result.spectral_tropopause, {"units": "W m-2 (cm-1)-1"}),
        "spectral_forcing_surface": ("wavenumber", result.spectral_surface, {"units": "W m-2 (cm-1)-1"}),
        "olr_base": ("wavenumber", result.base.olr_spectrum, {"units": "W m-2 (cm-1)-1"}),
        "olr_perturbed": ("wavenumber", result.perturbed.olr_spectrum, {"units": "W m-2 (cm-1)-1"}),
        "heating_rate_base": ("layer", result.base.heating_rate, {"units": "K day-1"}),
        "heating_rate_perturbed": ("layer", result.perturbed.heating_rate, {"units": "K day-1"}),
    }
    if result.adjusted:
        data["adjusted_forcing"] = ("level", result.adjusted["forcing"], {"units": "W m-2"})
        data["adjusted_temperature_change"] = ("level", result.adjusted["temperature_change"], {"units": "K"})
    ds = xr.Dataset(
        data,
        coords={
            "wavenumber": ("wavenumber", result.wavenumber, {"units": "cm-1"}),
            "level": ("level", np.arange(nlev), {"long_name": "level index, 0 = surface"}),
            "layer": ("layer", np.arange(nlev - 1)),
            "pressure": ("level", result.base.pressure, {"units": "Pa"}),
        },
        attrs={
            "title": f"specforce clear-sky longwave forcing: {name}",
            "tropopause_pressure_Pa": result.tropopause_pressure,
            "provenance": json.dumps(to_jsonable(result.settings)),
        },
    )
    if result.convergence:
        ds.attrs["convergence"] = json.dumps(to_jsonable(result.convergence))
    return ds
