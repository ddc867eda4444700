"""The default job's numba kernels compiled in several processes at once, when none are cached.

The first graded run after an install or an upgrade finds no compiled kernels in the cache
(:mod:`specforce.cache`), and numba compiles the fifteen kernels that the run calls one after
another, under its compiler lock: about 12.5 s on the 2-core development machine, of which the
core line sum takes 5 s. :func:`compile_ahead`, which every graded run calls first, shares that
work between processes instead:

* the calling process and up to three helpers (the same Python on this same package, so
  ``threads`` processes in all, at most four: the longest kernel is two fifths of the work) go
  through :data:`KERNELS`, the longest first; each compiles the next kernel that no other has
  claimed (a claim is a file created exclusively), and numba saves it in the cache;
* the run then loads from the cache what the helpers compiled;
* a mark beside the compiled kernels (:func:`specforce.cache.kernels_folder`; one per numba
  version and CPU) makes later runs skip all this, and a lock makes processes that start cold
  at the same time (a batch's workers with two threads or more each; a local batch compiles
  ahead before its workers start) wait for the first instead of compiling the same kernels;
  one that waits over two minutes (the first stopped, say) leaves the compiling to its run.

Nothing here changes what is computed: a kernel that no process compiled ahead (a helper that
failed, a list out of date) is compiled by the run at its first call, as numba always does.
With one thread, numba's JIT switched off, on Windows (no file locks here) or in a frozen
application (no Python to start helpers with), nothing happens.

Numba reads, changes and writes a function's cache index without a lock, so two processes must
not save different signatures of one function at once: each kernel is in the list once, and the
kernels that several of them call (``outer_pieces``, ``interp_add``) are called with the same
types by all, so whichever compiles them saves the same entry.

:data:`KERNELS` holds, per kernel, its module under ``specforce.``, its name and its numba
signature in a short notation (:func:`signature_text`). ``tests/test_compile_ahead.py`` checks
that it is exactly what a forcing on the graded path calls, and prints the lines to put here
where it is not. ``python -m specforce.radiation.compile_ahead`` compiles them ahead on every
core (to prepare a machine or an image).
"""

from __future__ import annotations

import importlib
import os
import re
import subprocess
import sys
import tempfile
import time

try:
    import fcntl
except ImportError:  # Windows: no lock between processes, so no compiling ahead
    fcntl = None

from ..cache import kernels_folder
from .workers import thread_count

__all__ = ["KERNELS", "compile_ahead", "signature_text", "signature_types"]

# (module under specforce., kernel, signature): a 2xCO2 forcing's kernels on the graded path, the
# longest to compile first (the order measured on the 2-core development machine, 5 s to 0.1 s)
KERNELS = (
    ("absorption._tier_kernels", "windowed_sum_points",
     "f8[1C] f8 i8[1C] f8[1C] f8[1C] f8[1C] f8[1C] f8[1C] i8[1C] f8[2C]"),
    ("absorption._tier_kernels", "windowed_sum_uniform",
     "f8 f8 i8 i8 f8 f8 i8[1C] f8[1C] f8[1C] f8[1C] f8[1C] f8[1C] i8[1C] f8[2C]"),
    ("radiation.transfer", "_rt_run",
     "f8[1C] f8[1C] f8[2C] f8[1C] f8 f8 f8[1C] f8[1C] i8[1C] i8 i8 f8[2C] f8[2C] f8[1C] f8[1C]"),
    ("absorption._params_kernel", "layer_parameters",
     "f8[1C] f8[1C] f8[1C] f4[1C] f4[1C] f4[1C] f8[1C] i8[1C] f8[1C] f8[1C] f8 f8 f8[1Cr] f8[1Cr] b1"),
    ("absorption._interp_kernels", "interp_add_grid", "f8 f8 f8[1C] f8 f8 i8 f8[1C]"),
    ("absorption._params_kernel", "clip_times_radiation_term", "f8[1C] f8[1C] f8 b1"),
    ("absorption._interp_kernels", "spectrum_times_kernel", "c16[1C] f8[1Cr] c16[1C] b1"),
    ("absorption._interp_kernels", "spread6_series", "f8[1C] f8[1C] f8[1C] f8[1C] b1[1C] f8[1C] f8[1C] f8[1C]"),
    ("absorption._tier_kernels", "line_tiers", "f8[1C] b1[1C] i8[1C] b1[1C] f8 f8 i8"),
    ("absorption._tier_kernels", "stretches", "f8[1C] i8[1C] f8 f8 f8 f8"),
    ("absorption._interp_kernels", "spread6_near", "f8[1C] f8[1C] f8[1C] f8[1C] f8[1C] b1[1C] f8 f8 f8 f8 f8[1C]"),
    ("absorption._grid_kernels", "bin_sums", "f8[2C] i8[1C] f8[2C] i8[1C] f8[2C]"),
    ("absorption._grid_kernels", "graded_march", "f8[1C] f8[1C] f8[1C] f8 f8 f8 f8[1C] i8[1C]"),
    ("absorption._interp_kernels", "interp_add", "f8 f8 f8[1C] f8[1C] f8[1C]"),
    ("radiation._depth_check", "first_invalid", "f8[2C] i8 i8"),
)

