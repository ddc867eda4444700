"""The HDF5 line store: lines in columns, sorted by wavenumber, with provenance.

Layout (format ``specforce-linestore``, version 1)::

    /                 attrs: format, format_version, specforce_version, created,
                             sources (JSON), total_lines, molecule_counts (JSON)
    /lines/<column>   one 1-D dataset per column, chunked and compressed,
                      attrs: units, description
    /lines/wavenumber_index   wavenumber of every INDEX_STEP-th line, so that a
                      wavenumber window is found without reading the column

Columns are those of the 160-character record (see
:data:`specforce.io.linerecords.FIELDS`), in the record's units.

Every write goes to a hidden temporary file beside the target and is renamed
over it only when complete: an interrupted import leaves either no store or
the old one untouched; a full disk ends in one error and leaves nothing. A
process killed outright (SIGKILL) may leave the hidden ``.NAME.partial-*`` file
behind; it is never mistaken for a store.
"""

from __future__ import annotations

import datetime as _dt
import json
import os

import h5py
import numpy as np

from .._version import __version__
from ..constants import REFERENCE_TEMPERATURE
from ..errors import LineStoreError
from .files import _hdf5_output, atomic_path
from ..molecular.lineparams import intensity_at
from .linerecords import FIELDS, FLOAT_COLUMNS, TEXT_COLUMNS
from ..molecular.molecules import molecule_id, molecule_name
from ..molecular.lines import LineList, Spectroscopy

__all__ = [
    "LineList",
    "LineStore",
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
    every append; buffering to chunk multiples avoids that. ``check`` (the
    :func:`specforce.io.files._hdf5_output` file's) is called after each write, so
    that a full disk stops the import at once.
    """

    def __init__(self, group, compression, check=None):
        self.group = group
        self.check = check
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
            del ds  # closing it writes its chunks
            if self.check is not None:
                self.check()
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


def _copy_rows(src_group, dst_group, rows, compression, check=None):
    """Copy the rows picked by ``rows`` (a mask or an order), one column in memory at a time.

    ``check`` is called after each column (see :class:`_ColumnWriter`)."""
    kw = _filters(compression)
    for col in COLUMNS:
        data = src_group[col][:][rows]
        ds = dst_group.create_dataset(col, data=data, maxshape=(None,), chunks=(_CHUNK,), **kw)
        for k, v in src_group[col].attrs.items():
            ds.attrs[k] = v
        del data, ds
        if check is not None:
            check()


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
    with atomic_path(store) as tmp, _hdf5_output(tmp) as fh, h5py.File(fh, "w") as h5:
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
