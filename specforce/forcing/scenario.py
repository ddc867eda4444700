"""Changes to a profile: the change grammar (``2x``, ``560ppm``, ``280ppm:560ppm``) and scenario files.

A change is a :class:`Perturbation`; a scenario is a base profile and its
changes. :func:`apply_perturbations` makes the base and perturbed profiles, and
:func:`describe_changes` says what a change means in amounts for that profile
("CO2 330 -> 660 ppm at the surface, 330 -> 660 ppm column mean"), so that every
output records what was done.

Scenario files are TOML::

    name = "Kestrel Ridge, doubled CO2"
    profile = "demo"            # bundled name or a file path (relative to the scenario file)
    tropopause_hPa = 200        # optional; default WMO lapse-rate tropopause
    [[change]]
    gas = "CO2"
    scale = 2.0                 # or set = "560ppm", or from = "280ppm" and to = "560ppm"
    [[change]]
    warming = 1.0               # K, surface and atmosphere; fixed_rh = true keeps relative humidity
"""

from __future__ import annotations

import os
import re
import tomllib
from dataclasses import dataclass

import numpy as np

from ..radiation.atmosphere import GASES, Profile
from ..radiation.layers import layers
from ..constants import AVOGADRO, WATER_MOLAR_MASS
from ..errors import ProfileError, ScenarioError
from ..molecular.gases import GasTable
from ..radiation.humidity import relative_humidity_from_vmr, vmr_from_relative_humidity

__all__ = ["Perturbation", "Scenario", "parse_change", "apply_perturbations", "describe_changes", "load_scenario",
           "UNITS_OF_GASES"]

#: The unit each gas's amounts are reported in, and its factor from mol mol-1 (the gas
#: registry, :mod:`specforce.molecular.gases`, read when used).
UNITS_OF_GASES = GasTable(lambda g: (g.unit, g.per_mole_fraction))


@dataclass(frozen=True)
class Perturbation:
    """One change to a profile.

    Attributes
    ----------
    gas : str
        Gas formula (``GASES``) or ``"T"`` for temperature.
    kind : {"scale", "set", "ratio", "warm", "warm_surface"}
        Multiply the mixing ratio by ``value``; set it to ``value`` [mol mol-1];
        go from ``base`` to ``value`` (both [mol mol-1], the base profile is first
        set to ``base``); add ``value`` [K] to surface and atmosphere; add it to the
        surface only.
    value : float
        Factor [dimensionless], amount [mol mol-1] or warming [K].
    base : float or None
        For ``ratio``: the base amount [mol mol-1].
    fixed_rh : bool
        For temperature changes: keep relative humidity fixed.
    text : str
        The change as the user wrote it (for outputs).
    """

    gas: str
    kind: str
    value: float
    base: float | None = None
    fixed_rh: bool = False
    text: str = ""


_CHANGE = re.compile(r"^\s*([0-9.eE+-]+)\s*(x|ppm|ppmv|ppb|ppbv|vmr)?\s*$")
_UNITS = {"ppm": 1e-6, "ppmv": 1e-6, "ppb": 1e-9, "ppbv": 1e-9, "vmr": 1.0}


def _amount(text, what):
    m = _CHANGE.match(text)
    if not m or m.group(2) in (None, "x"):
        raise ScenarioError(f"{what}: {text!r} is not an amount; write e.g. 280ppm, 722ppb or 4e-4vmr")
    value = float(m.group(1)) * _UNITS[m.group(2)]
    if not (np.isfinite(value) and 0.0 <= value < 1.0):
        raise ScenarioError(f"{what}: {text!r} is not a mixing ratio between 0 and 1 mol/mol")
    return value


def parse_change(gas, text):
    """Parse a change such as ``2x``, ``560ppm`` or ``722ppb:1866ppb``.

    Parameters
    ----------
    gas : str
        Gas formula.
    text : str
        ``FACTORx`` (scale), ``AMOUNT`` (set) or ``AMOUNT:AMOUNT`` (from base to
        perturbed), with units ppm, ppb or vmr.

    Returns
    -------
    Perturbation
    """
    gas = str(gas).upper()
    text = str(text)
    if gas not in GASES:
        raise ScenarioError(f"unknown gas {gas!r}; specforce knows {', '.join(GASES)}")
    if ":" in text:
        a, b = text.split(":", 1)
        return Perturbation(gas, "ratio", _amount(b, gas), base=_amount(a, gas), text=text)
    m = _CHANGE.match(text)
    if m and m.group(2) == "x":
        factor = float(m.group(1))
        if not (np.isfinite(factor) and factor >= 0):
            raise ScenarioError(f"{gas}: the scale factor must be a non-negative number, got {text!r}")
        return Perturbation(gas, "scale", factor, text=text)
    return Perturbation(gas, "set", _amount(text, gas), text=text)


