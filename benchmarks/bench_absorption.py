"""Benchmark: absorption cross-sections, direct sum against the fast multi-level method.

Prints JIT compile times, lines x grid points per second for both methods, how
time and peak memory grow with the number of lines (synthetic, invented lines)
and with grid spacing, the speed ratio on realistic layers (the built-in lines
plus, when SPECFORCE_TEST_LINES is set, the real water list, for every layer of
the AFGL mid-latitude summer profile on three 20 cm-1 slices of a 0.0005 cm-1
grid), and the ratio on the production path: a sample of the longwave
pipeline's own blocks and adaptive grids over 10-3000 cm-1 (the direct sum
over the whole range would take hours).

    python benchmarks/bench_absorption.py [--max-lines 1000000] [--sample-every 30] [--only-production]
"""

import argparse
import os
import resource
import time

import numpy as np

from specforce.absorption import LayerState, LineShapeOptions, cross_section, spectral_grid
from specforce.linestore import LineList


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
    ap.add_argument("--sample-every", type=int, default=30, help="time every Nth 5 cm-1 block of the production path")
    ap.add_argument("--only-production", action="store_true", help="skip the synthetic scaling table")
    args = ap.parse_args()
    jit_compile_times()
    state = LayerState(20000.0, 220.0, 20.0)

    small = synthetic(50, 500, 510)
    g = spectral_grid(500, 510, 0.001)
    for method in ("direct", "fast"):
        dt, _ = timed(lambda: cross_section(small, g, state, method=method))
        print(f"first call ({method}), JIT compile or cache load included: {dt:.2f} s")

    print("\nlines  spacing[cm-1]  points   direct[s]  fast[s]  ratio  direct lines*pts/s  fast lines*pts/s  peak RSS[MB]")
    n = 1000
    while n <= args.max_lines and not args.only_production:
        width = 100.0
        lines = synthetic(n, 500 - 25, 500 + width + 25, seed=n)
        for spacing in (0.002, 0.0005):
            grid = spectral_grid(500, 500 + width, spacing)
            # direct cost ~ lines x points within the cut-off: time a tenth of the grid when it is large
            sub = grid if n * grid.size <= 2e9 else grid[: max(2, grid.size // 10)]
            dtd, _ = timed(lambda: cross_section(lines, sub, state, method="direct"))
            dtd *= grid.size / sub.size
            dtf, _ = timed(lambda: cross_section(lines, grid, state, method="fast"))
            within = n * min(1.0, 50.0 / (width + 50.0)) * grid.size
            rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
            print(f"{n:7d}  {spacing:10.4f}  {grid.size:8d}  {dtd:9.2f}  {dtf:7.2f}  {dtd / dtf:5.0f}  "
                  f"{within / dtd:16.3g}  {within / dtf:16.3g}  {rss:8.0f}")
        n *= 10

    print("\nrealistic layers (AFGL mid-latitude summer, every layer):")
    from specforce.atmosphere import layers, load_profile
    from specforce.builtin import builtin_spectroscopy
    from specforce.longwave import load_spectroscopy

    spec = builtin_spectroscopy()
    src = os.environ.get("SPECFORCE_TEST_LINES")
    if src:
        import tempfile

        from specforce.linestore import import_lines

        store = os.path.join(tempfile.mkdtemp(), "h2o.h5")
        import_lines([os.path.join(src, "h2o_HITRAN.par")], store)
        spec = spec.overridden_by(load_spectroscopy(store))
    lay = layers(load_profile("mls"))
    for lo in () if args.only_production else (300.0, 660.0, 1500.0):
        td = tf = 0.0
        for gas, ll in spec.lines.items():
            sel = ll.take((ll.wavenumber > lo - 25) & (ll.wavenumber < lo + 45))
            if len(sel) == 0:
                continue
            for i in range(lay.nlayers):
                st = LayerState(float(lay.pressure[i]), float(lay.temperature[i]))
                grid = spectral_grid(lo, lo + 20, 0.0005)
                a, _ = timed(lambda: cross_section(sel, grid, st, method="direct", options=LineShapeOptions()))
                b, _ = timed(lambda: cross_section(sel, grid, st, method="fast", options=LineShapeOptions()))
                td += a
                tf += b
        print(f"  {lo:6.0f}-{lo + 20:.0f} cm-1, gases {', '.join(spec.gases)}: direct {td:.2f} s, fast {tf:.2f} s, "
              f"ratio {td / max(tf, 1e-9):.0f}")

    pipeline_sample(spec, args.sample_every)


def pipeline_sample(spec, every):
    """The production path: the longwave pipeline's own blocks, adaptive grids and line sets.

    Every ``every``-th 5 cm-1 block of 10-3000 cm-1, every layer of the mid-latitude
    summer profile split in two (98 layers), every gas of the spectroscopy; only the
    cross-section sums are timed (the radiative transfer is the same for both methods).
    """
    import math

    from specforce.atmosphere import layers, load_profile, refine
    from specforce.longwave import Settings, _block_spacing, _cross_section_prepared, _Prepared

    settings = Settings()
    lay = layers(refine(load_profile("mls"), 2))
    options = settings.line_shape()
    lo, hi = settings.wavenumber_range
    edges = np.arange(lo, hi + 1e-9, settings.block_width)
    blocks = list(zip(edges[:-1], edges[1:]))[every // 2 :: every]
    td = tf = 0.0
    points = 0
    for blo, bhi in blocks:
        prepared = _Prepared(spec, lay, list(spec.lines), blo, bhi, options)
        h = _block_spacing(prepared, blo, bhi, settings)
        per_bin = max(1, int(math.ceil(settings.output_resolution / h)))
        step = settings.output_resolution / per_bin
        grid = blo + step * np.arange(int(round((bhi - blo) / step)) + 1)
        points += grid.size
        for params in prepared.merged:
            a, _ = timed(lambda: _cross_section_prepared(params, grid, step, "direct", options))
            b, _ = timed(lambda: _cross_section_prepared(params, grid, step, "fast", options))
            td += a
            tf += b
    scale = (len(edges) - 1) / len(blocks)
    print(f"\nproduction path, {len(blocks)} of {len(edges) - 1} blocks of {settings.block_width:g} cm-1 "
          f"(every {every}th), {lay.nlayers} layers, gases {', '.join(spec.lines)}, adaptive grid "
          f"({points:,} points in the sample):")
    print(f"  sample: direct {td:.1f} s, fast {tf:.1f} s, ratio {td / tf:.1f}")
    print(f"  whole 10-3000 cm-1 (scaled by {scale:.0f}): direct ~{td * scale / 60:.0f} min, fast ~{tf * scale:.0f} s")


def jit_compile_times():
    """First-call times in a fresh process with an empty numba cache: compilation alone."""
    import subprocess
    import sys
    import tempfile

    code = (
        "import time; t = time.perf_counter()\n"
        "import numpy as np\n"
        "from specforce.absorption import LayerState, cross_section, spectral_grid\n"
        "from specforce.linestore import LineList\n"
        "t_import = time.perf_counter() - t\n"
        "n = 5\n"
        "ll = LineList({'molecule': np.ones(n, np.uint8), 'isotopologue': np.ones(n, np.uint8),"
        " 'wavenumber': np.linspace(501, 509, n), 'intensity': np.full(n, 1e-20), 'lower_energy': np.zeros(n),"
        " 'gamma_air': np.full(n, 0.07), 'gamma_self': np.full(n, 0.3), 'n_air': np.full(n, 0.7),"
        " 'delta_air': np.zeros(n)})\n"
        "g = spectral_grid(500, 510, 0.001); st = LayerState(20000.0, 220.0, 20.0)\n"
        "out = [t_import]\n"
        "for m in ('direct', 'fast'):\n"
        "    t = time.perf_counter(); cross_section(ll, g, st, method=m); out.append(time.perf_counter() - t)\n"
        "print(*out)\n"
    )
    with tempfile.TemporaryDirectory() as cache:
        env = {**os.environ, "NUMBA_CACHE_DIR": cache}
        cold = subprocess.run([sys.executable, "-c", code], env=env, check=True, capture_output=True, text=True)
        warm = subprocess.run([sys.executable, "-c", code], env=env, check=True, capture_output=True, text=True)
    c, w = ([float(x) for x in r.stdout.split()] for r in (cold, warm))
    print(f"JIT, empty cache (compile): import {c[0]:.2f} s, direct {c[1]:.2f} s, fast {c[2]:.2f} s; "
          f"from the cache: import {w[0]:.2f} s, direct {w[1]:.2f} s, fast {w[2]:.2f} s")

if __name__ == "__main__":
    main()
