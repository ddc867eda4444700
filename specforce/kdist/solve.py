"""Longwave fluxes by the fast model: the tables' optical depths and Planck sources through the
transfer that line-by-line uses.

Called by :func:`specforce.radiation.longwave.compute_longwave_states` when
``Settings.spectral_model`` is "kdist"; gives the same :class:`LongwaveResult`, on the same
output bins, but each bin carries its band's mean (the model resolves bands, not lines), and
the calibration error is in its provenance.
"""

from __future__ import annotations

import os
import time

import numpy as np

from .._version import __version__
from ..absorption.grids import bin_edges
from ..errors import SettingsError
from ..io.ktables import cached_tables_path, read_tables
from ..radiation.bounds import check_planck_bound
from ..radiation.column import Column
from ..radiation.humidity import specific_humidity_from_vmr
from ..radiation.longwave_result import LongwaveResult
from ..radiation.transfer import heating_rate, source_fluxes
from .layout import DEFAULT_LAYOUT
from .tables import table_key

__all__ = ["compute_kdist_states", "tables_for", "BUILD_MINUTES"]

#: Measured time to build, fit and calibrate (full set) the default tables for the built-in
#: spectroscopy on 2 cores [min] (9.2 and 10.3; `specforce ktables build`), quoted when tables are missing.
BUILD_MINUTES = 20

_LOADED = {}  # key -> KTables, so that a loop of calls reads the file once


def tables_for(spectroscopy, settings, layout=None):
    """The tables for this spectroscopy and these settings: ones built or read in this process
    (:func:`remember`), else the cached file of the default layout, else an error that says how
    to build them. Never stale ones: the key covers what they depend on.

    Parameters
    ----------
    layout : Layout, optional
        Look for tables of this layout only (default: any remembered, then the default one).
    """
    digest = spectroscopy.digest()
    layouts = [layout] if layout is not None else [t.layout for t in _LOADED.values()] + [DEFAULT_LAYOUT]
    for lay in layouts:
        key = table_key(spectroscopy, settings, lay, digest=digest)
        if key in _LOADED:
            return _LOADED[key]
    key = table_key(spectroscopy, settings, layout or DEFAULT_LAYOUT, digest=digest)
    path = cached_tables_path(key)
    if not os.path.exists(path):
        raise SettingsError(
            f"the fast model (spectral_model='kdist') has no tables for this spectroscopy and these "
            f"line-shape settings yet (key {key[:12]}); build them once with `specforce ktables build` "
            f"(with the same --lines and line-shape options; about {BUILD_MINUTES} min on 2 cores for the "
            f"built-in lines, calibration included) or specforce.build_fast_tables(spectroscopy, settings)")
    tables = read_tables(path)
    if tables.key != key:
        raise SettingsError(f"{path}: its key {tables.key[:12]} is not its name's; remove it and build again")
    _LOADED[key] = tables
    return tables


def remember(tables):
    """Keep ``tables`` for this process (after a build), as :func:`tables_for` does after reading them."""
    _LOADED[tables.key] = tables


