"""Building the fast model's tables from specforce's own line-by-line absorption.

Two passes, and where the layout asks for it a fit, over one graded spectral grid
(:func:`specforce.radiation.longwave.graded_grid_for`), sub-grid by sub-grid, so that memory
stays bounded:

1. **Ordering.** The line-by-line optical depths of a reference column (a bundled profile,
   its amounts scaled by ``Layout.reference_scale``) give each spectral point three keys:
   how deep it emits (:func:`emission_key`: the log-pressure depth below the top at which the
   optical depth from the top reaches 1/1.66, the diffusivity path of unit optical depth, or,
   for a point that does not reach it, the log of its column optical depth); the log of its
   optical depth in the lowest layers (those below 0.8 of the surface pressure, about 2 km),
   which sets the surface's downward flux; and the log of the column optical depth of the
   band's key gas, whose changes the band carries. Where the layout asks for it
   (``Layout.shift_splits``), a fourth: how far the point's emission depth rises when the
   reference column's ``Layout.shift_scale`` gas is scaled (the emission key's change), which
   parts a line's core from its wings. Within each band the points are cut by the first key
   into parts at equal steps along the curve (cumulative weight, scaled key), each part by the
   rise where it is cut, then by the second, and each of those by the third
   (``Layout.splits``, :func:`group_nested`): each final part is a g-point.
2. **Tables.** For every gas, the line-by-line optical depth of a thin layer at each
   (p, T[, H2O]) node of the layout, divided by the gas's column, is averaged over each
   g-point's points with their quadrature weights: the mean cross-section. The tables are
   trained on the optical depths specforce computes, line shapes, cut-offs, CO2's chi wings
   and the continuum (in water's table) included.
3. **Fit** (where ``Layout.fit_pressures`` is set): line-by-line runs of the training states
   give the fluxes of each g-point's own points, and each gas's cross-sections at each
   g-point are scaled by factors fitted to them (:mod:`specforce.kdist.fit`).

Layers of the nodes span 0.25 in ln p (about the AFGL layers' 0.3), with the reference
profile's largest mole fraction of each gas (scaled as above), so that the tiered line sum
treats the same lines exactly as in a column; the tables hold ratios, which do not depend on
the amounts otherwise.
"""

from __future__ import annotations

import time
import types
from dataclasses import replace

import numpy as np
import scipy.sparse

from .._version import __version__
from ..constants import AVOGADRO, DRY_AIR_MOLAR_MASS, STANDARD_GRAVITY
from ..errors import SettingsError
from ..radiation.column import Absorbers, Column
from ..radiation.layers import Layers
from ..radiation.longwave import Settings, graded_grid_for, layer_optical_depths
from ..radiation.workers import TaskPool
from ..io.profiles import load_profile
from .fit import FIT_BOUND, apply_corrections, fit_corrections, training_set
from .layout import DEFAULT_LAYOUT, TABLE_GASES
from .tables import K_FLOOR, KTables, table_key, table_settings

__all__ = ["build_tables", "emission_key", "group_points", "group_nested"]

# Thickness of a node's layer [ln p] (see the module docstring).
_NODE_THICKNESS = 0.25
# Optical depth from the top at which a point is said to emit: 1 / the diffusivity factor 1.66.
_DIFFUSIVITY = 1.66
_EMISSION_DEPTH = 1.0 / _DIFFUSIVITY
# The near-surface layers whose optical depth is the second key: those whose bottom lies below
# this fraction of the surface pressure (about the lowest 2 km).
_NEAR_SURFACE = 0.8
# Nodes per pass of the line sum, and grid points per sub-grid (memory: nodes x points x 8 bytes).
_NODES_PER_PASS = 49
_SUBGRID_POINTS = 60_000


