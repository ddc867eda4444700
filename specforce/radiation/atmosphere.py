"""Atmospheric profiles: the profile model, its validation and standard atmospheres.

A :class:`Profile` holds levels ordered from the surface upward: pressure [Pa],
temperature [K], altitude [m] and gas volume mixing ratios [mol mol-1], plus
the surface temperature [K] and emissivity. :func:`specforce.radiation.layers.layers` turns it into
homogeneous layers with column amounts for radiative transfer. The U.S.
Standard Atmosphere 1976 temperature and pressure are generated here from their
defining layer table. Profile files, and the bundled AFGL profiles, are read and
written by :mod:`specforce.io.profiles`; humidity is in :mod:`specforce.radiation.humidity`.
"""

from __future__ import annotations

import math
import os
import warnings
from dataclasses import dataclass, field, replace

import numpy as np

from ..constants import DRY_AIR_MOLAR_MASS, GAS_CONSTANT, STANDARD_GRAVITY, WATER_MOLAR_MASS
from .humidity import relative_humidity_from_vmr
from ..errors import ProfileError, ProfileWarning
from ..molecular.gases import GasNames

__all__ = [
    "Profile",
    "GASES",
    "us_standard_1976",
    "hypsometric_altitude",
    "plausibility_findings",
    "check_layer_count",
    "MAX_LAYERS",
]

