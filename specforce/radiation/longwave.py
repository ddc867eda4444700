"""Clear-sky longwave calculation for a profile: spectroscopy -> optical depths -> fluxes.

This is the pipeline that the forcing driver, the command line and scripts use. It only
orchestrates: the line parameters and optical depths come from :mod:`specforce.absorption.linesum`,
the spectral grid from :mod:`specforce.absorption.grids`, the continuum from
:mod:`specforce.absorption.continuum`, the fluxes from :mod:`specforce.radiation.transfer`; a cold
cache's kernels are compiled ahead by :mod:`specforce.radiation.compile_ahead`.

Two grids (``Settings.grid``):

``"graded"`` (default)
    one non-uniform grid for the whole range, fine only around the cores of
    optically significant lines (:func:`specforce.absorption.grids.graded_grid`); every
    layer's optical depth is computed at its points by the tiered method, in
    sub-grids of bounded size so that memory stays bounded.
``"uniform"`` (the reference)
    the spectrum in blocks (5 cm-1 by default), each with one uniform grid
    whose spacing resolves the narrowest significant line of the block in any
    layer (:func:`specforce.absorption.grids.uniform_spacing`); optical depths by the
    multigrid method. This was the production path of specforce 0.1 and is
    kept, unchanged, to check the graded path against.

Either way the results are broadband fluxes at every level, heating rates,
and spectra at the top, the surface and any requested levels, averaged into
output bins (default 0.1 cm-1) whose sums reproduce the broadband integrals
exactly.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from .._version import __version__
from ..absorption.treatments import CO2_CHI_CUTOFF, DEFAULT_CUTOFF
from .column import WINDOW_LINES, Absorbers, Column, GasTreatments
from .sharing import share_absorbers
from .compile_ahead import compile_ahead
from ..errors import InternalError, SettingsError
from .humidity import specific_humidity_from_vmr
from .bounds import _check_optical_depth, check_planck_bound, planck_bound  # noqa: F401  (planck_bound: API)
from .longwave_result import LongwaveResult
from ..absorption.grids import (SignificantLines, SpectralGrid, bin_edges, graded_grid, uniform_bin_averages,
                               uniform_grid, uniform_spacing)
from ..io.linestore import load_spectroscopy
from ..molecular.lines import Spectroscopy
from .transfer import heating_rate, spectral_fluxes
from .workers import TaskPool, thread_count

__all__ = ["Spectroscopy", "Settings", "load_spectroscopy", "compute_longwave", "compute_longwave_states", "GRIDS",
           "SPECTRAL_MODELS", "graded_grid_for", "layer_optical_depths", "check_planck_bound", "planck_bound"]

#: The grid rules of :class:`Settings` (see the module docstring).
GRIDS = ("graded", "uniform")
#: The spectral models of :class:`Settings`: line-by-line, and the calibrated fast model.
SPECTRAL_MODELS = ("lbl", "kdist")
# Points per sub-grid of the graded path at 49 layers, fewer as sqrt(49 / layers) above: bounds memory
# (layers x points x 8 bytes per array), which then grows as sqrt(layers); in proportion to 1 / layers,
# the far-field transforms over the lines' reach beyond each sub-grid made 196 layers 6.6 times 49.
_SUBGRID_POINTS = 60_000


@dataclass(frozen=True)
class Settings:
    """Settings of a longwave calculation.

    Attributes
    ----------
    wavenumber_range : (float, float)
        Spectral range [cm-1]; default 10-3000.
    method : {"fast", "direct"}
        Absorption method: the tiered method on the graded grid and the
        multigrid method on the uniform grid, or the direct sum on either (see
        :mod:`specforce.absorption.linesum`).
    grid : {"graded", "uniform"}
        Spectral grid rule (see the module docstring); "uniform" is the reference.
    cutoff : float or None
        Line cut-off [cm-1] (default 25).
    continuum : bool
        Include the water-vapour continuum (see :mod:`specforce.absorption.continuum`).
    gases : tuple of str or None
        Active absorbers (None: every gas with lines; () for a transparent atmosphere).
    nodes : int
        Gauss-Legendre nodes in mu.
    diffusivity : bool
        One-stream diffusivity approximation instead of Gauss-Legendre.
    spacing : float or None
        Fixed uniform grid spacing [cm-1] (either grid rule); None for the rules.
    spacing_fraction : float
        Spacing at a resolved line's core as a fraction of its narrowest Voigt
        half-width (both rules). The default 0.5 was chosen by measurement: with
        the real water list and the AFGL mid-latitude summer profile (refined x2),
        broadband fluxes over 300-400 cm-1 change by less than 1e-4 W m-2 when the
        graded grid's fraction and grading are quartered (0.125 and 0.25), and
        heating rates by less than 1e-3 K/day (tests/test_longwave.py).
    grading : float
        Growth of the graded grid's spacing with distance from a resolved line's
        centre [dimensionless] (see :mod:`specforce.absorption.grids`).
    resolve_tau : float
        Only lines whose optical depth at line centre in a layer reaches this
        value are resolved by the grid there, and treated exactly by the tiered
        method; weaker lines are sampled, and on the graded path their cores are
        smoothed over a few hundredths of a wavenumber (area and wings kept).
        It applies to the layers of the profile as given: with ``refine`` N each
        refined layer uses resolve_tau / N.
    max_spacing : float
        Largest spacing of either rule [cm-1].
    output_resolution : float
        Width of the output spectral bins [cm-1].
    block_width : float
        Width of the uniform rule's blocks [cm-1] (a multiple of output_resolution).
    co2_chi : bool
        CO2 lines take the sub-Lorentzian chi factor of Perrin & Hartmann (1989) and
        reach out to ``co2_cutoff`` (default on). Off, they are Voigt profiles cut at
        ``cutoff`` like every other gas's: that drops the absorption of the far wings,
        which is what a CO2 continuum carries in codes that cut CO2 lines at 25 cm-1
        (common practice), and which decides how CO2 forcing grows at high amounts.
        Measured (AFGL mid-latitude summer, 284 -> 568 ppm, TOA; before the chi factor's
        temperature dependence and the 10 um bands' intensities): 2.626 W m-2 off,
        2.748 on; the forcing per doubling 0.5x -> 1x against 1x -> 2x falls by 5.1 %
        off and 3.2 % on.
    co2_cutoff : float or None
        Cut-off of the CO2 lines when ``co2_chi`` is on [cm-1] (default 250; None for
        none). Measured as above: 25 -> 2.629, 100 -> 2.684, 250 -> 2.748, none ->
        2.749 W m-2; with the present spectroscopy 500 or none instead of 250 moves the
        forcing per doubling from 4x to 8x (MLS, TOA) by 0.001 W m-2.
    h2o_far_wing : {"lorentz", "sub-lorentzian"}
        Far wings of the water lines: plain Voigt (default) or with the exponential
        sub-Lorentzian factor of :class:`specforce.absorption.treatments.SubLorentzianWater`,
        whose parameters are from memory with low confidence (a sensitivity switch,
        off by default). Either way they are cut at ``cutoff``.
    spectral_model : {"lbl", "kdist"}
        "lbl" (default): line-by-line, as above. "kdist": the calibrated fast model
        (:mod:`specforce.kdist`), whose tables specforce builds once from this line-by-line
        model for the spectroscopy and these settings; its spectra are band means, and its
        results carry its calibration error.
    threads : int or None
        Threads the calculation runs on (None, the default: every core this process
        may use; see :mod:`specforce.radiation.workers`). The results do not depend on
        it, so it is left out of comparisons of settings.
    refine : int
        Split every layer of the profile into this many (log-pressure
        interpolation) before computing. Measured with the real water list for
        the mid-latitude summer profile over 300-400 cm-1: OLR changes by 0.24 %
        from 1 to 2 and by 0.06 % from 2 to 4, so 2 or more is needed for 0.1 %.
    """

    wavenumber_range: tuple = (10.0, 3000.0)
    method: str = "fast"
    grid: str = "graded"
    cutoff: float | None = DEFAULT_CUTOFF
    continuum: bool = True
    gases: tuple | None = None
    nodes: int = 3
    diffusivity: bool = False
    spacing: float | None = None
    spacing_fraction: float = 0.5
    grading: float = 0.5
    resolve_tau: float = 1e-3
    max_spacing: float = 0.02
    output_resolution: float = 0.1
    block_width: float = 5.0
    co2_chi: bool = True
    co2_cutoff: float | None = CO2_CHI_CUTOFF
    refine: int = 1
    h2o_far_wing: str = "lorentz"
    spectral_model: str = "lbl"
    threads: int | None = field(default=None, compare=False)

    def __post_init__(self):
        lo, hi = self.wavenumber_range
        if not (0 < lo < hi < math.inf):
            raise SettingsError(f"wavenumber_range must be (min, max) with 0 < min < max [cm-1], "
                                f"got {self.wavenumber_range}")
        if self.cutoff is not None and not 0 <= self.cutoff < math.inf:
            raise SettingsError(f"cutoff must be a finite number >= 0 [cm-1] (0 or None for none), got {self.cutoff}")
        if self.co2_cutoff is not None and not 0 < self.co2_cutoff < math.inf:
            raise SettingsError(f"co2_cutoff must be a positive finite number [cm-1] or None for none, "
                                f"got {self.co2_cutoff}")
        self.line_shape()  # checks h2o_far_wing (GasTreatments owns the check)
        if self.spectral_model not in SPECTRAL_MODELS:
            raise SettingsError(f"spectral_model must be one of {', '.join(map(repr, SPECTRAL_MODELS))}, "
                                f"got {self.spectral_model!r}")
        if self.method not in ("fast", "direct"):
            raise SettingsError(f"method must be 'fast' or 'direct', got {self.method!r}")
        if self.grid not in GRIDS:
            raise SettingsError(f"grid must be one of {', '.join(GRIDS)}, got {self.grid!r}")
        if not self.output_resolution > 0:
            raise SettingsError(f"output_resolution must be positive [cm-1], got {self.output_resolution}")
        ratio = self.block_width / self.output_resolution
        if abs(ratio - round(ratio)) > 1e-9 or ratio < 1:
            raise SettingsError("block_width must be a whole multiple of output_resolution")
        if self.spacing is not None and not 0 < self.spacing <= self.output_resolution:
            raise SettingsError(f"spacing must be positive and at most the output bins' {self.output_resolution:g} "
                                f"cm-1 [cm-1], got {self.spacing}")
        if not 0 < self.spacing_fraction <= 2:
            raise SettingsError(f"spacing_fraction must lie in (0, 2], got {self.spacing_fraction}")
        if not 0 < self.grading * self.spacing_fraction < 1:
            raise SettingsError(f"grading must be positive with grading x spacing_fraction < 1, got {self.grading}")
        if not self.resolve_tau > 0:
            raise SettingsError(f"resolve_tau must be positive, got {self.resolve_tau}")
        if not self.max_spacing > 0:
            raise SettingsError(f"max_spacing must be positive [cm-1], got {self.max_spacing}")
        if int(self.nodes) != self.nodes or self.nodes < 1:
            raise SettingsError(f"nodes must be a positive whole number, got {self.nodes}")
        if int(self.refine) != self.refine or self.refine < 1:
            raise SettingsError(f"refine must be a positive whole number, got {self.refine}")
        if self.threads is not None:
            thread_count(self.threads)  # validates

    def line_shape(self):
        """The line treatment of each gas these settings imply (a :class:`GasTreatments`)."""
        return GasTreatments(cutoff=self.cutoff, co2_chi=self.co2_chi, co2_cutoff=self.co2_cutoff,
                             h2o_far_wing=self.h2o_far_wing)


def _resolve_tau(settings):
    """The significance threshold per computed layer: with refinement, a refined layer holds
    1 / refine of a profile layer's absorber, so the threshold follows (the set of resolved
    lines then stays the same when layers are split)."""
    return settings.resolve_tau / settings.refine


def _keep_levels(profile, keep_levels):
    requested = sorted({int(k) for k in keep_levels})
    bad = [k for k in requested if not 0 <= k < profile.nlevels]
    if bad:
        raise SettingsError(f"keep_levels {bad} are outside the profile's levels 0-{profile.nlevels - 1} "
                            f"(0 is the surface)")
    return requested


def compute_longwave(profile, spectroscopy, settings=Settings(), *, keep_levels=(), progress=None, grid=None,
                     store=None):
    """Clear-sky longwave fluxes, spectra and heating rates of a profile.

    Parameters
    ----------
    profile : Profile
        The atmosphere.
    spectroscopy : Spectroscopy
        Line data per gas (see :func:`specforce.io.linestore.load_spectroscopy`).
    settings : Settings
        Spectral range, method, grid, cut-off, continuum, angles.
    keep_levels : sequence of int
        Extra levels (0 = surface, after refinement) whose up/down spectra are kept.
    progress : callable, optional
        Called with the fraction of the work done (0-1), by grid points times layers.
    grid : SpectralGrid, optional
        A graded grid to use instead of building one (to share it between related
        calculations, e.g. the states of a forcing); ignored on the uniform path.
    store : DepthStore, optional
        Layer optical depths kept from an earlier call on the same grid, and kept for the
        next (:class:`~specforce.radiation.depthstore.DepthStore`); graded path only.

    Returns
    -------
    LongwaveResult
    """
    return compute_longwave_states([profile], spectroscopy, settings, keep_levels=keep_levels, progress=progress,
                                   grid=grid, store=store)[0]


def compute_longwave_states(profiles, spectroscopy, settings=Settings(), *, keep_levels=(), progress=None,
                            grid=None, store=None):
    """:func:`compute_longwave` for several states of one column, sharing work.

    On the graded path the states share one grid, which resolves the significant
    lines of every state, so that differences between the states (forcings) carry
    no difference of sampling; and when the states have the same levels and
    temperatures, the optical depths of the gases whose amounts do not differ are
    computed once for all of them. The uniform path computes each state alone.
    A ``store`` (see :func:`compute_longwave`) takes one state on the graded path.

    Returns
    -------
    list of LongwaveResult
    """
    if store is not None and (len(profiles) != 1 or settings.grid == "uniform" or settings.spectral_model != "lbl"):
        raise SettingsError("a DepthStore takes one state on the graded line-by-line path")
    if settings.spectral_model == "kdist":
        from ..kdist.solve import compute_kdist_states

        return compute_kdist_states(profiles, spectroscopy, settings, keep_levels=keep_levels, progress=progress)
    t_start = time.perf_counter()
    columns = [Column(p, spectroscopy, settings) for p in profiles]
    if settings.grid == "uniform":
        out = []
        with TaskPool(settings.threads) as pool:
            for k, col in enumerate(columns):
                part = (lambda f, k=k: progress((k + f) / len(columns))) if progress else None
                t0 = time.perf_counter()
                absorbers = Absorbers(col, spectroscopy, col.gases, settings, col.continuum)
                res = _run_uniform(col, absorbers, settings, keep_levels, part, pool)
                out.append(_finish(res, profiles[k], spectroscopy, time.perf_counter() - t0))
        return out
    if settings.method == "fast":  # the tiered sums' kernels, where this version's are not cached yet
        compile_ahead(settings.threads)
    absorbers = share_absorbers(columns, spectroscopy, settings)
    with TaskPool(settings.threads) as pool:
        if grid is None:
            grid = graded_grid_for(absorbers.everyone, settings, pool)
        elapsed = time.perf_counter() - t_start
        held = store.begin(columns[0].layers, grid, spectroscopy, settings) if store is not None else set()
        results = _run_graded(columns, absorbers, settings, keep_levels, progress, grid, pool, store, held)
    per_state = (elapsed + sum(r.provenance.pop("_seconds") for r in results)) / len(results)
    return [_finish(r, p, spectroscopy, per_state) for r, p in zip(results, profiles)]


def _finish(res, profile, spectroscopy, seconds):
    res.provenance["seconds"] = round(seconds, 3)
    res.provenance["profile"] = profile.name
    res.provenance["spectroscopy"] = spectroscopy.provenance
    return res


def graded_grid_for(absorbers, settings, pool=None):
    """The graded grid (a SpectralGrid) that resolves the significant lines of every one of
    ``absorbers`` (a list of :class:`~specforce.radiation.column.Absorbers`) under ``settings``,
    with steps at the continuum's jumps; or a uniform one where ``settings.spacing`` is set."""
    if settings.spacing is not None:
        edges = bin_edges(settings.wavenumber_range, settings.output_resolution)
        per = max(1, int(np.ceil(settings.output_resolution / settings.spacing - 1e-9)))
        pts = uniform_grid(edges[0], edges[-1], settings.output_resolution / per)
        return SpectralGrid(pts, per * np.arange(edges.size), edges)
    found = SignificantLines()
    for a in absorbers:
        if a.per_gas:
            a.significant(found, _resolve_tau(settings), pool)
    steps = sorted({s for a in absorbers for s in a.continuum_steps()})
    return graded_grid(found, settings.wavenumber_range, settings.output_resolution, settings.spacing_fraction,
                       settings.grading, settings.max_spacing, steps=steps)


