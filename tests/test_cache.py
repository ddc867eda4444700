"""The compiled kernels are kept in specforce's cache folder, by version and kernel sources (specforce.cache)."""

from __future__ import annotations

import os
import subprocess
import sys

from specforce._version import __version__


def _kernel_cache_path(env):
    code = ("from specforce.absorption import _kernels as k; "
            "print(k.direct_points._cache._cache_path)")
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
    return out.stdout.strip()


def test_kernels_are_kept_in_the_cache_folder_by_version(tmp_path):
    # a reinstall deletes the package folder, and numba's default cache beside the sources with it;
    # the cache folder outlives it, and an upgrade gets a folder of its own
    env = {k: v for k, v in os.environ.items() if k != "NUMBA_CACHE_DIR"} | {"XDG_CACHE_HOME": str(tmp_path)}
    path = _kernel_cache_path(env)
    from specforce.cache import kernel_sources_digest

    assert path == os.path.join(str(tmp_path), "specforce", "jit", __version__,
                                f"py{sys.version_info[0]}.{sys.version_info[1]}", kernel_sources_digest(),
                                "specforce.absorption")
    assert os.path.isdir(path)


def test_a_numba_cache_folder_of_the_user_keeps_precedence(tmp_path):
    env = dict(os.environ) | {"XDG_CACHE_HOME": str(tmp_path / "xdg"), "NUMBA_CACHE_DIR": str(tmp_path / "mine")}
    assert _kernel_cache_path(env).startswith(str(tmp_path / "mine"))


def test_the_kernel_folder_follows_every_kernel_module(tmp_path, monkeypatch):
    # numba checks a cached kernel against its own file only; a kernel that inlines one from
    # another file (the transfer inlines specforce/_fastmath.py) must still be compiled anew
    # when that file changes: the folder's digest covers every module that uses numba
    import shutil

    import specforce
    from specforce import cache

    package = os.path.dirname(specforce.__file__)
    copy = tmp_path / "specforce"
    shutil.copytree(package, copy, ignore=shutil.ignore_patterns("__pycache__"))
    monkeypatch.setattr(cache, "_PACKAGE", str(copy))
    cache.kernel_sources_digest.cache_clear()
    before = cache.kernel_sources_digest()
    (copy / "_fastmath.py").write_text((copy / "_fastmath.py").read_text() + "\n# edited\n")
    cache.kernel_sources_digest.cache_clear()
    changed = cache.kernel_sources_digest()
    (copy / "api.py").write_text((copy / "api.py").read_text() + "\n# edited\n")  # no numba in it
    cache.kernel_sources_digest.cache_clear()
    assert changed != before and cache.kernel_sources_digest() == changed
    cache.kernel_sources_digest.cache_clear()
