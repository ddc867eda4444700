"""The default job's kernels compiled ahead in several processes on a cold cache
(specforce.radiation.compile_ahead)."""

from __future__ import annotations

import errno
import glob
import math
import os
import subprocess
import sys

import pytest
from numba.core import types

from specforce.radiation import compile_ahead as ca

# Counts numba's compilations (not the loads from the cache) in a fresh process, then calls
# the small kernel that the helper test compiles ahead.
_COUNT_COMPILES = """
from numba.core import event
compiled = []
class Count(event.Listener):
    def on_start(self, e):
        compiled.append(e.data["dispatcher"].py_func.__name__)
    def on_end(self, e):
        pass
event.register("numba:compile", Count())
"""

# Records the kernels a small graded 2xCO2 forcing calls from Python, with their argument
# types (a first call from Python goes through _compile_for_args, whether numba then compiles
# the kernel or loads it from the cache; run on a warm cache, kernels that numba compiled as
# callees of others first are recorded too).
_RECORD_CALLS = """
from numba.core import dispatcher
seen = set()
original = dispatcher.Dispatcher._compile_for_args
def record(self, *args, **kws):
    if self.py_func.__module__.startswith("specforce."):
        seen.add((self.py_func.__module__[len("specforce."):], self.py_func.__name__,
                  tuple(self.typeof_pyval(a) for a in args)))
    return original(self, *args, **kws)
dispatcher.Dispatcher._compile_for_args = record
import specforce
from specforce.radiation.compile_ahead import signature_text
specforce.radiative_forcing("mls", {"CO2": "2x"}, wavenumber_range=(640.0, 700.0), threads=1)
for module, name, sig in sorted(seen):
    print(module, name, signature_text(sig), sep="|")
"""


def _fresh_env(tmp_path):
    """The environment of a process whose cache folder is empty (numba's folder of the user unset)."""
    env = {k: v for k, v in os.environ.items() if k != "NUMBA_CACHE_DIR"}
    return env | {"XDG_CACHE_HOME": str(tmp_path / "cache")}


def _python(code, env):
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True)
    assert out.returncode == 0, out.stderr[-3000:]
    return out.stdout


def test_signature_words_read_back_as_written():
    for _, _, text in ca.KERNELS:
        assert ca.signature_text(ca.signature_types(text)) == text
    sig = (types.Array(types.float64, 2, "C", readonly=True), types.Array(types.boolean, 1, "A"), types.int64,
           types.complex128)
    assert ca.signature_text(sig) == "f8[2Cr] b1[1A] i8 c16"
    assert ca.signature_types("f8[2Cr] b1[1A] i8 c16") == sig


@pytest.mark.parametrize("text", ["f8[1C] x9", "f8[1Q]", "float64"])
def test_a_signature_word_that_is_not_one_is_named(text):
    with pytest.raises(ValueError, match="is not a type word"):
        ca.signature_types(text)


def test_a_type_without_a_word_is_named():
    with pytest.raises(ValueError, match="no short notation"):
        ca.signature_text((types.UniTuple(types.float64, 2),))


def test_the_list_is_what_a_graded_forcing_calls():
    # The list must hold every kernel the default job calls, with the very argument types: one
    # missing or out of date is compiled by the run itself, one after another, as without the
    # list. A 640-700 cm-1 forcing calls the same kernels as the default 10-3000 cm-1 job and
    # --adjusted (compared when the list was recorded). The first run warms the cache.
    _python(_RECORD_CALLS, dict(os.environ))
    called = {tuple(line.split("|")) for line in _python(_RECORD_CALLS, dict(os.environ)).splitlines()}
    listed = set(ca.KERNELS)
    assert called == listed, ("put these in KERNELS:\n" + "\n".join(map(repr, sorted(called - listed))) +
                              "\nand take these out:\n" + "\n".join(map(repr, sorted(listed - called))))


def test_the_longest_kernel_to_compile_comes_first():
    # the order is the point of the list: the core sum (5 s of 12.5 s here) must start at once
    assert ca.KERNELS[0][1] == "windowed_sum_points"
    assert len({(m, n) for m, n, _ in ca.KERNELS}) == len(ca.KERNELS)


def _one_kernel_claims(tmp_path):
    claims = tmp_path / "claims"
    claims.mkdir()
    (claims / "kernels").write_text("radiation._depth_check first_invalid f8[2C] i8 i8\n")
    return claims


def test_a_helper_compiles_into_the_cache_that_a_run_then_loads(tmp_path, monkeypatch):
    claims = _one_kernel_claims(tmp_path)
    call = _COUNT_COMPILES + ("import numpy as np\nfrom specforce.radiation._depth_check import first_invalid\n"
                              "first_invalid(np.zeros((2, 3)), 0, 3)\nprint(len(compiled))")
    assert int(_python(call, _fresh_env(tmp_path / "control"))) >= 1  # the control: an empty cache compiles
    env = _fresh_env(tmp_path)
    folder = _python("from specforce.cache import kernels_folder; print(kernels_folder())", env).strip()
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)  # the helper starts in this process's environment
    monkeypatch.setenv("XDG_CACHE_HOME", env["XDG_CACHE_HOME"])
    [helper] = ca._start_helpers(str(claims), 1, folder, ca._build_key())
    assert helper.wait(timeout=300) == 0
    assert (claims / "claim-0").exists()
    assert int(_python(call, env)) == 0  # loaded from the cache the helper filled


