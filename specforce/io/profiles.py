"""Profile files: specforce's plain-text format, CSV and netCDF, and the bundled profiles.

The plain-text format (documented in ``profiles/README.md``): ``#`` lines hold
``key: value`` metadata, the first other line names the columns with their units
(``pressure_hPa``, ``temperature_K``, ``H2O_ppmv``, ...), then one level per line.
CSV files take the same column names. netCDF files hold one variable per
quantity with a ``units`` attribute. Units are converted to SI here, once.
"""

from __future__ import annotations

import csv
import os
from importlib import resources

import numpy as np

from ..atmosphere import GASES, Profile
from ..constants import DRY_AIR_MOLAR_MASS, GAS_CONSTANT, STANDARD_GRAVITY, WATER_MOLAR_MASS
from ..errors import ProfileError
from .files import atomic_path

__all__ = ["BUNDLED_PROFILES", "load_profile", "read_profile_text", "read_profile_csv", "write_profile_text"]

BUNDLED_PROFILES = {
    "tropical": "afgl_tropical.txt",
    "mls": "afgl_midlatitude_summer.txt",
    "mlw": "afgl_midlatitude_winter.txt",
    "sas": "afgl_subarctic_summer.txt",
    "saw": "afgl_subarctic_winter.txt",
    "usstd": "afgl_us_standard.txt",
    "demo": "demo_kestrel_ridge.txt",
}
_ALIASES = {
    "midlatitude_summer": "mls",
    "midlatitude_winter": "mlw",
    "subarctic_summer": "sas",
    "subarctic_winter": "saw",
    "us_standard": "usstd",
}

_UNIT_FACTORS = {
    "pressure": {"Pa": 1.0, "hPa": 100.0, "mb": 100.0, "kPa": 1000.0, "atm": 101325.0},
    "altitude": {"m": 1.0, "km": 1000.0},
    "temperature": {"K": 1.0},
    "vmr": {"vmr": 1.0, "ppmv": 1e-6, "ppm": 1e-6, "ppbv": 1e-9, "ppb": 1e-9, "percent": 1e-2},
}


def _column_factor(column, source):
    """Split a header like 'pressure_hPa' or 'CO2_ppmv' into (quantity, gas, factor)."""
    if "_" not in column:
        raise ProfileError(f"{source}: column '{column}' has no unit; write it as NAME_UNIT, e.g. pressure_hPa or CO2_ppmv")
    name, unit = column.rsplit("_", 1)
    if name in ("pressure", "altitude", "temperature"):
        if name == "temperature" and unit in ("C", "degC"):
            return name, None, "C"
        factors = _UNIT_FACTORS[name]
    elif name in GASES:
        factors = _UNIT_FACTORS["vmr"]
    else:
        raise ProfileError(f"{source}: unknown column '{column}'; use pressure_, temperature_, altitude_ or a gas of {GASES}")
    if unit not in factors:
        raise ProfileError(f"{source}: column '{column}': unit '{unit}' is not one of {', '.join(factors)}")
    return name, (name if name in GASES else None), factors[unit]


def _profile_from_columns(columns, data, meta, source):
    values = {}
    vmr = {}
    for col, arr in zip(columns, data.T):
        name, gas, factor = _column_factor(col, source)
        if factor == "C":
            arr = arr + 273.15
            factor = 1.0
        if gas:
            vmr[gas] = arr * factor
        else:
            values[name] = arr * factor
    for need in ("pressure", "temperature"):
        if need not in values:
            raise ProfileError(f"{source}: no {need} column; add e.g. '{need}_{'hPa' if need == 'pressure' else 'K'}'")
    order = np.argsort(-values["pressure"], kind="stable")
    p = values["pressure"][order]
    t = values["temperature"][order]
    if "altitude" in values:
        z = values["altitude"][order]
    else:
        z = _hypsometric_altitude(p, t, vmr.get("H2O", np.zeros_like(p))[order])
    vmr = {g: v[order] for g, v in vmr.items()}
    return Profile(
        pressure=p, temperature=t, altitude=z - z[0], vmr=vmr,
        surface_temperature=float(meta["surface_temperature_K"]) if "surface_temperature_K" in meta else None,
        surface_emissivity=float(meta.get("surface_emissivity", 1.0)),
        name=meta.get("name", "profile"), source=meta.get("source", source),
    )


def _hypsometric_altitude(p, t, h2o):
    mm = DRY_AIR_MOLAR_MASS * (1 - h2o) + WATER_MOLAR_MASS * h2o
    tv = t * DRY_AIR_MOLAR_MASS / mm
    dz = GAS_CONSTANT / (DRY_AIR_MOLAR_MASS * STANDARD_GRAVITY) * 0.5 * (tv[1:] + tv[:-1]) * np.log(p[:-1] / p[1:])
    return np.concatenate([[0.0], np.cumsum(dz)])


