"""The gas registry: what specforce knows about each gas, in one place.

One :class:`Gas` record per gas a profile may carry, read from
``linedata/gases.toml``: its formula, its molecule number in the line record, the
CF standard name of its mole fraction, the unit its amounts are reported in, its
command-line switch, its pre-industrial concentration and whether a sweep may
change it. Every list of gases in specforce reads the registry (profiles and their
files, scenario changes, sweeps and formulas, results, the command line), so adding
a gas means adding one record to ``linedata/gases.toml``, plus a generator in
:mod:`specforce.molecular.builtin` only if it should have built-in lines.

The lists read the registry when they are used, not when they are imported:
:func:`register` adds a gas for the rest of the process (tests add one this way),
and :class:`GasNames` and :class:`GasTable` are read-only views that modules keep
under their old names (``GASES``, ``UNITS_OF_GASES``, ...).
"""

from __future__ import annotations

import os
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from importlib import resources

from ..errors import MoleculeError

__all__ = ["Gas", "GasNames", "GasTable", "REPORT_UNITS", "all_gases", "gas", "gas_by_standard_name",
           "load_gas_table", "register", "unregister"]

#: Units amounts are reported in: name -> (size [mol mol-1], amount per mol mol-1).
#: Both numbers are written out (1 / 1e-9 is not 1e9 in floating point).
REPORT_UNITS = {"ppm": (1e-6, 1e6), "ppmv": (1e-6, 1e6), "ppb": (1e-9, 1e9), "%": (1e-2, 1e2)}


@dataclass(frozen=True)
class Gas:
    """One gas of the registry.

    Attributes
    ----------
    formula : str
        The gas's name everywhere (profiles, files, changes, outputs), e.g. ``"CO2"``.
    molecule_id : int
        Molecule number in the 160-character line record (2 for CO2).
    standard_name : str
        CF standard name of its mole fraction, e.g. ``"mole_fraction_of_carbon_dioxide_in_air"``.
    unit : str
        Unit its amounts are reported in (changes, sweeps): a key of :data:`REPORT_UNITS`.
    switch : str or None
        Command-line option that changes it (``"--co2"``), or None.
    switch_help : str
        Help text of the option.
    preindustrial : float or None
        Pre-industrial concentration [``unit``], or None.
    preindustrial_source : str
        Where ``preindustrial`` comes from.
    sweepable : bool
        Whether a concentration sweep may change it (it then has published formulas and a
        pre-industrial value).
    """

    formula: str
    molecule_id: int
    standard_name: str
    unit: str
    switch: str | None = None
    switch_help: str = ""
    preindustrial: float | None = None
    preindustrial_source: str = ""
    sweepable: bool = False

    def __post_init__(self):
        where = f"gas {self.formula!r}"
        if not self.formula or not isinstance(self.formula, str) or self.formula != self.formula.strip():
            raise MoleculeError(f"a gas needs a formula such as 'CO2', got {self.formula!r}")
        if self.unit not in REPORT_UNITS:
            raise MoleculeError(f"{where}: unit {self.unit!r} is not one of {', '.join(REPORT_UNITS)}")
        if not self.standard_name.startswith("mole_fraction_of_"):
            raise MoleculeError(f"{where}: standard name {self.standard_name!r} is not a CF mole fraction "
                                f"(mole_fraction_of_X_in_air)")
        if self.switch is not None and not (self.switch.startswith("--") and self.switch[2:].isidentifier()):
            raise MoleculeError(f"{where}: switch {self.switch!r} is not an option name such as '--co2'")
        if self.sweepable and self.preindustrial is None:
            raise MoleculeError(f"{where}: a sweepable gas needs a pre-industrial value")

    @property
    def unit_size(self):
        """Size of one ``unit`` [mol mol-1] (1e-6 for ppm)."""
        return REPORT_UNITS[self.unit][0]

    @property
    def per_mole_fraction(self):
        """Amount in ``unit`` of a mole fraction of 1 mol mol-1 (1e6 for ppm)."""
        return REPORT_UNITS[self.unit][1]

    @property
    def switch_parameter(self):
        """The Python name of the command-line switch's value (``"co2"`` for ``--co2``), or None."""
        return None if self.switch is None else self.switch[2:]


