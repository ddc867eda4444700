"""Where doubling CO2 changes the OLR spectrum, seen as brightness temperature.

In the band wings the emission level rises into colder air, so the brightness
temperature falls and OLR drops: most of the forcing comes from there. At the
band centre (near 667 cm-1) the emission already comes from the stratosphere,
where temperature rises with height, so doubling raises the brightness
temperature there and OLR increases a little.

Run:  python examples/doubled_co2_brightness_temperature.py [--lines STORE] [--quick]
"""

import os
import time

import numpy as np

import specforce
from specforce.io.plots import plot_comparison, save_figure

from _common import parse


def main():
    args, spec, options = parse(__doc__.splitlines()[0])
    t0 = time.perf_counter()
    base = specforce.load_profile("mls")
    a = specforce.load_state(base, spectroscopy=spec, label="mid-latitude summer", **options)
    b = specforce.load_state(base.with_vmr("CO2", 2 * base.vmr["CO2"]), spectroscopy=spec, label="doubled CO2",
                             **options)
    comparison = specforce.compare_olr(a, b, resolution=5.0)
    d = comparison.to_dataset()
    dtb = d["brightness_temperature_difference_smoothed"]
    nu = d["wavenumber_smoothed"].values
    centre = (nu > 660) & (nu < 675)
    wings = ((nu > 590) & (nu < 640)) | ((nu > 700) & (nu < 760))
    print(f"OLR change {d.attrs['olr_difference_W_m2']:+.3f} W m-2 (the instantaneous top-of-atmosphere forcing "
          f"is its negative)")
    print(f"  brightness-temperature change, band centre 660-675 cm-1: {float(np.mean(dtb[centre])):+.2f} K")
    print(f"  brightness-temperature change, band wings 590-640 and 700-760 cm-1: {float(np.mean(dtb[wings])):+.2f} K")
    for name, diff in zip(d["band"].values, d["band_difference"].values):
        print(f"  {name:<18} {float(diff):+8.3f} W m-2")
    out = os.path.join(args.output, "doubled_co2_brightness_temperature.png")
    save_figure(plot_comparison(comparison, "OLR: doubled CO2 minus mid-latitude summer"), out)
    print(f"wrote {out} ({time.perf_counter() - t0:.1f} s)")


if __name__ == "__main__":
    main()
