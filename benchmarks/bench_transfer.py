"""Benchmark: the Schwarzschild integrator on 60 layers x 1e6 wavenumbers x 3 angles.

Prints the compile-or-cache-load time of the first call and the median of five timed runs
(random optical depths, a 290-200 K temperature profile, the 10-3000 cm-1 range) of the
current kernel and, side by side in the same run, of the kernel of main e747336
(benchmarks/_old_transfer_kernel.py: scalar libm exp, one point at a time), on one thread,
with the ratio and the largest relative difference of their fluxes. Two sets of optical
depths: uniform 0-2, and log-uniform 1e-5-100 (transparent to opaque, as line spectra are).
Target: under 2 s on the project's 2-core machine.

    python benchmarks/bench_transfer.py
"""

import os
import sys
import time

import numpy as np

from specforce.radiation import transfer
from specforce.radiation.transfer import angular_quadrature, spectral_fluxes, trapezoid_weights

sys.path.insert(0, os.path.dirname(__file__))
from _old_transfer_kernel import _rt_run as _old_rt_run  # noqa: E402


def _kernel_run(kernel, nu, w, tau, tlev, keep):
    """One thread, the whole range in one run: (seconds, up spectra, down spectra, broadband up)."""
    mu, wts = angular_quadrature(3, False)
    su, sd = np.zeros((keep.size, nu.size)), np.zeros((keep.size, nu.size))
    pu, pd = np.zeros(tlev.size), np.zeros(tlev.size)
    t = time.perf_counter()
    kernel(nu, w, tau, tlev, 290.0, 1.0, mu, wts, keep, 0, nu.size, su, sd, pu, pd)
    return time.perf_counter() - t, su, sd, pu


def main():
    n, nlay = 1_000_000, 60
    rng = np.random.default_rng(0)
    nu = np.linspace(10, 3000, n)
    w = trapezoid_weights(nu)
    tlev = np.linspace(290, 200, nlay + 1)
    keep = np.array([0, nlay], dtype=np.int64)
    tau = rng.uniform(0, 2, (nlay, n))
    t = time.perf_counter()
    spectral_fluxes(nu[:1000], tau[:, :1000], tlev, 290.0)
    print(f"first call (compile or cache load): {time.perf_counter() - t:.2f} s")
    times = []
    for _ in range(5):
        t = time.perf_counter()
        spectral_fluxes(nu, tau, tlev, 290.0, keep_levels=[0, nlay])
        times.append(time.perf_counter() - t)
    print(f"{nlay} layers x {n:,} points x 3 angles, every core: median {np.median(times):.2f} s "
          f"(min {min(times):.2f}, max {max(times):.2f})")
    print("\nOne thread, old kernel (main e747336) and new, median of 3:")
    print(f"{'optical depths':24s} {'old s':>7s} {'new s':>7s} {'ratio':>6s} {'max rel diff':>13s}")
    sets = {"uniform 0-2": tau, "log-uniform 1e-5-100": 10.0 ** rng.uniform(-5, 2, (nlay, n))}
    for name, tt in sets.items():
        runs = {}
        for label, kernel in (("old", _old_rt_run), ("new", transfer._rt_run)):
            _kernel_run(kernel, nu[:100], w[:100], np.ascontiguousarray(tt[:, :100]), tlev, keep)  # compile
            res = [_kernel_run(kernel, nu, w, tt, tlev, keep) for _ in range(3)]
            runs[label] = (float(np.median([r[0] for r in res])), res[-1][1:])
        diff = max(float(np.max(np.abs(a - b) / np.maximum(np.abs(a), 1e-300)))
                   for a, b in zip(runs["old"][1], runs["new"][1]))
        print(f"{name:24s} {runs['old'][0]:7.2f} {runs['new'][0]:7.2f} {runs['old'][0] / runs['new'][0]:6.2f} "
              f"{diff:13.1e}")


if __name__ == "__main__":
    main()
