"""Benchmark: the Schwarzschild integrator on 60 layers x 1e6 wavenumbers x 3 angles.

Prints the compile-or-cache-load time of the first call and the median of five
timed runs (random optical depths 0-2, a 290-200 K temperature profile, the
10-3000 cm-1 range). Target: under 2 s on the project's 2-core machine.

    python benchmarks/bench_transfer.py
"""

import time

import numpy as np

from specforce.radiation.transfer import spectral_fluxes


def main():
    n, nlay = 1_000_000, 60
    tau = np.random.default_rng(0).uniform(0, 2, (nlay, n))
    nu = np.linspace(10, 3000, n)
    tlev = np.linspace(290, 200, nlay + 1)
    t = time.perf_counter()
    spectral_fluxes(nu[:1000], tau[:, :1000], tlev, 290.0)
    print(f"first call (compile or cache load): {time.perf_counter() - t:.2f} s")
    times = []
    for _ in range(5):
        t = time.perf_counter()
        spectral_fluxes(nu, tau, tlev, 290.0, keep_levels=[0, nlay])
        times.append(time.perf_counter() - t)
    print(f"{nlay} layers x {n:,} points x 3 angles: median {np.median(times):.2f} s "
          f"(min {min(times):.2f}, max {max(times):.2f})")


if __name__ == "__main__":
    main()
