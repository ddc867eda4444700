"""Atmospheric profiles: the profile model, its validation, standard atmospheres and layering.

A :class:`Profile` holds levels ordered from the surface upward: pressure [Pa],
temperature [K], altitude [m] and gas volume mixing ratios [mol mol-1], plus
the surface temperature [K] and emissivity. :func:`layers` turns it into
homogeneous layers with column amounts for radiative transfer. The U.S.
Standard Atmosphere 1976 temperature and pressure are generated here from their
defining layer table. Profile files, and the bundled AFGL profiles, are read and
written by :mod:`specforce.io.profiles`; humidity is in :mod:`specforce.humidity`.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field, replace

import numpy as np

from .constants import AVOGADRO, DRY_AIR_MOLAR_MASS, STANDARD_GRAVITY, WATER_MOLAR_MASS
from .humidity import relative_humidity_from_vmr
from .errors import ProfileError, ProfileWarning, SettingsError

__all__ = [
    "Profile",
    "Layers",
    "GASES",
    "us_standard_1976",
    "layers",
    "refine",
]

#: Largest surface pressure a profile may have [Pa]: above any surface on Earth (the highest
#: sea-level pressure recorded is about 1084 hPa; common knowledge, from memory).
MAX_SURFACE_PRESSURE = 110000.0
#: Relative humidity (over liquid water) above which a profile is refused as a unit mistake
#: [fraction]; between 1.01 and this, a warning.
MAX_RELATIVE_HUMIDITY = 1.5
#: Gases a profile may carry, in a fixed order.
GASES = ("H2O", "CO2", "O3", "N2O", "CO", "CH4", "O2")


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
            if i == 0 and p > MAX_SURFACE_PRESSURE:
                raise ProfileError(
                    f"{where}, level 0: surface pressure {p / 100:g} hPa is above {MAX_SURFACE_PRESSURE / 100:g} hPa, "
                    f"more than at any surface on Earth; were the pressures given in Pa under an hPa header (or "
                    f"in hPa under a kPa one)?"
                )
            t = self.temperature[i]
            if not (100.0 <= t <= 400.0):
                raise ProfileError(
                    f"{where}, level {i}: temperature {t:g} K is outside 100-400 K; check the units (K, not degC)"
                )
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
        if not np.all(np.diff(self.altitude) > 0):
            i = int(np.argmax(~(np.diff(self.altitude) > 0))) + 1
            raise ProfileError(f"{where}, level {i}: altitude {self.altitude[i]:g} m does not increase upward")
        ts = self.surface_temperature
        if not (100.0 <= ts <= 400.0):
            raise ProfileError(f"{where}: surface temperature {ts:g} K is outside 100-400 K")
        if not (0.0 <= self.surface_emissivity <= 1.0):
            raise ProfileError(f"{where}: surface emissivity {self.surface_emissivity:g} is not in [0, 1]")
        if self.check_saturation and "H2O" in self.vmr:
            rh = relative_humidity_from_vmr(self.vmr["H2O"], self.pressure, self.temperature)
            far = np.flatnonzero(rh > MAX_RELATIVE_HUMIDITY)
            if far.size:
                i = int(far[0])
                raise ProfileError(
                    f"{where}, level {i}: relative humidity {rh[i]:.0%} at {self.pressure[i] / 100:g} hPa and "
                    f"{self.temperature[i]:g} K is far above saturation; check the units of H2O (mol/mol as a "
                    f"fraction, or ppmv) and of pressure (Pa, hPa)"
                )
            over = np.flatnonzero(rh > 1.01)
            if over.size:
                i = int(over[0])
                # stacklevel 4: past validate, __post_init__ and the dataclass __init__, to the caller
                warnings.warn(ProfileWarning(
                    f"{where}, level {i}: water vapour is above saturation (relative humidity {rh[i]:.0%} "
                    f"at {self.pressure[i] / 100:g} hPa, {self.temperature[i]:g} K)"), stacklevel=4)

    def with_vmr(self, gas, value):
        """Return a copy with one gas's mixing ratio replaced (scalar or per level) [mol mol-1]."""
        vmr = dict(self.vmr)
        vmr[gas] = np.asarray(value, dtype=float) * np.ones_like(self.pressure)
        return replace(self, vmr=vmr)

    def copy(self, **changes):
        """Return a validated copy with some attributes changed."""
        vmr = {g: v.copy() for g, v in self.vmr.items()}
        return replace(self, **{"vmr": vmr, **changes})


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
        raise ProfileError("us_standard_1976: altitude must lie in 0-86000 m")
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
        raise SettingsError("refine: factor must be a positive integer")
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
