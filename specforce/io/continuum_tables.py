"""Continuum tables from the user: the file format, its reader and its writer.

specforce's own plain-text format for water-vapour continuum coefficients, so that a
user who has a published far-infrared or 6.3 um continuum can use it (specforce ships
none: see :mod:`specforce.absorption.continuum`). The format, also in the README's section
"Your own water continuum"::

    # comments start with '#', anywhere
    format = specforce-continuum 1
    name = what the table is
    source = where the numbers come from (paper, table, version)
    molecule = H2O
    reference_temperature_K = 296
    line_cutoff_cm-1 = 25
    line_pedestal = subtracted          # or: kept
    window_continuum = replace          # or: add (what happens to the built-in 800-1250 cm-1 continuum)
    data:
    # wavenumber_cm-1  self  self_exponent  foreign  foreign_exponent
    10.0   2.1e-20  4.3  8.0e-23  0.0
    ...

Self and foreign coefficients are in cm2 molecule-1 atm-1 at the reference
temperature; each scales with temperature as (T_ref / T) ** exponent. The layer
optical depth is tau = [C_s e + C_f (P - e)] u with the water partial pressure e and
the total pressure P in atm and the water column u in molecule cm-2 (the convention
of Roberts et al. 1976, Eq. 4, which the built-in window continuum uses).
"""

from __future__ import annotations

import hashlib
import math
import os

import numpy as np

from ..absorption.continuum import ContinuumTable
from ..errors import ContinuumTableError
from .files import atomic_path

__all__ = ["read_continuum_table", "write_continuum_table", "FORMAT", "HEADER_KEYS"]

FORMAT = "specforce-continuum 1"
#: Header keys, all required, and what each must be.
HEADER_KEYS = {
    "format": f"'{FORMAT}'",
    "name": "free text",
    "source": "free text: where the numbers come from",
    "molecule": "H2O",
    "reference_temperature_K": "a temperature in K between 100 and 400",
    "line_cutoff_cm-1": "the line cut-off the table assumes, in cm-1, between 1 and 1000",
    "line_pedestal": "'subtracted' or 'kept'",
    "window_continuum": "'replace' or 'add'",
}
_COLUMNS = ("wavenumber_cm-1", "self", "self_exponent", "foreign", "foreign_exponent")


