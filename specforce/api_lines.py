"""The scripting API for line stores: import line files, summarise, select and generate.

Everything here is also reachable as ``specforce.<name>``.
"""

from __future__ import annotations

import os

__all__ = ["generate_lines", "import_lines", "lines_info", "select_lines"]


def import_lines(sources, store, skip_bad=False, drop_duplicates=False, compression="lzf", progress=None):
    """Import line files (160-character records, plain or compressed) into a line store; see
    :func:`specforce.io.lineimport.import_lines`.

    Returns
    -------
    dict
        ``sources`` (per source: path, sha256, records, skipped), ``lines`` written,
        ``duplicates`` (exact repeats found) and ``warnings``.
    """
    from .io.lineimport import import_lines as _import

    r = _import(list(sources), store, on_error="skip" if skip_bad else "raise", compression=compression,
                progress=progress, duplicates="drop" if drop_duplicates else "warn")
    return {"sources": r.sources, "lines": r.lines, "duplicates": r.duplicates, "warnings": list(r.warnings)}


def lines_info(store):
    """Summary of a line store (lines per molecule, spans, sources); see :meth:`specforce.io.linestore.LineStore.info`."""
    from .io.files import leftover_files
    from .io.linestore import open_store

    with open_store(store) as st:
        info = st.info()
    info["leftover_files"] = leftover_files(store)
    return info


def select_lines(store, output, molecules=None, wavenumber_range=None, min_intensity=None, temperature=296.0):
    """Write the lines of ``store`` that pass the filters to a new store ``output``; returns the number written."""
    from .errors import LineStoreError
    from .io.linestore import open_store, write_store

    with open_store(store) as st:
        sel = st.select(molecules=list(molecules) if molecules else None, wavenumber_range=wavenumber_range,
                        min_intensity=min_intensity, temperature=temperature)
    if len(sel) == 0:
        raise LineStoreError(f"{store}: no line passes the selection (molecules {list(molecules or []) or 'all'}, "
                             f"range {wavenumber_range or 'all'}, min intensity {min_intensity}); nothing written")
    sel.provenance["selection"] = {"from": os.path.abspath(store), "molecules": list(molecules or []),
                                   "range_cm-1": list(wavenumber_range) if wavenumber_range else None,
                                   "min_intensity": min_intensity, "temperature_K": temperature}
    write_store(sel, output, extra_attrs={"selection": sel.provenance["selection"]})
    return len(sel)


def generate_lines(output, molecules=None):
    """Write the built-in (generated) lines of ``molecules`` (default all) to a line store."""
    from .molecular.builtin import generate_builtin_store

    return generate_builtin_store(output, molecules)
