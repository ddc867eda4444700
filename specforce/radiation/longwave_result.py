"""The result of a longwave calculation: fluxes, spectra and heating rates of one profile.

Made by :func:`specforce.radiation.longwave.compute_longwave`; rendered to Dataset, dict and
text by :mod:`specforce.io.results`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..absorption.grids import SpectralGrid

__all__ = ["LongwaveResult"]


@dataclass(frozen=True)
class LongwaveResult:
    """Fluxes of one profile (clear-sky longwave).

    Attributes
    ----------
    wavenumber : numpy.ndarray
        Centres of the output bins [cm-1].
    olr_spectrum, surface_down_spectrum : numpy.ndarray
        Bin-averaged upward flux at the top and downward flux at the surface [W m-2 (cm-1)-1].
    level_spectra_up, level_spectra_down : dict of int to numpy.ndarray
        Bin-averaged spectra at every level asked for in ``keep_levels`` [W m-2 (cm-1)-1].
    flux_up, flux_down : numpy.ndarray
        Broadband fluxes at every level, surface first [W m-2].
    heating_rate : numpy.ndarray
        Layer heating rates [K day-1].
    pressure : numpy.ndarray
        Level pressures [Pa].
    provenance : dict
        What was computed and how: ``profile`` and ``profile_source``, ``settings`` (the
        :class:`~specforce.radiation.longwave.Settings` themselves, written out by
        :mod:`specforce.io.results`), ``gases``, ``spectroscopy`` (its provenance), ``specforce_version``, ``grid_points`` and ``seconds`` (run time).
    grid : SpectralGrid or None
        The graded grid used (to share with related calculations), None on the uniform path.
    profile : Profile or None
        The profile computed (refined if ``refine`` > 1).
    convergence : dict or None
        The convergence report (:func:`specforce.forcing.convergence.longwave_convergence`), if asked for.
    """

    wavenumber: np.ndarray
    olr_spectrum: np.ndarray
    surface_down_spectrum: np.ndarray
    level_spectra_up: dict
    level_spectra_down: dict
    flux_up: np.ndarray
    flux_down: np.ndarray
    heating_rate: np.ndarray
    pressure: np.ndarray
    provenance: dict = field(repr=False)
    grid: SpectralGrid | None = field(default=None, repr=False)
    profile: object = field(default=None, repr=False)
    convergence: dict | None = None

    @property
    def olr(self):
        """Outgoing longwave radiation [W m-2]."""
        return float(self.flux_up[-1])

    @property
    def surface_down(self):
        """Downward longwave flux at the surface [W m-2]."""
        return float(self.flux_down[0])

    @property
    def net_flux(self):
        """Net upward flux F_up - F_down at every level [W m-2]."""
        return self.flux_up - self.flux_down

    def to_dataset(self):
        """The result as an :class:`xarray.Dataset` (CF conventions; see :mod:`specforce.io.results`)."""
        from ..io.results import longwave_dataset

        return longwave_dataset(self)

    def to_dict(self):
        """The scalar results, heating rates and provenance, JSON-ready."""
        from ..io.results import longwave_summary

        return longwave_summary(self)

    def summary(self):
        """The result in a few lines of text."""
        from ..io.results import longwave_text

        return longwave_text(self)