def emission_key(optical_depth, pressure_bottom, pressure_top):
    """How deep each spectral point emits in a column (see the module docstring).

    Parameters
    ----------
    optical_depth : numpy.ndarray
        Layer optical depths, shape (nlayers, npoints), layer 0 at the bottom.
    pressure_bottom, pressure_top : numpy.ndarray
        The layers' bounding pressures [Pa].

    Returns
    -------
    numpy.ndarray
        ln(p_surface / p_emission) >= 0 where the column reaches the emission depth, else
        ln(column optical depth / emission depth) < 0 [dimensionless].
    """
    tau = np.asarray(optical_depth, dtype=float)[::-1]  # from the top down
    cum = np.cumsum(tau, axis=0)
    total = cum[-1]
    key = np.log(np.maximum(total, 1e-30) / _EMISSION_DEPTH)
    deep = total >= _EMISSION_DEPTH
    if deep.any():
        j = np.argmax(cum[:, deep] >= _EMISSION_DEPTH, axis=0)
        cols = np.flatnonzero(deep)
        before = np.where(j > 0, cum[np.maximum(j - 1, 0), cols], 0.0)
        frac = (_EMISSION_DEPTH - before) / np.maximum(tau[j, cols], 1e-300)
        layer = tau.shape[0] - 1 - j
        lp_top, lp_bot = np.log(pressure_top[layer]), np.log(pressure_bottom[layer])
        key[cols] = np.log(pressure_bottom[0]) - (lp_top + np.clip(frac, 0.0, 1.0) * (lp_bot - lp_top))
    return key


def group_points(key, weight, ngroups):
    """Cut points sorted by ``key`` into at most ``ngroups`` g-points at equal steps along the
    curve (cumulative weight, key scaled to 0-1).

    Parameters
    ----------
    key, weight : numpy.ndarray
        Each point's key and quadrature weight [cm-1].
    ngroups : int
        Largest number of g-points.

    Returns
    -------
    numpy.ndarray
        Each point's g-point, 0 .. n-1 in increasing key, every one used.
    """
    order = np.argsort(key, kind="stable")
    k, w = key[order], np.maximum(weight[order], 0.0)
    g = np.cumsum(w) / max(w.sum(), 1e-300)
    span = k[-1] - k[0]
    kn = (k - k[0]) / span if span > 0 else np.zeros_like(k)
    s = np.cumsum(np.hypot(np.diff(g, prepend=0.0), np.diff(kn, prepend=kn[0])))
    raw = np.minimum((s / s[-1] * ngroups).astype(np.int64), ngroups - 1) if s[-1] > 0 else np.zeros(k.size, int)
    _, dense = np.unique(raw, return_inverse=True)
    out = np.empty(key.size, np.int64)
    out[order] = dense
    return out


def group_nested(keys, weight, splits):
    """g-points by nested cuts: the points cut by the first key (:func:`group_points`), each
    part cut again by the second, and so on.

    Parameters
    ----------
    keys : sequence of numpy.ndarray
        The keys, coarsest first.
    weight : numpy.ndarray
        Quadrature weights [cm-1].
    splits : sequence of int
        Largest number of parts per cut, one per key.

    Returns
    -------
    numpy.ndarray
        Each point's g-point, 0 .. n-1, every one used.
    """
    group = np.zeros(weight.size, np.int64)
    for key, n in zip(keys, splits):
        if n <= 1:
            continue
        sub = np.empty_like(group)
        for j in np.unique(group):
            rows = np.flatnonzero(group == j)
            sub[rows] = group_points(key[rows], weight[rows], n)
        _, group = np.unique(group * n + sub, return_inverse=True)
    return group.astype(np.int64)


def _node_layers(pressure, temperature, water, vmr):
    """Thin layers at the given nodes (arrays of equal length) with mole fractions ``vmr``."""
    air = pressure * _NODE_THICKNESS * AVOGADRO / (STANDARD_GRAVITY * DRY_AIR_MOLAR_MASS) * 1e-4
    v = {g: np.full(pressure.size, x) for g, x in vmr.items()}
    v["H2O"] = np.asarray(water, dtype=float)
    half = np.exp(0.5 * _NODE_THICKNESS)
    return Layers(pressure=pressure, temperature=temperature, pressure_bottom=pressure * half,
                  pressure_top=pressure / half, column={g: x * air for g, x in v.items()}, air_column=air, vmr=v)


