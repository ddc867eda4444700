"""specforce: line-by-line clear-sky longwave radiative forcing from first principles.

The scripting API (:mod:`specforce.api`, :mod:`specforce.batch` and
:mod:`specforce.api_lines`) is available from the top level:
``specforce.load_profile``, ``specforce.spectroscopy``, ``specforce.settings``,
``specforce.olr``, ``specforce.radiative_forcing``, ``specforce.sweep_concentrations``,
``specforce.compare_olr``, ``specforce.load_state``, ``specforce.run_batch`` and
``specforce.pack_profiles`` (many profiles), and the line-store functions
``import_lines``, ``lines_info``, ``select_lines`` and ``generate_lines``, and the fast
mode's ``build_fast_tables`` and ``fast_tables``. They are
imported on first use, so that ``import specforce`` stays quick. (The modules keep
their own names, distinct from these: ``specforce.forcing.instantaneous``, ``specforce.forcing.sweep``,
``specforce.forcing.compare`` and ``specforce.batch`` are modules.)
"""

from ._version import __version__

#: Each public name and the module that holds it (imported on first use).
_API = {
    **{name: "specforce.api" for name in ("load_profile", "spectroscopy", "settings", "olr", "radiative_forcing",
                                          "sweep_concentrations", "compare_olr", "load_state")},
    **{name: "specforce.batch" for name in ("run_batch", "pack_profiles")},
    **{name: "specforce.api_lines" for name in ("import_lines", "lines_info", "select_lines", "generate_lines")},
    **{name: "specforce.api_kdist" for name in ("build_fast_tables", "fast_tables")},
}

__all__ = ["__version__", *_API]


def __getattr__(name):
    if name in _API:
        import importlib

        return getattr(importlib.import_module(_API[name]), name)
    raise AttributeError(f"module 'specforce' has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + list(_API))