def load_gas_table(source="gases.toml"):
    """Read a gas table (the format of ``linedata/gases.toml``).

    Parameters
    ----------
    source : str or os.PathLike
        A file name in ``specforce/linedata`` (default the bundled registry), or a path
        (a ``PathLike`` or a string with a folder separator).

    Returns
    -------
    tuple of Gas
        In table order.
    """
    if isinstance(source, os.PathLike) or os.path.sep in str(source):
        with open(source, "rb") as fh:
            table = tomllib.load(fh)
        where = str(source)
    else:
        with resources.files("specforce.linedata").joinpath(source).open("rb") as fh:
            table = tomllib.load(fh)
        where = f"linedata/{source}"
    out = []
    for row in table.get("gas", []):
        try:
            out.append(Gas(**row))
        except TypeError as exc:
            raise MoleculeError(f"{where}: gas {row.get('formula')!r}: {exc}") from None
    _check_unique(out, where)
    return tuple(out)


def _check_unique(records, where):
    for field in ("formula", "molecule_id", "standard_name", "switch"):
        seen = {}
        for g in records:
            value = getattr(g, field)
            if value is None:
                continue
            if value in seen:
                raise MoleculeError(f"{where}: {g.formula} and {seen[value]} share the {field} {value!r}; "
                                    f"each gas needs its own")
            seen[value] = g.formula


_registry = None


def all_gases():
    """Every gas of the registry, in table order (bundled table first, then registered gases)."""
    global _registry
    if _registry is None:
        _registry = load_gas_table()
    return _registry


def gas(formula):
    """The :class:`Gas` of a formula (case-insensitive).

    Examples
    --------
    >>> gas("co2").standard_name
    'mole_fraction_of_carbon_dioxide_in_air'
    """
    key = str(formula).strip().upper()
    for g in all_gases():
        if g.formula.upper() == key:
            return g
    raise MoleculeError(f"unknown gas {formula!r}; the gases are {', '.join(GasNames())}")


def gas_by_standard_name(standard_name):
    """The :class:`Gas` whose CF standard name is ``standard_name``, or None."""
    return next((g for g in all_gases() if g.standard_name == standard_name), None)


def register(record):
    """Add a gas to the registry for the rest of the process, and return it.

    Every list of gases sees it from then on (a profile may carry it, results write its
    standard name and unit, a switch of it works in scenario changes). Command-line
    options are built when the command line is imported, so a gas registered later has
    no switch there. :func:`unregister` removes it again.

    Parameters
    ----------
    record : Gas
    """
    if not isinstance(record, Gas):
        raise MoleculeError(f"register takes a Gas record, got {type(record).__name__}")
    global _registry
    new = (*all_gases(), record)
    _check_unique(new, "gas registry")
    _registry = new
    return record


def unregister(formula):
    """Remove a gas from the registry (the inverse of :func:`register`)."""
    global _registry
    g = gas(formula)
    _registry = tuple(x for x in all_gases() if x is not g)


class GasNames(Sequence):
    """The formulas of the registry's gases, read when used (a read-only, tuple-like view).

    Parameters
    ----------
    order : {"table", "molecule_id"}
        Table order, or by line-record molecule number (the order of profiles and files).
    where : callable, optional
        Keep only the gases for which ``where(gas)`` is true.
    """

    def __init__(self, order="table", where=None):
        if order not in ("table", "molecule_id"):
            raise MoleculeError(f"GasNames: order must be 'table' or 'molecule_id', got {order!r}")
        self._order, self._where = order, where

    def _names(self):
        records = [g for g in all_gases() if self._where is None or self._where(g)]
        if self._order == "molecule_id":
            records.sort(key=lambda g: g.molecule_id)
        return tuple(g.formula for g in records)

    def __getitem__(self, index):
        return self._names()[index]

    def __len__(self):
        return len(self._names())

    def __iter__(self):
        return iter(self._names())

    def __contains__(self, name):
        return name in self._names()

    def __eq__(self, other):
        return tuple(self) == (tuple(other) if isinstance(other, (Sequence, GasNames)) else other)

    __hash__ = None

    def __repr__(self):
        return repr(self._names())


class GasTable(Mapping):
    """A read-only mapping formula -> ``value(gas)`` over the registry, read when used.

    Parameters
    ----------
    value : callable
        Gas -> the mapped value.
    where : callable, optional
        Keep only the gases for which ``where(gas)`` is true.
    """

    def __init__(self, value, where=None):
        self._value, self._where = value, where

    def _dict(self):
        return {g.formula: self._value(g) for g in all_gases() if self._where is None or self._where(g)}

    def __getitem__(self, formula):
        return self._dict()[formula]

    def __len__(self):
        return len(self._dict())

    def __iter__(self):
        return iter(self._dict())

    def __repr__(self):
        return repr(self._dict())
