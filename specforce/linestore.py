"""The HDF5 line store: lines in columns, sorted by wavenumber, with provenance.

Layout (format ``specforce-linestore``, version 1)::

    /                 attrs: format, format_version, specforce_version, created,
                             sources (JSON), total_lines, molecule_counts (JSON)
    /lines/<column>   one 1-D dataset per column, chunked and compressed,
                      attrs: units, description
    /lines/wavenumber_index   wavenumber of every INDEX_STEP-th line, so that a
                      wavenumber window is found without reading the column

Columns are those of the 160-character record (see
:data:`specforce.linerecords.FIELDS`), in the record's units.

Every write goes to a hidden temporary file beside the target and is renamed
over it only when complete: an interrupted import leaves either no store or
the old one untouched. A process killed outright (SIGKILL) may leave the
hidden ``.NAME.partial-*`` file behind; it is never mistaken for a store.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import os
import queue
import threading
from dataclasses import dataclass

import h5py
import numpy as np

from . import __version__
from .constants import REFERENCE_TEMPERATURE
from .errors import LineStoreError
from .io.files import atomic_path, scratch_path
from .lineparams import intensity_at
from .linerecords import FIELDS, FLOAT_COLUMNS, TEXT_COLUMNS, ReadReport, iter_record_blocks
from .molecules import molecule_id, molecule_name
from .lines import LineList, Spectroscopy

__all__ = [
    "ImportReport",
    "LineList",
    "LineStore",
    "import_lines",
    "write_store",
    "open_store",
    "load_spectroscopy",
    "FORMAT_NAME",
    "FORMAT_VERSION",
]

FORMAT_NAME = "specforce-linestore"
FORMAT_VERSION = 1
INDEX_STEP = 4096
_CHUNK = 65536
_FIELD = {f.name: f for f in FIELDS}
COLUMNS = ("molecule", "isotopologue") + FLOAT_COLUMNS + TEXT_COLUMNS
# Storage types: float32 holds the 4-5 significant digits of widths, exponents
# and statistical weights exactly enough; positions, intensities, energies and
# shifts stay float64.
_DTYPES = {
    "molecule": "u1",
    "isotopologue": "u1",
    "wavenumber": "f8",
    "intensity": "f8",
    "einstein_a": "f8",
    "gamma_air": "f4",
    "gamma_self": "f4",
    "lower_energy": "f8",
    "n_air": "f4",
    "delta_air": "f8",
    "g_upper": "f4",
    "g_lower": "f4",
    **{c: f"S{_FIELD[c].width}" for c in TEXT_COLUMNS},
}


def _now():
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


def _filters(compression):
    # Shuffle helps gzip; for lzf it costs time and gains nothing measurable.
    if not compression:
        return {}
    return {"compression": compression, "shuffle": compression == "gzip"}


class _ColumnWriter:
    """Appends blocks of columns to resizable datasets in whole chunks only.

    Writing partial chunks would make HDF5 decompress and recompress them on
    every append; buffering to chunk multiples avoids that.
    """

    def __init__(self, group, compression):
        self.group = group
        for col in COLUMNS:
            ds = group.create_dataset(
                col, shape=(0,), maxshape=(None,), dtype=_DTYPES[col], chunks=(_CHUNK,), **_filters(compression)
            )
            if col in _FIELD:
                ds.attrs["units"] = _FIELD[col].unit
                ds.attrs["description"] = _FIELD[col].description
                ds.attrs["record_format"] = _FIELD[col].fmt
        self.pending = []
        self.n_pending = 0

    def append(self, cols):
        self.pending.append({c: cols[c].astype(_DTYPES[c], copy=False) for c in COLUMNS})
        self.n_pending += cols["wavenumber"].size
        if self.n_pending >= 4 * _CHUNK:
            self._flush((self.n_pending // _CHUNK) * _CHUNK)

    def close(self):
        if self.n_pending:
            self._flush(self.n_pending)

    def _flush(self, n):
        merged = {c: np.concatenate([p[c] for p in self.pending]) for c in COLUMNS}
        n0 = self.group["wavenumber"].shape[0]
        for col in COLUMNS:
            ds = self.group[col]
            ds.resize((n0 + n,))
            ds[n0:] = merged[col][:n]
        rest = merged["wavenumber"].size - n
        self.pending = [{c: merged[c][n:] for c in COLUMNS}] if rest else []
        self.n_pending = rest


def _finish(h5, group, sources, extra_attrs):
    wn = group["wavenumber"]
    n = wn.shape[0]
    group.create_dataset("wavenumber_index", data=wn[::INDEX_STEP] if n else np.zeros(0))
    group["wavenumber_index"].attrs["step"] = INDEX_STEP
    group["wavenumber_index"].attrs["units"] = "cm-1"
    counts = {}
    mols = group["molecule"]
    for start in range(0, n, 1 << 22):
        ids, c = np.unique(mols[start : start + (1 << 22)], return_counts=True)
        for i, k in zip(ids, c):
            counts[molecule_name(int(i))] = counts.get(molecule_name(int(i)), 0) + int(k)
    h5.attrs["format"] = FORMAT_NAME
    h5.attrs["format_version"] = FORMAT_VERSION
    h5.attrs["specforce_version"] = __version__
    h5.attrs["created"] = _now()
    h5.attrs["sources"] = json.dumps(sources)
    h5.attrs["total_lines"] = n
    h5.attrs["molecule_counts"] = json.dumps(counts)
    for k, v in extra_attrs.items():
        h5.attrs[k] = v


def _sort_into(src_group, dst_group, compression):
    """Copy columns sorted by wavenumber, one column in memory at a time."""
    order = np.argsort(src_group["wavenumber"][:], kind="stable")
    kw = _filters(compression)
    for col in COLUMNS:
        data = src_group[col][:][order]
        ds = dst_group.create_dataset(col, data=data, maxshape=(None,), chunks=(_CHUNK,), **kw)
        for k, v in src_group[col].attrs.items():
            ds.attrs[k] = v
        del data


def _prefetch(blocks, depth=2):
    """Run a block generator in a background thread, ``depth`` blocks ahead.

    Parsing (numba, GIL released) then overlaps with HDF5 writing; memory stays
    bounded by ``depth`` blocks. Exceptions reach the consumer unchanged.
    """
    q = queue.Queue(maxsize=depth)
    stop = threading.Event()
    done = object()

    def work():
        try:
            for b in blocks:
                while not stop.is_set():
                    try:
                        q.put(b, timeout=0.1)
                        break
                    except queue.Full:
                        continue
                if stop.is_set():
                    return
            q.put(done)
        except BaseException as exc:  # handed to the consumer
            q.put(exc)

    th = threading.Thread(target=work, daemon=True)
    th.start()
    try:
        while True:
            item = q.get()
            if item is done:
                return
            if isinstance(item, BaseException):
                raise item
            yield item
    finally:
        stop.set()
        th.join()


def _is_store(path):
    try:
        with h5py.File(path, "r") as h5:
            return h5.attrs.get("format") == FORMAT_NAME
    except OSError:
        return False


@dataclass(frozen=True)
class ImportReport:
    """What an import did.

    Attributes
    ----------
    sources : list of dict
        Per source: path, sha256, records read, records skipped by reason.
    lines : int
        Lines in the store written.
    duplicates : int
        Records that repeat another record exactly (all fields).
    dropped_duplicates : bool
        Whether those were dropped (``duplicates="drop"``).
    warnings : tuple of str
        What the user should know (repeated sources, duplicate records).
    """

    sources: list
    lines: int
    duplicates: int = 0
    dropped_duplicates: bool = False
    warnings: tuple = ()


def import_lines(sources, store, *, on_error="raise", compression="lzf", progress=None, duplicates="warn"):
    """Import line files (and existing stores) into one new HDF5 line store.

    Parameters
    ----------
    sources : sequence of str or os.PathLike
        Line files in the 160-character format (plain or compressed), or line
        stores written by specforce; their lines are merged.
    store : str or os.PathLike
        Path of the store to write. It is replaced only when the import succeeds.
    on_error : {"raise", "skip"}
        Stop at the first bad record (default) or skip bad records and report them.
    compression : {"lzf", "gzip", None}
        HDF5 filter for the columns.
    progress : callable, optional
        Called with the number of bytes consumed as the import goes.
    duplicates : {"warn", "drop"}
        Records repeating another exactly are counted and reported (default), or dropped.

    Returns
    -------
    ImportReport

    Raises
    ------
    LineStoreError
        If the sources hold no line record (nothing is written).
    """
    if isinstance(sources, (str, os.PathLike)):
        sources = [sources]
    if not sources:
        raise LineStoreError("no source files given to import")
    if duplicates not in ("warn", "drop"):
        raise LineStoreError(f"duplicates must be 'warn' or 'drop', got {duplicates!r}")
    for src in sources:
        if not os.path.exists(src):
            raise FileNotFoundError(f"{src}: no such line file; check the path")
    provenance = []
    with atomic_path(store) as first_tmp, scratch_path(store) as sorted_tmp:
        ordered = True
        last = -np.inf
        with h5py.File(first_tmp, "w") as h5:
            grp = h5.create_group("lines")
            writer = _ColumnWriter(grp, compression)
            for src in sources:
                if _is_store(src):
                    with h5py.File(src, "r") as other:
                        provenance.extend(json.loads(other.attrs["sources"]))
                        n = int(other.attrs["total_lines"])
                        for start in range(0, n, 1 << 20):
                            cols = {c: other["lines"][c][start : start + (1 << 20)] for c in COLUMNS}
                            if cols["wavenumber"].size:
                                ordered &= bool(cols["wavenumber"][0] >= last)
                                last = cols["wavenumber"][-1]
                                writer.append(cols)
                    continue
                report = ReadReport()
                hasher = hashlib.sha256()
                blocks = iter_record_blocks(src, on_error=on_error, report=report, progress=progress, hasher=hasher)
                for cols in _prefetch(blocks):
                    wn = cols["wavenumber"]
                    ordered &= bool(wn[0] >= last) and bool(np.all(wn[1:] >= wn[:-1]))
                    last = wn[-1]
                    writer.append(cols)
                provenance.append(
                    {
                        "path": os.path.abspath(os.fspath(src)),
                        "sha256": hasher.hexdigest(),
                        "records": report.records,
                        "skipped": dict(report.skipped),
                        "imported": _now(),
                    }
                )
            writer.close()
            if ordered:
                _finish(h5, grp, provenance, {})
        if not ordered:
            # Sort out of core: one column in memory at a time, into the scratch file, which
            # then takes the place of the unsorted one.
            with h5py.File(first_tmp, "r") as h5, h5py.File(sorted_tmp, "w") as out:
                grp = out.create_group("lines")
                _sort_into(h5["lines"], grp, compression)
                _finish(out, grp, provenance, {})
            os.replace(sorted_tmp, first_tmp)
        with h5py.File(first_tmp, "r") as h5:
            n = int(h5.attrs["total_lines"])
            repeated = _duplicate_rows(h5["lines"])
        if n == 0:
            names = ", ".join(os.fspath(s) for s in sources)
            raise LineStoreError(f"{names}: no line records found; nothing written (is it a file of 160-character "
                                 f"records?)")
        if repeated.size and duplicates == "drop":
            with h5py.File(first_tmp, "r") as h5, h5py.File(sorted_tmp, "w") as out:
                grp = out.create_group("lines")
                keep = np.ones(n, bool)
                keep[repeated] = False
                _copy_rows(h5["lines"], grp, keep, compression)
                _finish(out, grp, provenance, {"dropped_duplicates": int(repeated.size)})
            os.replace(sorted_tmp, first_tmp)
    warnings = []
    seen = {}
    for src in provenance:
        if src.get("sha256") in seen:
            warnings.append(f"{src['path']} has the same content (sha256) as {seen[src['sha256']]}: its lines are in "
                            f"the store twice")
        seen.setdefault(src.get("sha256"), src["path"])
    if repeated.size:
        warnings.append(f"{repeated.size} records repeat another record exactly"
                        + (" and were dropped" if duplicates == "drop" else "; --drop-duplicates drops them"))
    lines = n - (repeated.size if duplicates == "drop" else 0)
    return ImportReport(provenance, lines, int(repeated.size), duplicates == "drop", tuple(warnings))


def _duplicate_rows(group):
    """Indices of rows that repeat an earlier row exactly (all columns), in a store sorted by wavenumber.

    Rows are read in chunks that end where the wavenumber changes, so that every
    set of equal rows (equal wavenumbers first of all) falls in one chunk.
    """
    wn = group["wavenumber"]
    n = wn.shape[0]
    out = []
    start = 0
    while start < n:
        stop = min(n, start + (1 << 20))
        if stop < n:
            w = wn[stop - 1 : min(n, stop + 4096)]
            run = int(np.searchsorted(w, w[0], side="right"))  # rows equal to the last one go with it
            stop = stop - 1 + run
        cols = [group[c][start:stop] for c in COLUMNS]
        rec = np.rec.fromarrays(cols)
        _, first = np.unique(rec, return_index=True)
        dup = np.setdiff1d(np.arange(stop - start), first, assume_unique=True)
        out.append(dup + start)
        start = stop
    return np.concatenate(out) if out else np.zeros(0, np.int64)


def _copy_rows(src_group, dst_group, keep, compression):
    """Copy the rows marked by ``keep``, one column at a time."""
    kw = _filters(compression)
    for col in COLUMNS:
        data = src_group[col][:][keep]
        ds = dst_group.create_dataset(col, data=data, maxshape=(None,), chunks=(_CHUNK,), **kw)
        for k, v in src_group[col].attrs.items():
            ds.attrs[k] = v


def write_store(lines, store, *, compression="lzf", extra_attrs=None):
    """Write a :class:`LineList` (all columns present) to a new store, atomically.

    Parameters
    ----------
    lines : LineList
        Lines to write; sorted by wavenumber here if they are not already.
    store : str or os.PathLike
        Path of the store.
    compression : {"lzf", "gzip", None}
        HDF5 filter for the columns.
    extra_attrs : dict, optional
        More root attributes (e.g. generator settings), JSON-serialisable values.
    """
    missing = [c for c in COLUMNS if c not in lines.columns]
    if missing:
        raise LineStoreError(f"cannot write a store: the line list lacks columns {missing}")
    order = np.argsort(lines.columns["wavenumber"], kind="stable")
    kw = _filters(compression)
    with atomic_path(store) as tmp, h5py.File(tmp, "w") as h5:
        grp = h5.create_group("lines")
        for col in COLUMNS:
            data = np.asarray(lines.columns[col])[order].astype(_DTYPES[col], copy=False)
            ds = grp.create_dataset(col, data=data, maxshape=(None,), chunks=(min(_CHUNK, max(1, data.size)),), **kw)
            if col in _FIELD:
                ds.attrs["units"] = _FIELD[col].unit
                ds.attrs["description"] = _FIELD[col].description
        extra = {k: (v if isinstance(v, (str, int, float)) else json.dumps(v)) for k, v in (extra_attrs or {}).items()}
        _finish(h5, grp, lines.provenance.get("sources", []), extra)


class LineStore:
    """An open line store. Use :func:`open_store`; close with ``close()`` or ``with``."""

    def __init__(self, path):
        self.path = os.fspath(path)
        if not os.path.exists(self.path):
            raise FileNotFoundError(f"{self.path}: no such line store; create one with 'specforce lines import'")
        try:
            self._h5 = h5py.File(self.path, "r")
        except OSError as exc:
            raise LineStoreError(f"{self.path}: not a readable HDF5 file ({exc})") from exc
        fmt = self._h5.attrs.get("format")
        if fmt != FORMAT_NAME:
            self._h5.close()
            raise LineStoreError(f"{self.path}: not a specforce line store (format attribute {fmt!r})")
        version = int(self._h5.attrs.get("format_version", 0))
        if version > FORMAT_VERSION:
            self._h5.close()
            raise LineStoreError(
                f"{self.path}: store format version {version} is newer than this specforce "
                f"reads ({FORMAT_VERSION}); upgrade specforce"
            )
        self._lines = self._h5["lines"]
        self._index = self._lines["wavenumber_index"][:]

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def close(self):
        """Close the file."""
        self._h5.close()

    def __len__(self):
        return int(self._h5.attrs["total_lines"])

    @property
    def provenance(self):
        """Root attributes as a plain dict (sources parsed from JSON)."""
        out = {k: (v.item() if hasattr(v, "item") else v) for k, v in self._h5.attrs.items()}
        for key in ("sources", "molecule_counts", "generator"):
            if key in out and isinstance(out[key], str):
                out[key] = json.loads(out[key])
        return out

    def _window(self, wn_min, wn_max):
        n = len(self)
        if n == 0:
            return 0, 0
        lo_blk = max(int(np.searchsorted(self._index, wn_min, side="left")) - 1, 0)
        hi_blk = int(np.searchsorted(self._index, wn_max, side="right"))
        lo0 = lo_blk * INDEX_STEP
        hi0 = min(hi_blk * INDEX_STEP, n)
        wn = self._lines["wavenumber"][lo0:hi0]
        return lo0 + int(np.searchsorted(wn, wn_min, "left")), lo0 + int(np.searchsorted(wn, wn_max, "right"))

    def select(
        self,
        molecules=None,
        wavenumber_range=None,
        min_intensity=None,
        temperature=REFERENCE_TEMPERATURE,
        isotopologues=None,
        columns=None,
    ):
        """Read the lines that pass the given filters.

        Parameters
        ----------
        molecules : sequence of str or int, optional
            Keep only these molecules (formulas or numbers).
        wavenumber_range : (float, float), optional
            Window [cm-1], inclusive. Only the needed part of the file is read.
        min_intensity : float, optional
            Keep lines whose intensity at ``temperature`` is at least this
            [cm-1/(molecule cm-2)].
        temperature : float
            Temperature for the intensity threshold [K]; default 296.
        isotopologues : sequence of int, optional
            Keep only these isotopologue numbers.
        columns : sequence of str, optional
            Columns to read (default all).

        Returns
        -------
        LineList
        """
        lo, hi = 0, len(self)
        if wavenumber_range is not None:
            a, b = map(float, wavenumber_range)
            if not b >= a:
                raise LineStoreError(f"wavenumber_range must be (min, max) with min <= max, got {wavenumber_range}")
            lo, hi = self._window(a, b)
        cols = list(columns) if columns is not None else list(COLUMNS)
        unknown = [c for c in cols if c not in COLUMNS]
        if unknown:
            raise LineStoreError(f"unknown line columns {unknown}; known are {list(COLUMNS)}")
        need = set(cols) | {"molecule"}
        if isotopologues is not None or min_intensity is not None:
            need |= {"isotopologue"}
        if min_intensity is not None:
            need |= {"intensity", "wavenumber", "lower_energy"}
        data = {c: self._lines[c][lo:hi] for c in need}
        mask = np.ones(hi - lo, dtype=bool)
        if molecules is not None:
            ids = [molecule_id(m) for m in molecules]
            mask &= np.isin(data["molecule"], ids)
        if isotopologues is not None:
            mask &= np.isin(data["isotopologue"], [int(i) for i in isotopologues])
        if min_intensity is not None:
            s_t = intensity_at(data, temperature)
            mask &= s_t >= float(min_intensity)
        out = {c: data[c][mask] for c in cols}
        return LineList(out, {"sources": self.provenance.get("sources", []), "store": os.path.abspath(self.path)})

    def info(self):
        """Summary: total lines, and per molecule the count and wavenumber span."""
        n = len(self)
        per = {}
        step = 1 << 21
        for start in range(0, n, step):
            mol = self._lines["molecule"][start : start + step]
            wn = self._lines["wavenumber"][start : start + step]
            for m in np.unique(mol):
                sel = wn[mol == m]
                name = molecule_name(int(m))
                d = per.setdefault(name, {"lines": 0, "wavenumber_min": np.inf, "wavenumber_max": -np.inf})
                d["lines"] += int(sel.size)
                d["wavenumber_min"] = min(d["wavenumber_min"], float(sel[0]))
                d["wavenumber_max"] = max(d["wavenumber_max"], float(sel[-1]))
        prov = self.provenance
        return {
            "path": os.path.abspath(self.path),
            "total_lines": n,
            "molecules": per,
            "sources": prov.get("sources", []),
            "created": prov.get("created"),
            "specforce_version": prov.get("specforce_version"),
            "size_bytes": os.path.getsize(self.path),
        }


def open_store(path):
    """Open a line store for reading (see :class:`LineStore`)."""
    return LineStore(path)


#: Columns the radiative calculation needs.
SPECTROSCOPY_COLUMNS = ("molecule", "isotopologue", "wavenumber", "intensity", "lower_energy", "gamma_air",
                        "gamma_self", "n_air", "delta_air")


def load_spectroscopy(store, gases=None, wavenumber_range=None, min_intensity=None):
    """Load line data from a line store, split by gas.

    Parameters
    ----------
    store : str or os.PathLike
        Path of a line store (``specforce lines import``).
    gases : sequence of str, optional
        Gases to keep (default: all in the store).
    wavenumber_range : (float, float), optional
        Keep lines in this window [cm-1] (add the cut-off yourself).
    min_intensity : float, optional
        Drop lines weaker than this at 296 K [cm-1/(molecule cm-2)].

    Returns
    -------
    Spectroscopy
    """
    with open_store(store) as st:
        ll = st.select(molecules=gases, wavenumber_range=wavenumber_range, min_intensity=min_intensity,
                       columns=SPECTROSCOPY_COLUMNS)
        prov = {"kind": "line store", "store": st.info()["path"], "sources": st.provenance.get("sources", [])}
    return Spectroscopy.from_lines(ll, prov)