#: Surface pressures a profile is expected to have [Pa] (a plausibility check, waived by
#: ``accept_unusual``). The lowest surface anyone climbs to, the summit of Mount Everest,
#: has about 337 hPa (measured there by West et al. 1983, J. Appl. Physiol. 54, 1188; from memory), the highest
#: inhabited towns (about 5100 m) about 530 hPa; the highest sea-level pressure recorded is
#: about 1084 hPa (Agata, Siberia, 1968; WMO archive, from memory). A column given in kPa
#: under an hPa header sits at about 101 hPa, one in Pa under an hPa header at 101325 hPa.
SURFACE_PRESSURE_RANGE = (30000.0, 110000.0)
#: Temperatures specforce computes with [K] (a hard limit, not waivable): the range its
#: spectroscopy is built for. The partition-function model and the line intensities are made
#: for atmospheric temperatures (see :mod:`specforce.molecular.molecules`; its nuclear-spin average
#: holds above about 100 K), and every layer of the line sum checks the same bounds
#: (:class:`specforce.absorption.linesum.LayerState`). Earth's atmosphere spans about 110-130 K (the
#: polar summer mesopause, from memory) to 333-380 K (the AFGL models at 120 km, Anderson et
#: al. 1986).
TEMPERATURE_RANGE = (100.0, 400.0)
#: Surface temperatures a profile is expected to have [K] (plausibility, waivable): the lowest
#: air temperature recorded is 184 K (-89.2 degC, Vostok, 1983) and the hottest land skin
#: temperatures seen from space are about 344 K (Mildrexler et al. 2011, BAMS 92, 855); both
#: from memory.
SURFACE_TEMPERATURE_RANGE = (170.0, 350.0)
#: Relative humidity (over liquid water) above which a profile is refused as a unit mistake
#: [fraction]; between 1.01 and this, a warning.
MAX_RELATIVE_HUMIDITY = 1.5
#: Relative humidity at the lowest level below which a profile is refused as a unit mistake
#: (plausibility, waivable) [fraction]. The driest surface air on record has about 1-2 %
#: (hot deserts; from memory); g/kg, percent or mol/mol values under a ppmv header give
#: under 0.1 %. A column with no water at all (every value 0) is taken as meant.
MIN_SURFACE_RELATIVE_HUMIDITY = 1e-3
#: Ratio of the altitude column's thickness to the hypsometric thickness computed from
#: pressure and temperature, outside which the altitudes are refused (plausibility,
#: waivable). The hypsometric equation with constant g0 differs from geometric altitude by
#: about 2 % at 120 km (g falls by about 4 % there); km under an m header gives 1/1000 and m
#: under a km header 1000.
ALTITUDE_RATIO_RANGE = (0.8, 1.25)
#: Earth's range of each gas [mol mol-1] (plausibility, waivable), on the column's largest
#: value ("max") or on the lowest level ("surface"), about ten times wider than observed on
#: either side so that only unit mistakes (factors of 1000 or 10^4) are caught. Observed
#: values, from memory: CO2 180 ppmv (glacial, ice cores) to 420 ppmv today; CH4 0.35-1.9
#: ppmv; N2O 0.2-0.34 ppmv; O3 0.02-0.1 ppmv at the surface and 8-10 ppmv at the
#: stratospheric peak; CO 0.04-0.2 ppmv at the surface (up to tens of ppmv in the
#: thermosphere of the AFGL models); O2 20.95 % (15-35 % over the Phanerozoic). A gas that is
#: zero everywhere is taken as meant (an experiment without it).
GAS_RANGES = {
    "CO2": ("max", 1e-5, 0.05),
    "CH4": ("max", 1e-8, 1e-4),
    "N2O": ("max", 1e-8, 1e-5),
    "O3": ("max", 1e-8, 1e-4),
    "CO": ("surface", 1e-9, 5e-5),
    "O2": ("max", 0.05, 0.5),
}
#: Most layers a column may have for a calculation (after ``refine``). Measured with
#: /usr/bin/time -v (maximum resident set size) on ``olr`` of the mid-latitude summer
#: profile refined to 50, 197 and 393 levels over 600-620 cm-1: 404, 565 and 919 MiB, i.e.
#: about 1.8 MiB per layer above a base of about 0.3 GiB. 400 layers then need about
#: 0.93 GiB, within 1 GiB (checked: 401 levels, 934 MiB); the 2000 levels that once took 3.9 GB
#: are refused up front (in 0.08 s). Measured again after the sub-grids came to shrink as
#: sqrt(layers) (specforce.radiation.longwave): 393 levels, 10-3000 cm-1, olr 435 MiB and a
#: 2xCO2 forcing 612 MiB; 600-620 cm-1 olr 369 MiB. The estimate in the error message below
#: keeps the earlier, larger rate.
MAX_LAYERS = 400
#: Gases a profile may carry, in line-record molecule order: the gas registry
#: (:mod:`specforce.molecular.gases`), read when used.
GASES = GasNames(order="molecule_id")


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
    accept_unusual : bool
        Let a profile through that fails the plausibility checks (surface pressure and
        temperature, altitude scale, water and other gases against Earth's range; see
        :func:`plausibility_findings`): a high plateau, a very dry column. Its outputs record
        that the checks were waived and what they found (:attr:`waived_checks`). The hard
        checks (order of levels, 100-400 K, mixing ratios in [0, 1)) always apply.
    waived_checks : tuple of str
        What the plausibility checks found on a profile made with ``accept_unusual``
        (empty when they all passed); carried to copies.
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
    accept_unusual: bool = False
    waived_checks: tuple = field(default=(), repr=False)
    check_plausibility: bool = field(default=True, repr=False)

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

    @property
    def checks_note(self):
        """What the outputs record about the plausibility checks ('' when they were applied)."""
        if not self.accept_unusual:
            return ""
        found = "; ".join(self.waived_checks) if self.waived_checks else "none failed"
        return f"plausibility checks waived (accept_unusual): {found}"

    def validate(self):
        """Check the profile; raise :class:`ProfileError` naming the level and quantity.

        Hard checks always apply; the plausibility checks (:func:`plausibility_findings`)
        apply to a profile as given (copies made by :meth:`copy` and :meth:`with_vmr`, the
        program's own changes, skip them) and are recorded instead of raised with
        ``accept_unusual``.
        """
        n = self.pressure.size
        where = f"profile '{self.name}'"
        if n < 2:
            raise ProfileError(f"{where}: needs at least 2 levels, got {n}")
        for label, arr in (("temperature", self.temperature), ("altitude", self.altitude)):
            if arr.shape != (n,):
                raise ProfileError(f"{where}: {label} has {arr.size} values but pressure has {n}; give one per level")
        tlo, thi = TEMPERATURE_RANGE
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
            if not (tlo <= t <= thi):
                raise ProfileError(f"{where}, level {i} ({_level_place(self, i)}): temperature {t:g} K "
                                   f"{_temperature_problem(t)}")
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
        if not np.all(np.isfinite(self.altitude)) or not np.all(np.diff(self.altitude) > 0):
            i = int(np.argmax(~(np.diff(self.altitude) > 0))) + 1
            raise ProfileError(f"{where}, level {i}: altitude {self.altitude[i]:g} m does not increase upward")
        ts = self.surface_temperature
        if not (tlo <= ts <= thi):
            raise ProfileError(f"{where}: surface temperature {ts:g} K {_temperature_problem(ts)}")
        if not (0.0 <= self.surface_emissivity <= 1.0):
            raise ProfileError(f"{where}: surface emissivity {self.surface_emissivity:g} is not in [0, 1]")
        if self.check_plausibility:
            findings = plausibility_findings(self)
            if self.accept_unusual:
                self.waived_checks = tuple(findings)
            elif findings:
                raise ProfileError(
                    f"{where}: {'; and '.join(findings)}. If the profile is real but unusual (a high plateau, a "
                    f"very dry column), let it through with accept_unusual=True (command line: "
                    f"--accept-unusual-profile); its outputs then record that the checks were waived"
                )
        if self.check_saturation and "H2O" in self.vmr:
            rh = relative_humidity_from_vmr(self.vmr["H2O"], self.pressure, self.temperature)
            far = np.flatnonzero(rh > MAX_RELATIVE_HUMIDITY)
            if far.size and not self.accept_unusual and not self.check_plausibility:
                # a change made by the program (e.g. water scaled by a scenario); as given, the finding above
                i = int(far[0])
                raise ProfileError(
                    f"{where}, level {i}: relative humidity {rh[i]:.0%} at {self.pressure[i] / 100:g} hPa and "
                    f"{self.temperature[i]:g} K is far above saturation (over {MAX_RELATIVE_HUMIDITY:.0%})"
                )
            over = np.flatnonzero(rh > 1.01)
            if over.size:
                i = int(over[0])
                # stacklevel 4: past validate, __post_init__ and the dataclass __init__, to the caller
                warnings.warn(ProfileWarning(
                    f"{where}, level {i}: water vapour is above saturation (relative humidity {rh[i]:.0%} "
                    f"at {self.pressure[i] / 100:g} hPa, {self.temperature[i]:g} K)"), stacklevel=4)

    def with_vmr(self, gas, value):
        """Return a copy with one gas's mixing ratio replaced (scalar or per level) [mol mol-1].

        A change the program makes, so the plausibility checks are not repeated.
        """
        vmr = dict(self.vmr)
        vmr[gas] = np.asarray(value, dtype=float) * np.ones_like(self.pressure)
        return replace(self, vmr=vmr, check_plausibility=False)

    def copy(self, **changes):
        """Return a validated copy with some attributes changed (the plausibility checks are not repeated)."""
        vmr = {g: v.copy() for g, v in self.vmr.items()}
        return replace(self, **{"vmr": vmr, "check_plausibility": False, **changes})


