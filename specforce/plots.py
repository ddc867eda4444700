"""Matplotlib figures: spectra as brightness temperature, differences, profiles."""

from __future__ import annotations

import os
import tempfile

import numpy as np

from .constants import FIRST_RADIATION_CONSTANT_L, SECOND_RADIATION_CONSTANT_CM_K
from .transfer import planck

__all__ = ["brightness_temperature", "plot_olr_spectrum", "save_figure"]


def brightness_temperature(wavenumber, flux):
    """Brightness temperature of a hemispheric flux spectrum [K].

    The temperature of the blackbody whose flux pi B(nu, T) equals ``flux``:
    T = c2 nu / ln(1 + 1e8 c1L nu^3 / (flux / pi)). Zero or negative flux gives NaN.

    Parameters
    ----------
    wavenumber : array_like
        nu [cm-1].
    flux : array_like
        Spectral flux [W m-2 (cm-1)-1].
    """
    nu = np.asarray(wavenumber, dtype=float)
    radiance = np.asarray(flux, dtype=float) / np.pi
    with np.errstate(divide="ignore", invalid="ignore"):
        tb = SECOND_RADIATION_CONSTANT_CM_K * nu / np.log1p(1e8 * FIRST_RADIATION_CONSTANT_L * nu**3 / radiance)
    return np.where(radiance > 0, tb, np.nan)


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


def plot_olr_spectrum(spectra, path, title, smooth_bins=10, reference_temperatures=(200, 225, 250, 275, 300)):
    """Plot one or more OLR spectra as brightness temperature, with blackbody curves.

    Parameters
    ----------
    spectra : dict of str to (wavenumber, flux)
        Labelled spectra [cm-1], [W m-2 (cm-1)-1].
    path : str
        Output file (.png or .pdf), written atomically.
    title : str
        Figure title (name the scenario).
    smooth_bins : int
        Running mean over this many output bins, for readability.
    reference_temperatures : sequence of float
        Blackbody curves drawn for reference [K].
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(9, 7), sharex=True)
    for label, (nu, flux) in spectra.items():
        ax1.plot(nu, _smooth(flux, smooth_bins), lw=0.8, label=label)
        ax2.plot(nu, _smooth(brightness_temperature(nu, flux), smooth_bins), lw=0.8, label=label)
    nu_ref = np.linspace(min(s[0][0] for s in spectra.values()), max(s[0][-1] for s in spectra.values()), 500)
    for t in reference_temperatures:
        ax1.plot(nu_ref, np.pi * planck(nu_ref, t), color="0.6", lw=0.6, ls="--")
        ax1.text(nu_ref[-1], np.pi * planck(nu_ref[-1], t), f" {t} K", fontsize=7, color="0.4", va="center")
    ax1.set_ylabel("spectral flux [W m$^{-2}$ (cm$^{-1}$)$^{-1}$]")
    ax2.set_ylabel("brightness temperature [K]")
    ax2.set_xlabel("wavenumber [cm$^{-1}$]")
    ax1.legend(fontsize=8)
    ax1.set_title(title)
    fig.tight_layout()
    save_figure(fig, path)
    plt.close(fig)


def save_figure(fig, path):
    """Save a figure atomically (format from the suffix)."""
    path = os.path.abspath(os.fspath(path))
    suffix = os.path.splitext(path)[1] or ".png"
    fd, tmp = tempfile.mkstemp(prefix=".figure-", suffix=suffix, dir=os.path.dirname(path))
    os.close(fd)
    try:
        fig.savefig(tmp, dpi=130)
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)
