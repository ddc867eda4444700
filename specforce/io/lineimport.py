"""Importing line files into a line store: 160-character records (plain or compressed) and other stores.

Records are parsed in blocks (:mod:`specforce.io.linerecords`), appended to the
store's columns in whole chunks, sorted by wavenumber out of core if they came
unsorted, checked for exact duplicates, and written through
:func:`specforce.io.files.atomic_path`: an interrupted import leaves either no
store or the old one. The store format itself is :mod:`specforce.io.linestore`'s.
"""

from __future__ import annotations

import hashlib
import json
import os
import queue
import threading
from dataclasses import dataclass

import h5py
import numpy as np

from ..errors import LineStoreError
from .files import _hdf5_output, atomic_path, scratch_path
from .linerecords import _LIMITS, ReadReport, _broken_limits, iter_record_blocks
from .linestore import COLUMNS, FORMAT_NAME, _ColumnWriter, _copy_rows, _finish, _now

__all__ = ["ImportReport", "import_lines"]


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
    dropped = {}  # store sources: lines dropped for breaking the physical bounds
    with atomic_path(store) as first_tmp, scratch_path(store) as sorted_tmp:
        ordered = True
        last = -np.inf
        with _hdf5_output(first_tmp) as fh, h5py.File(fh, "w") as h5:
            grp = h5.create_group("lines")
            writer = _ColumnWriter(grp, compression, check=fh.check)
            for src in sources:
                if _is_store(src):
                    with h5py.File(src, "r") as other:
                        provenance.extend(json.loads(other.attrs["sources"]))
                        n = int(other.attrs["total_lines"])
                        for start in range(0, n, 1 << 20):
                            cols = {c: other["lines"][c][start : start + (1 << 20)] for c in COLUMNS}
                            read = cols["wavenumber"].size
                            cols = _within_limits(cols, src, start, on_error)
                            dropped[os.fspath(src)] = dropped.get(os.fspath(src), 0) + read - cols["wavenumber"].size
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
            with h5py.File(first_tmp, "r") as h5, _hdf5_output(sorted_tmp) as fh, h5py.File(fh, "w") as out:
                grp = out.create_group("lines")
                order = np.argsort(h5["lines"]["wavenumber"][:], kind="stable")
                _copy_rows(h5["lines"], grp, order, compression, check=fh.check)
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
            with h5py.File(first_tmp, "r") as h5, _hdf5_output(sorted_tmp) as fh, h5py.File(fh, "w") as out:
                grp = out.create_group("lines")
                keep = np.ones(n, bool)
                keep[repeated] = False
                _copy_rows(h5["lines"], grp, keep, compression, check=fh.check)
                _finish(out, grp, provenance, {"dropped_duplicates": int(repeated.size)})
            os.replace(sorted_tmp, first_tmp)
    warnings = []
    seen = {}
    for src in provenance:
        if src.get("sha256") in seen:
            warnings.append(f"{src['path']} has the same content (sha256) as {seen[src['sha256']]}: its lines are in "
                            f"the store twice")
        seen.setdefault(src.get("sha256"), src["path"])
    for src, k in dropped.items():
        if k:
            warnings.append(f"{k} lines of the store {src} have impossible values (outside the physical bounds of "
                            f"the line records) and were dropped")
    if repeated.size:
        warnings.append(f"{repeated.size} records repeat another record exactly"
                        + (" and were dropped" if duplicates == "drop" else "; --drop-duplicates drops them"))
    lines = n - (repeated.size if duplicates == "drop" else 0)
    return ImportReport(provenance, lines, int(repeated.size), duplicates == "drop", tuple(warnings))


def _within_limits(cols, store, start, on_error):
    """The lines of a block read from a store (rows from ``start``) that are within the physical
    bounds of :mod:`specforce.io.linerecords`; a store written without them (by an older specforce,
    or by another program) may hold lines that break them."""
    broken = _broken_limits(cols)
    if not (broken >= 0).any():
        return cols
    if on_error == "raise":
        r = int(np.flatnonzero(broken >= 0)[0])
        limit = _LIMITS[broken[r]]
        raise LineStoreError(
            f"{store}: line {start + r + 1} of the store, column '{limit.column}': impossible value: "
            f"{limit.explain(float(cols[limit.column][r]))}. Re-import the store's source files, or import with "
            f"on_error='skip' (CLI: --skip-bad) to drop such lines."
        )
    return {c: v[broken < 0] for c, v in cols.items()}


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
