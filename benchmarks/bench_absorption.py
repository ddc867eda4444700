"""Benchmark: a layer's optical depth by the three methods (direct sum, multi-level, tiered).

Prints JIT compile times, how time and peak memory grow with the number of lines
(synthetic, invented lines) on a uniform grid, and the times on realistic layers
(the built-in lines plus, when SPECFORCE_TEST_LINES is set, the real water list,
every layer of the AFGL mid-latitude summer profile, three 20 cm-1 slices of a
0.0005 cm-1 grid). The whole longwave path, graded against uniform, is in
bench_longwave.py.

    python benchmarks/bench_absorption.py [--max-lines 1000000]
"""

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time

import numpy as np

from specforce.absorption.linesum import LayerState, cross_section
from specforce.absorption.grids import uniform_grid
from specforce.molecular.lines import LineList

METHODS = ("direct", "multigrid", "tiered")


def synthetic(n, lo, hi, seed=0):
    rng = np.random.default_rng(seed)
    return LineList({
        "molecule": np.full(n, 1, np.uint8), "isotopologue": np.ones(n, np.uint8),
        "wavenumber": np.sort(rng.uniform(lo, hi, n)), "intensity": 10 ** rng.uniform(-24, -19, n),
        "lower_energy": rng.uniform(0, 2000, n), "gamma_air": rng.uniform(0.02, 0.1, n),
        "gamma_self": rng.uniform(0.1, 0.5, n), "n_air": rng.uniform(0.5, 0.8, n),
        "delta_air": rng.uniform(-0.01, 0.005, n),
    })


def timed(fn):
    t = time.perf_counter()
    out = fn()
    return time.perf_counter() - t, out


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--max-lines", type=int, default=100_000)
    args = ap.parse_args()
    jit_compile_times()
    state = LayerState(20000.0, 220.0, 20.0)

    print("\nlines  spacing[cm-1]  points   " + "  ".join(f"{m}[s]" for m in METHODS) + "  peak RSS[MB]")
    n = 1000
    while n <= args.max_lines:
        width = 100.0
        lines = synthetic(n, 500 - 25, 500 + width + 25, seed=n)
        for spacing in (0.002, 0.0005):
            grid = uniform_grid(500, 500 + width, spacing)
            times = []
            for m in METHODS:
                # direct cost ~ lines x points within the cut-off: time a tenth of the grid when it is large
                sub = grid if m != "direct" or n * grid.size <= 2e9 else grid[: max(2, grid.size // 10)]
                dt, _ = timed(lambda: cross_section(lines, sub, state, method=m))
                times.append(dt * grid.size / sub.size)
            rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
            print(f"{n:7d}  {spacing:10.4f}  {grid.size:8d}  " + "  ".join(f"{t:9.2f}" for t in times) + f"  {rss:8.0f}",
                  flush=True)
        n *= 10

    print("\nrealistic layers (AFGL mid-latitude summer, every layer), 0.0005 cm-1 grid:")
    from specforce.radiation.layers import layers
    from specforce.io.profiles import load_profile
    from specforce.molecular.builtin import builtin_spectroscopy
    from specforce.io.lineimport import import_lines
    from specforce.io.linestore import load_spectroscopy

    spec = builtin_spectroscopy()
    src = os.environ.get("SPECFORCE_TEST_LINES")
    if src:
        store = os.path.join(tempfile.mkdtemp(), "h2o.h5")
        import_lines([os.path.join(src, "h2o_HITRAN.par")], store)
        spec = spec.overridden_by(load_spectroscopy(store))
    lay = layers(load_profile("mls"))
    for lo in (300.0, 660.0, 1500.0):
        total = dict.fromkeys(METHODS, 0.0)
        grid = uniform_grid(lo, lo + 20, 0.0005)
        for ll in spec.lines.values():
            sel = ll.window(lo - 25, lo + 45)
            if len(sel) == 0:
                continue
            for i in range(lay.nlayers):
                st = LayerState(float(lay.pressure[i]), float(lay.temperature[i]))
                for m in METHODS:
                    dt, _ = timed(lambda: cross_section(sel, grid, st, method=m))
                    total[m] += dt
        print(f"  {lo:6.0f}-{lo + 20:.0f} cm-1, gases {', '.join(spec.gases)}: "
              + ", ".join(f"{m} {t:.2f} s" for m, t in total.items())
              + f"; direct / multigrid {total['direct'] / total['multigrid']:.0f}, "
                f"direct / tiered {total['direct'] / total['tiered']:.0f}", flush=True)


def jit_compile_times():
    """First-call times in a fresh process with an empty numba cache: compilation alone."""
    code = (
        "import time; t = time.perf_counter()\n"
        "import numpy as np\n"
        "from specforce.absorption.linesum import LayerState, cross_section\n"
        "from specforce.absorption.grids import uniform_grid\n"
        "from specforce.molecular.lines import LineList\n"
        "t_import = time.perf_counter() - t\n"
        "n = 5\n"
        "ll = LineList({'molecule': np.ones(n, np.uint8), 'isotopologue': np.ones(n, np.uint8),"
        " 'wavenumber': np.linspace(501, 509, n), 'intensity': np.full(n, 1e-20), 'lower_energy': np.zeros(n),"
        " 'gamma_air': np.full(n, 0.07), 'gamma_self': np.full(n, 0.3), 'n_air': np.full(n, 0.7),"
        " 'delta_air': np.zeros(n)})\n"
        "g = uniform_grid(500, 510, 0.001); st = LayerState(20000.0, 220.0, 20.0)\n"
        "out = [t_import]\n"
        f"for m in {METHODS!r}:\n"
        "    t = time.perf_counter(); cross_section(ll, g, st, method=m); out.append(time.perf_counter() - t)\n"
        "print(*out)\n"
    )
    with tempfile.TemporaryDirectory() as cache:
        env = {**os.environ, "NUMBA_CACHE_DIR": cache}
        cold = subprocess.run([sys.executable, "-c", code], env=env, check=True, capture_output=True, text=True)
        warm = subprocess.run([sys.executable, "-c", code], env=env, check=True, capture_output=True, text=True)
    c, w = ([float(x) for x in r.stdout.split()] for r in (cold, warm))
    print("JIT, empty cache (compile): import {:.2f} s, ".format(c[0])
          + ", ".join(f"{m} {t:.2f} s" for m, t in zip(METHODS, c[1:]))
          + "; from the cache: " + ", ".join(f"{m} {t:.2f} s" for m, t in zip(METHODS, w[1:])))


if __name__ == "__main__":
    main()
