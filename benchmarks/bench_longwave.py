"""Benchmark: the graded path against the uniform reference, side by side, and how the graded path scales.

Each measurement runs in a fresh worker process (so that its peak RSS is its own),
one at a time; run it on an otherwise idle machine. Printed:

* 2xCO2 instantaneous forcing (built-in lines, 10-3000 cm-1) for each profile,
  graded and uniform: run time (warm: kernels compiled and cached), grid points,
  peak RSS, the ratio of times, and the differences of OLR, surface downward flux,
  forcing at TOA, tropopause and surface, heating rates below 1 hPa and 10 cm-1
  band sums of the 0.1 cm-1 spectra;
* the CO2 line wings, graded path: the default chi-factor wings (distant wings on a
  coarse grid) against the same on one fine grid and against the 25 cm-1 cut;
* the H2O-only OLR with the real water list (if ``--lines`` or SPECFORCE_TEST_LINES
  names the folder of h2o_HITRAN.par), both paths;
* the default job as a user runs it (``specforce forcing --profile mls --co2 2x``,
  the whole process), both grids;
* cold start: the default job from the command line with an empty cache folder and again with
  it filled, the kernels compiled in the job (old) and compiled ahead in parallel (new);
* scaling of the graded path with lines (synthetic, 1e3-1e6), layers (refine 1, 2, 4)
  and spectral range;
* ``forcing --adjusted`` on MLS and a 10-point CO2 sweep.

    python benchmarks/bench_longwave.py                 # everything (about 15 minutes)
    python benchmarks/bench_longwave.py --quick         # MLS only, no scaling to 1e6 lines
    python benchmarks/bench_longwave.py --only forcing,jit
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))


# ---------------------------------------------------------------- workers (run in a fresh process)


def _band_sums(spectrum, width=10.0, resolution=0.1):
    return (np.asarray(spectrum).reshape(-1, int(round(width / resolution))).sum(axis=1) * resolution).tolist()


def _summary(res):
    return {"olr": res.olr, "surface_down": res.surface_down, "heating_rate": res.heating_rate.tolist(),
            "pressure": res.pressure.tolist(), "olr_bands": _band_sums(res.olr_spectrum),
            "sdn_bands": _band_sums(res.surface_down_spectrum), "points": res.provenance["grid_points"]}


def work_forcing(profile, grid, co2_chi=True, one_far_grid=False):
    if one_far_grid:  # the far wings of the CO2 chi lines on the one fine FFT grid (the path before the split)
        import functools

        from specforce.absorption import linesum as absorption
        absorption.TieredTuning = functools.partial(absorption.TieredTuning, far_split=None)
    from specforce.io.profiles import load_profile
    from specforce.molecular.builtin import builtin_spectroscopy
    from specforce.forcing.instantaneous import instantaneous_forcing
    from specforce.forcing.scenario import apply_perturbations, parse_change
    from specforce.radiation.longwave import Settings

    spec = builtin_spectroscopy()
    base, pert = apply_perturbations(load_profile(profile), [parse_change("CO2", "2x")])
    settings = Settings(grid=grid, co2_chi=co2_chi)
    if grid == "graded":  # compile and fill caches first; the uniform path shares the kernels' cache on disk
        instantaneous_forcing(base, pert, spec, Settings(wavenumber_range=(660.0, 670.0)))
    t = time.perf_counter()
    r = instantaneous_forcing(base, pert, spec, settings)
    dt = time.perf_counter() - t
    return {"seconds": dt, "toa": r.toa, "tropopause": r.tropopause, "surface": r.surface,
            "base": _summary(r.base), "perturbed": _summary(r.perturbed),
            "forcing_bands": _band_sums(r.spectral_toa)}


def work_water(profile, grid, lines_dir):
    from specforce.io.profiles import load_profile
    from specforce.io.lineimport import import_lines
    from specforce.io.linestore import load_spectroscopy
    from specforce.radiation.longwave import Settings, compute_longwave

    store = os.path.join(tempfile.mkdtemp(), "h2o.h5")
    import_lines([os.path.join(lines_dir, "h2o_HITRAN.par")], store)
    spec = load_spectroscopy(store)
    prof = load_profile(profile)
    compute_longwave(prof, spec, Settings(wavenumber_range=(300.0, 310.0), continuum=False, nodes=4, grid=grid))
    t = time.perf_counter()
    r = compute_longwave(prof, spec, Settings(continuum=False, nodes=4, grid=grid))
    return {"seconds": time.perf_counter() - t, **_summary(r)}


def work_scaling_lines(n, grid):
    from specforce.io.profiles import load_profile
    from specforce.molecular.lines import LineList, Spectroscopy
    from specforce.radiation.longwave import Settings, compute_longwave

    rng = np.random.default_rng(1)
    cols = {  # invented lines (not real transitions) with realistic ranges of parameters, as water
        "molecule": np.ones(n, np.uint8), "isotopologue": np.ones(n, np.uint8),
        "wavenumber": np.sort(rng.uniform(500, 1500, n)), "intensity": 10 ** rng.uniform(-27, -20, n),
        "lower_energy": rng.uniform(0, 3000, n), "gamma_air": rng.uniform(0.02, 0.1, n),
        "gamma_self": rng.uniform(0.1, 0.5, n), "n_air": rng.uniform(0.5, 0.8, n),
        "delta_air": rng.uniform(-0.01, 0.005, n)}
    spec = Spectroscopy({"H2O": LineList(cols)}, {"kind": "synthetic"})
    prof = load_profile("mls")
    settings = Settings(wavenumber_range=(600.0, 1400.0), continuum=False, grid=grid)
    compute_longwave(prof, spec, Settings(wavenumber_range=(600.0, 601.0), continuum=False, grid=grid))
    t = time.perf_counter()
    r = compute_longwave(prof, spec, settings)
    return {"seconds": time.perf_counter() - t, "points": r.provenance["grid_points"], "olr": r.olr}


def work_scaling(kind, value):
    from specforce.io.profiles import load_profile
    from specforce.molecular.builtin import builtin_spectroscopy
    from specforce.radiation.longwave import Settings, compute_longwave

    spec = builtin_spectroscopy()
    prof = load_profile("mls")
    kw = {"refine": int(value)} if kind == "layers" else {"wavenumber_range": (500.0, 500.0 + float(value))}
    compute_longwave(prof, spec, Settings(wavenumber_range=(660.0, 670.0)))
    t = time.perf_counter()
    r = compute_longwave(prof, spec, Settings(**kw))
    return {"seconds": time.perf_counter() - t, "points": r.provenance["grid_points"], "olr": r.olr}


def work_adjusted():
    import specforce

    spec = specforce.spectroscopy()
    t = time.perf_counter()
    r = specforce.radiative_forcing("mls", {"CO2": "2x"}, spec, adjusted=True)
    return {"seconds": time.perf_counter() - t, "adjusted": r.adjusted.forcing_tropopause,
            "iterations": r.adjusted.iterations, "instantaneous": r.tropopause}


def work_sweep():
    from specforce.io.profiles import load_profile
    from specforce.molecular.builtin import builtin_spectroscopy
    from specforce.forcing.sweep import concentration_sweep

    spec = builtin_spectroscopy()
    conc = 278.0 * np.geomspace(0.5, 8.0, 10)
    t = time.perf_counter()
    s = concentration_sweep("CO2", conc, [load_profile("mls")], spec)
    return {"seconds": time.perf_counter() - t, "forcing_at_2x": float(np.interp(556.0, conc, s.forcing[0]))}


WORKERS = {"forcing": work_forcing, "water": work_water, "lines": work_scaling_lines, "scaling": work_scaling,
           "adjusted": work_adjusted, "sweep": work_sweep}


def _run_worker(name, *args, env=None):
    """Run one measurement in a fresh process; returns its result and peak RSS [MB]."""
    cmd = [sys.executable, os.path.abspath(__file__), "--worker", json.dumps([name, *args])]
    out = subprocess.run(cmd, capture_output=True, text=True, env=env)
    if out.returncode != 0:
        raise RuntimeError(f"worker {name} {args} failed:\n{out.stderr[-3000:]}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def _worker_main(spec):
    name, *args = json.loads(spec)
    res = WORKERS[name](*args)
    res["peak_rss_MB"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    print(json.dumps(res))


# ---------------------------------------------------------------- report


def _row(label, a, b=None):
    s = f"  {label:34s} {a['seconds']:9.2f} s {a['points'] if 'points' in a else a['base']['points']:>11,d} pts " \
        f"{a['peak_rss_MB']:8.0f} MB"
    if b is not None:
        s += f"   reference {b['seconds']:8.1f} s {b['points'] if 'points' in b else b['base']['points']:>11,d} pts " \
             f"{b['peak_rss_MB']:6.0f} MB   ratio {b['seconds'] / a['seconds']:5.1f}"
    print(s, flush=True)


def _differences(new, ref):
    below = np.asarray(ref["pressure"])[1:] > 100.0
    hr = np.abs(np.asarray(new["heating_rate"]) - np.asarray(ref["heating_rate"]))[below].max()
    bands = max(np.abs(np.asarray(new["olr_bands"]) - np.asarray(ref["olr_bands"])).max(),
                np.abs(np.asarray(new["sdn_bands"]) - np.asarray(ref["sdn_bands"])).max())
    return (f"OLR {new['olr'] - ref['olr']:+.4f}, surface down {new['surface_down'] - ref['surface_down']:+.4f} W m-2; "
            f"heating below 1 hPa {hr:.4f} K/day; 10 cm-1 bands {bands:.4f} W m-2")


def bench_forcing(profiles):
    print("2xCO2 instantaneous forcing, built-in lines, 10-3000 cm-1 (warm), graded vs uniform reference:")
    for p in profiles:
        new, ref = _run_worker("forcing", p, "graded"), _run_worker("forcing", p, "uniform")
        _row(f"{p}", new, ref)
        print(f"      forcing graded   TOA {new['toa']:.4f}  tropopause {new['tropopause']:.4f}  surface "
              f"{new['surface']:.4f} W m-2")
        print(f"      differences: TOA {new['toa'] - ref['toa']:+.5f}, tropopause "
              f"{new['tropopause'] - ref['tropopause']:+.5f}, surface {new['surface'] - ref['surface']:+.5f} W m-2; "
              f"spectral forcing 10 cm-1 bands "
              f"{np.abs(np.asarray(new['forcing_bands']) - np.asarray(ref['forcing_bands'])).max():.5f} W m-2")
        print(f"      base state: {_differences(new['base'], ref['base'])}")
        print(f"      perturbed:  {_differences(new['perturbed'], ref['perturbed'])}", flush=True)


def bench_co2_wings(profiles):
    print("CO2 line wings, graded path, 2xCO2, 10-3000 cm-1 (warm): the default (chi factor, 250 cm-1, distant "
          "wings on a coarse FFT grid) against the same wings on the one fine FFT grid (the path before) and "
          "against CO2 cut at 25 cm-1 like the other gases (--no-co2-chi):")
    print("  (each variant three times, interleaved; the fastest run is shown and the spread in brackets, since "
          "times on this machine drift by up to a third between runs)")
    for p in profiles:
        runs = {"new": [], "one": [], "cut": []}
        for _ in range(3):
            runs["new"].append(_run_worker("forcing", p, "graded", True))
            runs["one"].append(_run_worker("forcing", p, "graded", True, True))
            runs["cut"].append(_run_worker("forcing", p, "graded", False))
        best = {k: min(v, key=lambda r: r["seconds"]) for k, v in runs.items()}
        new = best["new"]
        for label, key in (("chi wings, two far grids", "new"), ("chi wings, one far grid", "one"),
                           ("25 cm-1 cut", "cut")):
            r, times = best[key], [x["seconds"] for x in runs[key]]
            print(f"  {p:8s} {label:26s} {r['seconds']:7.2f} s [{min(times):.1f}-{max(times):.1f}] "
                  f"{r['base']['points']:>9,d} pts "
                  f"{r['peak_rss_MB']:6.0f} MB   time / default {r['seconds'] / new['seconds']:4.2f}   "
                  f"forcing TOA {r['toa']:.5f} tropopause {r['tropopause']:.5f} surface {r['surface']:.5f} W m-2",
                  flush=True)


def bench_water(profiles, lines_dir):
    if not lines_dir or not os.path.exists(os.path.join(lines_dir, "h2o_HITRAN.par")):
        print("H2O-only OLR with the real water list: skipped (give --lines FOLDER holding h2o_HITRAN.par)")
        return
    print("H2O-only OLR, real water list, no continuum, 4 angles, 10-3000 cm-1 (warm):")
    for p in profiles:
        new, ref = _run_worker("water", p, "graded", lines_dir), _run_worker("water", p, "uniform", lines_dir)
        _row(p, new, ref)
        print(f"      {_differences(new, ref)}", flush=True)


def bench_cli():
    print("The default job as a user runs it (whole process, kernels cached): "
          "specforce forcing --profile mls --co2 2x [--grid uniform]")
    exe = os.path.join(os.path.dirname(sys.executable), "specforce")
    for grid in ("graded", "uniform"):
        t = time.perf_counter()
        out = subprocess.run(["/usr/bin/time", "-f", "%M", exe, "forcing", "--profile", "mls", "--co2", "2x",
                              "--grid", grid], capture_output=True, text=True)
        dt = time.perf_counter() - t
        rss = float(out.stderr.strip().splitlines()[-1]) / 1024.0
        toa = [ln for ln in out.stdout.splitlines() if "top of atmosphere" in ln]
        print(f"  --grid {grid:8s} {dt:8.2f} s   peak RSS {rss:6.0f} MB   {toa[0].strip() if toa else out.stderr[-300:]}",
              flush=True)


# The default job from the command line, in a fresh process; "serial" keeps the kernels' compilation
# in the job's first calls, one after another (the path before the compilation ahead)
_COLD_JOB = ("import sys, time; t = time.perf_counter()\n"
             "if sys.argv[1] == 'serial':\n"
             "    import specforce.radiation.longwave as lw; lw.compile_ahead = lambda threads=None: False\n"
             "from specforce.cli import main\n"
             "try:\n"
             "    main(['forcing', '--profile', 'mls', '--co2', '2x'])\n"
             "except SystemExit as e:\n"
             "    if e.code:\n"
             "        raise\n"
             "print('seconds', time.perf_counter() - t)")


def _cold_job(path, cache):
    env = {k: v for k, v in os.environ.items() if k != "NUMBA_CACHE_DIR"} | {"XDG_CACHE_HOME": cache}
    out = subprocess.run([sys.executable, "-c", _COLD_JOB, path], capture_output=True, text=True, env=env)
    found = [ln for ln in out.stdout.splitlines() if ln.startswith("seconds ")]
    if not found:
        raise RuntimeError(f"the cold-start job failed:\n{out.stderr[-2000:]}")
    return float(found[-1].split()[1])


def bench_jit():
    print("Cold start: `specforce forcing --profile mls --co2 2x` in a fresh process, first with an empty cache "
          "folder (every kernel compiled, the built-in lines generated), then with it filled; old and new "
          "alternate, twice:")
    added = {"serial": [], "ahead": []}
    for _ in range(2):
        for path in ("serial", "ahead"):
            cache = tempfile.mkdtemp(prefix="specforce-cold-")
            try:
                cold = _cold_job(path, cache)
                cached = _cold_job(path, cache)
            finally:
                shutil.rmtree(cache, ignore_errors=True)
            added[path].append(cold - cached)
            label = ("kernels compiled in the job, in turn (old)" if path == "serial"
                     else "kernels compiled ahead in parallel (new)")
            print(f"  {label:44s} cold {cold:6.2f} s   cached {cached:6.2f} s   the cold start adds "
                  f"{cold - cached:6.2f} s", flush=True)
    old, new = min(added["serial"]), min(added["ahead"])
    print(f"  the cold start adds {old:.2f} s (old) and {new:.2f} s (new), the better of two each: "
          f"{old / new:.2f}x (target: 10 s or less)", flush=True)


def bench_scaling(quick):
    print("Scaling of the graded path (warm):")
    sizes = (1_000, 10_000, 100_000) if quick else (1_000, 10_000, 100_000, 1_000_000)
    print("  lines (synthetic, 500-1500 cm-1; OLR over 600-1400 cm-1, 49 layers):")
    for n in sizes:
        r = _run_worker("lines", n, "graded")
        print(f"    {n:>9,d} lines {r['seconds']:8.2f} s {r['points']:>10,d} pts {r['peak_rss_MB']:7.0f} MB", flush=True)
    print("  layers (built-in lines, OLR 10-3000 cm-1, MLS refined):")
    for k in (1, 2, 4):
        r = _run_worker("scaling", "layers", k)
        print(f"    {49 * k:>4d} layers {r['seconds']:8.2f} s {r['points']:>10,d} pts {r['peak_rss_MB']:7.0f} MB",
              flush=True)
    print("  spectral range (built-in lines, OLR from 500 cm-1, MLS):")
    for w in (100, 300, 1000, 2500):
        r = _run_worker("scaling", "range", w)
        print(f"    {w:>5d} cm-1 {r['seconds']:8.2f} s {r['points']:>10,d} pts {r['peak_rss_MB']:7.0f} MB", flush=True)


def bench_workflows():
    print("Workflows (graded path, built-in lines, 10-3000 cm-1):")
    a = _run_worker("adjusted")
    print(f"  forcing --adjusted, MLS 2xCO2        {a['seconds']:8.1f} s  ({a['iterations']} iterations; "
          f"tropopause {a['instantaneous']:.3f} -> {a['adjusted']:.3f} W m-2; {a['peak_rss_MB']:.0f} MB)", flush=True)
    s = _run_worker("sweep")
    print(f"  10-point CO2 sweep 0.5x-8x, MLS      {s['seconds']:8.1f} s  (tropopause forcing at 556 ppm "
          f"{s['forcing_at_2x']:.3f} W m-2; {s['peak_rss_MB']:.0f} MB)", flush=True)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--worker", help=argparse.SUPPRESS)
    ap.add_argument("--quick", action="store_true", help="MLS only; lines up to 1e5")
    ap.add_argument("--only", help="comma-separated subset of forcing,co2wings,water,cli,jit,scaling,workflows")
    ap.add_argument("--lines", default=os.environ.get("SPECFORCE_TEST_LINES"),
                    help="folder holding h2o_HITRAN.par (default $SPECFORCE_TEST_LINES)")
    args = ap.parse_args()
    if args.worker:
        _worker_main(args.worker)
        return
    parts = (args.only or "forcing,co2wings,water,cli,jit,scaling,workflows").split(",")
    profiles = ["mls"] if args.quick else ["mls", "tropical", "saw"]
    print(f"specforce longwave benchmark: {os.cpu_count()} cores, Python {sys.version.split()[0]}")
    t0 = time.perf_counter()
    if "forcing" in parts:
        bench_forcing(profiles)
    if "co2wings" in parts:
        bench_co2_wings(profiles)
    if "water" in parts:
        bench_water(["mls"], args.lines)
    if "cli" in parts:
        bench_cli()
    if "jit" in parts:
        bench_jit()
    if "scaling" in parts:
        bench_scaling(args.quick)
    if "workflows" in parts:
        bench_workflows()
    print(f"(benchmark took {time.perf_counter() - t0:.0f} s)")


if __name__ == "__main__":
    main()
