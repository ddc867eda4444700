"""Benchmark and measurement of the built-in (generated) spectroscopy.

Prints, for each generated molecule, the number of lines and the generation
time; the CH4 forcing (722 -> 1866 ppb, AFGL mid-latitude summer, 1150-1450
cm-1, with the built-in H2O lines) with and without the tetrahedral split of
the CH4 lines; and, when SPECFORCE_TEST_LINES names the folder of the real
line lists, the H2O-only OLR and surface downward flux of the mid-latitude
summer profile (10-3000 cm-1, no continuum) with the generated and the real
water lines.

    python benchmarks/bench_builtin.py [--skip-olr]
"""

import argparse
import copy
import os
import time

from specforce.io.profiles import load_profile
from specforce.molecular.builtin import GENERATED_MOLECULES
from specforce.forcing.instantaneous import instantaneous_forcing
from specforce.forcing.scenario import apply_perturbations, parse_change
from specforce.molecular.linegen.asymmetric import generate_h2o
from specforce.molecular.linegen.spherical import generate_ch4, load_ch4_table
from specforce.molecular.lines import Spectroscopy
from specforce.io.linestore import load_spectroscopy
from specforce.radiation.longwave import Settings, compute_longwave


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--skip-olr", action="store_true", help="skip the full-range H2O-only OLR comparison")
    args = ap.parse_args()
    for name, (generate, _) in GENERATED_MOLECULES.items():
        t = time.perf_counter()
        lines = generate()
        print(f"{name}: {len(lines)} lines generated in {time.perf_counter() - t:.3f} s")

    water = generate_h2o()
    prof = load_profile("mls")
    settings = Settings(wavenumber_range=(1150.0, 1450.0), continuum=False)
    base, pert = apply_perturbations(prof, [parse_change("CH4", "722ppb:1866ppb")])
    table, _ = load_ch4_table()
    for split in (True, False):
        tab = copy.deepcopy(table)
        tab["fine_structure"]["split"] = split
        spec = Spectroscopy({"H2O": water, "CH4": generate_ch4(tab)}, {"kind": "benchmark"})
        t = time.perf_counter()
        r = instantaneous_forcing(base, pert, spec, settings)
        print(f"CH4 722->1866 ppb, mls, 1150-1450 cm-1, tetrahedral split {'on ' if split else 'off'}: "
              f"TOA {r.toa:.4f}, tropopause {r.tropopause:.4f}, surface {r.surface:.4f} W m-2 "
              f"({time.perf_counter() - t:.1f} s)")

    folder = os.environ.get("SPECFORCE_TEST_LINES")
    if args.skip_olr or not folder:
        print("H2O-only OLR comparison skipped (give SPECFORCE_TEST_LINES and drop --skip-olr)")
        return
    import tempfile

    from specforce.io.lineimport import import_lines

    full = Settings(continuum=False)
    with tempfile.TemporaryDirectory() as tmp:
        store = os.path.join(tmp, "h2o.h5")
        import_lines([os.path.join(folder, "h2o_HITRAN.par")], store)
        for label, spec in (("generated", Spectroscopy({"H2O": water}, {"kind": "generated"})),
                            ("real list", load_spectroscopy(store))):
            t = time.perf_counter()
            r = compute_longwave(prof, spec, full)
            print(f"H2O-only mls 10-3000 cm-1, {label:>9}: OLR {r.olr:.2f}, surface down {r.surface_down:.2f} W m-2 "
                  f"({time.perf_counter() - t:.0f} s)")


if __name__ == "__main__":
    main()
