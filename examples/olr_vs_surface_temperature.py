"""Clear-sky OLR against surface temperature at fixed relative humidity.

Warms the mid-latitude summer profile (surface and atmosphere together) in
steps, keeps each level's relative humidity, and plots OLR against surface
temperature with a straight-line fit. Koll & Cronin (2018, PNAS 115, 10293)
find clear-sky OLR nearly linear in surface temperature at fixed relative
humidity, with a slope of about 2.2 W m-2 K-1 (recalled from memory), because
water vapour closes the windows as the surface warms.

Uniform warming is a simplification of ours: Koll & Cronin warm along moist
adiabats. The water-vapour effect needs water lines: run with --lines and a
store holding them. With the built-in lines only (CO2), the slope is close to
that of a surface radiating through a CO2-only atmosphere, which is larger.

Run:  python examples/olr_vs_surface_temperature.py [--lines STORE] [--quick]
"""

import os
import time

import numpy as np

import specforce
from specforce.forcing.scenario import Perturbation, apply_perturbations

from _common import parse


def main():
    args, spec, options = parse(__doc__.splitlines()[0])
    t0 = time.perf_counter()
    base = specforce.load_profile("mls")
    warmings = [-10.0, 0.0, 10.0] if args.quick else [-20.0, -15.0, -10.0, -5.0, 0.0, 5.0, 10.0]
    ts, olr = [], []
    for dt in warmings:
        _, warm = apply_perturbations(base, [Perturbation("T", "warm", dt, fixed_rh=True)])
        result = specforce.olr(warm, spectroscopy=spec, **options)
        ts.append(warm.surface_temperature)
        olr.append(result.olr)
        print(f"  surface {warm.surface_temperature:6.1f} K   OLR {olr[-1]:8.3f} W m-2")
    slope, intercept = np.polyfit(ts, olr, 1)
    print(f"OLR slope at fixed relative humidity: {slope:.2f} W m-2 K-1 "
          f"(Koll & Cronin 2018 give about 2.2 for fixed RH, from memory)")

    from matplotlib.figure import Figure  # no pyplot: the reader's backend stays as it is

    from specforce.io.plots import save_figure

    fig = Figure(figsize=(6, 4.5))
    ax = fig.subplots()
    ax.plot(ts, olr, "o", label="specforce, clear sky")
    x = np.array([min(ts), max(ts)])
    ax.plot(x, slope * x + intercept, "--", label=f"fit: {slope:.2f} W m$^{{-2}}$ K$^{{-1}}$")
    ax.set_xlabel("surface temperature [K]")
    ax.set_ylabel("OLR [W m$^{-2}$]")
    ax.set_title("Mid-latitude summer warmed at fixed relative humidity")
    ax.legend()
    fig.tight_layout()
    out = os.path.join(args.output, "olr_vs_surface_temperature.png")
    save_figure(fig, out)
    print(f"wrote {out} ({time.perf_counter() - t0:.1f} s)")


if __name__ == "__main__":
    main()