def _level_place(profile, i):
    """'2.25e-05 hPa, 120 km' for messages."""
    return f"{profile.pressure[i] / 100:.4g} hPa, {profile.altitude[i] / 1000:.4g} km"


def _temperature_problem(t):
    """Why a temperature is outside TEMPERATURE_RANGE, and the likely unit mistake."""
    lo, hi = TEMPERATURE_RANGE
    slo, shi = SURFACE_TEMPERATURE_RANGE
    side = f"below {lo:g} K" if t < lo else f"above {hi:g} K"
    text = (f"is {side}, outside {lo:g}-{hi:g} K, the temperatures specforce's spectroscopy is built for "
            f"(partition functions and line intensities for atmospheric temperatures)")
    if slo <= t + 273.15 <= shi:
        return text + "; this looks like degC under a K header: give kelvin (or name the column temperature_C)"
    if slo <= t - 273.15 <= shi:
        return text + "; this looks like kelvin under a degC header: name the column temperature_K"
    return text + "; check the units (K)"


_HINTS = {
    # factor that would bring the values into range -> the likely unit mistake (likeliest first)
    "pressure": {10.0: "pressures given in kPa under an hPa header", 1e-2: "pressures given in Pa under an hPa header",
                 100.0: "pressures given in hPa under a Pa header",
                 1e3: "pressures given in kPa under a Pa header, or in bar or atm under an hPa header",
                 0.1: "pressures given in hPa under a kPa header", 1e-3: "pressures given in Pa under a kPa header",
                 1e5: "pressures given in bar or atm under a Pa header"},
    "vmr": {1e6: "a mole fraction (mol/mol) under a ppmv header (e.g. 0.0004 for 400 ppmv)",
            1e3: "ppmv values under a ppbv header", 1e-3: "ppbv values under a ppmv header",
            1e4: "percent under a ppmv header", 1e9: "a mole fraction (mol/mol) under a ppbv header"},
    "altitude": {1e3: "km values under an m header (altitude_m)", 1e-3: "metres under a km header (altitude_km)"},
}


