"""specforce: line-by-line clear-sky longwave radiative forcing from first principles.

The scripting API (see :mod:`specforce.api`) is available from the top level:
``specforce.load_profile``, ``specforce.spectroscopy``, ``specforce.settings``,
``specforce.olr``, ``specforce.radiative_forcing``, ``specforce.compare_olr`` and
``specforce.load_state``. They are imported on first use, so that
``import specforce`` stays quick. (The physics modules keep their own names:
``specforce.forcing`` and ``specforce.compare`` are modules, not these functions.)
"""

from importlib.metadata import PackageNotFoundError, version as _version

try:
    __version__ = _version("specforce")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0+unknown"

_API = {
    "load_profile": "specforce.io.profiles",
    "spectroscopy": "specforce.api",
    "settings": "specforce.api",
    "olr": "specforce.api",
    "radiative_forcing": "specforce.api",
    "compare_olr": "specforce.api",
    "load_state": "specforce.api",
}

__all__ = ["__version__", *_API]


def __getattr__(name):
    if name in _API:
        import importlib

        return getattr(importlib.import_module(_API[name]), name)
    raise AttributeError(f"module 'specforce' has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + list(_API))
