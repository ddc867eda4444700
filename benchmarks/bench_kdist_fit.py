"""Benchmark: the fast model's fit (specforce.kdist.fit.fit_corrections) with its normal
equations taken in blocks of g-points, against one task per training column (the way before),
side by side in one process on the same training set.

The training set is the default layout's (the six AFGL profiles as given; over the whole
range by default), built first (5 minutes on 2 cores; not timed), then each fit takes 3-4
minutes. Printed: each fit's time, the ratio, and the largest difference of the fitted factors
(each g-point's problem is its own and the sums over the columns keep their order, but the
transfer kernel's rounding may differ with the width of the block: measured 8e-7).

Measured (2 cores): 3,083 g-points, 214.0 s before against 168.5 s (1.27x); over 580-750 cm-1
alone (575 g-points, where three tasks of a column did as well as one) 33.8 against 33.7 s.

    python benchmarks/bench_kdist_fit.py [--range 10 3000] [--threads 2]
"""

from __future__ import annotations

import argparse
import time
from dataclasses import replace

import numpy as np


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--range", nargs=2, type=float, default=(10.0, 3000.0))
    ap.add_argument("--threads", type=int, default=2)
    args = ap.parse_args()
    import specforce
    import specforce.kdist.build as build
    import specforce.kdist.fit as fit
    from specforce.kdist.layout import DEFAULT_LAYOUT
    from specforce.radiation.longwave import Settings
    from specforce.radiation.workers import TaskPool

    captured = {}

    def capture(training, gases, knots, pool=None, report=None, bands=None, coupling=0.0):
        captured.update(training=training, gases=gases, knots=knots, bands=bands, coupling=coupling)
        return np.zeros((len(gases), knots.size, training.columns[0].up.shape[-1])), {
            "loss": [0.0], "coupled_from_iteration": None}

    build.fit_corrections = capture
    layout = replace(DEFAULT_LAYOUT.covering(tuple(args.range)), fit_variants=())
    t = time.perf_counter()
    build.build_tables(specforce.spectroscopy(), Settings(threads=args.threads), layout)
    ng = captured["training"].columns[0].up.shape[-1]
    print(f"training set: {len(captured['training'].columns)} columns, {ng} g-points over "
          f"{args.range[0]:g}-{args.range[1]:g} cm-1 ({time.perf_counter() - t:.0f} s to build; not timed)")
    results = {}
    with TaskPool(args.threads) as pool:
        for name, block in (("one task per column (before)", ng), ("blocks of g-points", fit._BLOCK)):
            saved, fit._BLOCK = fit._BLOCK, block
            try:
                t = time.perf_counter()
                c, _ = fit.fit_corrections(captured["training"], captured["gases"], captured["knots"], pool,
                                           bands=captured["bands"], coupling=captured["coupling"])
                results[name] = (time.perf_counter() - t, c)
            finally:
                fit._BLOCK = saved
            print(f"{name:30s} {results[name][0]:7.1f} s (block {block} g-points)")
    (t_old, c_old), (t_new, c_new) = results.values()
    print(f"ratio (before / now): {t_old / t_new:.2f}; largest difference of the fitted ln factors: "
          f"{np.abs(c_new - c_old).max():.3g}")


if __name__ == "__main__":
    main()
