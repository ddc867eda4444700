"""Reading 160-character line records, streamed in chunks.

The fixed-width record was introduced with the 2004 edition of the public line
database: Rothman et al. (2005), JQSRT 96, 139-204, Table 1. Its fields are
listed in :data:`FIELDS`. Files may be plain or compressed (``.gz``, ``.bz2``,
``.xz``, ``.zip``), with LF or CRLF line endings. Empty lines are ignored.

Parsing is done on a byte array of whole chunks by a compiled kernel, so that
memory stays bounded whatever the file size and throughput is millions of
records per second.

A record that cannot be read stops the import with :class:`LineRecordError`,
which names the file, the line number, the field, its columns and the raw text.
With ``on_error="skip"`` such records are dropped instead and counted by reason
in a :class:`ReadReport`.
"""

from __future__ import annotations

import collections
import contextlib
import lzma
import os
import zipfile
import zlib
from dataclasses import dataclass, field

import numpy as np

from . import _parsekernels as _k
from .linesources import _iter_byte_blocks, _open_streams
from ..errors import LineRecordError
from ..molecular.molecules import isotopologues, known_molecule_ids, molecule_name

__all__ = [
    "RECORD_LENGTH",
    "FIELDS",
    "FLOAT_COLUMNS",
    "TEXT_COLUMNS",
    "ReadReport",
    "iter_record_blocks",
    "read_records",
    "format_record",
]

RECORD_LENGTH = 160


@dataclass(frozen=True)
class Field:
    """One field of the record: name, 0-based start column, width, format, unit."""

    name: str
    start: int
    width: int
    fmt: str
    unit: str
    description: str


#: Field layout of the 160-character record (Rothman et al. 2005, Table 1).
FIELDS = (
    Field("molecule", 0, 2, "I2", "", "molecule number"),
    Field("isotopologue", 2, 1, "A1", "", "isotopologue number (0 = 10, A = 11, ...)"),
    Field("wavenumber", 3, 12, "F12.6", "cm-1", "vacuum line position"),
    Field("intensity", 15, 10, "E10.3", "cm-1/(molecule cm-2)", "line intensity at 296 K"),
    Field("einstein_a", 25, 10, "E10.3", "s-1", "Einstein A coefficient"),
    Field("gamma_air", 35, 5, "F5.4", "cm-1 atm-1", "air-broadened HWHM at 296 K"),
    Field("gamma_self", 40, 5, "F5.3", "cm-1 atm-1", "self-broadened HWHM at 296 K"),
    Field("lower_energy", 45, 10, "F10.4", "cm-1", "lower-state energy E''"),
    Field("n_air", 55, 4, "F4.2", "", "temperature exponent of gamma_air"),
    Field("delta_air", 59, 8, "F8.6", "cm-1 atm-1", "air pressure shift"),
    Field("global_upper", 67, 15, "A15", "", "upper-state global quanta"),
    Field("global_lower", 82, 15, "A15", "", "lower-state global quanta"),
    Field("local_upper", 97, 15, "A15", "", "upper-state local quanta"),
    Field("local_lower", 112, 15, "A15", "", "lower-state local quanta"),
    Field("uncertainty", 127, 6, "6I1", "", "uncertainty indices"),
    Field("references", 133, 12, "6I2", "", "reference indices"),
    Field("line_mixing", 145, 1, "A1", "", "line-mixing flag"),
    Field("g_upper", 146, 7, "F7.1", "", "upper-state statistical weight"),
    Field("g_lower", 153, 7, "F7.1", "", "lower-state statistical weight"),
)
_BY_NAME = {f.name: f for f in FIELDS}

#: Float columns, in the order the kernel returns them.
FLOAT_COLUMNS = (
    "wavenumber",
    "intensity",
    "einstein_a",
    "gamma_air",
    "gamma_self",
    "lower_energy",
    "n_air",
    "delta_air",
    "g_upper",
    "g_lower",
)
#: Text columns kept verbatim (as fixed-width bytes).
TEXT_COLUMNS = (
    "global_upper",
    "global_lower",
    "local_upper",
    "local_lower",
    "uncertainty",
    "references",
    "line_mixing",
)
# Fields that may be blank in older files; they are read as NaN.
_BLANK_OK = {"einstein_a", "g_upper", "g_lower"}