def _nodes(layout, gas):
    p, t = np.meshgrid(layout.pressure, layout.temperature, indexing="ij")
    if gas != "H2O":
        return p.ravel(), t.ravel(), np.full(p.size, layout.water[0])
    p3, t3, w3 = np.meshgrid(layout.pressure, layout.temperature, layout.water, indexing="ij")
    return p3.ravel(), t3.ravel(), w3.ravel()


def _ordering(reference, lay, subs, settings, layout, pool):
    """Pass 1: the reference column's keys at every point of the sub-grids, and the g-points.

    Returns
    -------
    (x, w, gpoint, band_of)
        The points [cm-1] and weights [cm-1] of all sub-grids in order (shared end points
        twice, each with its sub-grid's weight), each one's g-point, and each g-point's band.
    """
    lo, hi = float(subs[0].wavenumber[0]), float(subs[-1].wavenumber[-1])
    for ab in reference.values():
        ab.prepare_distant(lo, hi, pool)
    xs, ws, emission, near, rise, columns = [], [], [], [], [], {g: [] for g in reference}
    low = lay.pressure_bottom >= _NEAR_SURFACE * lay.pressure_bottom[0]
    scaled, factor = layout.shift_scale
    shifting = any(layout.band_shift_splits(b) > 1 for b in range(layout.nbands)) and scaled in reference
    for sub in subs:
        total = 0.0
        for g, ab in reference.items():
            tau = layer_optical_depths(ab, sub.wavenumber, settings, pool)
            columns[g].append(tau.sum(axis=0))
            total = total + tau
            if g == scaled and shifting:
                tau_scaled = tau
        emission.append(emission_key(total, lay.pressure_bottom, lay.pressure_top))
        if shifting:
            rise.append(emission_key(total + (factor - 1.0) * tau_scaled, lay.pressure_bottom, lay.pressure_top)
                        - emission[-1])
        near.append(np.log(total[low].sum(axis=0) + 1e-12))
        xs.append(sub.wavenumber)
        ws.append(sub.weights())
    x, w, emission, near = (np.concatenate(v) for v in (xs, ws, emission, near))
    rise = np.concatenate(rise) if shifting else np.zeros(x.size)
    columns = {g: np.concatenate(v) for g, v in columns.items()}
    band = np.clip(np.searchsorted(np.asarray(layout.edges), x, side="right") - 1, 0, layout.nbands - 1)
    gpoint = np.empty(x.size, np.int64)
    band_of = []
    for b in range(layout.nbands):
        rows = np.flatnonzero(band == b)
        if rows.size == 0:
            raise SettingsError(f"band {layout.edges[b]:g}-{layout.edges[b + 1]:g} cm-1 has no grid points")
        own = [np.log(columns[g][rows] + 1e-12) if g in columns else np.zeros(rows.size)
               for g in layout.key_gases[b].split("+")]
        splits = layout.band_splits(b)
        local = group_nested([emission[rows], rise[rows], near[rows], *own], w[rows],
                             (splits[0], layout.band_shift_splits(b), *splits[1:]))
        gpoint[rows] = local + len(band_of)
        band_of += [b] * int(local.max() + 1)
    return x, w, gpoint, band_of


