"""Profile collections: many profiles in one netCDF file, the input of batch runs.

The layout (documented in ``profiles/README.md``, *Profile collections*):

- one *site* dimension (any name: ``site``, ``station``, ``column``, ...) and one
  *level* dimension (the last dimension of the pressure variable);
- pressure, temperature, gases and optionally altitude as variables on
  (site, level), or on (level) alone when all sites share them (pressure levels of a
  reanalysis, say); names, CF standard names and units as for a single netCDF
  profile. A site with fewer levels pads the rest with missing values (NaN pressure);
- optional variables on (site): ``weight`` (dimensionless, >= 0, for weighted means),
  ``surface_temperature`` [K] and ``surface_emissivity``; the site coordinate, if
  any, labels the sites.

Reading never stops at a bad site: each site is a :class:`Profile` or the
:class:`ProfileError` that says what is wrong with it, so that a batch can record
it and go on.
"""

from __future__ import annotations

import os
import warnings
from dataclasses import dataclass

import numpy as np

from ..radiation.atmosphere import GASES, Profile
from ..errors import ProfileError, ProfileWarning
from .files import write_netcdf
from .profiles import load_profile, netcdf_quantity, netcdf_unit, profile_from_columns

__all__ = ["ProfileCollection", "read_profile_collection", "write_profile_collection", "collect_profiles",
           "check_weights"]

_SITE_VARIABLES = {"weight": "1", "surface_temperature": "K", "surface_emissivity": "1"}


@dataclass(frozen=True)
class ProfileCollection:
    """Profiles along one dimension.

    Attributes
    ----------
    dimension : str
        Name of the site dimension.
    labels : numpy.ndarray
        One label per site (the file's site coordinate, profile names, or 0..n-1).
    profiles : tuple
        One :class:`Profile`, or the :class:`ProfileError` that made it unusable, per site.
    weights : numpy.ndarray or None
        One non-negative weight per site [dimensionless], for weighted means.
    source : str
        The file or files the profiles came from.
    """

    dimension: str
    labels: np.ndarray
    profiles: tuple
    weights: np.ndarray | None = None
    source: str = ""

    def __len__(self):
        return len(self.profiles)

    @property
    def errors(self):
        """{site index: message} of the sites that could not be read."""
        return {i: str(p) for i, p in enumerate(self.profiles) if isinstance(p, Exception)}


def check_weights(weights, n, source):
    """Weights as an array of ``n`` finite, non-negative values, not all zero; errors name ``source``."""
    if weights is None:
        return None
    w = np.asarray(weights, dtype=float)
    if w.shape != (n,):
        raise ProfileError(f"{source}: {w.size} weights for {n} profiles; give one per profile")
    if not np.all(np.isfinite(w) & (w >= 0)) or not w.sum() > 0:
        raise ProfileError(f"{source}: weights must be finite, non-negative and not all zero")
    return w


def collect_profiles(profiles, weights=None, labels=None, dimension="site", accept_unusual=False):
    """A :class:`ProfileCollection` of profiles given by name, path or as :class:`Profile`.

    Parameters
    ----------
    profiles : sequence of Profile or str
        Bundled names (``mls``, ...), profile files or profiles. A folder stands for
        the profile files in it (``.txt``, ``.csv``, ``.nc``, sorted by name).
    weights : sequence of float, optional
        One per profile (after folders are expanded).
    labels : sequence, optional
        One per profile; default the profiles' names.
    dimension : str
        Name of the site dimension.
    accept_unusual : bool
        Waive the plausibility checks of profiles read from names or files; the
        collection's ``source`` records the waiver and what the checks found.

    A profile that cannot be read becomes its :class:`ProfileError` in the collection.
    """
    items = []
    for p in profiles:
        if isinstance(p, (str, os.PathLike)) and os.path.isdir(p):
            found = sorted(f for f in os.listdir(p) if f.lower().endswith((".txt", ".csv", ".nc")))
            if not found:
                raise ProfileError(f"{p}: no profile files (.txt, .csv, .nc) in this folder")
            items += [os.path.join(p, f) for f in found]
        else:
            items.append(p)
    out, names = [], []
    for item in items:
        if isinstance(item, Profile):
            out.append(item)
            names.append(item.name)
            continue
        try:
            out.append(load_profile(item, accept_unusual=accept_unusual))
        except ProfileError as exc:
            out.append(exc)
        except FileNotFoundError as exc:
            out.append(ProfileError(str(exc)))
        names.append(os.path.basename(str(item)))
    labels = np.asarray(names if labels is None else list(labels))
    if labels.shape != (len(out),):
        raise ProfileError(f"{labels.size} labels for {len(out)} profiles; give one per profile")
    source = ", ".join(str(i) if not isinstance(i, Profile) else i.name for i in items)
    source += _checks_note(labels, out)
    return ProfileCollection(dimension, labels, tuple(out), check_weights(weights, len(out), "weights"), source)