def apply_perturbations(profile, perturbations):
    """Return (base, perturbed) profiles for a list of perturbations.

    ``ratio`` perturbations also change the base (to their ``base`` amount);
    the others leave it as given.
    """
    for p in perturbations:
        if p.gas != "T" and p.gas not in profile.vmr:
            raise ScenarioError(f"profile '{profile.name}' has no {p.gas} to change; it has "
                                f"{', '.join(profile.vmr) or 'no gases'}")
    base = profile.copy()
    for p in perturbations:
        if p.kind == "ratio":
            base = base.with_vmr(p.gas, p.base)
    pert = base.copy()
    try:
        for p in perturbations:
            if p.kind == "scale":
                pert = pert.with_vmr(p.gas, pert.vmr[p.gas] * p.value)
            elif p.kind in ("set", "ratio"):
                pert = pert.with_vmr(p.gas, p.value)
            elif p.kind in ("warm", "warm_surface"):
                _check_warming(pert, p)
                rh = relative_humidity_from_vmr(pert.vmr["H2O"], pert.pressure, pert.temperature) if p.fixed_rh else None
                t = pert.temperature + (p.value if p.kind == "warm" else 0.0)
                pert = pert.copy(temperature=t, surface_temperature=pert.surface_temperature + p.value,
                                 check_saturation=False)
                if rh is not None:
                    pert = pert.with_vmr("H2O", np.minimum(vmr_from_relative_humidity(rh, pert.pressure, t), 0.99))
            else:
                raise ScenarioError(f"unknown perturbation kind {p.kind!r}")
    except ProfileError as exc:
        raise ScenarioError(f"the change makes an impossible profile: {exc}") from None
    return base, pert


def _check_warming(profile, p):
    """Refuse a warming that takes a level past the temperatures specforce computes with, saying how to proceed."""
    from ..radiation.atmosphere import TEMPERATURE_RANGE

    lo, hi = TEMPERATURE_RANGE
    t = profile.temperature + (p.value if p.kind == "warm" else 0.0)
    ts = profile.surface_temperature + p.value
    bad = np.flatnonzero((t < lo) | (t > hi))
    if bad.size == 0 and lo <= ts <= hi:
        return
    if bad.size:
        i = int(bad[0])
        where = (f"level {i} ({profile.pressure[i] / 100:.4g} hPa, {profile.altitude[i] / 1000:.4g} km) goes from "
                 f"{profile.temperature[i]:g} K to {t[i]:g} K")
        edge = t[i]
    else:
        where = f"the surface goes from {profile.surface_temperature:g} K to {ts:g} K"
        edge = ts
    side = hi if edge > hi else lo
    room = (hi - max(profile.temperature.max(), profile.surface_temperature) if p.value > 0
            else min(profile.temperature.min(), profile.surface_temperature) - lo)
    above = np.flatnonzero(t > hi)
    cut = ""
    if above.size and p.kind == "warm":
        top = profile.altitude[above[0]] / 1000
        frac = profile.pressure[above[0]] / profile.pressure[0]
        cut = (f", or remove the levels from {top:.4g} km up from the profile (they hold {frac:.1e} of the "
               f"column's mass, so the longwave fluxes barely depend on them)")
    raise ScenarioError(
        f"profile '{profile.name}': a warming of {p.value:+g} K (within the allowed -30..30 K), but {where}, beyond "
        f"{side:g} K: specforce computes within {lo:g}-{hi:g} K, the temperatures its spectroscopy is built for "
        f"(partition functions and line intensities for atmospheric temperatures; every layer of the line sum "
        f"checks the same bounds). To proceed, use a warming of at most {room:.4g} K in size for this profile"
        f"{cut}, or use a profile whose warmest level is cooler (the AFGL profiles reach 333-380 K at 120 km)"
    )


def _column_mean(profile, gas):
    lay = layers(profile)
    return float(lay.column[gas].sum() / lay.air_column.sum())


