"""Benchmark: the default job on one thread (the serial path) and on many, side by side in one process.

Printed:

* the default job (MLS, 2xCO2, built-in lines, 10-3000 cm-1), warm, median of three, on one
  thread and on every core, with grid points and the ratio; the results must be the same bits;
* where the time goes on one thread (cProfile shares: line sums, interpolation, far wings,
  transfer, line parameters, the rest);
* the thread scaling table for 1, 2, 4, 8, 16 threads (as far as the machine has cores), with
  parallel efficiency t1 / (n tn);
* peak RSS of the default job as a user runs it (a fresh process, every core);
* with ``--old-checkout PATH``: the same job run by another checkout of specforce (e.g. a worktree
  of a4b308f, the serial code the issue of threads was measured on), in a fresh process on the
  same machine in the same run, and the ratio of the threaded job of now to it;
* with ``--jobs``: ``forcing --adjusted`` on MLS, by the current adjustment and side by side by
  the iteration of main e747336 (on the current kernels), and a 10-point CO2 sweep over 10-3000 cm-1.

Run it on an otherwise idle machine: timings shared with another heavy run mean nothing.

    python benchmarks/bench_threads.py            # about 3 minutes on 2 cores
    python benchmarks/bench_threads.py --jobs     # and the adjusted forcing and the sweep
    git worktree add /tmp/a4 a4b308f && python benchmarks/bench_threads.py --old-checkout /tmp/a4
"""

from __future__ import annotations

import argparse
import cProfile
import json
import pstats
import statistics
import subprocess
import sys
import time

GROUPS = {  # kernel or function name -> share label
    "windowed_sum_uniform": "line sums (tiers)", "windowed_sum_points": "line sums (cores)",
    "interp_add": "interpolation to points", "interp_add_grid": "interpolation between tiers",
    "r2c": "far wings (FFT)", "c2r": "far wings (FFT)", "spread6": "far wings (FFT)",
    "_rt_run": "transfer", "layer_lines": "line parameters",
}


def _job(spec, threads, **kw):
    import specforce

    return specforce.radiative_forcing("mls", {"CO2": "2x"}, spec, threads=threads, **kw)


def _median_time(spec, threads, repeat=3):
    times, res = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        res = _job(spec, threads)
        times.append(time.perf_counter() - t)
    return statistics.median(times), res


def shares(spec):
    prof = cProfile.Profile()
    t = time.perf_counter()
    prof.enable()
    _job(spec, 1)
    prof.disable()
    total = time.perf_counter() - t
    stats = pstats.Stats(prof).stats
    out = {}
    for (_, _, name), (_, _, tottime, cumtime, _) in stats.items():
        label = GROUPS.get(name.rstrip(">").rsplit(".", 1)[-1])  # built-ins: "<built-in method ...r2c>"
        if label is None:
            continue
        out[label] = out.get(label, 0.0) + (cumtime if name == "layer_lines" else tottime)
    out["the rest"] = max(0.0, total - sum(out.values()))
    print(f"\nWhere the time goes, one thread (cProfile, {total:.1f} s with its overhead):")
    for label, sec in sorted(out.items(), key=lambda kv: -kv[1]):
        print(f"  {label:30s} {sec:7.2f} s  {100 * sec / total:5.1f} %")


def rss_default_job():
    """Peak RSS [MB] and wall time of the default job in a fresh process (kernels cached on disk).

    The peak is the child's VmHWM (Linux), not its ru_maxrss: a child that Python starts with vfork
    inherits the parent's high-water mark in ru_maxrss at exec (this benchmark's parent, after its
    runs, holds 400-450 MB, which the child then reported as its own peak)."""
    code = "\n".join((
        "import os, resource, time, specforce",
        "s = specforce.spectroscopy()",
        "specforce.radiative_forcing('mls', {'CO2': '2x'}, s, wavenumber_range=(660.0, 670.0))",
        "t = time.perf_counter()",
        "specforce.radiative_forcing('mls', {'CO2': '2x'}, s)",
        "t = time.perf_counter() - t",
        "mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024",
        "if os.path.exists('/proc/self/status'):",
        "    with open('/proc/self/status') as f:",
        "        mb = [float(v.split()[1]) / 1024 for v in f if v.startswith('VmHWM')][0]",
        "print(t, mb)"))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    sec, mb = map(float, out.stdout.split()[-2:])
    return sec, mb


