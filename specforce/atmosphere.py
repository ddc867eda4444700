"""Atmospheric profiles: validation, standard atmospheres, humidity and layering.

A :class:`Profile` holds levels ordered from the surface upward: pressure [Pa],
temperature [K], altitude [m] and gas volume mixing ratios [mol mol-1], plus
the surface temperature [K] and emissivity. :func:`layers` turns it into
homogeneous layers with column amounts for radiative transfer.

Bundled profiles live in ``profiles/`` in a plain-text format of our own (see
``profiles/README.md``): the six AFGL model atmospheres (Anderson et al. 1986)
and an invented demo sounding. The U.S. Standard Atmosphere 1976 temperature and
pressure are also generated here from their defining layer table.
"""

from __future__ import annotations

import csv
import math
import warnings
from dataclasses import dataclass, field, replace
from importlib import resources

import numpy as np

from .constants import AVOGADRO, GAS_CONSTANT, STANDARD_GRAVITY
from .errors import ProfileError

__all__ = [
    "Profile",
    "Layers",
    "GASES",
    "BUNDLED_PROFILES",
    "load_profile",
    "read_profile_text",
    "write_profile_text",
    "read_profile_csv",
    "us_standard_1976",
    "saturation_vapor_pressure",
    "vmr_from_relative_humidity",
    "relative_humidity_from_vmr",
    "specific_humidity_from_vmr",
    "vmr_from_specific_humidity",
    "dewpoint_from_vmr",
    "manabe_wetherald_relative_humidity",
    "layers",
    "refine",
    "DRY_AIR_MOLAR_MASS",
    "WATER_MOLAR_MASS",
]

#: Gases a profile may carry, in a fixed order.
GASES = ("H2O", "CO2", "O3", "N2O", "CO", "CH4", "O2")
#: Molar mass of dry air [kg mol-1], U.S. Standard Atmosphere 1976 (M0).
DRY_AIR_MOLAR_MASS = 0.0289644
#: Molar mass of water [kg mol-1] (H2O with natural isotopes; IUPAC atomic weights).
WATER_MOLAR_MASS = 0.01801528

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


@dataclass
class Profile:
    """An atmospheric column on levels, surface first.

    Attributes
    ----------
    pressure : numpy.ndarray
        Level pressure [Pa], strictly decreasing upward.
    temperature : numpy.ndarray
        Level temperature [K].
    altitude : numpy.ndarray
        Level altitude above the surface [m], increasing upward.
    vmr : dict of str to numpy.ndarray
        Volume mixing ratios [mol mol-1] per gas (``GASES``).
    surface_temperature : float
        Skin temperature [K]; defaults to the lowest level's temperature.
    surface_emissivity : float
        Broadband longwave emissivity of the surface, 0-1 (default 1).
    name : str
        Short label used in outputs.
    source : str
        Where the numbers come from (citation or file).
    """

    pressure: np.ndarray
    temperature: np.ndarray
    altitude: np.ndarray
    vmr: dict
    surface_temperature: float | None = None
    surface_emissivity: float = 1.0
    name: str = "profile"
    source: str = ""
    check_saturation: bool = field(default=True, repr=False)

    def __post_init__(self):
        self.pressure = np.asarray(self.pressure, dtype=float)
        self.temperature = np.asarray(self.temperature, dtype=float)
        self.altitude = np.asarray(self.altitude, dtype=float)
        self.vmr = {g: np.asarray(v, dtype=float) * np.ones_like(self.pressure) for g, v in self.vmr.items()}
        if self.surface_temperature is None:
            self.surface_temperature = float(self.temperature[0]) if self.temperature.size else math.nan
        self.validate()

    @property
    def nlevels(self):
        """Number of levels."""
        return self.pressure.size

    def validate(self):
        """Check the profile; raise :class:`ProfileError` naming the level and quantity."""
        n = self.pressure.size
        where = f"profile '{self.name}'"
        if n < 2:
            raise ProfileError(f"{where}: needs at least 2 levels, got {n}")
        for label, arr in (("temperature", self.temperature), ("altitude", self.altitude)):
            if arr.shape != (n,):
                raise ProfileError(f"{where}: {label} has {arr.size} values but pressure has {n}; give one per level")
        for i in range(n):
            p = self.pressure[i]
            if not (math.isfinite(p) and p > 0):
                raise ProfileError(f"{where}, level {i}: pressure {p} Pa is not positive and finite")
            if i and not p < self.pressure[i - 1]:
                raise ProfileError(
                    f"{where}, level {i}: pressure {p:g} Pa is not below level {i - 1} ({self.pressure[i - 1]:g} Pa); "
                    f"levels must go from the surface upward with pressure strictly decreasing"
                )
            t = self.temperature[i]
            if not (100.0 <= t <= 400.0):
                raise ProfileError(
                    f"{where}, level {i}: temperature {t:g} K is outside 100-400 K; check the units (K, not degC)"
                )
        if np.any(np.diff(self.altitude) <= 0):
            i = int(np.argmax(np.diff(self.altitude) <= 0)) + 1
            raise ProfileError(f"{where}, level {i}: altitude {self.altitude[i]:g} m does not increase upward")
        for g, v in self.vmr.items():
            if g not in GASES:
                raise ProfileError(f"{where}: unknown gas {g!r}; known are {', '.join(GASES)}")
            if v.shape != (n,):
                raise ProfileError(f"{where}: {g} has {v.size} values but there are {n} levels")
            bad = np.flatnonzero(~np.isfinite(v) | (v < 0) | (v >= 1))
            if bad.size:
                i = int(bad[0])
                raise ProfileError(
                    f"{where}, level {i}: {g} mixing ratio {v[i]:g} mol/mol is not in [0, 1); "
                    f"give volume mixing ratios as fractions (1 ppmv = 1e-6)"
                )
        ts = self.surface_temperature
        if not (100.0 <= ts <= 400.0):
            raise ProfileError(f"{where}: surface temperature {ts:g} K is outside 100-400 K")
        if not (0.0 <= self.surface_emissivity <= 1.0):
            raise ProfileError(f"{where}: surface emissivity {self.surface_emissivity:g} is not in [0, 1]")
        if self.check_saturation and "H2O" in self.vmr:
            rh = relative_humidity_from_vmr(self.vmr["H2O"], self.pressure, self.temperature)
            over = np.flatnonzero(rh > 1.01)
            if over.size:
                i = int(over[0])
                warnings.warn(
                    f"{where}, level {i}: water vapour is above saturation (relative humidity {rh[i]:.0%} "
                    f"at {self.pressure[i] / 100:g} hPa, {self.temperature[i]:g} K)",
                    stacklevel=3,
                )

    def with_vmr(self, gas, value):
        """Return a copy with one gas's mixing ratio replaced (scalar or per level) [mol mol-1]."""
        vmr = dict(self.vmr)
        vmr[gas] = np.asarray(value, dtype=float) * np.ones_like(self.pressure)
        return replace(self, vmr=vmr)

    def copy(self, **changes):
        """Return a validated copy with some attributes changed."""
        vmr = {g: v.copy() for g, v in self.vmr.items()}
        return replace(self, **{"vmr": vmr, **changes})


