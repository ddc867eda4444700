"""specforce's cache folder, and numba's compiled kernels kept in it.

One folder per user, ``$XDG_CACHE_HOME/specforce`` or ``~/.cache/specforce``, holds what
specforce builds once and reuses: the built-in line lists
(:mod:`specforce.molecular.builtin`) and the machine code of the numba kernels.

Numba keeps compiled kernels beside their source files by default (``__pycache__``), and a
reinstall deletes them, so every new install paid the compilation again (about 6 s). The
kernel modules call :func:`keep_compiled_kernels` first, which makes numba keep them in
``jit/<specforce version>/py<X.Y>/<digest>/`` under this folder instead, the digest a sha256 of
every kernel module (:func:`kernel_sources_digest`): a reinstall of the same version finds them,
an upgrade or an edit of any kernel module starts a folder of its own (numba itself checks each
entry against its own source file only, which misses a change in a kernel it inlines). A
``NUMBA_CACHE_DIR`` set by the user keeps precedence, and an unwritable folder falls back to
numba's own places.
"""

from __future__ import annotations

import functools
import hashlib
import os
import sys

from ._version import __version__

__all__ = ["cache_folder", "keep_compiled_kernels", "kernel_sources_digest", "kernels_folder"]

_PACKAGE = os.path.dirname(os.path.abspath(__file__))


def cache_folder():
    """Folder of specforce's cache (created if needed)."""
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    path = os.path.join(base, "specforce")
    os.makedirs(path, exist_ok=True)
    return path


@functools.lru_cache(maxsize=None)
def kernel_sources_digest():
    """The first 12 hex digits of a sha256 of every module of the package that uses numba (its
    path and text). numba checks a cached kernel against its own source file only, not against
    the files of the kernels it calls or inlines; a folder per digest makes any edit of any
    kernel module, or an upgrade that changes one, compile them all anew."""
    digest = hashlib.sha256()
    for root, _, files in sorted(os.walk(_PACKAGE)):  # every folder, in path order
        for name in sorted(files):
            if name.endswith(".py"):
                path = os.path.join(root, name)
                with open(path, "rb") as fh:
                    text = fh.read()
                if b"numba" in text:
                    digest.update(os.path.relpath(path, _PACKAGE).encode() + b"\0" + text + b"\0")
    return digest.hexdigest()[:12]


def kernels_folder():
    """Folder of this version's compiled kernels, ``jit/<version>/py<X.Y>/<digest>`` under
    :func:`cache_folder`; under ``NUMBA_CACHE_DIR`` instead where the user set it (numba then
    keeps the kernels in its own layout there, and this folder holds only specforce's notes on
    them, such as :mod:`specforce.radiation.compile_ahead`'s mark). The folder itself is not
    created here (:func:`cache_folder`, its base, is)."""
    from numba.core import config

    base = os.path.join(config.CACHE_DIR, "specforce") if config.CACHE_DIR else cache_folder()
    return os.path.join(base, "jit", __version__, f"py{sys.version_info[0]}.{sys.version_info[1]}",
                        kernel_sources_digest())


def _locator_class():
    from numba.core import caching, config

    class KernelCacheLocator(caching._SourceFileBackedLocatorMixin, caching._CacheLocator):
        """numba cache locator: specforce's kernels in the cache folder, by version and source folder
        (the source stamp, a sha256 of the file, comes from numba's mixin)."""

        def __init__(self, py_func, py_file):
            self._py_file = py_file
            self._lineno = py_func.__code__.co_firstlineno
            folder = os.path.relpath(os.path.dirname(os.path.abspath(py_file)), os.path.dirname(_PACKAGE))
            self._cache_path = os.path.join(kernels_folder(), folder.replace(os.sep, "."))

        def get_cache_path(self):
            return self._cache_path

        @classmethod
        def from_function(cls, py_func, py_file):
            if config.CACHE_DIR or not os.path.abspath(py_file).startswith(_PACKAGE + os.sep):
                return None
            try:
                return super().from_function(py_func, py_file)
            except OSError:  # no writable cache folder: numba's own locators
                return None

    return caching, KernelCacheLocator


def keep_compiled_kernels():
    """Make numba keep specforce's compiled kernels in the cache folder (see the module docstring).
    Call before the kernels are decorated; calling again does nothing. Where numba's caching
    internals differ from those this was written for, numba's defaults stay."""
    try:
        caching, locator = _locator_class()
        impl = getattr(caching, "CacheImpl", None) or getattr(caching, "_CacheImpl")  # numba >= 0.61, before
        classes = impl._locator_classes
    except (ImportError, AttributeError):
        return
    if not any(getattr(c, "__name__", "") == "KernelCacheLocator" for c in classes):
        classes.insert(0, locator)