_FSTART = np.array([_BY_NAME[n].start for n in FLOAT_COLUMNS], dtype=np.int64)
_FWIDTH = np.array([_BY_NAME[n].width for n in FLOAT_COLUMNS], dtype=np.int64)
_FBLANK = np.array([n in _BLANK_OK for n in FLOAT_COLUMNS], dtype=np.bool_)

@dataclass(frozen=True)
class _Limit:
    """Physical bounds of one float column, and the basis of each.

    A value is accepted when it is finite and ``low <= value <= high`` (``low <
    value`` when ``low_open``), or equals ``placeholder``, or is blank (read as NaN)
    where ``blank_ok``. The bounds are generous: they catch values no real line can
    have (a mistyped exponent, a shifted column), not unusual lines.
    """

    column: str
    low: float
    high: float
    why_low: str  # basis of the lower bound (and of the upper one when why_high is empty)
    why_high: str = ""
    low_open: bool = False
    blank_ok: bool = False
    placeholder: float | None = None

    def accepts(self, v):
        """Boolean mask of the acceptable values of an array ``v``."""
        above = (v > self.low) if self.low_open else (v >= self.low)
        ok = np.isfinite(v) & above & (v <= self.high)
        if self.placeholder is not None:
            ok |= v == self.placeholder
        if self.blank_ok:
            ok |= np.isnan(v)
        return ok

    def explain(self, value):
        """Why ``value`` fails: the bound it breaks and that bound's basis."""
        unit = _BY_NAME[self.column].unit
        unit = f" {unit}" if unit else ""
        if not np.isfinite(value):
            return f"the value {value} is not a finite number"
        if value > self.high:
            why = self.why_high or self.why_low
            return f"the value {value:.6g} is above the upper bound {self.high:g}{unit}: {why}"
        side = "not above" if self.low_open else "below"
        return f"the value {value:.6g} is {side} the lower bound {self.low:g}{unit}: {self.why_low}"


#: Physical bounds of the float columns, in the record's units. "The real lists" are the six HITRAN
#: files that tests/test_linerecords.py reads: every line in them passes.
_LIMITS = (
    _Limit("wavenumber", 0.0, 1.0e5, low_open=True, why_low="a line position is positive",
           why_high="the record's F12.6 field holds at most 99999.999999 cm-1"),
    _Limit("intensity", 0.0, 1.0e-14, low_open=True, why_low="a line of zero or negative intensity is not a line",
           why_high="the strongest infrared lines are a few 1e-18 (water's rotation band, CO2's 4.3 um band; "
                    "from memory; 2.65e-18 is the largest in the real lists), so no real line comes within "
                    "three decades of the bound"),
    _Limit("einstein_a", 0.0, 1.0e10, blank_ok=True, why_low="a transition probability is not negative",
           why_high="the fastest allowed electronic transitions (hydrogen Lyman-alpha, 6.3e8 s-1; from memory) "
                    "stay below it, and infrared ones below 1e3 s-1"),
    _Limit("gamma_air", 0.0, 1.0, why_low="a half-width is not negative",
           why_high="air-broadened half-widths are 0.002-0.2 cm-1 atm-1 (from memory; 0.0022-0.11 in the "
                    "real lists)"),
    _Limit("gamma_self", 0.0, 5.0, why_low="a half-width is not negative",
           why_high="self-broadened half-widths reach about 1 cm-1 atm-1 for water and the hydrogen halides "
                    "(from memory; 0.77 at most in the real lists)"),
    # E'' = -1 is the trade's placeholder for an unknown lower-state energy.
    _Limit("lower_energy", 0.0, 1.0e5, placeholder=-1.0,
           why_low="E'' is counted from the ground state (-1 alone marks an unknown one)",
           why_high="100000 cm-1 (12.4 eV) is above the dissociation energy of every molecule in the table "
                    "(the largest, CO's, is 11.1 eV = 89500 cm-1; from memory): no bound state lies higher"),
    _Limit("n_air", -2.0, 3.0,
           why_low="collision theory gives temperature exponents of 0.5-1 and fitted ones lie between about "
                   "-1 and 1.5 (from memory; 0.01-1.01 in the real lists)"),
    _Limit("delta_air", -1.0, 1.0,
           why_low="pressure shifts are smaller than the widths, under 0.1 cm-1 atm-1 in size (from memory; "
                   "0.034 at most in the real lists)"),
    _Limit("g_upper", 0.0, np.inf, blank_ok=True, why_low="a statistical weight counts states"),
    _Limit("g_lower", 0.0, np.inf, blank_ok=True, why_low="a statistical weight counts states"),
)