_PROCESSES = 4  # at most, the caller included
_HELPER_SECONDS = 300.0  # a helper still running then is stopped (the run compiles what it lacks)
_LOCK_SECONDS = 120.0  # the longest wait for another process's compiling ahead
_SCALARS = {"f8": "float64", "f4": "float32", "i8": "int64", "i4": "int32", "u1": "uint8", "b1": "boolean",
            "c16": "complex128"}
_TOKEN = re.compile(r"([a-z]\d+)(?:\[([1-9])([CFA])(r?)\])?")


def signature_text(argument_types):
    """numba argument types in the short notation of :data:`KERNELS`, one word per argument:
    ``f8`` ``f4`` ``i8`` ``i4`` ``u1`` ``b1`` ``c16`` for a scalar, and for an array the scalar's
    word, its dimensions and layout, and ``r`` where it is read-only: ``f8[1C]``, ``f8[2Cr]``.
    Raises ValueError for a type that has no such word."""
    from numba.core import types

    words = []
    for t in argument_types:
        array = isinstance(t, types.Array)
        scalar = t.dtype if array else t
        code = next((k for k, name in _SCALARS.items() if getattr(types, name) == scalar), None)
        if code is None or (array and not t.aligned):
            raise ValueError(f"no short notation for the numba type {t!r} (scalars: {', '.join(_SCALARS.values())}; "
                             f"aligned arrays of them)")
        words.append(f"{code}[{t.ndim}{t.layout}{'' if t.mutable else 'r'}]" if array else code)
    return " ".join(words)


def signature_types(text):
    """The numba argument types that :func:`signature_text` writes as ``text`` (a tuple)."""
    from numba.core import types

    out = []
    for word in text.split():
        m = _TOKEN.fullmatch(word)
        if m is None or m.group(1) not in _SCALARS:
            raise ValueError(f"{word!r} in the signature {text!r} is not a type word of "
                             f"specforce.radiation.compile_ahead.signature_text")
        scalar = getattr(types, _SCALARS[m.group(1)])
        out.append(types.Array(scalar, int(m.group(2)), m.group(3), readonly=m.group(4) == "r")
                   if m.group(2) else scalar)
    return tuple(out)


def compile_ahead(threads=None):
    """Compile :data:`KERNELS` in ``threads`` processes (at most four; see the module docstring)
    where this version's kernels were never compiled ahead on this machine. ``threads``: None for
    every available core. Returns True where it ran, False where it did nothing: compiled ahead
    before, one thread, numba's JIT off, no file locks (Windows) or no Python to start helpers
    with (a frozen application). Whatever fails on the way (a file system without locks, a full
    disk) leaves the compiling to the run, as without this."""
    from numba.core import config

    processes = min(thread_count(threads), _PROCESSES)
    if processes < 2 or config.DISABLE_JIT or fcntl is None or not sys.executable or getattr(sys, "frozen", False):
        return False
    try:
        return _compile_ahead(processes)
    except OSError:
        return False


