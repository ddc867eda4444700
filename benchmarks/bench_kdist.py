"""Benchmark: the fast model (spectral_model "kdist") against line-by-line, side by side in one process.

Printed:

* the tables: build time (from their provenance), file size, bands and g-points;
* the default job (MLS, 2xCO2, 10-3000 cm-1) warm, median of three, in both models, and the ratio;
* a 1,000-profile batch of OLR in the fast model (the profiles the six AFGL ones, warmed and
  cooled), its time;
* the error table: for held-out cases (tropical and subarctic winter +2 K with relative
  humidity fixed, both as a change and as columns with the calibration's changes; CO2 3x,
  CH4 2.5 ppm; none in the calibration set) and calibration cases
  (the six AFGL profiles with 2x, 4x, 8x and 0.5x CO2, CH4 and N2O pre-industrial to present
  day, H2O 1.2x), the forcing at the top, the tropopause and the surface in both models and
  the relative error, with OLR, surface downward flux and heating-rate errors.

Builds the default tables first where they are not cached (about 9 minutes on 2 cores, then
the full calibration, about 10 more). Run it on an otherwise idle machine.

    python benchmarks/bench_kdist.py            # about 12 minutes on 2 cores, with tables cached
    python benchmarks/bench_kdist.py --quick    # the held-out cases and MLS only
    python benchmarks/bench_kdist.py --adjusted # the adjusted 2xCO2 forcing in both models
"""

from __future__ import annotations

import argparse
import os
import statistics
import time

import numpy as np


def _forcing(profile, changes, spec, model, **kw):
    import specforce

    t0 = time.perf_counter()
    r = specforce.radiative_forcing(profile, changes, spectroscopy=spec, spectral_model=model, **kw)
    return r, time.perf_counter() - t0


def _row(label, rl, rk):
    cells = []
    for where in ("toa", "tropopause", "surface"):
        fl, fk = getattr(rl, where), getattr(rk, where)
        cells.append(f"{fl:8.4f} {fk:8.4f} {100 * (fk - fl) / fl:+6.2f}%")
    below = rl.base.pressure[1:] >= 100.0
    dq = max(float(np.max(np.abs(rk.base.heating_rate - rl.base.heating_rate)[below])),
             float(np.max(np.abs(rk.perturbed.heating_rate - rl.perturbed.heating_rate)[below])))
    return (f"{label:34s} " + " | ".join(cells) + f" | {rk.base.olr - rl.base.olr:+6.2f} "
            f"{rk.base.surface_down - rl.base.surface_down:+6.2f} {dq:6.3f}")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="held-out cases and MLS only")
    ap.add_argument("--adjusted", action="store_true",
                    help="only the stratosphere-adjusted 2xCO2 forcing (MLS) in both models (about 2 min)")
    args = ap.parse_args()
    import specforce
    from specforce.api_kdist import build_fast_tables
    from specforce.io.ktables import cached_tables_path, tables_text

    spec = specforce.spectroscopy()
    if args.adjusted:
        for model in ("lbl", "kdist"):
            r, t = _forcing("mls", {"CO2": "2x"}, spec, model, adjusted=True)
            print(f"{model:6s} adjusted 2xCO2 forcing (MLS, tropopause) {r.adjusted.forcing_tropopause:.4f} W m-2 "
                  f"({r.adjusted.iterations} iterations, {t:.1f} s); instantaneous {r.tropopause:.4f}")
        return
    t0 = time.perf_counter()
    tables = build_fast_tables(spec)
    print(f"tables ready in {time.perf_counter() - t0:.1f} s (cached or built now)")
    print(tables_text(tables))
    print(f"  file size {os.path.getsize(cached_tables_path(tables.key)) / 1e6:.1f} MB")

    # speed: the default job, warm, median of three
    _forcing("mls", {"CO2": "2x"}, spec, "lbl")
    _forcing("mls", {"CO2": "2x"}, spec, "kdist")
    tl = statistics.median(_forcing("mls", {"CO2": "2x"}, spec, "lbl")[1] for _ in range(3))
    tk = statistics.median(_forcing("mls", {"CO2": "2x"}, spec, "kdist")[1] for _ in range(3))
    print(f"\ndefault job (MLS 2xCO2, 10-3000 cm-1), warm, median of 3: line-by-line {tl:.2f} s, "
          f"fast {tk * 1000:.1f} ms, ratio {tl / tk:.0f}x")
    # a 1,000-profile batch of OLR in the fast model
    base = [specforce.load_profile(n) for n in ("tropical", "mls", "mlw", "sas", "saw", "usstd")]
    profiles = []
    for k in range(1000):
        p = base[k % 6]
        dt = -5.0 + 10.0 * (k // 6) / 166.0
        profiles.append(p.copy(temperature=p.temperature + dt, surface_temperature=p.surface_temperature + dt,
                               check_saturation=False))
    t0 = time.perf_counter()
    for p in profiles:
        specforce.olr(p, spectroscopy=spec, spectral_model="kdist")
    print(f"1,000 profiles, OLR in the fast model, one after another: {time.perf_counter() - t0:.1f} s")

    print("\nforcing [W m-2]: line-by-line, fast, fast error; TOA | tropopause | surface | fast - lbl: "
          "OLR, surface down [W m-2], max heating-rate error surface-1 hPa [K/day]")
    from specforce.forcing.scenario import Perturbation

    warm = [Perturbation("T", "warm", 2.0, fixed_rh=True, text="+2 K, relative humidity fixed")]
    held = [("tropical +2 K, RH fixed (held out)", "tropical", warm),
            ("saw +2 K, RH fixed (held out)", "saw", warm),
            ("mls CO2 3x (held out)", "mls", {"CO2": "3x"}),
            ("mls CH4 1831.5->2500 ppb (held out)", "mls", {"CH4": "1831.5ppb:2500ppb"})]
    for label, prof, ch in held:
        try:
            rl, _ = _forcing(prof, ch, spec, "lbl")
            rk, _ = _forcing(prof, ch, spec, "kdist")
            print(_row(label, rl, rk))
        except ValueError as exc:
            print(f"{label:34s} not run: {exc}")
    from specforce.forcing.scenario import apply_perturbations

    names = ["mls"] if args.quick else ["tropical", "mls", "mlw", "sas", "saw", "usstd"]
    columns = [(f"{n} +2 K, RH fixed (held out)", apply_perturbations(specforce.load_profile(n), warm)[1])
               for n in ("tropical", "saw")]  # held-out columns, with the calibration's changes
    columns += [(n, n) for n in names]
    cases = [("CO2 2x", {"CO2": "284.32ppm:568.64ppm"}), ("CO2 4x", {"CO2": "284.32ppm:1137.28ppm"}),
             ("CO2 8x", {"CO2": "284.32ppm:2274.56ppm"}), ("CO2 0.5x", {"CO2": "284.32ppm:142.16ppm"}),
             ("CH4 PI->PD", {"CH4": "808.2ppb:1831.5ppb"}), ("N2O PI->PD", {"N2O": "273ppb:327ppb"}),
             ("H2O 1.2x", {"H2O": "1.2x"})]
    for name, profile in columns:
        for label, ch in cases:
            rl, _ = _forcing(profile, ch, spec, "lbl")
            rk, _ = _forcing(profile, ch, spec, "kdist")
            print(_row(f"{name} {label}", rl, rk))


if __name__ == "__main__":
    main()
