"""specforce: line-by-line clear-sky longwave radiative forcing from first principles."""

from importlib.metadata import PackageNotFoundError, version as _version

try:
    __version__ = _version("specforce")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0+unknown"
