"""Benchmark: several states of one column computed together, with and without gases shared by
some of the states (radiation.sharing), side by side in one process.

The states are the fast model's calibration states of one profile (a base state and its
changes: CO2 0.5x, 2x, 4x and 8x, CH4 and N2O pre-industrial, water 1.2x): each gas's base
amount is shared by most of them. "Without" computes every gas that not all the states share
for each state alone (specforce before the sharing). Printed: the time of each, the ratio, and
the largest difference of OLR and surface downward flux between the two.

    python benchmarks/bench_shared_states.py [--profile mls]
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def _without_groups(share):
    """``share_absorbers`` as before the sharing: a gas not all the states share is each one's own."""
    from specforce.radiation.column import Absorbers
    from specforce.radiation.sharing import StateAbsorbers

    def plain(columns, spectroscopy, settings):
        parts = share(columns, spectroscopy, settings)
        common = {g for g, _, _ in parts.shared.per_gas}
        own = [Absorbers(c, spectroscopy, [g for g in c.gases if g not in common], settings,
                         c.continuum and not (parts.shared.continuum or "H2O" in common)) for c in columns]
        return StateAbsorbers(parts.shared, own, [], [[] for _ in columns])

    return plain


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--profile", default="mls")
    args = ap.parse_args()
    import specforce
    import specforce.radiation.longwave as lw
    from specforce.kdist.cases import calibration_states

    spec = specforce.spectroscopy()
    base, pairs = calibration_states(specforce.load_profile(args.profile))
    states = [base] + [pert if b is base else b for b, pert in pairs.values()]
    settings = lw.Settings()
    print(f"{len(states)} states of {args.profile}, {settings.wavenumber_range[0]:g}-{settings.wavenumber_range[1]:g} "
          f"cm-1, {settings.threads or 'all'} threads")
    lw.compute_longwave_states(states[:2], spec, lw.Settings(wavenumber_range=(600.0, 700.0)))  # compile, warm
    share = lw.share_absorbers
    runs = {}
    for label, fn in (("without", _without_groups(share)), ("with", share)):
        lw.share_absorbers = fn
        t0 = time.perf_counter()
        runs[label] = (lw.compute_longwave_states(states, spec, settings), time.perf_counter() - t0)
    lw.share_absorbers = share
    (old, t_old), (new, t_new) = runs["without"], runs["with"]
    d_olr = max(abs(a.olr - b.olr) for a, b in zip(old, new))
    d_sd = max(abs(a.surface_down - b.surface_down) for a, b in zip(old, new))
    print(f"without sharing {t_old:.1f} s, with {t_new:.1f} s: {t_old / t_new:.2f}x")
    print(f"largest difference: OLR {d_olr:.2e}, surface downward flux {d_sd:.2e} W m-2")


if __name__ == "__main__":
    main()
