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
import re
from importlib import resources

import numpy as np

from ..radiation.atmosphere import GASES, Profile, hypsometric_altitude
from ..errors import ProfileError
from ..molecular.gases import gas_by_standard_name
from .files import atomic_path

__all__ = ["BUNDLED_PROFILES", "load_profile", "read_profile_text", "read_profile_csv", "write_profile_text",
           "describe_file"]

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


def _profile_from_columns(columns, data, meta, source, accept_unusual=False, where=None):
    values = {}
    vmr = {}
    for col, arr in zip(columns, data.T):
        name, gas, factor = _column_factor(col, source)
        if name in values or name in vmr:
            raise ProfileError(f"{source}: {name} is given twice (column '{col}' and another); keep one")
        if factor == "C":
            arr = arr + 273.15
            factor = 1.0
        with np.errstate(over="ignore", invalid="ignore"):  # out-of-range values are reported by Profile
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
        with np.errstate(all="ignore"):  # impossible pressures or temperatures are reported by Profile
            z = hypsometric_altitude(p, t, vmr.get("H2O", np.zeros_like(p))[order]) if p.size else p
    vmr = {g: v[order] for g, v in vmr.items()}
    try:
        return Profile(
            pressure=p, temperature=t, altitude=z - z[0] if z.size else z, vmr=vmr,
            surface_temperature=_meta_number(meta, "surface_temperature_K", None, source),
            surface_emissivity=_meta_number(meta, "surface_emissivity", 1.0, source),
            name=meta.get("name", "profile"), source=meta.get("source", source), accept_unusual=accept_unusual,
        )
    except ProfileError as exc:
        if str(exc).startswith(source):
            raise
        message = str(exc)
        if where is not None:  # the profile counts levels from the surface (0); name the file's line of each
            message = re.sub(r"\blevel (\d+)\b", lambda m: f"level {m.group(1)} ({where[order[int(m.group(1))]]})"
                             if int(m.group(1)) < order.size else m.group(0), message)
        elif not np.array_equal(order, np.arange(order.size)):
            message += " (levels counted from the surface, 0, after sorting by pressure)"
        raise ProfileError(f"{source}: {message}") from None


def _meta_number(meta, key, default, source):
    if key not in meta:
        return default
    try:
        return float(meta[key])
    except ValueError:
        raise ProfileError(f"{source}: {key}: {meta[key]!r} is not a number") from None


def read_profile_text(path_or_text, *, source=None, accept_unusual=False):
    """Read a profile in specforce's plain-text format (see ``profiles/README.md``).

    Lines starting with ``#`` hold ``key: value`` metadata; the first non-comment
    line names the columns with their units (e.g. ``pressure_hPa``); the rest
    are numbers, one level per line, in any order of pressure. A byte-order mark is
    skipped. ``accept_unusual`` waives the plausibility checks (see :class:`Profile`).
    """
    if "\n" in str(path_or_text):
        text, src = str(path_or_text).lstrip("\ufeff"), source or "<text>"
    else:
        src = source or str(path_or_text)
        try:
            with open(path_or_text, encoding="utf-8-sig") as fh:
                text = fh.read()
        except FileNotFoundError:
            raise FileNotFoundError(f"{path_or_text}: no such profile file") from None
        except UnicodeDecodeError:
            raise ProfileError(f"{path_or_text}: not a profile (plain text, CSV or netCDF); it is "
                               f"{describe_file(path_or_text)}") from None
    meta, rows, columns, where = {}, [], None, []
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
        values = []
        for col, x in zip(columns, parts):
            try:
                values.append(float(x))
            except ValueError:
                raise ProfileError(f"{src}, line {lineno}, column {col}: {x!r} is not a number") from None
        rows.append(values)
        where.append(f"line {lineno}")
    if columns is None or not rows:
        what = f"; it is {describe_file(path_or_text)}" if source is None and os.path.exists(str(path_or_text)) else ""
        raise ProfileError(f"{src}: no column header or no data lines (see profiles/README.md for the format){what}")
    return _profile_from_columns(columns, np.array(rows), meta, src, accept_unusual, where)


def read_profile_csv(path, accept_unusual=False):
    """Read a profile from CSV with a header of NAME_UNIT columns (e.g. ``pressure_hPa,temperature_K,H2O_ppmv``).

    Errors name the file, the row (1-based, counting the header) and the column. A
    byte-order mark (as spreadsheets write) is skipped. Columns separated by ``;`` are
    refused with a message: such files usually come with decimal commas (``1013,25``),
    which cannot be told from a separator safely.
    """
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            rows = [(i, r) for i, r in enumerate(csv.reader(fh), 1) if r and not r[0].lstrip().startswith("#")]
    except UnicodeDecodeError:
        raise ProfileError(f"{path}: not a text (CSV) file; it is {describe_file(path)}") from None
    except csv.Error as exc:
        raise ProfileError(f"{path}: not valid CSV ({exc})") from None
    if len(rows) < 3:
        raise ProfileError(f"{path}: needs a header row and at least two levels")
    header = [c.strip() for c in rows[0][1]]
    if len(header) == 1 and ";" in header[0]:
        raise ProfileError(
            f"{path}, row {rows[0][0]}: the columns are separated by ';' ({header[0][:60]!r}), as spreadsheets "
            f"write CSV in locales with decimal commas; save it with ',' between columns and '.' as the decimal "
            f"point (or as specforce's plain-text format, columns separated by spaces)")
    data = []
    for lineno, r in rows[1:]:
        if len(r) != len(header):
            raise ProfileError(f"{path}, row {lineno}: {len(r)} values for {len(header)} columns ({', '.join(header)})")
        values = []
        for col, x in zip(header, r):
            try:
                values.append(float(x))
            except ValueError:
                raise ProfileError(f"{path}, row {lineno}, column {col}: {x!r} is not a number") from None
        data.append(values)
    return _profile_from_columns(header, np.array(data), {"name": os.path.basename(str(path))}, str(path),
                                 accept_unusual, [f"row {lineno}" for lineno, _ in rows[1:]])


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


