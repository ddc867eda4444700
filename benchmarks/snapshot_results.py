"""Behaviour check for refactors: every number of a fixed set of runs, saved and compared.

Runs a fixed set of OLR, forcing, per-gas, sweep and comparison calculations through the
public API (names that a refactor keeps), and saves every numeric variable of each result's
``to_dataset()`` (fluxes, forcings, heating rates, spectra, refits) to a ``.npz`` file. Run it
on the code before a change with ``--save``, on the code after with ``--compare``, and it
prints the largest relative difference of each variable and whether all are within the
tolerance (1e-12 relative by default; a difference is taken relative to the larger of the
variable's largest magnitude and 1e-30).

    python benchmarks/snapshot_results.py --save before.npz            # on the old code
    python benchmarks/snapshot_results.py --compare before.npz         # on the new code
    python benchmarks/snapshot_results.py --save before.npz --slow     # + adjusted forcing and responses
"""

from __future__ import annotations

import argparse
import os
import sys
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
CONTINUUM = os.path.join(HERE, "..", "examples", "invented_continuum_table.txt")


def _cases(slow):
    """(name, callable returning a result with to_dataset()) for each run."""
    import specforce

    spec = specforce.spectroscopy()
    spec_table = specforce.spectroscopy(continuum_table=CONTINUUM)
    cases = [
        ("olr_mls", lambda: specforce.olr("mls", spectroscopy=spec)),
        ("olr_saw_uniform_660_680", lambda: specforce.olr("saw", spectroscopy=spec, grid="uniform",
                                                         wavenumber_range=(660.0, 680.0))),
        ("olr_tropical_direct_600_620", lambda: specforce.olr("tropical", spectroscopy=spec, method="direct",
                                                             wavenumber_range=(600.0, 620.0))),
        ("olr_mlw_nochi_nocutoff_550_800", lambda: specforce.olr("mlw", spectroscopy=spec, co2_chi=False, cutoff=None,
                                                                wavenumber_range=(550.0, 800.0))),
        ("olr_usstd_table_10_1100", lambda: specforce.olr("usstd", spectroscopy=spec_table,
                                                          wavenumber_range=(10.0, 1100.0))),
        ("forcing_mls_2xco2", lambda: specforce.radiative_forcing("mls", {"CO2": "2x"}, spectroscopy=spec)),
        ("forcing_tropical_ch4_n2o_per_gas_1000_1500", lambda: specforce.radiative_forcing(
            "tropical", {"CH4": "722ppb:1866ppb", "N2O": "270ppb:332ppb"}, spectroscopy=spec, per_gas=True,
            wavenumber_range=(1000.0, 1500.0))),
        ("forcing_sas_h2o_10_800", lambda: specforce.radiative_forcing("sas", {"H2O": "1.2x"}, spectroscopy=spec,
                                                                       wavenumber_range=(10.0, 800.0), nodes=4)),
        ("sweep_co2_mls_saw_500_1000", lambda: specforce.sweep_concentrations(
            "CO2", [139.0, 278.0, 556.0, 1112.0], ["mls", "saw"], spec, wavenumber_range=(500.0, 1000.0))),
        ("compare_tropical_saw_500_1000", lambda: specforce.compare_olr(
            "tropical", "saw", spectroscopy=spec, resolution=10, wavenumber_range=(500.0, 1000.0))),
    ]
    if slow:
        cases += [
            ("forcing_mls_2xco2_adjusted_responses", lambda: specforce.radiative_forcing(
                "mls", {"CO2": "2x"}, spectroscopy=spec, adjusted=True, responses=True)),
        ]
    return cases


def _arrays(dataset, prefix):
    out = {}
    for name, var in list(dataset.data_vars.items()) + list(dataset.coords.items()):
        values = np.asarray(var.values)
        if values.dtype.kind in "fiu":
            out[f"{prefix}/{name}"] = values.astype(float)
    return out


def run(slow):
    arrays = {}
    for name, make in _cases(slow):
        t0 = time.perf_counter()
        res = make()
        arrays.update(_arrays(res.to_dataset(), name))
        print(f"  {name}: {time.perf_counter() - t0:.1f} s", flush=True)
    return arrays


def compare(old, new, rtol):
    worst, bad = 0.0, []
    for key in sorted(set(old) | set(new)):
        if key not in new or key not in old:
            bad.append(f"{key}: only in {'the saved snapshot' if key in old else 'this run'}")
            continue
        a, b = old[key], new[key]
        if a.shape != b.shape:
            bad.append(f"{key}: shape {a.shape} -> {b.shape}")
            continue
        scale = max(float(np.nanmax(np.abs(a))) if a.size else 0.0, 1e-30)
        same_nan = np.array_equal(np.isnan(a), np.isnan(b))
        diff = float(np.nanmax(np.abs(a - b))) / scale if a.size else 0.0
        worst = max(worst, diff)
        if diff > rtol or not same_nan:
            bad.append(f"{key}: largest relative difference {diff:.3e}")
    return worst, bad


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--save", help="write the snapshot to this .npz file")
    ap.add_argument("--compare", help="compare this run with a saved .npz snapshot")
    ap.add_argument("--slow", action="store_true", help="also adjusted forcing and responses (about 4 minutes more)")
    ap.add_argument("--rtol", type=float, default=1e-12)
    args = ap.parse_args(argv)
    if not (args.save or args.compare):
        ap.error("give --save FILE or --compare FILE")
    t0 = time.perf_counter()
    arrays = run(args.slow)
    print(f"{len(arrays)} variables in {time.perf_counter() - t0:.0f} s")
    if args.save:
        np.savez_compressed(args.save, **arrays)
        print(f"saved {args.save}")
    if args.compare:
        with np.load(args.compare) as f:
            old = {k: f[k] for k in f.files}
        worst, bad = compare(old, arrays, args.rtol)
        print(f"compared {len(old)} saved variables: largest relative difference {worst:.3e} (tolerance {args.rtol:g})")
        for line in bad:
            print("  DIFFERS " + line)
        return 1 if bad else 0
    return 0


if __name__ == "__main__":
    sys.exit(main())