def _broken_limits(columns):
    """Per row of ``columns`` (a dict holding :data:`FLOAT_COLUMNS`), the index in ``_LIMITS`` of
    the first bound it breaks, or -1."""
    n = columns["wavenumber"].shape[0]
    broken = np.full(n, -1, dtype=np.int64)
    for j, limit in reversed(list(enumerate(_LIMITS))):  # the first failing column is reported
        broken[~limit.accepts(np.asarray(columns[limit.column], dtype=np.float64))] = j
    return broken


_CHUNK_BYTES = 8 * 1024 * 1024


@dataclass
class ReadReport:
    """What a read did: records read and records skipped, by reason."""

    records: int = 0
    skipped: collections.Counter = field(default_factory=collections.Counter)
    bytes_read: int = 0

    @property
    def total_skipped(self):
        """Number of records skipped [count]."""
        return sum(self.skipped.values())

    def summary(self):
        """One line for humans."""
        text = f"{self.records} records read"
        if self.skipped:
            reasons = ", ".join(f"{n} {why}" for why, n in self.skipped.most_common())
            text += f"; {self.total_skipped} skipped ({reasons})"
        return text


# ----------------------------------------------------------------- parsing


def _raise_or_skip(name, line, fieldname, raw, why, report, on_error, reason):
    if on_error == "raise":
        if fieldname == "record":
            where = ""
        else:
            f = _BY_NAME[fieldname]
            where = f", field '{fieldname}' (columns {f.start + 1}-{f.start + f.width}, {f.fmt})"
        raise LineRecordError(
            f"{name}, line {line}{where}: {why}; raw text {raw!r}. Fix or remove this "
            f"record, or import with on_error='skip' (CLI: --skip-bad) to drop bad records.",
            path=name,
            line=line,
            field=fieldname,
            raw=raw,
        )
    report.skipped[reason] += 1


def _raw(row, fname):
    """The raw text of one field of a record row."""
    f = _BY_NAME[fname]
    return bytes(row[f.start : f.start + f.width]).decode("latin-1")


def _known_tables():
    known_mol = np.zeros(100, dtype=bool)
    known_mol[known_molecule_ids()] = True
    detailed = np.zeros(100, dtype=bool)
    known_iso = np.zeros((100, 40), dtype=bool)
    for iso in isotopologues():
        detailed[iso.molecule_id] = True
        known_iso[iso.molecule_id, iso.local_id] = True
    return known_mol, detailed, known_iso