def _tabulate(passes, subs, w, gpoint, ng, settings, layout, pool, report):
    """Pass 2: every gas's g-point cross-sections at every node, {gas: ln k (ng, np, nT[, nw])}."""
    lo, hi = float(subs[0].wavenumber[0]), float(subs[-1].wavenumber[-1])
    gweight = np.bincount(gpoint, weights=w, minlength=ng)
    bounds = np.cumsum([0] + [len(sub) for sub in subs])
    log_k = {}
    for n, (gas, sl, ab) in enumerate(passes):
        shape = (len(layout.pressure), len(layout.temperature)) + ((len(layout.water),) if gas == "H2O" else ())
        table = log_k.setdefault(gas, np.zeros((ng,) + shape)).reshape(ng, -1)  # a view
        ab.prepare_distant(lo, hi, pool)
        sums = np.zeros((sl.stop - sl.start, ng))
        for k, sub in enumerate(subs):
            rows = slice(int(bounds[k]), int(bounds[k + 1]))
            tau = layer_optical_depths(ab, sub.wavenumber, settings, pool)
            if layout.average == "transmission":
                tau = np.exp(-_DIFFUSIVITY * tau)
            m = scipy.sparse.csr_matrix((w[rows], (np.arange(tau.shape[1]), gpoint[rows])), shape=(tau.shape[1], ng))
            sums += (m.T @ tau.T).T
        mean = sums / gweight[None, :]
        if layout.average == "transmission":  # the k whose transmittance on the diffusivity path is the mean's
            mean = -np.log(np.clip(mean, 1e-300, 1.0)) / _DIFFUSIVITY
        table[:, sl] = np.log(np.maximum(mean / ab.layers.column[gas][:, None], K_FLOOR)).T
        report((n + 1) / len(passes))
    return log_k


def _planck_pairs(x, w, gpoint, layout):
    """Each g-point's points in 1 cm-1 bins: (g-point, weighted mean wavenumber [cm-1], summed
    weight [cm-1]) per pair, sorted by g-point."""
    nbins = int(np.ceil(layout.edges[-1])) + 1
    uniq, inv = np.unique(gpoint * nbins + np.floor(x).astype(np.int64), return_inverse=True)
    pw = np.bincount(inv, weights=w)
    px = np.bincount(inv, weights=w * x) / np.where(pw != 0, pw, 1.0)
    return uniq // nbins, px, pw