# ------------------------------------------------------------------ humidity


def saturation_vapor_pressure(temperature, phase="liquid"):
    """Saturation vapour pressure of water [Pa].

    Parameters
    ----------
    temperature : array_like
        T [K], 123-332 K for liquid and 110-273.16 K for ice per the source.
    phase : {"liquid", "ice", "auto"}
        Over liquid water, over ice, or ice below 273.16 K and liquid above.

    Notes
    -----
    Murphy & Koop (2005), QJRMS 131, 1539-1565, Eq. (10) for liquid:

    .. math:: \\ln e_w = 54.842763 - 6763.22/T - 4.210 \\ln T + 0.000367 T
              + \\tanh[0.0415 (T - 218.8)] (53.878 - 1331.22/T - 9.44523 \\ln T + 0.014025 T)

    and Eq. (7) for ice: ln e_i = 9.550426 - 5723.265/T + 3.53068 ln T - 0.00728332 T.
    Coefficients from memory (high confidence); the tests check the triple point.
    """
    t = np.asarray(temperature, dtype=float)
    lw = (
        54.842763 - 6763.22 / t - 4.210 * np.log(t) + 0.000367 * t
        + np.tanh(0.0415 * (t - 218.8)) * (53.878 - 1331.22 / t - 9.44523 * np.log(t) + 0.014025 * t)
    )
    li = 9.550426 - 5723.265 / t + 3.53068 * np.log(t) - 0.00728332 * t
    if phase == "liquid":
        return np.exp(lw)
    if phase == "ice":
        return np.exp(li)
    if phase == "auto":
        return np.exp(np.where(t < 273.16, li, lw))
    raise ValueError(f"phase must be 'liquid', 'ice' or 'auto', got {phase!r}")


def relative_humidity_from_vmr(vmr, pressure, temperature, phase="liquid"):
    """Relative humidity e / e_s [fraction] from a water-vapour volume mixing ratio."""
    return np.asarray(vmr) * np.asarray(pressure) / saturation_vapor_pressure(temperature, phase)


def vmr_from_relative_humidity(rh, pressure, temperature, phase="liquid"):
    """Water-vapour volume mixing ratio [mol mol-1] for relative humidity ``rh`` [fraction].

    x = rh e_s(T) / p (vapour pressure over total pressure).
    """
    return np.asarray(rh) * saturation_vapor_pressure(temperature, phase) / np.asarray(pressure)