def _run_graded(columns, absorbers, settings, keep_levels, progress, grid, pool, store=None, held=frozenset()):
    shared, own, everyone = absorbers.shared, absorbers.own, absorbers.everyone
    keeps = []
    for col in columns:
        requested = _keep_levels(col.profile, keep_levels)
        keeps.append((requested, sorted({0, col.profile.nlevels - 1, *requested})))
    nbins = grid.edges.size - 1
    acc = [{"up": {k: np.zeros(nbins) for k in keep}, "dn": {k: np.zeros(nbins) for k in keep},
            "f_up": np.zeros(col.profile.nlevels), "f_dn": np.zeros(col.profile.nlevels), "seconds": 0.0}
           for col, (_, keep) in zip(columns, keeps)]
    method = "tiered" if settings.method == "fast" else "direct"
    exact_tau = _resolve_tau(settings)
    # bound memory (points x layers per sub-grid, as sqrt(layers)) and the lines within reach of one
    nlay = max(c.layers.nlayers for c in columns)
    max_points = max(1000, int(_SUBGRID_POINTS * math.sqrt(49 / max(nlay, 49))))
    if method == "tiered":  # the distant wings once per layer, over the whole range
        todo = [i for i in range(nlay) if i not in held]
        for a in everyone:
            a.prepare_distant(float(grid.wavenumber[0]), float(grid.wavenumber[-1]), pool, layers=todo)
    reach = max(a.near_reach for a in everyone)

    def too_big(lo, hi):
        return max(a.count(lo - reach, hi + reach) for a in everyone) > WINDOW_LINES

    done, b0 = 0, 0
    subs = grid.split(max_points, too_big)
    for part in range(len(subs)):
        sub, subs[part] = subs[part], None  # freed when done, with its quadrature rule (40 bytes a point)
        x = sub.wavenumber
        t0 = time.perf_counter()
        kept = store.held(part, x, held) if store is not None else ()
        if len(kept) != len(held):  # the split follows the lines' reach, the same for the same column
            raise InternalError("DepthStore: the kept optical depths do not match this calculation's sub-grids")
        together = None  # two states of the same air: each layer's shared and own optical depths in one task
        if store is None and not absorbers.groups:
            together = Absorbers.layer_depths_together(shared, own, x, method, exact_tau, pool)
        tau_shared = None if together else shared.layer_depths(x, method, exact_tau, pool, skip=kept)
        tau_groups = [a.layer_depths(x, method, exact_tau, pool) for a in absorbers.groups]
        weights = sub.weights()
        if store is not None:  # one state: its optical depths are all shared
            store.fill(part, tau_shared, kept)
            store.put(part, x, weights, tau_shared)
        line_seconds = (time.perf_counter() - t0) / len(columns)
        b1 = b0 + sub.edges.size - 1
        for s, (col, ab, (_, keep), a) in enumerate(zip(columns, own, keeps, acc)):
            t0 = time.perf_counter()
            if together:
                tau, together[s] = together[s], None
            elif ab.empty:
                tau = tau_shared
            else:  # one state's own optical depths at a time, so that memory holds two arrays of them
                tau = ab.layer_depths(x, method, exact_tau, pool)
                tau += tau_shared
            if absorbers.members[s]:  # gases in amounts that some other states share
                tau = tau + sum(tau_groups[n] for n in absorbers.members[s])
            prof = col.profile
            try:  # the transfer's runs check the optical depths as they start
                fl = spectral_fluxes(x, tau, prof.temperature, prof.surface_temperature, prof.surface_emissivity,
                                     nodes=settings.nodes, diffusivity=settings.diffusivity, keep_levels=keep,
                                     weights=weights, pool=pool)
            except SettingsError:
                _check_optical_depth(tau, x, prof)  # a bad optical depth is ours: say so, with its place
                raise
            del tau
            a["f_up"] += fl.broadband_up
            a["f_dn"] += fl.broadband_down
            up_bins, dn_bins = sub.bin_averages(fl.flux_up), sub.bin_averages(fl.flux_down)
            for idx, k in enumerate(keep):
                a["up"][k][b0:b1] = up_bins[idx]
                a["dn"][k][b0:b1] = dn_bins[idx]
            a["seconds"] += time.perf_counter() - t0 + line_seconds
        del tau_shared, tau_groups
        b0 = b1
        done += x.size
        if progress is not None:
            progress(min(done / len(grid), 1.0))  # sub-grids share their end points
    if store is not None:
        store.end()
    out = []
    for col, (requested, _), a in zip(columns, keeps, acc):
        res = _result(col, settings, grid.edges, a["up"], a["dn"], a["f_up"], a["f_dn"], requested, len(grid), grid)
        res.provenance["_seconds"] = a["seconds"]
        out.append(res)
    return out