def test_a_helper_that_would_fill_another_cache_does_nothing(tmp_path):
    claims = _one_kernel_claims(tmp_path)
    [helper] = ca._start_helpers(str(claims), 1, str(tmp_path / "not-its-folder"), ca._build_key())
    assert helper.wait(timeout=300) == 2
    assert not (claims / "claim-0").exists()
    folder = _python("from specforce.cache import kernels_folder; print(kernels_folder())", dict(os.environ)).strip()
    [helper] = ca._start_helpers(str(claims), 1, folder, "numba0.0-another-cpu")  # another numba or CPU
    assert helper.wait(timeout=300) == 2
    assert not (claims / "claim-0").exists()


def test_a_claimed_kernel_is_left_to_its_claimant(tmp_path):
    claims = tmp_path / "claims"
    claims.mkdir()
    (claims / "kernels").write_text("radiation._depth_check no_such_kernel f8\n"
                                    "radiation._depth_check first_invalid f8[2C] i8 i8\n")
    (claims / "claim-0").touch()  # another process has the first, which would fail here
    assert ca._compile_unclaimed(str(claims)) == 0
    assert (claims / "claim-1").exists()
    (claims / "claim-1").unlink()
    (claims / "claim-0").unlink()
    assert ca._compile_unclaimed(str(claims)) == 1  # unclaimed, the first is tried and fails


def test_compile_ahead_runs_once_per_build_and_never_on_one_thread(tmp_path, monkeypatch):
    folder = tmp_path / "kernels"
    monkeypatch.setattr(ca, "kernels_folder", lambda: str(folder))
    monkeypatch.setattr(ca, "KERNELS", (("radiation._depth_check", "first_invalid", "f8[2C] i8 i8"),))
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))  # the helper's (another folder: it does nothing)
    assert ca.compile_ahead(threads=1) is False
    assert not folder.exists()
    assert ca.compile_ahead(threads=2) is True
    assert len(glob.glob(str(folder / "compiled-ahead-numba*"))) == 1
    assert ca.compile_ahead(threads=2) is False  # marked: a later run does nothing


def test_an_unwritable_cache_leaves_the_compiling_to_the_run(tmp_path, monkeypatch):
    blocker = tmp_path / "file"
    blocker.write_text("")
    monkeypatch.setattr(ca, "kernels_folder", lambda: str(blocker / "kernels"))  # under a file
    assert ca.compile_ahead(threads=2) is False


class _NoLocks:
    LOCK_EX, LOCK_NB = 2, 4

    @staticmethod
    def flock(fd, op):
        raise OSError(errno.ENOLCK, "No locks available")


@pytest.mark.parametrize("locks", [_NoLocks, None], ids=["flock fails", "no fcntl"])
def test_without_file_locks_the_run_compiles_its_kernels_itself(tmp_path, monkeypatch, locks):
    # a file system without locks (NFS without lockd, Lustre mounted noflock), or Windows
    import specforce

    monkeypatch.setattr(ca, "kernels_folder", lambda: str(tmp_path / "kernels"))
    monkeypatch.setattr(ca, "fcntl", locks)
    assert ca.compile_ahead(threads=2) is False
    assert not glob.glob(str(tmp_path / "kernels" / "compiled-ahead-*"))
    r = specforce.radiative_forcing("mls", {"CO2": "2x"}, wavenumber_range=(660.0, 670.0), threads=2)
    assert math.isfinite(r.toa)  # it ran


def test_a_lock_held_too_long_leaves_the_compiling_to_the_run(tmp_path, monkeypatch):
    import fcntl

    folder = tmp_path / "kernels"
    folder.mkdir()
    monkeypatch.setattr(ca, "kernels_folder", lambda: str(folder))
    monkeypatch.setattr(ca, "_LOCK_SECONDS", 0.3)
    with open(folder / "compile-ahead.lock", "a") as held:  # as another process compiling ahead
        fcntl.flock(held.fileno(), fcntl.LOCK_EX)
        assert ca.compile_ahead(threads=2) is False
    assert not glob.glob(str(folder / "compiled-ahead-*"))


@pytest.mark.slow
def test_a_cold_cache_compiled_ahead_leaves_nothing_to_compile(tmp_path):
    # end to end, as after an install: every kernel of a graded forcing compiled ahead by two
    # processes into an empty cache folder; the job then compiles nothing
    env = _fresh_env(tmp_path)
    assert _python("from specforce.radiation.compile_ahead import compile_ahead; print(compile_ahead(threads=2))",
                   env).strip() == "True"
    job = _COUNT_COMPILES + ("import specforce\nspecforce.radiative_forcing('mls', {'CO2': '2x'}, "
                             "wavenumber_range=(640.0, 700.0), threads=2)\nprint(compiled)")
    assert _python(job, env).strip() == "[]"  # on two threads, as the default job runs