def _parse_block(block, name, first_line, report, on_error, tables):
    """Parse one block of whole lines; return a dict of columns (or None)."""
    arr = np.frombuffer(block, dtype=np.uint8)
    ends = np.flatnonzero(arr == 10)
    starts = np.empty_like(ends)
    starts[0] = 0
    starts[1:] = ends[:-1] + 1
    line_no = first_line + np.arange(ends.size)
    has_cr = (ends > starts) & (arr[np.maximum(ends - 1, 0)] == 13)
    ends = ends - has_cr
    lengths = ends - starts
    keep = lengths != 0  # empty lines are ignored
    wrong = keep & (lengths != RECORD_LENGTH)
    if wrong.any():
        for r in np.flatnonzero(wrong):
            raw = bytes(arr[starts[r] : ends[r]]).decode("latin-1")
            _raise_or_skip(
                name, int(line_no[r]), "record", raw,
                f"the record has {lengths[r]} characters, expected {RECORD_LENGTH}",
                report, on_error, "wrong record length",
            )
        keep &= ~wrong
    starts, line_no = starts[keep], line_no[keep]
    if starts.size == 0:
        return None
    stride = starts[1] - starts[0] if starts.size > 1 else 0
    uniform = (
        starts.size > 1
        and stride >= RECORD_LENGTH
        and starts[0] == 0
        and starts.size * stride <= arr.size
        and bool(np.all(np.diff(starts) == stride))
    )
    if uniform:
        rows = arr[: starts.size * stride].reshape(-1, stride)[:, :RECORD_LENGTH]
    else:
        rows = _k.gather_rows(arr, starts, RECORD_LENGTH)
    values, mol, iso, bad = _k.parse_records(
        rows, _FSTART, _FWIDTH, _FBLANK,
        _BY_NAME["molecule"].start, _BY_NAME["molecule"].width, _BY_NAME["isotopologue"].start,
    )
    good = bad == -1
    known_mol, detailed, known_iso = tables
    molc = np.clip(mol, 0, 99)
    isoc = np.clip(iso, 0, 39)
    unknown_mol = good & ~known_mol[molc]
    unknown_iso = good & ~unknown_mol & detailed[molc] & ~known_iso[molc, isoc]
    range_bad = np.where(good, _broken_limits(dict(zip(FLOAT_COLUMNS, values))), -1)
    problem = ~good | unknown_mol | unknown_iso | (range_bad >= 0)
    if problem.any():
        for r in np.flatnonzero(problem):
            row = np.asarray(rows[r])
            line = int(line_no[r])

            if bad[r] == -2:
                fname, why, reason = "molecule", "not an integer molecule number", "unreadable field"
            elif bad[r] == -3:
                fname, why, reason = "isotopologue", "not an isotopologue code (1-9, 0, A-Z)", "unreadable field"
            elif bad[r] >= 0:
                fname = FLOAT_COLUMNS[bad[r]]
                why = f"could not be read as a number ({_BY_NAME[fname].fmt})"
                reason = "unreadable field"
            elif unknown_mol[r]:
                fname, why, reason = "molecule", f"unknown molecule number {mol[r]}", "unknown molecule"
            elif unknown_iso[r]:
                fname = "isotopologue"
                why = f"{molecule_name(int(mol[r]))} has no isotopologue {iso[r]} in specforce's table"
                reason = "unknown isotopologue"
            else:
                limit = _LIMITS[range_bad[r]]
                fname = limit.column
                value = float(values[FLOAT_COLUMNS.index(fname), r])
                why, reason = f"impossible value: {limit.explain(value)}", "impossible value"
            _raise_or_skip(name, line, fname, _raw(row, fname), why, report, on_error, reason)
    if problem.any():
        sel = ~problem
        mol, iso, values, rows = mol[sel], iso[sel], values[:, sel], rows[sel]
    out = {"molecule": mol.astype(np.uint8), "isotopologue": iso.astype(np.uint8)}
    for j, col in enumerate(FLOAT_COLUMNS):
        out[col] = values[j]
    good_rows = rows
    for col in TEXT_COLUMNS:
        f = _BY_NAME[col]
        out[col] = np.ascontiguousarray(good_rows[:, f.start : f.start + f.width]).view(f"S{f.width}").ravel()
    return out


def iter_record_blocks(
    path, *, on_error="raise", report=None, chunk_bytes=_CHUNK_BYTES, progress=None, hasher=None
):
    """Stream the records of one line file as blocks of columns.

    Parameters
    ----------
    path : str or os.PathLike
        Plain, ``.gz``, ``.bz2``, ``.xz`` or ``.zip`` file of 160-character records.
    on_error : {"raise", "skip"}
        Stop at the first bad record (default) or skip bad records and count them.
    report : ReadReport, optional
        Filled with counts as the file is read.
    chunk_bytes : int
        Bytes read per block [bytes]; bounds memory use.
    progress : callable, optional
        Called with the number of (decompressed) bytes consumed by each block.
    hasher : hashlib object, optional
        Receives the bytes of the file as stored, for provenance.

    Yields
    ------
    dict of numpy.ndarray
        Columns ``molecule``, ``isotopologue``, :data:`FLOAT_COLUMNS` and
        :data:`TEXT_COLUMNS`, in file order.
    """
    if on_error not in ("raise", "skip"):
        raise ValueError(f"on_error must be 'raise' or 'skip', got {on_error!r}")
    report = report if report is not None else ReadReport()
    tables = _known_tables()
    for name, stream, on_disk in _open_streams(path, hasher):
        line = 1
        consumed = [0, 0]  # bytes and lines read so far, for the message of a damaged file
        for block in _guarded_blocks(name, stream, chunk_bytes, consumed, on_disk):
            n_lines = int(np.count_nonzero(np.frombuffer(block, dtype=np.uint8) == 10))
            consumed[0] += len(block)
            consumed[1] += n_lines
            cols = _parse_block(block, name, line, report, on_error, tables)
            line += n_lines
            report.bytes_read += len(block)
            if progress is not None:
                progress(len(block))
            if cols is not None and cols["wavenumber"].size:
                report.records += cols["wavenumber"].size
                yield cols


