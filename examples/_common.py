"""Shared command-line handling of the example scripts (not part of specforce)."""

import argparse
import os


def parse(description):
    """Parse --lines, --quick and --output; return (args, spectroscopy, options)."""
    import specforce

    ap = argparse.ArgumentParser(description=description)
    ap.add_argument("--lines", help="a line store with water vapour (specforce lines import); default built-in lines")
    ap.add_argument("--quick", action="store_true",
                    help="a coarse, narrow-band run (600-740 cm-1, fixed 0.005 cm-1 grid) to check the script works")
    ap.add_argument("--output", default=".", help="folder for the figure (default: here)")
    args = ap.parse_args()
    os.makedirs(args.output, exist_ok=True)
    spec = specforce.spectroscopy(lines=args.lines)
    options = {"wavenumber_range": (600.0, 740.0), "spacing": 0.005, "continuum": False} if args.quick else {}
    return args, spec, options