def specific_humidity_from_vmr(vmr):
    """Specific humidity q [kg kg-1] from the volume mixing ratio x of water in moist air.

    q = x M_w / (x M_w + (1 - x) M_d).
    """
    x = np.asarray(vmr, dtype=float)
    return x * WATER_MOLAR_MASS / (x * WATER_MOLAR_MASS + (1 - x) * DRY_AIR_MOLAR_MASS)


def vmr_from_specific_humidity(q):
    """Volume mixing ratio [mol mol-1] from specific humidity q [kg kg-1] (inverse of the above)."""
    q = np.asarray(q, dtype=float)
    return q / WATER_MOLAR_MASS / (q / WATER_MOLAR_MASS + (1 - q) / DRY_AIR_MOLAR_MASS)


def dewpoint_from_vmr(vmr, pressure):
    """Dew point [K]: the temperature at which e_s (liquid) equals the vapour pressure x p."""
    from scipy.optimize import brentq

    e = np.atleast_1d(np.asarray(vmr) * np.asarray(pressure)).astype(float)
    out = np.array([brentq(lambda t, ei=ei: saturation_vapor_pressure(t) - ei, 150.0, 380.0) for ei in e])
    return out if np.ndim(vmr) or np.ndim(pressure) else float(out[0])


def manabe_wetherald_relative_humidity(pressure, surface_pressure, rh_surface=0.77):
    """Relative-humidity profile of Manabe & Wetherald (1967) [fraction].

    .. math:: RH = RH_* \\frac{Q - 0.02}{1 - 0.02}, \\quad Q = p / p_s

    Manabe & Wetherald (1967), JAS 24, 241, Eq. (2), with RH* = 0.77; set to 0
    where Q < 0.02 (the caller adds a stratospheric minimum).
    """
    q = np.asarray(pressure, dtype=float) / surface_pressure
    return np.maximum(rh_surface * (q - 0.02) / (1 - 0.02), 0.0)


# ------------------------------------------------------------------ US 1976

# U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562), Table 4: base geopotential height
# [m'], base temperature [K], lapse rate [K/m'] for the layers up to 84.852 km'.
_US76_LAYERS = (
    (0.0, 288.15, -6.5e-3),
    (11000.0, 216.65, 0.0),
    (20000.0, 216.65, 1.0e-3),
    (32000.0, 228.65, 2.8e-3),
    (47000.0, 270.65, 0.0),
    (51000.0, 270.65, -2.8e-3),
    (71000.0, 214.65, -2.0e-3),
    (84852.0, 186.946, 0.0),
)
_US76_R = 8.31432  # J mol-1 K-1, the 1976 value (not CODATA), as the standard defines it
_US76_RADIUS = 6356766.0  # m, r0 of the standard


def us_standard_1976(altitude):
    """Temperature [K] and pressure [Pa] of the U.S. Standard Atmosphere 1976.

    Parameters
    ----------
    altitude : array_like
        Geometric altitude Z [m], 0-86 km.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Temperature (molecular-scale, equal to kinetic below 80 km) [K] and pressure [Pa].

    Notes
    -----
    Geopotential height H = r0 Z / (r0 + Z); in each layer T = Tb + L (H - Hb) and
    p = pb (Tb / T)^(g0 M0 / (R* L)), or p = pb exp(-g0 M0 (H - Hb) / (R* Tb))
    where L = 0 (NOAA-S/T 76-1562, Eqs. 18, 33a, 33b). Base pressures follow
    from 101325 Pa at the surface.
    """
    z = np.asarray(altitude, dtype=float)
    if np.any((z < 0) | (z > 86000.0)):
        raise ValueError("us_standard_1976: altitude must lie in 0-86000 m")
    h = _US76_RADIUS * z / (_US76_RADIUS + z)
    g0m = STANDARD_GRAVITY * DRY_AIR_MOLAR_MASS / _US76_R
    base_p = [101325.0]
    for (hb, tb, lb), (hn, _, _) in zip(_US76_LAYERS[:-1], _US76_LAYERS[1:]):
        pb = base_p[-1]
        if lb == 0:
            base_p.append(pb * math.exp(-g0m * (hn - hb) / tb))
        else:
            base_p.append(pb * (tb / (tb + lb * (hn - hb))) ** (g0m / lb))
    t = np.empty_like(h)
    p = np.empty_like(h)
    for k, (hb, tb, lb) in enumerate(_US76_LAYERS[:-1]):
        hn = _US76_LAYERS[k + 1][0]
        sel = (h >= hb) & ((h < hn) | (k == len(_US76_LAYERS) - 2))
        tt = tb + lb * (h[sel] - hb)
        t[sel] = tt
        if lb == 0:
            p[sel] = base_p[k] * np.exp(-g0m * (h[sel] - hb) / tb)
        else:
            p[sel] = base_p[k] * (tb / tt) ** (g0m / lb)
    return t, p