def _hint(kind, value, lo, hi):
    """The likely unit mistake: a factor in _HINTS that brings ``value`` into [lo, hi]."""
    for factor, text in _HINTS[kind].items():
        if lo <= float(value) * factor <= hi:
            return f"this looks like {text}"
    return "check the units"


def hypsometric_altitude(pressure, temperature, h2o=None, gravity=STANDARD_GRAVITY):
    """Altitude of each level above the first [m] from the hypsometric equation.

    Parameters
    ----------
    pressure : array_like
        Level pressure [Pa], surface first.
    temperature : array_like
        Level temperature [K].
    h2o : array_like, optional
        Water-vapour volume mixing ratio [mol mol-1] (virtual temperature); default dry.
    gravity : float
        [m s-2], default g0.

    Notes
    -----
    dz = (R T_v / (M_d g)) ln(p_bottom / p_top) per layer, with the layer's mean virtual
    temperature T_v = T M_d / M (M the molar mass of moist air); e.g. Wallace & Hobbs
    (2006), Atmospheric Science, Eq. (3.29).
    """
    p = np.asarray(pressure, dtype=float)
    t = np.asarray(temperature, dtype=float)
    x = np.zeros_like(p) if h2o is None else np.asarray(h2o, dtype=float) * np.ones_like(p)
    mm = DRY_AIR_MOLAR_MASS * (1 - x) + WATER_MOLAR_MASS * x
    tv = t * DRY_AIR_MOLAR_MASS / mm
    dz = GAS_CONSTANT / (DRY_AIR_MOLAR_MASS * gravity) * 0.5 * (tv[1:] + tv[:-1]) * np.log(p[:-1] / p[1:])
    return np.concatenate([[0.0], np.cumsum(dz)])