def load_profile(name_or_path, accept_unusual=False):
    """Load a bundled profile by name (``mls``, ``tropical``, ...) or a file (.txt, .csv, .nc).

    Bundled names: ``tropical``, ``mls``, ``mlw``, ``sas``, ``saw``, ``usstd`` (the six
    AFGL models of Anderson et al. 1986) and ``demo`` (an invented sounding).
    ``accept_unusual`` lets a profile through that fails the plausibility checks (a high
    plateau, a very dry column); its outputs record the waiver (see :class:`Profile`).
    """
    key = str(name_or_path)
    key = _ALIASES.get(key, key)
    if key in BUNDLED_PROFILES:
        text = resources.files("specforce.profiles").joinpath(BUNDLED_PROFILES[key]).read_text(encoding="utf-8")
        return read_profile_text(text, source=f"bundled profile '{key}'", accept_unusual=accept_unusual)
    low = key.lower()
    if not os.path.exists(key):
        raise ProfileError(
            f"profile {key!r} is neither a bundled profile ({', '.join(BUNDLED_PROFILES)}) nor an existing file"
        )
    if low.endswith(".csv"):
        return read_profile_csv(key, accept_unusual)
    if low.endswith((".nc", ".nc4", ".netcdf")):
        return _read_profile_netcdf(key, accept_unusual)
    return read_profile_text(key, accept_unusual=accept_unusual)


# netCDF variable names (besides the GASES) and their CF standard names, for the quantities a profile holds;
# the gases' CF standard names are in the gas registry (specforce.molecular.gases)
_NC_NAMES = {
    "pressure": ("pressure", "air_pressure", "p", "pres", "plev", "lev"),
    "temperature": ("temperature", "air_temperature", "t", "ta", "temp"),
    "altitude": ("altitude", "height", "z", "zg", "alt"),
}
_NC_STANDARD = {"air_pressure": "pressure", "air_temperature": "temperature", "height": "altitude",
                "altitude": "altitude", "geopotential_height": "altitude"}
_NC_UNITS = {"Pa": "Pa", "hPa": "hPa", "mbar": "hPa", "mb": "hPa", "kPa": "kPa", "K": "K", "degC": "C", "m": "m",
             "km": "km", "mol mol-1": "vmr", "mol/mol": "vmr", "1": "vmr", "": None, "ppmv": "ppmv", "ppm": "ppmv",
             "1e-6": "ppmv", "ppbv": "ppbv", "ppb": "ppbv", "1e-9": "ppbv"}


def netcdf_quantity(name, attrs):
    """The profile quantity a netCDF variable holds ('pressure', 'temperature', 'altitude' or a gas), or None.

    By variable name first (``plev``, ``ta``, ``H2O``, ...), then by CF ``standard_name``.
    """
    std = str(attrs.get("standard_name", ""))
    quantity = next((q for q, names in _NC_NAMES.items() if name.lower() in names), None)
    quantity = quantity or _NC_STANDARD.get(std) or getattr(gas_by_standard_name(std), "formula", None)
    if quantity is None and name in GASES:
        quantity = name
    return quantity


def netcdf_unit(path, name, quantity, attrs):
    """The column unit (as in ``pressure_hPa``) of a netCDF variable's ``units``; errors name the file and variable."""
    units = str(attrs.get("units", "")).strip()
    unit = _NC_UNITS.get(units)
    if unit is None:
        raise ProfileError(f"{path}: variable {name} has units {units!r}; use Pa, hPa, K, m, km, 1, mol mol-1, "
                           f"ppmv or ppbv")
    if quantity in GASES and unit not in ("vmr", "ppmv", "ppbv"):
        raise ProfileError(f"{path}: variable {name} ({quantity}) has units {units!r}; a mixing ratio needs "
                           f"1, mol mol-1, ppmv or ppbv")
    if quantity not in GASES and unit not in _UNIT_FACTORS[quantity] and unit != "C":
        raise ProfileError(f"{path}: variable {name} ({quantity}) has units {units!r}, not a unit of {quantity}")
    return unit


