"""The installed version of specforce, for provenance records and ``--version``.

Modules inside the package take it from here, never from the package root
(:mod:`specforce` is the public face, at the top of the import order).
"""

from importlib.metadata import PackageNotFoundError, version as _version

try:
    __version__ = _version("specforce")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0+unknown"
