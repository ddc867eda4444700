"""Comparisons of two OLR spectra as files and text: an :class:`xarray.Dataset`, a JSON-ready dict and a band table.

The one rendering of :class:`specforce.forcing.compare.Comparison`; its ``to_dataset()``,
``to_dict()`` and ``summary()`` call these.
"""

from __future__ import annotations

import json

from .ktables import fast_model_lines
from .results import CAUTION

__all__ = ["comparison_dataset", "comparison_dict", "comparison_text"]


def comparison_dataset(comparison):
    """An :class:`xarray.Dataset` of a comparison: spectra, brightness temperatures and band sums.

    Dimensions ``wavenumber`` and ``band`` (and ``wavenumber_smoothed`` when the
    comparison has a resolution [cm-1]).
    """
    import xarray as xr

    from ..radiation.transfer import brightness_temperature

    c = comparison
    nu, ya, yb = c.wavenumber, c.olr_spectrum_a, c.olr_spectrum_b
    tb_a, tb_b = brightness_temperature(nu, ya), brightness_temperature(nu, yb)
    bt = {"units": "K", "standard_name": "toa_brightness_temperature"}
    data = {
        "olr_spectrum_a": ("wavenumber", ya, {"units": "W m-2 (cm-1)-1", "long_name": f"OLR spectrum, {c.label_a}"}),
        "olr_spectrum_b": ("wavenumber", yb, {"units": "W m-2 (cm-1)-1", "long_name": f"OLR spectrum, {c.label_b}"}),
        "olr_difference": ("wavenumber", yb - ya, {"units": "W m-2 (cm-1)-1", "long_name": "OLR, B minus A"}),
        "brightness_temperature_a": ("wavenumber", tb_a, bt),
        "brightness_temperature_b": ("wavenumber", tb_b, bt),
        "brightness_temperature_difference": ("wavenumber", tb_b - tb_a, {"units": "K", "long_name": "B minus A"}),
        "band_olr_a": ("band", [b[3] for b in c.bands], {"units": "W m-2"}),
        "band_olr_b": ("band", [b[4] for b in c.bands], {"units": "W m-2"}),
        "band_difference": ("band", [b[4] - b[3] for b in c.bands],
                            {"units": "W m-2", "long_name": "OLR in the band, B minus A"}),
    }
    coords = {
        "wavenumber": ("wavenumber", nu, {"units": "cm-1", "long_name": "output bin centre"}),
        "band": ("band", [b[0] for b in c.bands]),
        "band_lower": ("band", [b[1] for b in c.bands], {"units": "cm-1"}),
        "band_upper": ("band", [b[2] for b in c.bands], {"units": "cm-1"}),
    }
    if c.resolution:
        nu_s, ya_s, yb_s = c.smoothed_spectra()
        coords["wavenumber_smoothed"] = ("wavenumber_smoothed", nu_s, {"units": "cm-1"})
        data["brightness_temperature_difference_smoothed"] = (
            "wavenumber_smoothed", brightness_temperature(nu_s, yb_s) - brightness_temperature(nu_s, ya_s),
            {"units": "K", "long_name": f"B minus A, from fluxes averaged over {c.resolution:g} cm-1"})
    return xr.Dataset(data, coords=coords, attrs={
        "Conventions": "CF-1.10",
        "title": f"specforce OLR comparison: {c.label_b} minus {c.label_a}",
        "source": "specforce: line-by-line clear-sky longwave radiative transfer",
        "comment": CAUTION,
        "label_a": c.label_a, "label_b": c.label_b,
        "olr_a_W_m2": c.olr_a, "olr_b_W_m2": c.olr_b, "olr_difference_W_m2": c.olr_difference,
        "provenance_a": c.provenance_a, "provenance_b": c.provenance_b,
        "smoothing_cm-1": float(c.resolution or 0.0),
    })


def _provenance(text):
    """A state's provenance (JSON text, as the state's file holds it) read back; the text itself if not JSON."""
    try:
        return json.loads(text) if text else None
    except ValueError:
        return text


def comparison_dict(comparison):
    """The scalars and band table of a comparison, JSON-ready."""
    c = comparison
    return {
        "label_a": c.label_a, "label_b": c.label_b,
        "olr_a_W_m2": c.olr_a, "olr_b_W_m2": c.olr_b, "olr_difference_W_m2": c.olr_difference,
        "bands": [{"band": n, "lower_cm-1": lo, "upper_cm-1": hi, "olr_a_W_m2": a, "olr_b_W_m2": b,
                   "difference_W_m2": b - a} for n, lo, hi, a, b in c.bands],
        "provenance_a": _provenance(c.provenance_a), "provenance_b": _provenance(c.provenance_b),
        **({"fast_model": _fast(c)} if _fast(c) else {}),
        "caution": CAUTION,
    }


def _fast(c):
    """What the fast model says of itself where either state was computed by it."""
    provs = [p for p in (_provenance(c.provenance_a), _provenance(c.provenance_b)) if isinstance(p, dict)]
    return fast_model_lines(provs)


def comparison_text(comparison):
    """A comparison as a band table, in text."""
    c = comparison
    lines = [f"A: {c.label_a}", f"B: {c.label_b}",
             f"  OLR A {c.olr_a:.3f}, B {c.olr_b:.3f}, B - A {c.olr_difference:+.3f} W m-2",
             f"  {'band':<18} {'cm-1':>11} {'A':>9} {'B':>9} {'B - A':>8}  [W m-2]"]
    for n, lo, hi, a, b in c.bands:
        lines.append(f"  {n:<18} {lo:5.0f}-{hi:<5.0f} {a:9.3f} {b:9.3f} {b - a:+8.3f}")
    lines.append(f"  {'sum of bands':<30} {sum(b - a for _, _, _, a, b in c.bands):+8.3f}")
    lines += [f"  {x}" for x in _fast(c)]
    lines.append(f"  {CAUTION}")
    return "\n".join(lines)