def compute_kdist_states(profiles, spectroscopy, settings, *, keep_levels=(), progress=None):
    """Fluxes, band spectra and heating rates of each profile by the fast model.

    Parameters are those of :func:`specforce.radiation.longwave.compute_longwave_states`.

    Returns
    -------
    list of LongwaveResult
    """
    t0 = time.perf_counter()
    tables = tables_for(spectroscopy, settings)
    layout = tables.layout.covering(settings.wavenumber_range)  # checks the range
    first = tables.layout.edges.index(layout.edges[0])
    use = (tables.band >= first) & (tables.band < first + layout.nbands)
    edges = np.asarray(layout.edges)
    band = tables.band[use] - first
    width = np.diff(edges)
    bins = bin_edges(settings.wavenumber_range, settings.output_resolution)
    centres = 0.5 * (bins[:-1] + bins[1:])
    of_bin = np.clip(np.searchsorted(edges, centres, side="right") - 1, 0, width.size - 1)  # each bin's band
    out = []
    for n, profile in enumerate(profiles):
        col = Column(profile, spectroscopy, settings)
        prof, lay = col.profile, col.layers
        gases = list(col.gases)
        requested = sorted({int(k) for k in keep_levels})
        bad = [k for k in requested if not 0 <= k < prof.nlevels]
        if bad:
            raise SettingsError(f"keep_levels {bad} are outside the profile's levels 0-{prof.nlevels - 1} "
                                f"(0 is the surface)")
        tau = tables.optical_depth(lay, gases)[:, use]
        src = tables.planck_sources(np.r_[prof.temperature, prof.surface_temperature])[:, use]
        up, dn = source_fluxes(tau, src[:-1], src[-1], prof.surface_emissivity, nodes=settings.nodes,
                               diffusivity=settings.diffusivity)
        f_up, f_dn = up.sum(axis=1), dn.sum(axis=1)
        check_planck_bound(prof, (float(edges[0]), float(edges[-1])), f_up, f_dn)

        def bands(v):
            return (np.bincount(band, weights=v, minlength=width.size) / width)[of_bin]
        q = specific_humidity_from_vmr(lay.vmr["H2O"]) if "H2O" in lay.vmr else None
        prov = {"specforce_version": __version__, "profile": prof.name, "profile_source": prof.source,
                "settings": settings, "gases": gases, "grid_points": int(use.sum()),
                "spectral_model": "kdist", "kdist": kdist_record(tables, lay),
                "seconds": round((time.perf_counter() - t0) / len(profiles), 4),
                "spectroscopy": spectroscopy.provenance}
        out.append(LongwaveResult(
            wavenumber=centres, olr_spectrum=bands(up[-1]), surface_down_spectrum=bands(dn[0]),
            level_spectra_up={k: bands(up[k]) for k in requested},
            level_spectra_down={k: bands(dn[k]) for k in requested},
            flux_up=f_up, flux_down=f_dn, heating_rate=heating_rate(f_up, f_dn, prof.pressure, q),
            pressure=prof.pressure.copy(), provenance=prov, grid=None, profile=prof))
        if progress is not None:
            progress((n + 1) / len(profiles))
    return out


def kdist_record(tables, layers=None):
    """What a fast-mode result records of its model: the tables' key, layout, calibration
    error, and where ``layers`` leave the tables' ranges."""
    rec = {"key": tables.key, "bands": len(tables.layout.edges) - 1, "gpoints": tables.ngpoints,
           "overlap": tables.provenance.get("overlap", ""), "calibration": tables.calibration or
           "not calibrated: run `specforce ktables build` (it calibrates) before quoting fast-mode numbers"}
    if layers is not None:
        rec["outside_tables"] = tables.outside(layers)
        rec["outside_calibration"] = outside_calibration(tables.calibration, layers)
    return rec


def outside_calibration(calibration, layers):
    """Where ``layers`` leave the ranges of the calibration set (temperature, water and the
    amounts of CO2, CH4 and N2O): a list of sentences (empty where none, or uncalibrated)."""
    ranges = (calibration or {}).get("ranges", {})
    out = []
    t = ranges.get("temperature_K")
    if t and (layers.temperature.min() < t[0] - 0.5 or layers.temperature.max() > t[1] + 0.5):
        out.append(f"layer temperatures {layers.temperature.min():.1f}-{layers.temperature.max():.1f} K leave the "
                   f"calibration set's {t[0]:.1f}-{t[1]:.1f} K: the fast model's error there is not measured")
    w = ranges.get("H2O")
    if w and "H2O" in layers.vmr and layers.vmr["H2O"].max() > 1.05 * w[1]:
        out.append(f"water up to {layers.vmr['H2O'].max():.3g} mol/mol leaves the calibration set's {w[1]:.3g}: "
                   f"the fast model's error there is not measured")
    for gas in ("CO2", "CH4", "N2O"):
        r = ranges.get(f"{gas}_mol_mol")
        if not r or gas not in layers.column:
            continue
        mean = float(layers.column[gas].sum() / layers.air_column.sum())  # column mean [mol mol-1]
        if mean > 1.05 * r[1] or mean < r[0] / 1.05:
            out.append(f"{gas} column mean {mean:.4g} mol/mol leaves the calibration set's {r[0]:.4g}-{r[1]:.4g}: "
                       f"the fast model's error there is not measured")
    return out
