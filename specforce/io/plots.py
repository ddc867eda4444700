"""Matplotlib figures: spectra as brightness temperature, differences, profiles.

Each plot function takes a result (:class:`~specforce.radiation.longwave.LongwaveResult`,
:class:`~specforce.forcing.instantaneous.ForcingResult`,
:class:`~specforce.forcing.sweep.SweepResult`, :class:`~specforce.forcing.compare.Comparison`)
and returns its :class:`matplotlib.figure.Figure` without saving it, so that a notebook user
can restyle it; :func:`save_figure` writes one atomically (the command line does). Figures
are made without pyplot: the user's matplotlib backend is never switched.
"""

from __future__ import annotations

import os

import numpy as np

from .files import atomic_path, check_output_path
from ..radiation.transfer import brightness_temperature, planck

__all__ = ["plot_olr_spectrum", "plot_forcing", "plot_sweep", "plot_comparison", "save_figure", "FIGURE_SUFFIXES"]


def _smooth(y, n):
    if n <= 1:
        return y
    # running mean that averages only over the points present at the ends (no zero padding)
    k = np.ones(n)
    good = np.isfinite(y)
    total = np.convolve(np.where(good, y, 0.0), k, mode="same")
    count = np.convolve(good.astype(float), k, mode="same")
    with np.errstate(invalid="ignore", divide="ignore"):
        return total / count