def _checks_note(labels, profiles):
    """What a collection records about waived plausibility checks ('' when none were waived)."""
    notes = [f"{lab}: {p.checks_note}" for lab, p in zip(labels, profiles) if isinstance(p, Profile) and p.checks_note]
    return f" [{'; '.join(notes)}]" if notes else ""


def read_profile_collection(path, accept_unusual=False):
    """Read a profile collection (see the module notes for the layout).

    Raises
    ------
    ProfileError
        For problems of the file as a whole (no pressure, dimensions that do not fit,
        units, weights); problems of single sites are kept in the collection instead.

    ``accept_unusual`` waives every site's plausibility checks; the collection's ``source``
    records it.
    """
    import xarray as xr

    path = os.fspath(path)
    if not os.path.exists(path):
        raise FileNotFoundError(f"{path}: no such profile collection")
    try:
        ds = xr.open_dataset(path, engine="h5netcdf")
    except (OSError, ValueError) as exc:
        raise ProfileError(f"{path}: not a netCDF file specforce can read ({exc})") from None
    with ds:
        found, ignored = {}, []
        for name in list(ds.coords) + list(ds.data_vars):
            quantity = netcdf_quantity(name, ds[name].attrs)
            if quantity is None or quantity in found:
                if name not in _SITE_VARIABLES and name not in ds.dims:
                    ignored.append(name)
                continue
            found[quantity] = name
        for need in ("pressure", "temperature"):
            if need not in found:
                raise ProfileError(f"{path}: no {need} variable; see profiles/README.md (profile collections)")
        pvar = ds[found["pressure"]]
        level_dim = pvar.dims[-1]
        site_dims = [d for q in found.values() for d in ds[q].dims if d != level_dim]
        site_dims = sorted(set(site_dims))
        if len(site_dims) > 1:
            raise ProfileError(f"{path}: the profiles vary along {', '.join(site_dims)}; a collection has one site "
                               f"dimension besides the level dimension {level_dim!r} (stack the others into one first)")
        if not site_dims:
            raise ProfileError(f"{path}: every variable is on {level_dim!r} alone: that is one profile; "
                               f"use it with --profile, or add a site dimension")
        site_dim = site_dims[0]
        nsite, nlev = ds.sizes[site_dim], ds.sizes[level_dim]
        columns, arrays = [], []
        for quantity, name in found.items():
            var = ds[name]
            if not set(var.dims) <= {site_dim, level_dim} or level_dim not in var.dims:
                raise ProfileError(f"{path}: variable {name} is on {var.dims}; profile quantities go on "
                                   f"({site_dim}, {level_dim}) or ({level_dim},)")
            unit = netcdf_unit(path, name, quantity, var.attrs)
            values = var.transpose(*[d for d in (site_dim, level_dim) if d in var.dims]).values.astype(float)
            arrays.append(np.broadcast_to(values, (nsite, nlev)))
            columns.append(f"{quantity}_{unit}")
        site_values = {}
        for name, unit in _SITE_VARIABLES.items():
            if name in ds:
                var = ds[name]
                if var.dims != (site_dim,):
                    raise ProfileError(f"{path}: {name} must be on ({site_dim},), it is on {var.dims}")
                units = str(var.attrs.get("units", unit))
                if units != unit:
                    raise ProfileError(f"{path}: {name} has units {units!r}; use {unit!r}")
                site_values[name] = var.values.astype(float)
        labels = ds[site_dim].values if site_dim in ds.coords else np.arange(nsite)
        attrs = dict(ds.attrs)
    if ignored:
        warnings.warn(ProfileWarning(f"{path}: ignored {', '.join(ignored)} (not a profile quantity specforce reads)"),
                      stacklevel=2)
    data = np.stack(arrays, axis=-1)  # site, level, column
    pcol = columns.index(next(c for c in columns if c.startswith("pressure_")))
    profiles = []
    for i in range(nsite):
        rows = data[i][np.isfinite(data[i][:, pcol])]  # padding levels have no pressure
        meta = {"name": f"{site_dim} {labels[i]}", "source": path}
        if "surface_temperature" in site_values:
            meta["surface_temperature_K"] = site_values["surface_temperature"][i]
        if "surface_emissivity" in site_values:
            meta["surface_emissivity"] = site_values["surface_emissivity"][i]
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ProfileWarning)  # per-site notes would drown the log
                profiles.append(profile_from_columns(columns, rows, meta, f"{path}, {site_dim} {labels[i]}",
                                                     accept_unusual))
        except ProfileError as exc:
            profiles.append(exc)
    weights = check_weights(site_values.get("weight"), nsite, path) if "weight" in site_values else None
    source = attrs.get("title", path) if isinstance(attrs.get("title"), str) else path
    return ProfileCollection(site_dim, np.asarray(labels), tuple(profiles), weights,
                             source + _checks_note(labels, profiles))