def describe_changes(base, perturbed, perturbations):
    """What each change means in amounts, for outputs.

    Returns
    -------
    list of dict
        Per change: ``gas``, ``change`` (as written), and for gases the ``unit`` and
        the base and perturbed amounts at the surface and as mass-weighted column
        means (for water also the column [kg m-2]); for temperature the warming [K].
        ``text`` says it in words.
    """
    out = []
    for p in perturbations:
        if p.gas == "T":
            where = "surface only" if p.kind == "warm_surface" else "surface and atmosphere"
            out.append({"gas": "T", "change": p.text or f"{p.value:+g} K", "warming_K": p.value,
                        "fixed_relative_humidity": p.fixed_rh,
                        "text": f"warming {p.value:+g} K ({where}{', relative humidity fixed' if p.fixed_rh else ''})"})
            continue
        unit, f = UNITS_OF_GASES[p.gas]
        d = {"gas": p.gas, "change": p.text or f"{p.kind} {p.value:g}", "unit": unit,
             "base_surface": float(base.vmr[p.gas][0]) * f, "perturbed_surface": float(perturbed.vmr[p.gas][0]) * f,
             "base_column_mean": _column_mean(base, p.gas) * f,
             "perturbed_column_mean": _column_mean(perturbed, p.gas) * f}
        d["text"] = (f"{p.gas} {d['base_surface']:.4g} -> {d['perturbed_surface']:.4g} {unit} at the surface, "
                     f"{d['base_column_mean']:.4g} -> {d['perturbed_column_mean']:.4g} {unit} column mean")
        if p.gas == "H2O":
            kg = [float(layers(x).column["H2O"].sum()) * 1e4 / AVOGADRO * WATER_MOLAR_MASS for x in (base, perturbed)]
            d["base_column_kg_m2"], d["perturbed_column_kg_m2"] = kg
            d["text"] += f" (column {kg[0]:.3g} -> {kg[1]:.3g} kg m-2)"
        out.append(d)
    return out


@dataclass
class Scenario:
    """A base profile and its perturbations, from a scenario file or the command line.

    Attributes
    ----------
    name : str
    profile : Profile
        The base profile as loaded.
    perturbations : list of Perturbation
    tropopause_pressure : float or None
        [Pa]; None for the WMO lapse-rate tropopause.
    source : str
        The scenario file, if any.
    """

    name: str
    profile: Profile
    perturbations: list
    tropopause_pressure: float | None = None
    source: str = ""


_SCENARIO_KEYS = {"name", "profile", "tropopause_hPa", "change", "surface_emissivity"}
_CHANGE_KEYS = {"gas", "scale", "set", "from", "to", "warming", "surface_warming", "fixed_rh"}

# The TOML type of every key (a bool is never read as a number, nor a string as a bool).
_STRING, _NUMBER, _BOOL = "a string", "a number", "true or false"
_SCENARIO_TYPES = {"name": _STRING, "profile": _STRING, "tropopause_hPa": _NUMBER, "surface_emissivity": _NUMBER}
_CHANGE_TYPES = {"gas": _STRING, "scale": _NUMBER, "set": _STRING, "from": _STRING, "to": _STRING,
                 "warming": _NUMBER, "surface_warming": _NUMBER, "fixed_rh": _BOOL}
_TOML_EXAMPLES = {"name": '"doubled CO2"', "profile": '"mls"', "tropopause_hPa": "200", "surface_emissivity": "0.98",
                  "gas": '"CO2"', "scale": "2.0", "set": '"560ppm"', "from": '"280ppm"', "to": '"560ppm"',
                  "warming": "1.0", "surface_warming": "1.0", "fixed_rh": "true"}
#: A scenario's changes, as a user would write them (for messages).
CHANGE_EXAMPLE = '[[change]]\ngas = "CO2"\nscale = 2.0'


def _toml_type(value):
    if isinstance(value, bool):
        return "true or false (a TOML boolean)"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return "an array"
    return f"a {type(value).__name__}"


def _check_types(where, table, types):
    """Raise ScenarioError if a key of ``table`` holds a value of the wrong TOML type."""
    for key, want in types.items():
        if key not in table:
            continue
        v = table[key]
        ok = {_STRING: isinstance(v, str), _BOOL: isinstance(v, bool),
              _NUMBER: isinstance(v, (int, float)) and not isinstance(v, bool)}[want]
        if not ok:
            raise ScenarioError(f"{where}: {key} must be {want} (e.g. {key} = {_TOML_EXAMPLES[key]}), got {v!r}, "
                                f"which is {_toml_type(v)}")