def build_tables(spectroscopy, settings=Settings(), layout=DEFAULT_LAYOUT, *, progress=None):
    """Build the fast model's tables from line-by-line absorption (see the module docstring).

    Parameters
    ----------
    spectroscopy : Spectroscopy
        The line data (and continuum table) the tables are for.
    settings : Settings
        Line-by-line settings; the line shape, cut-offs, continuum, grid rules and threads
        are used, the range is the layout's.
    layout : Layout
        Bands, g-points and nodes.
    progress : callable, optional
        Called with the fraction of the work done (0-1).

    Returns
    -------
    KTables
        Uncalibrated (see :func:`specforce.forcing.calibration.calibrate`).
    """
    t_start = time.perf_counter()
    s = table_settings(settings, layout)
    report = progress or (lambda f: None)
    ref = load_profile(layout.reference_profile)
    for gas, factor in layout.reference_scale:
        if gas in ref.vmr:
            ref = ref.with_vmr(gas, ref.vmr[gas] * factor)
    gases = [g for g in TABLE_GASES if g in spectroscopy.gases and g in ref.vmr]
    if s.continuum and "H2O" not in gases and "H2O" in ref.vmr:
        gases.insert(0, "H2O")
    if not gases:
        raise SettingsError(f"no gas to tabulate: the spectroscopy has {', '.join(spectroscopy.gases) or 'none'}, "
                            f"the fast model tabulates {', '.join(TABLE_GASES)}")
    s = replace(s, gases=tuple(g for g in gases if g in spectroscopy.gases or g == "H2O"))
    column = Column(ref, spectroscopy, s)
    # the reference column's absorbers gas by gas (the continuum with water), for the keys
    reference = {g: Absorbers(column, spectroscopy, [g] if g in spectroscopy.gases else [], s,
                              column.continuum and g == "H2O") for g in gases}
    top = {g: float(np.max(ref.vmr[g])) for g in gases}
    passes = []  # (gas, node slice, Absorbers)
    for gas in gases:
        p, t, w = _nodes(layout, gas)
        for a in range(0, p.size, _NODES_PER_PASS):
            sl = slice(a, min(p.size, a + _NODES_PER_PASS))
            lay = _node_layers(p[sl], t[sl], w[sl], {gas: top[gas]} if gas != "H2O" else {})
            fake = types.SimpleNamespace(layers=lay, gases=[gas], continuum=s.continuum and gas == "H2O")
            passes.append((gas, sl, Absorbers(fake, spectroscopy, [gas] if gas in spectroscopy.gases else [], s,
                                              fake.continuum)))
    with TaskPool(s.threads) as pool:
        everyone = list(reference.values()) + [ab for _, _, ab in passes]
        grid = graded_grid_for(everyone, s, pool)
        report(0.02)
        reach = max(a.near_reach for a in everyone)
        subs = grid.split(_SUBGRID_POINTS, lambda a, b: max(x.count(a - reach, b + reach) for x in everyone) > 100_000)
        x, w, gpoint, band_of = _ordering(reference, column.layers, subs, s, layout, pool)
        share = 0.45 if layout.fit_pressures else 0.9  # of the progress bar: the tables, then the fit
        report(0.1)
        log_k = _tabulate(passes, subs, w, gpoint, len(band_of), s, layout, pool,
                          lambda f: report(0.1 + share * f))
        pg, px, pw = _planck_pairs(x, w, gpoint, layout)
        tables = KTables(layout=layout, band=np.asarray(band_of, np.int64), log_k=log_k, planck_gpoint=pg,
                         planck_wavenumber=px, planck_weight=pw, key=table_key(spectroscopy, settings, layout))
        fitted = None
        if layout.fit_pressures:
            t_fit = time.perf_counter()
            columns = [(load_profile(n), "as given") for n in layout.fit_profiles]
            columns += [(load_profile(n), v) for n, v in layout.fit_variants]
            training = training_set(tables, columns, spectroscopy, s, subs,
                                    w, gpoint, pool, lambda f: report(0.55 + 0.3 * f))
            fitted_gases = list(tables.log_k)
            c, record = fit_corrections(training, fitted_gases, layout.fit_knots, pool,
                                        lambda f: report(0.85 + 0.15 * f), bands=tables.band,
                                        coupling=layout.fit_coupling)
            tables = apply_corrections(tables, fitted_gases, layout.fit_knots, c)
            fitted = {"training_profiles": list(layout.fit_profiles),
                      "training_variants": [f"{n} {v}" for n, v in layout.fit_variants],
                      "knots_Pa": list(layout.fit_pressures),
                      "coupling": layout.fit_coupling,
                      "seconds": round(time.perf_counter() - t_fit, 1),
                      "loss_by_iteration": [round(v, 3) for v in record["loss"]],
                      "coupled_from_iteration": record["coupled_from_iteration"],
                      "factor_range": [round(float(np.exp(c.min())), 4), round(float(np.exp(c.max())), 4)],
                      "factors_at_bound": int(np.sum(np.abs(c) >= FIT_BOUND - 1e-12))}
    prov = {"specforce_version": __version__, "built": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
            "build_seconds": round(time.perf_counter() - t_start, 1), "grid_points": int(len(grid)),
            "spectroscopy": spectroscopy.provenance.get("kind", "unknown"),
            "spectroscopy_accuracy": spectroscopy.provenance.get("accuracy", ""),
            "line_shape": repr(s.line_shape()), "continuum": bool(s.continuum),
            "reference": f"{ref.name} with " + (", ".join(f"{g} x{f:g}" for g, f in layout.reference_scale) or
                                                "its own amounts"),
            "overlap": "spectral mapping: one ordering per band for every gas (West et al. 1990; Hogan 2010)",
            "fit": fitted or "none: each g-point's mean cross-section"}
    return replace(tables, provenance=prov)