def layer_optical_depths(absorbers, x, settings, pool=None):
    """Every layer's optical depth of ``absorbers`` at the points ``x`` [cm-1], shape (layers,
    points), by the settings' method (tiered or direct; call ``absorbers.prepare_distant`` over
    the points' span first for the tiered method's distant wings)."""
    method = "tiered" if settings.method == "fast" else "direct"
    return absorbers.layer_depths(np.asarray(x, dtype=float), method, _resolve_tau(settings), pool)


def _run_uniform(col, absorbers, settings, keep_levels, progress, pool):
    prof = col.profile
    requested = _keep_levels(prof, keep_levels)
    keep = sorted({0, prof.nlevels - 1, *requested})
    res = settings.output_resolution
    edges = bin_edges(settings.wavenumber_range, res)
    nbins = edges.size - 1
    spec_up = {k: np.zeros(nbins) for k in keep}
    spec_dn = {k: np.zeros(nbins) for k in keep}
    f_up = np.zeros(prof.nlevels)
    f_dn = np.zeros(prof.nlevels)
    method = "multigrid" if settings.method == "fast" else "direct"
    bins_per_block = int(round(settings.block_width / res))
    npoints, b0 = 0, 0
    while b0 < nbins:
        b1 = min(nbins, b0 + bins_per_block)
        blo = edges[b0]
        if settings.spacing is not None:
            h = settings.spacing
        else:
            h = uniform_spacing(absorbers.sets(blo, edges[b1]), blo, edges[b1], settings.spacing_fraction,
                                _resolve_tau(settings), settings.max_spacing)
        per_bin = max(1, int(np.ceil(res / h)))
        step = res / per_bin
        grid = blo + step * np.arange((b1 - b0) * per_bin + 1)
        npoints += grid.size
        tau = absorbers.optical_depths(grid, method, 0.0)
        _check_optical_depth(tau, grid, prof)
        weights = np.full(grid.size, step)
        weights[0] = weights[-1] = step / 2
        fl = spectral_fluxes(grid, tau, prof.temperature, prof.surface_temperature, prof.surface_emissivity,
                             nodes=settings.nodes, diffusivity=settings.diffusivity, keep_levels=keep, weights=weights,
                             pool=pool)
        f_up += fl.broadband_up
        f_dn += fl.broadband_down
        for idx, k in enumerate(keep):
            spec_up[k][b0:b1] = uniform_bin_averages(fl.flux_up[idx], per_bin, step, res)
            spec_dn[k][b0:b1] = uniform_bin_averages(fl.flux_down[idx], per_bin, step, res)
        b0 = b1
        if progress is not None:
            progress(b0 / nbins)
    return _result(col, settings, edges, spec_up, spec_dn, f_up, f_dn, requested, npoints, None)


def _result(col, settings, edges, spec_up, spec_dn, f_up, f_dn, requested, npoints, grid):
    prof, lay = col.profile, col.layers
    check_planck_bound(prof, (float(edges[0]), float(edges[-1])), f_up, f_dn)
    q = specific_humidity_from_vmr(lay.vmr["H2O"]) if "H2O" in lay.vmr else None
    hr = heating_rate(f_up, f_dn, prof.pressure, q)
    prov = {
        "specforce_version": __version__,
        "profile": prof.name,
        "profile_source": prof.source,
        "settings": settings,  # typed until a file or text is written (specforce.io.results.settings_record)
        "gases": col.gases,
        "grid_points": int(npoints),
    }
    return LongwaveResult(
        wavenumber=0.5 * (edges[:-1] + edges[1:]),
        olr_spectrum=spec_up[prof.nlevels - 1],
        surface_down_spectrum=spec_dn[0],
        level_spectra_up={k: spec_up[k] for k in requested},
        level_spectra_down={k: spec_dn[k] for k in requested},
        flux_up=f_up, flux_down=f_dn, heating_rate=hr,
        pressure=prof.pressure.copy(), provenance=prov, grid=grid, profile=prof,
    )