def profile_from_columns(columns, data, meta, source, accept_unusual=False):
    """A :class:`Profile` from named columns (``pressure_hPa``, ``CO2_ppmv``, ...; rows are levels).

    Parameters
    ----------
    columns : sequence of str
        ``QUANTITY_UNIT`` names (see ``profiles/README.md``).
    data : numpy.ndarray
        [levels, columns] in the columns' units.
    meta : dict
        ``name``, ``source``, ``surface_temperature_K``, ``surface_emissivity`` (strings or numbers).
    source : str
        Where the data came from, for messages.
    accept_unusual : bool
        Waive the plausibility checks (see :class:`Profile`).
    """
    return _profile_from_columns(columns, np.asarray(data, dtype=float), meta, source, accept_unusual)


def _read_profile_netcdf(path, accept_unusual=False):
    """A profile from netCDF: one variable (or coordinate) per quantity, each with a ``units`` attribute.

    Quantities are found by name (``pressure``, ``plev``, ``temperature``, ``ta``, ...; the gas
    formulas) or by CF standard name (``air_pressure``, ``mole_fraction_of_ozone_in_air``, ...).
    Pressure may be the dimension coordinate. Other variables (``lat``, ``lon``, ``time`` ...) are
    ignored with a note (a :class:`~specforce.errors.ProfileWarning`).
    """
    import warnings

    import xarray as xr

    from ..errors import ProfileWarning

    try:
        ds = xr.open_dataset(path, engine="h5netcdf")
    except (OSError, ValueError) as exc:
        raise ProfileError(f"{path}: not a netCDF file specforce can read ({exc})") from None
    with ds:
        columns, data, ignored, size = [], [], [], None
        for name in list(ds.coords) + list(ds.data_vars):
            var = ds[name]
            quantity = netcdf_quantity(name, var.attrs)
            if quantity is not None and var.ndim > 1:
                dims = ", ".join(f"{d}={n}" for d, n in var.sizes.items())
                raise ProfileError(
                    f"{path}: variable {name} ({quantity}) is on ({dims}): more than one profile, but a profile "
                    f"file holds one column. For many profiles use a profile collection: 'specforce batch run "
                    f"{path}' reads a (site, level) file like this one as it is (see profiles/README.md, Profile "
                    f"collections; 'specforce batch pack' builds one from single profiles); for one of them, "
                    f"select it first, e.g. ds.isel({next(iter(var.dims))}=0) in xarray")
            if quantity is None or var.ndim != 1 or any(quantity == c.rsplit("_", 1)[0] for c in columns):
                if not (name in var.dims and quantity is None and name in ds.dims and name not in ds.coords):
                    ignored.append(name)
                continue
            unit = netcdf_unit(path, name, quantity, var.attrs)
            values = np.asarray(var.values, dtype=float)
            if size is not None and values.size != size:
                raise ProfileError(f"{path}: variable {name} has {values.size} values, others {size}; give one per level")
            size = values.size
            columns.append(f"{quantity}_{unit}")
            data.append(values)
        meta = {k: str(v) for k, v in ds.attrs.items()}
    if ignored:
        warnings.warn(ProfileWarning(f"{path}: ignored {', '.join(ignored)} (not a profile quantity specforce reads)"),
                      stacklevel=3)
    if not columns:
        raise ProfileError(f"{path}: no profile variables found (pressure, temperature, gases); see profiles/README.md")
    return _profile_from_columns(columns, np.array(data).T, {"name": meta.get("name", os.path.basename(str(path))),
                                                             **meta}, str(path), accept_unusual)


def _describe_hdf5(path):
    """Tell a line store, a saved result and other netCDF-4/HDF5 files apart."""
    import h5py

    from .linestore import FORMAT_NAME

    try:
        with h5py.File(path, "r") as h5:
            attrs = dict(h5.attrs)
            names = list(h5)
    except OSError:
        return "a damaged HDF5 file"
    fmt = attrs.get("format")
    if isinstance(fmt, bytes):
        fmt = fmt.decode()
    if fmt == FORMAT_NAME:
        return "a specforce line store (use it with --lines)"
    if any(isinstance(v, (str, bytes)) and "specforce" in str(v) for v in attrs.values()):
        return "a specforce netCDF file"
    return f"an HDF5/netCDF-4 file with {', '.join(names[:6]) or 'no variables'}"


def describe_file(path):
    """What a file looks like, in words, for messages about files that are not what was expected."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(512)
    except OSError as exc:
        return f"unreadable ({exc.strerror})"
    if head.startswith(b"\x89HDF\r\n\x1a\n"):
        return _describe_hdf5(path)
    if head.startswith(b"CDF"):
        return "a netCDF-3 file"
    if head[:2] == b"\x1f\x8b" or head[:3] == b"BZh" or head[:6] == b"\xfd7zXZ\x00" or head[:4] == b"PK\x03\x04":
        return "a compressed file"
    try:
        text = head.decode("utf-8")
    except UnicodeDecodeError:
        return "a binary file"
    first = text.splitlines()[0] if text else ""
    if len(first.rstrip("\r")) == 160 and first[:3].strip().isdigit():
        return "a file of 160-character line records (import it with 'specforce lines import')"
    return f"a text file beginning {first[:60]!r}"
