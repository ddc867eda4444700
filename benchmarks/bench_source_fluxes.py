"""Benchmark: the transfer with given sources (radiation.transfer.source_fluxes, used by the fast
model, its fit and the adjustment's Jacobian) against an earlier revision's, side by side in one
process, with the ratio and the largest difference.

The earlier revision's function is read with ``git show`` (default 70dce30, numpy loops over
layers); run from the repository root, on an otherwise idle machine::

    python benchmarks/bench_source_fluxes.py [--old-rev REV]
"""

from __future__ import annotations

import argparse
import math
import statistics
import subprocess
import time
import types

import numpy as np


def _median_ms(function, repeats=5):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        function()
        times.append(time.perf_counter() - t0)
    return 1e3 * statistics.median(times)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--old-rev", default="70dce30", help="the revision to compare with (default 70dce30)")
    args = ap.parse_args()
    from specforce.errors import SettingsError
    from specforce.radiation import transfer

    src = subprocess.run(["git", "show", f"{args.old_rev}:specforce/radiation/transfer.py"], capture_output=True,
                         text=True, check=True).stdout
    old = types.ModuleType("old_transfer")
    old.__dict__.update(np=np, math=math, SettingsError=SettingsError, angular_quadrature=transfer.angular_quadrature)
    exec(src[src.index("def source_fluxes("):], old.__dict__)
    rng = np.random.default_rng(0)
    # the shape of the fit's training column: 49 layers, 8 states, 2,955 g-points
    tau = rng.uniform(0.0, 2.0, (49, 8, 2955))
    b = rng.uniform(1.0, 2.0, (50, 8, 2955))
    transfer.source_fluxes(tau, b, b[0], 1.0)  # compiled (or loaded) before timing
    for _ in range(2):
        t_old = _median_ms(lambda: old.source_fluxes(tau, b, b[0] * 1.01, 1.0))
        t_new = _median_ms(lambda: transfer.source_fluxes(tau, b, b[0] * 1.01, 1.0))
        print(f"source_fluxes, 49 layers x 8 x 2955 columns, median of 5: {args.old_rev} {t_old:.1f} ms, "
              f"now {t_new:.1f} ms, ratio {t_old / t_new:.2f}")
    (uo, do), (un, dn) = old.source_fluxes(tau, b, b[0], 0.95), transfer.source_fluxes(tau, b, b[0], 0.95)
    print(f"largest relative difference: up {np.max(np.abs(un - uo) / np.abs(uo)):.1e}, "
          f"down {np.max(np.abs(dn - do) / np.maximum(np.abs(do), 1e-300)):.1e}")


if __name__ == "__main__":
    main()