def old_checkout_job(path, repeat):
    """Warm median of ``repeat`` default jobs [s] and the TOA forcing, run by the specforce of the
    checkout ``path`` in a fresh process (its kernels compiled and cached first, outside the time)."""
    import os

    code = "\n".join((
        "import statistics, time, specforce",
        "s = specforce.spectroscopy()",
        "specforce.radiative_forcing('mls', {'CO2': '2x'}, s)",
        "times = []",
        f"for _ in range({repeat}):",
        "    t = time.perf_counter()",
        "    r = specforce.radiative_forcing('mls', {'CO2': '2x'}, s)",
        "    times.append(time.perf_counter() - t)",
        "print(specforce.__file__)",
        "print(statistics.median(times), r.toa)"))
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"} | {"PYTHONPATH": os.path.abspath(path)}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=path)
    if out.returncode != 0:
        raise SystemExit(f"the job of the checkout {path} failed:\n{out.stderr[-2000:]}")
    where, numbers = out.stdout.splitlines()[-2:]
    if os.path.commonpath([os.path.abspath(where), os.path.abspath(path)]) != os.path.abspath(path):
        raise SystemExit(f"the checkout {path} was not the specforce imported ({where})")
    sec, toa = map(float, numbers.split())
    return sec, toa


def adjusted(spec):
    """forcing --adjusted on MLS, and side by side the iteration of main e747336 (the filtered
    diagonal Jacobian, every layer computed in every iteration) run on the current kernels."""
    import specforce
    from specforce.forcing import adjustment
    from specforce.radiation.depthstore import DepthStore

    def timed():
        t = time.perf_counter()
        r = specforce.radiative_forcing("mls", {"CO2": "2x"}, spec, adjusted=True)
        return time.perf_counter() - t, r.adjusted

    t_new, new = timed()
    real, real_store = adjustment.adjusted_forcing, adjustment.DepthStore
    try:
        adjustment.adjusted_forcing = lambda *a, **k: real(*a, jacobian="diagonal", **k)
        adjustment.DepthStore = lambda layers=(), sample=0: DepthStore()  # keeps nothing
        t_old, old = timed()
    finally:
        adjustment.adjusted_forcing, adjustment.DepthStore = real, real_store
    print("\nforcing --adjusted, MLS 2xCO2 (instantaneous part included):")
    for label, sec, a in (("old (diagonal, all layers)", t_old, old), ("new (Planck, kept layers)", t_new, new)):
        print(f"  {label:28s} {sec:6.1f} s  {a.iterations:2d} iterations  adjusted {a.forcing_tropopause:.5f} W m-2  "
              f"residual {a.residual_history[-1]:.4f} K/day")
    print(f"  ratio {t_old / t_new:.2f}")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--jobs", action="store_true", help="also time forcing --adjusted and a 10-point sweep")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--old-checkout", metavar="PATH", help="also time the default job of this checkout of specforce")
    args = ap.parse_args(argv)

    import numpy as np
    import specforce
    from specforce.radiation.workers import available_cores

    cores = available_cores()
    spec = specforce.spectroscopy()
    _job(spec, 1, wavenumber_range=(660.0, 670.0))  # compile, fill caches
    print(f"specforce {specforce.__version__}; {cores} cores available; default job: MLS 2xCO2, built-in lines, "
          f"10-3000 cm-1, warm, median of {args.repeat}")
    t1, r1 = _median_time(spec, 1, args.repeat)
    tn, rn = _median_time(spec, None, args.repeat)
    same = all(np.array_equal(getattr(r1, f), getattr(rn, f)) for f in ("forcing", "spectral_toa"))
    points = r1.base.provenance["grid_points"]
    print(f"  serial path (1 thread)      {t1:7.2f} s  {points:,d} points  TOA {r1.toa:.6f} W m-2")
    print(f"  threaded ({cores} threads)       {tn:7.2f} s  ratio {t1 / tn:4.2f}  same bits: {same}")

    if args.old_checkout:
        t_old, toa_old = old_checkout_job(args.old_checkout, args.repeat)
        print(f"  the checkout {args.old_checkout}: {t_old:7.2f} s  TOA {toa_old:.6f} W m-2; threaded now "
              f"{t_old / tn:4.2f} times faster")

    shares(spec)

    print("\nThread scaling (default job, warm, median):")
    print("  threads   seconds   speed-up   efficiency")
    base = None
    for n in (1, 2, 4, 8, 16):
        if n > cores:
            break
        t, _ = (t1, None) if n == 1 else _median_time(spec, n, args.repeat)
        base = base or t
        print(f"  {n:7d} {t:9.2f} {base / t:10.2f} {100 * base / (n * t):11.0f} %")

    sec, mb = rss_default_job()
    print(f"\nDefault job in a fresh process, every core: {sec:.2f} s, peak RSS {mb:.0f} MB")

    if args.jobs:
        adjusted(spec)
        t = time.perf_counter()
        specforce.sweep_concentrations("CO2", list(278.0 * np.geomspace(0.5, 8.0, 10)), ["mls"], spec)
        print(f"10-point CO2 sweep, MLS, 10-3000 cm-1: {time.perf_counter() - t:.1f} s")
    print(json.dumps({"serial_s": t1, "threaded_s": tn, "threads": cores, "rss_MB": mb}))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