def _compile_ahead(processes):
    folder = kernels_folder()
    os.makedirs(folder, exist_ok=True)
    mark = os.path.join(folder, f"compiled-ahead-{_build_key()}")
    if os.path.exists(mark):
        return False
    with open(os.path.join(folder, "compile-ahead.lock"), "a") as lock:
        if not _hold(lock) or os.path.exists(mark):  # waited too long, or another process did it meanwhile
            return False
        with tempfile.TemporaryDirectory(prefix="specforce-compile-") as claims:
            with open(os.path.join(claims, "kernels"), "w") as fh:
                fh.writelines(f"{module} {name} {text}\n" for module, name, text in KERNELS)
            helpers = _start_helpers(claims, processes - 1, folder, _build_key())
            try:
                _compile_unclaimed(claims)
                deadline = time.monotonic() + _HELPER_SECONDS
                for helper in helpers:
                    try:
                        helper.wait(timeout=max(0.0, deadline - time.monotonic()))
                    except subprocess.TimeoutExpired:
                        break
            finally:  # helpers still running (past the deadline, or this process failed) are stopped
                for helper in helpers:
                    if helper.poll() is None:
                        helper.kill()
                    helper.wait()
        with open(mark, "w") as fh:  # even where a helper failed: the run compiles what is missing
            fh.write("compiled ahead by specforce.radiation.compile_ahead\n")
    return True


def _build_key():
    """What numba's cache entries depend on beyond the sources: numba's version and the CPU."""
    import hashlib

    import numba

    try:
        from numba.core.registry import cpu_target

        magic = repr(cpu_target.target_context.codegen().magic_tuple())
    except (ImportError, AttributeError):  # numba's internals moved: one mark per numba version
        magic = ""
    return f"numba{numba.__version__}-{hashlib.sha256(magic.encode()).hexdigest()[:8]}"


def _hold(lock):
    """Take the exclusive lock on the open file ``lock`` (released when it closes, or the process
    ends), waiting at most _LOCK_SECONDS; whether it was taken."""
    deadline = time.monotonic() + _LOCK_SECONDS
    while True:
        try:
            fcntl.flock(lock.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
            return True
        except BlockingIOError:
            if time.monotonic() > deadline:
                return False
            time.sleep(0.1)


# A helper's program: this package's folder first on its path, then _helper
_HELPER = ("import sys; sys.path.insert(0, sys.argv[1]); "
           "from specforce.radiation.compile_ahead import _helper; sys.exit(_helper(*sys.argv[1:]))")
_PACKAGE_PARENT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


def _start_helpers(claims, count, folder, build):
    """``count`` helper processes on the claims folder ``claims``, in this process's folder and
    environment; those that fail to start are left out. Each checks that it runs this very
    package, with the numba and CPU of ``build`` (:func:`_build_key`), and keeps its kernels in
    ``folder`` (:func:`_helper`)."""
    helpers = []
    for _ in range(count):
        try:
            helpers.append(subprocess.Popen([sys.executable, "-c", _HELPER, _PACKAGE_PARENT, claims, folder, build],
                                            stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL,
                                            stderr=subprocess.DEVNULL))
        except (OSError, ValueError):
            break
    return helpers


def _helper(package_parent, claims, folder, build):
    """A helper process: :func:`_compile_unclaimed` on ``claims``, where it imported the package
    under ``package_parent``, keeps its kernels in ``folder`` and compiles with the numba and
    CPU of ``build`` (else its kernels would not serve the caller: exit status 2). Exit status 1
    where a kernel failed to compile."""
    if (os.path.realpath(_PACKAGE_PARENT) != os.path.realpath(package_parent) or kernels_folder() != folder
            or _build_key() != build):
        return 2
    return 1 if _compile_unclaimed(claims) else 0


def _compile_unclaimed(claims):
    """Compile, one after another, each kernel listed in ``claims``/kernels that no other process
    has claimed yet (numba saves each in the cache). Returns the number that failed to compile:
    the run compiles those at first call, and reports any error there."""
    with open(os.path.join(claims, "kernels")) as fh:
        listed = [line.split(" ", 2) for line in fh.read().splitlines()]
    failed = 0
    for k, (module, name, text) in enumerate(listed):
        try:
            os.close(os.open(os.path.join(claims, f"claim-{k}"), os.O_CREAT | os.O_EXCL | os.O_WRONLY))
        except FileExistsError:
            continue
        try:
            getattr(importlib.import_module(f"specforce.{module}"), name).compile(signature_types(text))
        except Exception:  # noqa: BLE001 - compiling ahead is only a head start; see the docstring
            failed += 1
    return failed


if __name__ == "__main__":
    print("compiled ahead" if compile_ahead() else
          "nothing done: compiled ahead before, one core, or no file locks or Python to start helpers with")