def read_profile_text(path_or_text, *, source=None):
    """Read a profile in specforce's plain-text format (see ``profiles/README.md``).

    Lines starting with ``#`` hold ``key: value`` metadata; the first non-comment
    line names the columns with their units (e.g. ``pressure_hPa``); the rest
    are numbers, one level per line, in any order of pressure.
    """
    if "\n" in str(path_or_text):
        text, src = str(path_or_text), source or "<text>"
    else:
        src = source or str(path_or_text)
        try:
            with open(path_or_text, encoding="utf-8") as fh:
                text = fh.read()
        except FileNotFoundError:
            raise FileNotFoundError(f"{path_or_text}: no such profile file") from None
    meta, rows, columns = {}, [], None
    for lineno, line in enumerate(text.splitlines(), 1):
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            if ":" in s:
                k, v = s[1:].split(":", 1)
                meta.setdefault(k.strip(), v.strip())
            continue
        if columns is None:
            columns = s.split()
            continue
        parts = s.split()
        if len(parts) != len(columns):
            raise ProfileError(f"{src}, line {lineno}: {len(parts)} values for {len(columns)} columns ({' '.join(columns)})")
        try:
            rows.append([float(x) for x in parts])
        except ValueError:
            raise ProfileError(f"{src}, line {lineno}: not all values are numbers: {s!r}") from None
    if columns is None or not rows:
        raise ProfileError(f"{src}: no column header or no data lines")
    return _profile_from_columns(columns, np.array(rows), meta, src)


def read_profile_csv(path):
    """Read a profile from CSV with a header of NAME_UNIT columns (e.g. ``pressure_hPa,temperature_K,H2O_ppmv``)."""
    with open(path, newline="", encoding="utf-8") as fh:
        reader = csv.reader(fh)
        rows = [r for r in reader if r and not r[0].lstrip().startswith("#")]
    if len(rows) < 3:
        raise ProfileError(f"{path}: needs a header row and at least two levels")
    header = [c.strip() for c in rows[0]]
    try:
        data = np.array([[float(x) for x in r] for r in rows[1:]])
    except ValueError as exc:
        raise ProfileError(f"{path}: a value is not a number ({exc})") from None
    return _profile_from_columns(header, data, {"name": str(path)}, str(path))


def write_profile_text(profile, path):
    """Write a profile in specforce's plain-text format (atomically)."""
    gases = [g for g in GASES if g in profile.vmr]
    lines = [
        "# specforce-profile: 1",
        f"# name: {profile.name}",
        f"# source: {profile.source}",
        f"# surface_temperature_K: {profile.surface_temperature:.3f}",
        f"# surface_emissivity: {profile.surface_emissivity:g}",
        "altitude_km pressure_hPa temperature_K " + " ".join(f"{g}_ppmv" for g in gases),
    ]
    for i in range(profile.nlevels):
        vals = [f"{profile.altitude[i] / 1000:.3f}", f"{profile.pressure[i] / 100:.6g}", f"{profile.temperature[i]:.3f}"]
        vals += [f"{profile.vmr[g][i] * 1e6:.6g}" for g in gases]
        lines.append(" ".join(vals))
    with atomic_path(path) as tmp:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write("\n".join(lines) + "\n")


def load_profile(name_or_path):
    """Load a bundled profile by name (``mls``, ``tropical``, ...) or a file (.txt, .csv, .nc).

    Bundled names: ``tropical``, ``mls``, ``mlw``, ``sas``, ``saw``, ``usstd`` (the six
    AFGL models of Anderson et al. 1986) and ``demo`` (an invented sounding).
    """
    key = str(name_or_path)
    key = _ALIASES.get(key, key)
    if key in BUNDLED_PROFILES:
        text = resources.files("specforce.profiles").joinpath(BUNDLED_PROFILES[key]).read_text(encoding="utf-8")
        return read_profile_text(text, source=f"bundled profile '{key}'")
    low = key.lower()
    if not os.path.exists(key):
        raise ProfileError(
            f"profile {key!r} is neither a bundled profile ({', '.join(BUNDLED_PROFILES)}) nor an existing file"
        )
    if low.endswith(".csv"):
        return read_profile_csv(key)
    if low.endswith((".nc", ".nc4", ".netcdf")):
        return _read_profile_netcdf(key)
    return read_profile_text(key)


def _read_profile_netcdf(path):
    import xarray as xr

    with xr.open_dataset(path) as ds:
        columns, data = [], []
        for var in ds.data_vars:
            units = ds[var].attrs.get("units", "")
            unit = {"Pa": "Pa", "hPa": "hPa", "K": "K", "m": "m", "km": "km", "mol mol-1": "vmr", "1": "vmr",
                    "ppmv": "ppmv", "ppbv": "ppbv"}.get(units)
            if unit is None:
                raise ProfileError(f"{path}: variable {var} has units {units!r}; use Pa/hPa, K, m/km, mol mol-1, ppmv or ppbv")
            columns.append(f"{var}_{unit}")
            data.append(np.asarray(ds[var].values, dtype=float))
        meta = {k: str(v) for k, v in ds.attrs.items()}
    return _profile_from_columns(columns, np.array(data).T, {"name": meta.get("name", str(path)), **meta}, str(path))
