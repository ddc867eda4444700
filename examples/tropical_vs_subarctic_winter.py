"""The OLR spectra of the tropical and subarctic-winter atmospheres, compared band by band.

Run:  python examples/tropical_vs_subarctic_winter.py [--lines STORE] [--quick]
"""

import os
import time

import specforce
from specforce.io.plots import plot_comparison, save_figure

from _common import parse


def main():
    args, spec, options = parse(__doc__.splitlines()[0])
    t0 = time.perf_counter()
    d = specforce.compare_olr("tropical", "saw", resolution=10.0, spectroscopy=spec, **options)
    s = d.to_dict()
    print(f"OLR tropical {s['olr_a_W_m2']:.2f}, subarctic winter {s['olr_b_W_m2']:.2f}, "
          f"difference {s['olr_difference_W_m2']:+.2f} W m-2")
    for b in s["bands"]:
        print(f"  {b['band']:<18} {b['lower_cm-1']:6.0f}-{b['upper_cm-1']:<6.0f} {b['difference_W_m2']:+9.3f} W m-2")
    out = os.path.join(args.output, "tropical_vs_subarctic_winter.png")
    save_figure(plot_comparison(d, "OLR: subarctic winter minus tropical"), out)
    print(f"wrote {out} ({time.perf_counter() - t0:.1f} s)")


if __name__ == "__main__":
    main()