def plausibility_findings(profile):
    """What a profile's plausibility checks find: a list of messages (empty if it looks like Earth's air).

    Each message names the level and the quantity, the range expected and its basis (the
    constants ``SURFACE_PRESSURE_RANGE``, ``SURFACE_TEMPERATURE_RANGE``, ``ALTITUDE_RATIO_RANGE``,
    ``MIN_SURFACE_RELATIVE_HUMIDITY``, ``MAX_RELATIVE_HUMIDITY`` and ``GAS_RANGES`` of this
    module), and the likely unit mistake. The checks catch units given under the wrong
    header; they are waived with ``accept_unusual``.
    """
    out = []
    p0 = profile.pressure[0]
    lo, hi = SURFACE_PRESSURE_RANGE
    if not lo <= p0 <= hi:
        out.append(f"level 0: surface pressure {p0 / 100:.6g} hPa is outside {lo / 100:g}-{hi / 100:g} hPa (from "
                   f"the summit of Mount Everest to the highest sea-level pressure on record); "
                   f"{_hint('pressure', p0, lo, hi)}")
    slo, shi = SURFACE_TEMPERATURE_RANGE
    for label, t in (("lowest-level temperature", profile.temperature[0]),
                     ("surface temperature", profile.surface_temperature)):
        if not slo <= t <= shi:
            out.append(f"{label} {t:g} K is outside {slo:g}-{shi:g} K (the coldest air and hottest ground on "
                       f"record); check the units (K, not degC)")
            break
    z = profile.altitude
    with np.errstate(all="ignore"):  # pressures of 1e-300 Pa are valid input, just implausible
        thick = float(hypsometric_altitude(profile.pressure, profile.temperature, profile.vmr.get("H2O"))[-1])
    ratio = float(z[-1] - z[0]) / thick if 0 < thick < math.inf else math.nan
    alo, ahi = ALTITUDE_RATIO_RANGE
    if not alo <= ratio <= ahi:
        out.append(f"the altitudes span {z[-1] - z[0]:.6g} m but the hypsometric thickness from pressure and "
                   f"temperature is {thick:.6g} m (ratio {ratio:.3g}, expected {alo:g}-{ahi:g}); "
                   f"{_hint('altitude', ratio, alo, ahi)}; or leave the altitude column out to have it computed")
    if "H2O" in profile.vmr and np.any(profile.vmr["H2O"] > 0):
        rh = relative_humidity_from_vmr(profile.vmr["H2O"], profile.pressure, profile.temperature)
        far = np.flatnonzero(rh > MAX_RELATIVE_HUMIDITY)
        if far.size:
            i = int(far[0])
            out.append(f"level {i}: relative humidity {rh[i]:.0%} at {profile.pressure[i] / 100:g} hPa and "
                       f"{profile.temperature[i]:g} K is far above saturation (over {MAX_RELATIVE_HUMIDITY:.0%}; "
                       f"saturation from Murphy & Koop 2005, Eq. 10); check the units of H2O (ppmv, not g/kg or "
                       f"percent; vmr as a fraction) and of pressure (Pa, hPa)")
        elif rh[0] < MIN_SURFACE_RELATIVE_HUMIDITY:
            x = profile.vmr["H2O"][0]
            out.append(f"level 0: H2O {x * 1e6:.4g} ppmv is {rh[0]:.2g} of saturation at "
                       f"{profile.pressure[0] / 100:g} hPa and {profile.temperature[0]:g} K, drier than any "
                       f"surface air on record (under {MIN_SURFACE_RELATIVE_HUMIDITY:.1%} relative humidity); "
                       f"this looks like g/kg, percent or a mole fraction under a ppmv header")
    for gas, (where, glo, ghi) in GAS_RANGES.items():
        v = profile.vmr.get(gas)
        if v is None or not np.any(v > 0):
            continue
        i = int(np.argmax(v)) if where == "max" else 0
        if not glo <= v[i] <= ghi:
            what = "the largest value" if where == "max" else "the surface value"
            out.append(f"level {i}: {gas} {v[i] * 1e6:.4g} ppmv ({v[i]:.3g} mol/mol, {what}) is outside Earth's "
                       f"range {glo * 1e6:g}-{ghi * 1e6:g} ppmv; {_hint('vmr', v[i], glo, ghi)}")
    return out


def check_layer_count(profile, refine_factor=1):
    """Refuse, before any line sum, a column with more than ``MAX_LAYERS`` layers (after refinement).

    Raises
    ------
    ProfileError
        Naming the layers, the memory they would need and how to thin the profile.
    """
    nl = (profile.nlevels - 1) * int(refine_factor)
    if nl <= MAX_LAYERS:
        return
    by = f" after refinement x{refine_factor}" if refine_factor > 1 else ""
    keep = MAX_LAYERS // max(int(refine_factor), 1) + 1
    src = f" ({profile.source})" if os.path.isfile(str(profile.source)) else ""
    raise ProfileError(
        f"profile '{profile.name}'{src}: {nl} layers{by} ({profile.nlevels} levels); specforce computes at most "
        f"{MAX_LAYERS} layers (about 1.8 MiB of memory each, measured: {nl} would need about "
        f"{(300 + 1.8 * nl) / 1024:.1f} GiB). Thin the profile to at most {keep} levels: "
        f"specforce.radiation.layers.thin(profile, {min(keep, 200)}) in Python (evenly in log-pressure), or keep every "
        f"{math.ceil((profile.nlevels - 1) / (keep - 1))}th level of the file"
        + ("; or use a smaller refinement (--refine)" if refine_factor > 1 else "")
        + ". The bundled AFGL profiles have 50 levels."
    )


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
