"""Comparing two OLR spectra: broadband, by band and as brightness temperature.

Two states (two profiles, two gas amounts, two line-data sources, a warming
with and without water-vapour change) are compared through their OLR spectra on
the same output bins. :func:`compare_spectra` answers "where in the spectrum,
and by how much": the broadband OLR of each and their difference, the
difference summed over bands, and the brightness-temperature difference
spectrum, optionally smoothed.

Default bands
-------------
:data:`DEFAULT_BANDS` split 10-3000 cm-1 into the regions a radiation scientist
names when reading an OLR spectrum (edges are conventional round numbers,
common practice; no single source):

==========================  ===============  ==========================================
band                        cm-1             what dominates there
==========================  ===============  ==========================================
water rotational            10-550           H2O pure rotation lines
CO2 low wing                550-630          CO2 nu2 P branch and hot bands, H2O
CO2 centre                  630-710          CO2 nu2 Q branch, stratospheric emission
CO2 high wing               710-800          CO2 nu2 R branch and hot bands
window                      800-1000         H2O continuum, weak lines
ozone                       1000-1080        O3 nu3 (9.6 um)
window upper                1080-1250        H2O continuum, CO2 10 um bands
water nu2                   1250-2000        H2O bending band (CH4, N2O near 1300)
short-wave tail             2000-3000        CO2 nu3 (2349), little energy
==========================  ===============  ==========================================

Bands are clipped to the compared range; a band outside it is left out. The
band sums add up to the broadband difference because the bins tile the range.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import ComparisonError

__all__ = ["DEFAULT_BANDS", "Comparison", "band_sums", "bands_from_edges", "compare_spectra", "smooth_to_resolution"]

#: Default bands (name, lower edge, upper edge) [cm-1]; see the module notes.
DEFAULT_BANDS = (
    ("water rotational", 10.0, 550.0),
    ("CO2 low wing", 550.0, 630.0),
    ("CO2 centre", 630.0, 710.0),
    ("CO2 high wing", 710.0, 800.0),
    ("window", 800.0, 1000.0),
    ("ozone", 1000.0, 1080.0),
    ("window upper", 1080.0, 1250.0),
    ("water nu2", 1250.0, 2000.0),
    ("short-wave tail", 2000.0, 3000.0),
)


def bands_from_edges(edges):
    """Bands named by their edges from a rising list of edges [cm-1].

    Examples
    --------
    >>> bands_from_edges([500, 600, 700])
    (('500-600', 500.0, 600.0), ('600-700', 600.0, 700.0))
    """
    e = [float(x) for x in edges]
    if len(e) < 2 or any(b <= a for a, b in zip(e, e[1:])) or e[0] < 0:
        raise ComparisonError(f"band edges must be at least two rising, non-negative wavenumbers [cm-1], got {edges!r}")
    return tuple((f"{a:g}-{b:g}", a, b) for a, b in zip(e, e[1:]))


def _bin_edges(wavenumber):
    nu = np.asarray(wavenumber, dtype=float)
    if nu.size < 2:
        raise ComparisonError("a spectrum needs at least two bins")
    width = np.diff(nu)
    if not np.allclose(width, width[0], rtol=1e-6):
        raise ComparisonError("spectra must be on evenly spaced bins (as specforce writes them)")
    w = float(width[0])
    return nu - 0.5 * w, nu + 0.5 * w, w


def band_sums(wavenumber, spectrum, bands=DEFAULT_BANDS):
    """Integral of a binned spectrum over each band [W m-2].

    Bins are assigned to a band by their centre, so each bin counts once.

    Parameters
    ----------
    wavenumber : array_like
        Bin centres, evenly spaced [cm-1].
    spectrum : array_like
        Bin-averaged spectral flux [W m-2 (cm-1)-1].
    bands : sequence of (name, lower, upper)
        [cm-1].

    Returns
    -------
    list of (name, lower, upper, value)
        Only bands that hold at least one bin; edges clipped to the spectrum.
    """
    nu = np.asarray(wavenumber, dtype=float)
    lo_edges, hi_edges, width = _bin_edges(nu)
    y = np.asarray(spectrum, dtype=float)
    out = []
    for name, lo, hi in bands:
        sel = (nu >= lo) & (nu < hi)
        if np.any(sel):
            out.append((name, max(lo, float(lo_edges[sel][0])), min(hi, float(hi_edges[sel][-1])),
                        float(np.sum(y[sel]) * width)))
    return out


def smooth_to_resolution(wavenumber, spectrum, resolution):
    """Average a binned spectrum into wider bins of ``resolution`` [cm-1].

    Returns the new bin centres and the averaged spectrum; the last, partial
    bin averages what it holds.

    Examples
    --------
    >>> smooth_to_resolution([0.5, 1.5, 2.5, 3.5], [1.0, 3.0, 5.0, 7.0], 2.0)
    (array([1., 3.]), array([2., 6.]))
    """
    nu = np.asarray(wavenumber, dtype=float)
    _, _, width = _bin_edges(nu)
    n = max(1, int(round(resolution / width)))
    y = np.asarray(spectrum, dtype=float)
    groups = np.arange(nu.size) // n
    count = np.bincount(groups)
    return np.bincount(groups, nu) / count, np.bincount(groups, y) / count


@dataclass(frozen=True)
class Comparison:
    """Two OLR spectra compared (state B minus state A).

    Attributes
    ----------
    label_a, label_b : str
    wavenumber : numpy.ndarray
        Output bin centres [cm-1].
    olr_spectrum_a, olr_spectrum_b : numpy.ndarray
        [W m-2 (cm-1)-1].
    olr_a, olr_b : float
        Broadband OLR [W m-2].
    bands : tuple of (name, lower, upper, a, b)
        Band edges [cm-1] and OLR in each band [W m-2], bands tiling the range.
    resolution : float or None
        Resolution of the smoothed brightness-temperature difference [cm-1].
    provenance_a, provenance_b : str
        Each state's provenance (JSON).
    """

    label_a: str
    label_b: str
    wavenumber: np.ndarray
    olr_spectrum_a: np.ndarray
    olr_spectrum_b: np.ndarray
    olr_a: float
    olr_b: float
    bands: tuple
    resolution: float | None = None
    provenance_a: str = field(default="", repr=False)
    provenance_b: str = field(default="", repr=False)

    @property
    def olr_difference(self):
        """OLR of B minus A [W m-2]."""
        return self.olr_b - self.olr_a

    def smoothed_spectra(self):
        """Both OLR spectra averaged over ``resolution`` [cm-1]: (centres [cm-1], A, B [W m-2 (cm-1)-1])."""
        nu_s, ya_s = smooth_to_resolution(self.wavenumber, self.olr_spectrum_a, self.resolution)
        _, yb_s = smooth_to_resolution(self.wavenumber, self.olr_spectrum_b, self.resolution)
        return nu_s, ya_s, yb_s

    def to_dataset(self):
        """An :class:`xarray.Dataset`: spectra, brightness temperatures and band sums
        (see :func:`specforce.io.comparison_results.comparison_dataset`)."""
        from ..io.comparison_results import comparison_dataset

        return comparison_dataset(self)

    def to_dict(self):
        """The scalars and band table, JSON-ready."""
        from ..io.comparison_results import comparison_dict

        return comparison_dict(self)

    def summary(self):
        """The comparison as a band table, in text."""
        from ..io.comparison_results import comparison_text

        return comparison_text(self)


def _as_dataset(state):
    if hasattr(state, "to_dataset"):
        ds = state.to_dataset()
        ds.attrs.setdefault("label", ds.attrs.get("profile", ""))
        return ds
    return state


def compare_spectra(a, b, bands=DEFAULT_BANDS, resolution=None):
    """Compare two OLR spectra (state B minus state A).

    Parameters
    ----------
    a, b : LongwaveResult or xarray.Dataset
        Results, or datasets with ``olr_spectrum`` [W m-2 (cm-1)-1] on a ``wavenumber``
        coordinate [cm-1] (as :meth:`specforce.radiation.longwave_result.LongwaveResult.to_dataset`
        makes them) and a ``label`` attribute (else the profile's name, or "A" and "B").
    bands : sequence of (name, lower, upper)
        Bands for the summaries [cm-1]; default :data:`DEFAULT_BANDS`.
    resolution : float, optional
        Also give the brightness-temperature difference smoothed to this
        resolution [cm-1] (in the dataset).

    Returns
    -------
    Comparison
    """
    a, b = _as_dataset(a), _as_dataset(b)
    nu_a = np.asarray(a["wavenumber"].values, dtype=float)
    nu_b = np.asarray(b["wavenumber"].values, dtype=float)
    if nu_a.shape != nu_b.shape or not np.allclose(nu_a, nu_b, rtol=0, atol=1e-6):
        raise ComparisonError(
            f"the two spectra are on different bins ({nu_a.size} bins {nu_a[0]:g}-{nu_a[-1]:g} cm-1 against "
            f"{nu_b.size} bins {nu_b[0]:g}-{nu_b[-1]:g}); compute both with the same --range and output resolution")
    ya = np.asarray(a["olr_spectrum"].values, dtype=float)
    yb = np.asarray(b["olr_spectrum"].values, dtype=float)
    _, _, width = _bin_edges(nu_a)
    sums_a = band_sums(nu_a, ya, bands)
    sums_b = band_sums(nu_a, yb, bands)
    return Comparison(
        label_a=str(a.attrs.get("label", "A")), label_b=str(b.attrs.get("label", "B")), wavenumber=nu_a,
        olr_spectrum_a=ya, olr_spectrum_b=yb,
        olr_a=float(a.attrs.get("olr_W_m2", np.sum(ya) * width)), olr_b=float(b.attrs.get("olr_W_m2", np.sum(yb) * width)),
        bands=tuple((sa[0], sa[1], sa[2], sa[3], sb[3]) for sa, sb in zip(sums_a, sums_b)),
        resolution=resolution or None,
        provenance_a=str(a.attrs.get("provenance", "")), provenance_b=str(b.attrs.get("provenance", "")))