# ------------------------------------------------------------------ files

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
    import os
    import tempfile

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
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".profile-", dir=folder)
    with os.fdopen(fd, "w") as fh:
        fh.write("\n".join(lines) + "\n")
    os.replace(tmp, path)


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
    import os

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


# ------------------------------------------------------------------ layers


@dataclass
class Layers:
    """Homogeneous layers between the levels of a profile (layer 0 at the bottom).

    Attributes
    ----------
    pressure : numpy.ndarray
        Representative (Curtis-Godson, mass-weighted) pressure [Pa].
    temperature : numpy.ndarray
        Representative (mass-weighted) temperature [K].
    pressure_bottom, pressure_top : numpy.ndarray
        Bounding level pressures [Pa].
    column : dict of str to numpy.ndarray
        Column amount of each gas [molecule cm-2].
    air_column : numpy.ndarray
        Column amount of (moist) air [molecule cm-2].
    vmr : dict of str to numpy.ndarray
        Mass-weighted mean mixing ratio of each gas [mol mol-1].
    """

    pressure: np.ndarray
    temperature: np.ndarray
    pressure_bottom: np.ndarray
    pressure_top: np.ndarray
    column: dict
    air_column: np.ndarray
    vmr: dict

    @property
    def nlayers(self):
        """Number of layers."""
        return self.pressure.size


def layers(profile, gravity=STANDARD_GRAVITY):
    """Split a profile into homogeneous layers with column amounts.

    Parameters
    ----------
    profile : Profile
        Levels from the surface upward.
    gravity : float
        Gravitational acceleration [m s-2]; default standard gravity g0 = 9.80665
        (U.S. Standard Atmosphere 1976).

    Returns
    -------
    Layers

    Notes
    -----
    Hydrostatic balance gives the moist-air column of a layer as
    N = (p_bottom - p_top) N_A / (g M), with M the molar mass of moist air,
    M = (1 - x_w) M_d + x_w M_w (M_d = 28.9644 g/mol from the U.S. Standard
    Atmosphere 1976). Temperature and mixing ratios vary linearly in pressure
    within a layer, so their mass-weighted means are the level averages; this
    is the Curtis-Godson approximation (Curtis 1952, QJRMS 78, 165; Godson
    1953, QJRMS 79, 367) for a uniformly mixed absorber, and specforce uses one
    representative (p, T) per layer for all gases.
    """
    p = profile.pressure
    pb, pt = p[:-1], p[1:]
    mean = lambda a: 0.5 * (a[:-1] + a[1:])  # noqa: E731
    vmr = {g: mean(v) for g, v in profile.vmr.items()}
    xw = vmr.get("H2O", np.zeros(pb.size))
    molar = (1.0 - xw) * DRY_AIR_MOLAR_MASS + xw * WATER_MOLAR_MASS
    air = (pb - pt) * AVOGADRO / (gravity * molar) * 1e-4  # m-2 -> cm-2
    return Layers(
        pressure=mean(p), temperature=mean(profile.temperature), pressure_bottom=pb, pressure_top=pt,
        column={g: v * air for g, v in vmr.items()}, air_column=air, vmr=vmr,
    )


def refine(profile, factor):
    """Return a profile with ``factor`` times as many layers, interpolated linearly in log-pressure.

    For convergence checks: results should change little as ``factor`` grows.
    """
    factor = int(factor)
    if factor < 1:
        raise ValueError("refine: factor must be a positive integer")
    if factor == 1:
        return profile.copy()
    lp = np.log(profile.pressure)
    s = np.arange(profile.nlevels)
    s_new = np.linspace(0, profile.nlevels - 1, (profile.nlevels - 1) * factor + 1)
    interp = lambda a: np.interp(s_new, s, a)  # noqa: E731
    lp_new = interp(lp)
    return Profile(
        pressure=np.exp(lp_new),
        temperature=np.interp(lp_new[::-1], lp[::-1], profile.temperature[::-1])[::-1],
        altitude=np.interp(lp_new[::-1], lp[::-1], profile.altitude[::-1])[::-1],
        vmr={g: np.interp(lp_new[::-1], lp[::-1], v[::-1])[::-1] for g, v in profile.vmr.items()},
        surface_temperature=profile.surface_temperature, surface_emissivity=profile.surface_emissivity,
        name=f"{profile.name} (refined x{factor})", source=profile.source, check_saturation=False,
    )