def read_continuum_table(path):
    """Read and check a continuum table.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    ContinuumTable
        With ``provenance`` (path, sha256, name, source, line treatment, coverage).

    Raises
    ------
    ContinuumTableError
        Naming the file, the line and the field, and how to fix it.
    """
    name = os.fspath(path)
    try:
        with open(name, "rb") as fh:
            raw = fh.read()
    except OSError as exc:
        raise ContinuumTableError(f"continuum table {name}: cannot be read ({exc.strerror or exc})") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ContinuumTableError(f"continuum table {name}: not a text file (byte {exc.start} is not UTF-8); "
                                  "give the plain-text format of the README's section 'Your own water continuum'") from None

    def fail(lineno, message):
        raise ContinuumTableError(f"continuum table {name}, line {lineno}: {message}")

    header, rows, in_data, data_line = {}, [], False, None
    lines = text.splitlines()
    for lineno, line in enumerate(lines, start=1):
        content = line.split("#", 1)[0].strip()
        if not content:
            continue
        if not in_data:
            if content.rstrip(":").strip().lower() == "data":
                in_data, data_line = True, lineno
                continue
            if "=" not in content:
                fail(lineno, f"expected 'key = value' or 'data:' before the numbers, got {content!r}")
            key, value = (s.strip() for s in content.split("=", 1))
            if key not in HEADER_KEYS:
                fail(lineno, f"unknown key {key!r}; the keys are {', '.join(HEADER_KEYS)}")
            if key in header:
                fail(lineno, f"key {key!r} given twice (first on line {header[key][1]})")
            header[key] = (value, lineno)
            continue
        fields = content.split()
        if len(fields) != len(_COLUMNS):
            fail(lineno, f"expected {len(_COLUMNS)} numbers ({', '.join(_COLUMNS)}), got {len(fields)}: {content!r}")
        row = []
        for col, f in zip(_COLUMNS, fields):
            try:
                v = float(f)
            except ValueError:
                fail(lineno, f"field {col}: {f!r} is not a number")
            if not math.isfinite(v):
                fail(lineno, f"field {col}: {f!r} is not a finite number")
            row.append(v)
        wn, cs, ns, cf, nf = row
        if wn < 0:
            fail(lineno, f"field wavenumber_cm-1: {wn:g} is negative")
        for col, v in (("self", cs), ("foreign", cf)):
            if v < 0:
                fail(lineno, f"field {col}: {v:g} is negative; coefficients are cm2 molecule-1 atm-1 >= 0")
            if v > 1e-15:
                fail(lineno, f"field {col}: {v:g} cm2 molecule-1 atm-1 is far above any water continuum "
                             "(about 1e-19 at most); check the units (cm2 molecule-1 atm-1, not cm-1 atm-1 or "
                             "per amagat)")
        for col, v in (("self_exponent", ns), ("foreign_exponent", nf)):
            if abs(v) > 20:
                fail(lineno, f"field {col}: {v:g} is not a plausible temperature exponent (|n| <= 20); "
                             "C(T) = C(T_ref) (T_ref / T) ** n")
        if rows and wn <= rows[-1][0][0]:
            fail(lineno, f"field wavenumber_cm-1: {wn:g} does not increase (previous {rows[-1][0][0]:g} on "
                         f"line {rows[-1][1]})")
        rows.append((row, lineno))
    last = len(lines)
    missing = [k for k in HEADER_KEYS if k not in header]
    if missing:
        fail(last if not data_line else data_line, "missing header key(s) " + ", ".join(
            f"{k} ({HEADER_KEYS[k]})" for k in missing))
    if len(rows) < 2:
        fail(data_line or last, "a table needs at least two rows of numbers after 'data:'")

    def value(key):
        return header[key][0]

    def number(key, lo, hi):
        text_value, lineno = header[key]
        try:
            v = float(text_value)
        except ValueError:
            fail(lineno, f"{key}: {text_value!r} is not a number ({HEADER_KEYS[key]})")
        if not (lo <= v <= hi):
            fail(lineno, f"{key}: {v:g} is not {HEADER_KEYS[key]}")
        return v

    def choice(key, options):
        text_value, lineno = header[key]
        if text_value.lower() not in options:
            fail(lineno, f"{key}: {text_value!r} is not {HEADER_KEYS[key]}")
        return text_value.lower()

    if value("format") != FORMAT:
        fail(header["format"][1], f"format: {value('format')!r}; this reader knows {FORMAT!r}")
    if value("molecule") != "H2O":
        fail(header["molecule"][1], f"molecule: {value('molecule')!r}; only H2O continua are supported")
    for key in ("name", "source"):
        if not value(key):
            fail(header[key][1], f"{key}: empty; give {HEADER_KEYS[key]}")
    data = np.array([r for r, _ in rows])
    provenance = {"path": os.path.abspath(name), "sha256": hashlib.sha256(raw).hexdigest(), "name": value("name"),
                  "source": value("source")}
    return ContinuumTable(
        wavenumber=data[:, 0], self_coefficient=data[:, 1], self_exponent=data[:, 2],
        foreign_coefficient=data[:, 3], foreign_exponent=data[:, 4],
        reference_temperature=number("reference_temperature_K", 100.0, 400.0),
        line_cutoff=number("line_cutoff_cm-1", 1.0, 1000.0),
        pedestal_subtracted=choice("line_pedestal", ("subtracted", "kept")) == "subtracted",
        replaces_window=choice("window_continuum", ("replace", "add")) == "replace",
        provenance=provenance)


def write_continuum_table(path, table, name, source):
    """Write a :class:`~specforce.absorption.continuum.ContinuumTable` in the format above (atomically).

    Parameters
    ----------
    path : str or os.PathLike
    table : ContinuumTable
    name, source : str
        The header's free-text fields (one line each).
    """
    for key, text in (("name", name), ("source", source)):
        if not text or "\n" in text or "#" in text:
            raise ContinuumTableError(f"continuum table {os.fspath(path)}: {key} must be one line of text "
                                      "without '#'")
    lines = [f"# {FORMAT}; see the specforce README, 'Your own water continuum'", f"format = {FORMAT}", f"name = {name}", f"source = {source}",
             "molecule = H2O", f"reference_temperature_K = {table.reference_temperature:g}",
             f"line_cutoff_cm-1 = {table.line_cutoff:g}",
             f"line_pedestal = {'subtracted' if table.pedestal_subtracted else 'kept'}",
             f"window_continuum = {'replace' if table.replaces_window else 'add'}", "data:",
             "# " + "  ".join(_COLUMNS)]
    for row in zip(table.wavenumber, table.self_coefficient, table.self_exponent, table.foreign_coefficient,
                   table.foreign_exponent):
        lines.append(" ".join(f"{x:.9g}" for x in row))
    with atomic_path(path) as tmp:
        with open(tmp, "w") as fh:
            fh.write("\n".join(lines) + "\n")
