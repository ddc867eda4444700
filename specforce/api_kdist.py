"""The fast mode's tables from Python: build (and calibrate) them, and describe them::

    import specforce
    tables = specforce.build_fast_tables()      # minutes, once; cached after
    r = specforce.radiative_forcing("mls", {"CO2": "2x"}, spectral_model="kdist")

The tables are built from specforce's own line-by-line absorption for the spectroscopy and
line-shape settings given, cached under their key, and used by every calculation whose
settings say ``spectral_model="kdist"``.
"""

from __future__ import annotations

import os

from .api import _default_spectroscopy, _settings
from .forcing.calibration import calibrate
from .io.ktables import cached_tables_path, read_tables, write_tables
from .kdist.build import build_tables
from .kdist.layout import DEFAULT_LAYOUT
from .kdist.solve import remember, tables_for

__all__ = ["build_fast_tables", "fast_tables", "fast_tables_path"]


def build_fast_tables(spectroscopy=None, settings=None, *, layout=DEFAULT_LAYOUT, calibration="full", rebuild=False,
                      progress=None, **options):
    """Build the fast model's tables, calibrate them, and cache them (or return the cached ones).

    Parameters
    ----------
    spectroscopy : Spectroscopy, optional
        Line data (default the built-in lines).
    settings : Settings, optional
        Line-by-line settings whose line shape, cut-offs, continuum and grid rules the tables
        follow (keywords as for :func:`specforce.settings`).
    layout : Layout
        Bands, g-points and table nodes (default :data:`specforce.kdist.layout.DEFAULT_LAYOUT`).
    calibration : {"full", "quick", "none"}
        The calibration set to measure the model's error on (see
        :mod:`specforce.forcing.calibration`); "none" leaves the tables uncalibrated, and their
        results say so.
    rebuild : bool
        Build again even where cached tables exist.
    progress : callable, optional
        Called with (stage, fraction done).

    Returns
    -------
    KTables
    """
    spec = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    s = _settings(settings, options)
    report = progress or (lambda stage, f: None)
    if not rebuild:
        try:
            tables = tables_for(spec, s, layout)
            if tables.calibration or calibration == "none":
                return tables
        except ValueError:
            tables = None
    else:
        tables = None
    if tables is None:
        tables = build_tables(spec, s, layout, progress=lambda f: report("building tables", f))
    if calibration != "none":
        tables = calibrate(tables, spec, s, cases=calibration, progress=lambda f: report("calibrating", f))
    write_tables(tables, cached_tables_path(tables.key))
    remember(tables)
    return tables


def fast_tables(spectroscopy=None, settings=None, *, layout=None, **options):
    """The cached tables for this spectroscopy and these settings (an error saying how to build
    them where there are none)."""
    spec = spectroscopy if spectroscopy is not None else _default_spectroscopy()
    return tables_for(spec, _settings(settings, options), layout)


def fast_tables_path(path_or_key):
    """Tables read from a file, or from the cache by key (a path that exists is read as a file)."""
    path = path_or_key if os.path.exists(path_or_key) else cached_tables_path(path_or_key)
    return read_tables(path)