def plot_olr_spectrum(result, title=None, smooth_bins=10, reference_temperatures=(200, 225, 250, 275, 300)):
    """Plot one or more OLR spectra as brightness temperature, with blackbody curves.

    Parameters
    ----------
    result : LongwaveResult or dict of str to LongwaveResult
        From :func:`specforce.olr`; several, labelled, are drawn together.
    title : str, optional
        Figure title; default "OLR spectrum, profile NAME" (one result) or "OLR spectra".
    smooth_bins : int
        Running mean over this many output bins, for readability.
    reference_temperatures : sequence of float
        Blackbody curves drawn for reference [K], each labelled where the curves lie apart.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if isinstance(result, dict):
        results = result
    else:
        results = {str(result.provenance.get("profile")): result}
    if title is None:
        title = f"OLR spectrum, profile {next(iter(results))}" if len(results) == 1 else "OLR spectra"
    spectra = {label: (r.wavenumber, r.olr_spectrum) for label, r in results.items()}
    fig, (ax1, ax2) = _subplots(2, 1, figsize=(9, 7), sharex=True)
    for label, (nu, flux) in spectra.items():
        ax1.plot(nu, _smooth(flux, smooth_bins), lw=0.8, label=label)
        ax2.plot(nu, _smooth(brightness_temperature(nu, flux), smooth_bins), lw=0.8, label=label)
    nu_ref = np.linspace(min(s[0][0] for s in spectra.values()), max(s[0][-1] for s in spectra.values()), 500)
    curves = np.array([np.pi * planck(nu_ref, t) for t in reference_temperatures]).reshape(-1, nu_ref.size)
    for curve in curves:
        ax1.plot(nu_ref, curve, color="0.6", lw=0.6, ls="--")
    ax1.set_ylabel("spectral flux [W m$^{-2}$ (cm$^{-1}$)$^{-1}$]")
    ax2.set_ylabel("brightness temperature [K]")
    ax2.set_xlabel("wavenumber [cm$^{-1}$]")
    ax1.legend(fontsize=8)
    ax1.set_title(title)
    fig.tight_layout()
    _label_curves(ax1, nu_ref, curves, [f"{t:g} K" for t in reference_temperatures], fontsize=7, color="0.3")
    return fig


def _label_curves(ax, x, curves, labels, fontsize, color):
    """Label each curve where the curves lie furthest apart, moving labels apart only as far as
    needed for them not to overlap (curves that close in, e.g. blackbodies far in the wing)."""
    if not len(curves):
        return []
    order = np.argsort(curves[:, x.size // 2])
    gaps = np.diff(curves[order], axis=0) if len(curves) > 1 else np.ones((1, x.size))
    i = int(np.argmax(np.min(np.abs(gaps), axis=0)))  # the abscissa of the widest smallest gap
    i = min(max(i, x.size // 20), x.size - 1 - x.size // 20)  # not at the very edge of the axes
    to_pixels, from_pixels = ax.transData, ax.transData.inverted()
    px = to_pixels.transform(np.column_stack([np.full(len(curves), x[i]), curves[:, i]]))
    height = 1.3 * fontsize * ax.figure.dpi / 72.0  # one line of text [pixels]
    rank = np.argsort(px[:, 1])
    y = px[rank, 1].copy()
    for k in range(1, y.size):  # upwards: each label at least one line above the one below
        y[k] = max(y[k], y[k - 1] + height)
    shift = max(0.0, y[-1] - to_pixels.transform((x[i], ax.get_ylim()[1]))[1] + height / 2)
    y -= min(shift, max(0.0, y[0] - to_pixels.transform((x[i], ax.get_ylim()[0]))[1] - height / 2))
    texts = []
    for k, j in enumerate(rank):
        xd, yd = from_pixels.transform((px[j, 0], y[k]))
        texts.append(ax.text(xd, yd, labels[j], fontsize=fontsize, color=color, ha="center", va="center",
                             bbox={"boxstyle": "square,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.8}))
    return texts


def plot_forcing(result, title=None, smooth_bins=10):
    """Four panels of a forcing result: brightness-temperature spectra, spectral forcing,
    heating-rate profiles and (for adjusted runs) the stratospheric temperature change.

    Parameters
    ----------
    result : ForcingResult
        From :func:`specforce.radiative_forcing` (``adjusted`` filled in or None).
    title : str, optional
        Figure title; default "Clear-sky longwave forcing, NAME" (the scenario's name).
    smooth_bins : int
        Running mean over this many output bins for the spectra.

    Returns
    -------
    matplotlib.figure.Figure
        The base state wide and pale, the perturbed one thin on top, so that both show.
    """
    if title is None:
        title = f"Clear-sky longwave forcing, {result.name}"
    nu = result.wavenumber
    fig, axes = _subplots(2, 2, figsize=(12, 8))
    ax = axes[0, 0]
    # the base wide and pale, the perturbed state thin on top: where the change is small the base
    # still shows on both sides of the perturbed line
    for label, flux, style in (("base", result.base.olr_spectrum, _BASE_STYLE),
                               ("perturbed", result.perturbed.olr_spectrum, _PERTURBED_STYLE)):
        ax.plot(nu, _smooth(brightness_temperature(nu, flux), smooth_bins), label=label, **style)
    ax.set_xlabel("wavenumber [cm$^{-1}$]")
    ax.set_ylabel("OLR brightness temperature [K]")
    ax.legend(fontsize=8)
    ax = axes[0, 1]
    ax.plot(nu, _smooth(result.spectral_toa, smooth_bins), lw=0.8, label=f"top of atmosphere ({result.toa:.2f} W m$^{{-2}}$)")
    ax.plot(nu, _smooth(result.spectral_tropopause, smooth_bins), lw=0.8,
            label=f"tropopause ({result.tropopause:.2f} W m$^{{-2}}$)")
    ax.axhline(0.0, color="0.6", lw=0.5)
    ax.set_xlabel("wavenumber [cm$^{-1}$]")
    ax.set_ylabel("instantaneous forcing [W m$^{-2}$ (cm$^{-1}$)$^{-1}$]")
    ax.legend(fontsize=8)
    # profiles shown up to 0.1 hPa: above, layers are thin, heating rates huge and the
    # local-thermodynamic-equilibrium assumption fails for CO2
    p_layer = 0.5 * (result.base.pressure[:-1] + result.base.pressure[1:]) / 100.0
    shown = p_layer >= 0.1
    ax = axes[1, 0]
    ax.plot(result.base.heating_rate[shown], p_layer[shown], label="base", **_BASE_STYLE)
    ax.plot(result.perturbed.heating_rate[shown], p_layer[shown], label="perturbed", **_PERTURBED_STYLE)
    ax.set_yscale("log")
    ax.invert_yaxis()
    ax.set_xlabel("longwave heating rate [K day$^{-1}$] (levels below 0.1 hPa)")
    ax.set_ylabel("pressure [hPa]")
    ax.legend(fontsize=8)
    ax = axes[1, 1]
    if result.adjusted is not None:
        lev = result.base.pressure / 100.0 >= 0.1
        ax.plot(result.adjusted.temperature_change[lev], result.base.pressure[lev] / 100.0)
        ax.set_yscale("log")
        ax.invert_yaxis()
        ax.set_xlabel("adjusted temperature change [K]")
        ax.set_ylabel("pressure [hPa]")
        ax.set_title(f"adjusted forcing at the tropopause {result.adjusted.forcing_tropopause:.2f} W m$^{{-2}}$",
                     fontsize=9)
    else:
        ax.axis("off")
        ax.text(0.5, 0.5, "no stratospheric adjustment\n(run with --adjusted)", ha="center", va="center")
    fig.suptitle(title)
    fig.tight_layout()
    return fig


#: How a base and a perturbed state are drawn together (the perturbed one on top).
_BASE_STYLE = {"color": "C0", "lw": 2.2, "alpha": 0.45, "zorder": 2}
_PERTURBED_STYLE = {"color": "C3", "lw": 0.7, "zorder": 3}


def plot_sweep(sweep, title=None):
    """Forcing against concentration with the published formulas overlaid, residuals below.

    Parameters
    ----------
    sweep : SweepResult
        From :func:`specforce.sweep_concentrations`. Its refits (``sweep.refits``, from
        :func:`specforce.forcing.sweep.refit_sweep`), when present: the weighted (or single) fit is drawn.
    title : str, optional
        Figure title; default "GAS sweep, PROFILES".

    Returns
    -------
    matplotlib.figure.Figure
    """
    if title is None:
        title = f"{sweep.gas} sweep, " + ", ".join(sweep.profiles)
    fits = sweep.refits
    x = sweep.concentration
    fig, (ax1, ax2) = _subplots(2, 1, figsize=(8, 8), sharex=True, gridspec_kw={"height_ratios": [2, 1]})
    if len(sweep.profiles) > 1:
        for i, name in enumerate(sweep.profiles):
            ax1.plot(x, sweep.forcing[i], lw=0.8, alpha=0.6, label=f"{name} (weight {sweep.weights[i]:.3g})")
    ax1.plot(x, sweep.weighted, "ko-", ms=3, lw=1.6,
             label="specforce" + (" weighted mean" if len(sweep.profiles) > 1 else f" ({sweep.profiles[0]})"))
    published = sweep.formulas(warn=False)
    for name, values in published.items():
        line, = ax1.plot(x, values, ls="--", lw=1.0, label=name)
        ax2.plot(x, sweep.weighted - values, ls="--", lw=1.0, marker=".", color=line.get_color(),
                 label=f"specforce - {name}")
    if fits:
        key = "weighted" if "weighted" in fits else sweep.profiles[0]
        fit = fits[key]
        ax1.plot(x, sweep.weighted - fit.residuals, ":", color="0.3", lw=1.2,
                 label="refit: " + ", ".join(f"{k}={v:.4g}" for k, v in fit.coefficients.items()))
        ax2.plot(x, fit.residuals, ":", color="0.3", label="specforce - refit")
    ax1.axhline(0.0, color="0.7", lw=0.5)
    ax2.axhline(0.0, color="0.7", lw=0.5)
    if sweep.gas == "CO2":
        ax1.set_xscale("log")
    ax1.set_ylabel(f"{sweep.gas} forcing [W m$^{{-2}}$]\n({sweep.kind})")
    ax2.set_ylabel("difference [W m$^{-2}$]")
    ax2.set_xlabel(f"{sweep.gas} [{sweep.unit}] (reference {sweep.reference:g} {sweep.unit})")
    ax1.legend(fontsize=7)
    if ax2.get_legend_handles_labels()[0]:  # nothing to compare over a partial range
        ax2.legend(fontsize=7)
    ax1.set_title(title + "\nformulas: global all-sky adjusted; specforce: clear-sky, the profiles shown", fontsize=9)
    fig.tight_layout()
    return fig


def plot_comparison(comparison, title=None, smooth_bins=10):
    """Both OLR spectra as brightness temperature, and their difference with band sums annotated.

    Parameters
    ----------
    comparison : Comparison
        From :func:`specforce.compare_olr` (with a ``resolution``, the smoothed
        brightness-temperature difference is drawn).
    title : str, optional
        Figure title; default "OLR: B minus A" with both states' labels.
    smooth_bins : int
        Running mean over this many output bins for the spectra.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from .comparison_results import comparison_dataset

    if title is None:
        title = f"OLR: {comparison.label_b} minus {comparison.label_a}"
    ds = comparison_dataset(comparison)
    nu = ds["wavenumber"].values
    fig, (ax1, ax2) = _subplots(2, 1, figsize=(11, 8), sharex=True)
    for key, label in (("a", ds.attrs["label_a"]), ("b", ds.attrs["label_b"])):
        ax1.plot(nu, _smooth(ds[f"brightness_temperature_{key}"].values, smooth_bins), lw=0.7,
                 label=f"{label} (OLR {ds.attrs[f'olr_{key}_W_m2']:.2f} W m$^{{-2}}$)")
    ax1.set_ylabel("OLR brightness temperature [K]")
    ax1.legend(fontsize=8)
    if "brightness_temperature_difference_smoothed" in ds:
        ax2.plot(ds["wavenumber_smoothed"].values, ds["brightness_temperature_difference_smoothed"].values, lw=1.0,
                 label=f"B - A, fluxes averaged over {ds.attrs['smoothing_cm-1']:g} cm$^{{-1}}$")
    else:
        ax2.plot(nu, _smooth(ds["brightness_temperature_difference"].values, smooth_bins), lw=0.7, label="B - A")
    ax2.axhline(0.0, color="0.6", lw=0.5)
    # labels at the top, staggered in height so that narrow neighbouring bands stay readable
    for i, (name, lo, hi, d) in enumerate(zip(ds["band"].values, ds["band_lower"].values, ds["band_upper"].values,
                                              ds["band_difference"].values)):
        ax2.axvline(lo, color="0.8", lw=0.5)
        ax2.text(0.5 * (lo + hi), 0.98 - 0.12 * (i % 3), f"{name}\n{d:+.2f}", ha="center", va="top", fontsize=6.5,
                 color="0.25", transform=ax2.get_xaxis_transform())
    ax2.set_ylabel("brightness-temperature difference [K]")
    ax2.set_xlabel("wavenumber [cm$^{-1}$]   (band labels: OLR difference in W m$^{-2}$)")
    ax2.legend(fontsize=8, loc="lower right")
    ax1.set_title(f"{title}\nOLR difference {ds.attrs['olr_difference_W_m2']:+.3f} W m$^{{-2}}$", fontsize=10)
    fig.tight_layout()
    return fig


def _subplots(nrows, ncols, **kwargs):
    """A figure with axes, made without pyplot: the user's matplotlib backend is never switched."""
    from matplotlib.figure import Figure

    figsize = kwargs.pop("figsize", None)
    fig = Figure(figsize=figsize)
    return fig, fig.subplots(nrows, ncols, **kwargs)


#: Figure formats the plots can be written in.
FIGURE_SUFFIXES = (".png", ".pdf", ".svg")


def save_figure(fig, path):
    """Save a figure atomically (format from the suffix: .png, .pdf or .svg)."""
    suffix = os.path.splitext(os.fspath(path))[1].lower()
    check_output_path(path, FIGURE_SUFFIXES, "figure")
    with atomic_path(path, suffix=suffix) as tmp:
        fig.savefig(tmp, dpi=130)