# What a damaged or cut-short compressed file raises while it is read: the decompressors'
# own errors (zlib.error for corrupt deflate data in .gz and .zip), EOFError for a cut
# stream and OSError (gzip.BadGzipFile, a CRC mismatch, an unreadable disk).
_READ_ERRORS = (OSError, EOFError, zlib.error, lzma.LZMAError, zipfile.BadZipFile)


def _guarded_blocks(name, stream, chunk_bytes, consumed, on_disk):
    """Blocks of a stream, with read and decompression failures turned into clear errors.

    ``consumed`` holds the bytes and lines the caller has taken so far and
    ``on_disk`` is the file as stored (or None): the message says how far the file
    could be read.
    """
    try:
        yield from _iter_byte_blocks(stream, chunk_bytes)
    except _READ_ERRORS as exc:
        n_bytes, n_lines = consumed
        where = ""
        if on_disk is not None:
            with contextlib.suppress(OSError, ValueError):
                size = os.fstat(on_disk.fileno()).st_size
                where = f", the damage found near byte {on_disk.tell()} of the {size}-byte file"
        raise LineRecordError(
            f"{name}: the file could not be read or decompressed after {n_bytes} bytes "
            f"({n_lines} whole lines) of content{where} ({type(exc).__name__}: {exc}); it is damaged or "
            f"cut short. Nothing was imported: download or copy it again, and check that its suffix "
            f"(.gz, .bz2, .xz, .zip) matches its content",
            path=name,
            line=n_lines + 1,
        ) from exc


def read_records(path, *, on_error="raise", report=None):
    """Read a whole line file into one dict of columns (see :func:`iter_record_blocks`)."""
    blocks = list(iter_record_blocks(path, on_error=on_error, report=report))
    if not blocks:
        return _empty_columns()
    return {k: np.concatenate([b[k] for b in blocks]) for k in blocks[0]}


def _empty_columns():
    out = {"molecule": np.zeros(0, np.uint8), "isotopologue": np.zeros(0, np.uint8)}
    for col in FLOAT_COLUMNS:
        out[col] = np.zeros(0)
    for col in TEXT_COLUMNS:
        out[col] = np.zeros(0, dtype=f"S{_BY_NAME[col].width}")
    return out


def format_record(**values):
    """Write one 160-character record from field values (for tests and tools).

    Missing text fields are blank; missing numbers are zero. The isotopologue
    is written with the record's code (10 as ``0``, 11 as ``A``, ...).
    """
    iso = int(values.get("isotopologue", 1))
    iso_c = "0" if iso == 10 else (chr(ord("A") + iso - 11) if iso > 10 else str(iso))
    parts = [
        f"{int(values.get('molecule', 1)):2d}",
        iso_c,
        _fixed(values.get("wavenumber", 0.0), 12, 6),
        f"{values.get('intensity', 0.0):10.3E}",
        f"{values.get('einstein_a', 0.0):10.3E}",
        _fixed(values.get("gamma_air", 0.0), 5, 4),
        _fixed(values.get("gamma_self", 0.0), 5, 3),
        _fixed(values.get("lower_energy", 0.0), 10, 4),
        _fixed(values.get("n_air", 0.0), 4, 2),
        _fixed(values.get("delta_air", 0.0), 8, 6),
    ]
    for col in TEXT_COLUMNS:
        f = _BY_NAME[col]
        text = values.get(col, b"")
        text = text.decode("latin-1") if isinstance(text, bytes) else str(text)
        parts.append(text.rjust(f.width)[: f.width])
    parts.append(_fixed(values.get("g_upper", 0.0), 7, 1))
    parts.append(_fixed(values.get("g_lower", 0.0), 7, 1))
    rec = "".join(parts)
    if len(rec) != RECORD_LENGTH:
        raise ValueError(f"a field overflowed its width: the record has {len(rec)} characters")
    return rec


def _fixed(value, width, decimals):
    """Fortran Fw.d text; drops the leading zero (``-.0008``) when it must, as records do."""
    text = f"{value:{width}.{decimals}f}"
    if len(text) > width:
        text = text.replace("0.", ".", 1).rjust(width)
    if len(text) > width:
        raise ValueError(f"{value!r} does not fit an F{width}.{decimals} field")
    return text