def write_profile_collection(collection, path):
    """Write profiles as a profile collection (netCDF), the layout :func:`read_profile_collection` reads.

    Parameters
    ----------
    collection : ProfileCollection or sequence of Profile or str
        Sites that could not be read are refused (nothing is written).
    path : str or os.PathLike
        The netCDF file to write (atomically).
    """
    import xarray as xr

    from .._version import __version__

    coll = collection if isinstance(collection, ProfileCollection) else collect_profiles(collection)
    if coll.errors:
        i, msg = next(iter(coll.errors.items()))
        raise ProfileError(f"profile {coll.labels[i]} cannot be read, so the collection is not written: {msg}")
    profs = coll.profiles
    nlev = max(p.nlevels for p in profs)
    gases = [g for g in GASES if any(g in p.vmr for p in profs)]

    def padded(get):
        out = np.full((len(profs), nlev), np.nan)
        for i, p in enumerate(profs):
            v = get(p)
            if v is not None:
                out[i, : p.nlevels] = v
        return out

    dim, lev = coll.dimension, "level"
    data = {
        "pressure": ((dim, lev), padded(lambda p: p.pressure), {"units": "Pa", "standard_name": "air_pressure"}),
        "temperature": ((dim, lev), padded(lambda p: p.temperature), {"units": "K", "standard_name": "air_temperature"}),
        "altitude": ((dim, lev), padded(lambda p: p.altitude), {"units": "m", "standard_name": "height",
                                                                   "long_name": "height above the surface"}),
        "surface_temperature": ((dim,), np.array([p.surface_temperature for p in profs]), {"units": "K"}),
        "surface_emissivity": ((dim,), np.array([p.surface_emissivity for p in profs]), {"units": "1"}),
    }
    for g in gases:
        data[g] = ((dim, lev), padded(lambda p, g=g: p.vmr.get(g)), {"units": "1", "long_name": f"{g} mole fraction"})
    if coll.weights is not None:
        data["weight"] = ((dim,), coll.weights, {"units": "1", "long_name": "weight of the site in means"})
    labels = np.asarray([str(x) for x in coll.labels]) if coll.labels.dtype.kind in "OUS" else coll.labels
    ds = xr.Dataset({k: xr.Variable(*v) for k, v in data.items()}, coords={dim: labels})
    ds.attrs.update({"title": "specforce profile collection", "source": coll.source,
                     "history": f"written by specforce {__version__}", "Conventions": "CF-1.10"})
    write_netcdf(ds, path)