def load_scenario(path, accept_unusual=False):
    """Read a scenario file (TOML; see the module docstring).

    ``accept_unusual`` waives the plausibility checks of the scenario's profile (see
    :class:`specforce.radiation.atmosphere.Profile`).

    Raises
    ------
    ScenarioError
        Naming the file, the change and the key at fault: unknown keys, a change
        given two ways (``scale`` with ``set``, or with ``from``/``to``), a gas
        specforce does not know, impossible amounts.
    """
    from ..io.profiles import load_profile

    path = os.fspath(path)
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        raise FileNotFoundError(f"{path}: no such scenario file") from None
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError(f"{path}: not valid TOML ({exc})") from None
    except UnicodeDecodeError:
        raise ScenarioError(f"{path}: not a text (TOML) file") from None
    unknown = set(data) - _SCENARIO_KEYS
    if unknown:
        raise ScenarioError(f"{path}: unknown key(s) {sorted(unknown)}; allowed are {sorted(_SCENARIO_KEYS)}")
    if "profile" not in data:
        raise ScenarioError(f"{path}: missing key 'profile' (a bundled name such as 'mls' or a file)")
    _check_types(path, data, _SCENARIO_TYPES)
    prof_ref = str(data["profile"])
    if not os.path.isabs(prof_ref) and os.path.exists(os.path.join(os.path.dirname(path), prof_ref)):
        prof_ref = os.path.join(os.path.dirname(path), prof_ref)
    profile = load_profile(prof_ref, accept_unusual=accept_unusual)
    if "surface_emissivity" in data:
        try:
            profile = profile.copy(surface_emissivity=float(data["surface_emissivity"]))
        except (TypeError, ValueError, ProfileError) as exc:
            raise ScenarioError(f"{path}: surface_emissivity: {exc}") from None
    changes = data.get("change", [])
    if not isinstance(changes, list) or not all(isinstance(c, dict) for c in changes):
        raise ScenarioError(f"{path}: 'change' must be a list of tables ([[change]] sections), e.g.\n"
                            f"{CHANGE_EXAMPLE}")
    if not changes:
        raise ScenarioError(f"{path}: the scenario has no changes, so its forcing would be zero; add at least one "
                            f"[[change]] table, e.g.\n{CHANGE_EXAMPLE}")
    perts = [_change_from_table(path, i + 1, ch) for i, ch in enumerate(changes)]
    trop = data.get("tropopause_hPa")
    if trop is not None:
        if not isinstance(trop, (int, float)) or isinstance(trop, bool) or not trop > 0:
            raise ScenarioError(f"{path}: tropopause_hPa must be a positive number [hPa], got {trop!r}")
        trop = float(trop) * 100.0
    return Scenario(str(data.get("name", os.path.basename(path))), profile, perts, trop, source=os.path.abspath(path))


def _change_from_table(path, i, ch):
    where = f"{path}: change {i}"
    bad = set(ch) - _CHANGE_KEYS
    if bad:
        raise ScenarioError(f"{where}: unknown key(s) {sorted(bad)}; allowed are {sorted(_CHANGE_KEYS)}")
    _check_types(where, ch, _CHANGE_TYPES)
    if "warming" in ch or "surface_warming" in ch:
        if "warming" in ch and "surface_warming" in ch:
            raise ScenarioError(f"{where}: give warming or surface_warming, not both")
        if "gas" in ch or {"scale", "set", "from", "to"} & set(ch):
            raise ScenarioError(f"{where}: a warming cannot also change a gas; put the gas in a change of its own")
        kind = "warm" if "warming" in ch else "warm_surface"
        raw = ch.get("warming", ch.get("surface_warming"))
        if not isinstance(raw, (int, float)) or isinstance(raw, bool) or not -30 <= raw <= 30:
            raise ScenarioError(f"{where}: warming {raw!r} is not a number of kelvin in -30..30")
        return Perturbation("T", kind, float(raw), fixed_rh=ch.get("fixed_rh", False), text=f"{raw:+g} K")
    if "fixed_rh" in ch:
        raise ScenarioError(f"{where}: fixed_rh goes with a warming, not with a gas change")
    if "gas" not in ch:
        raise ScenarioError(f"{where}: give 'gas' (and scale, set, or from/to) or 'warming'")
    gas = str(ch["gas"])
    ways = [k for k in ("scale", "set") if k in ch] + (["from/to"] if "from" in ch or "to" in ch else [])
    if len(ways) != 1:
        raise ScenarioError(f"{where} ({gas}): give exactly one of scale, set, or from and to; got "
                            f"{' and '.join(ways) or 'none'}")
    try:
        if "scale" in ch:
            if not isinstance(ch["scale"], (int, float)) or isinstance(ch["scale"], bool):
                raise ScenarioError(f"scale must be a number, got {ch['scale']!r}")
            return parse_change(gas, f"{float(ch['scale'])!r}x")
        if "set" in ch:
            return parse_change(gas, str(ch["set"]))
        if "from" not in ch or "to" not in ch:
            raise ScenarioError("give both from and to")
        return parse_change(gas, f"{ch['from']}:{ch['to']}")
    except ScenarioError as exc:
        raise ScenarioError(f"{where} ({gas}): {exc}") from None
