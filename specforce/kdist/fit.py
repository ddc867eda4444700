"""Fitting the fast model's tables to line-by-line fluxes, g-point by g-point.

A g-point's table holds the mean cross-section of its spectral points. Where those points'
optical depths in a layer differ a lot, the mean makes the g-point too opaque: the mean of
their transmittances exceeds the transmittance of their mean optical depth (Jensen's
inequality), so the unfitted model's OLR comes out low and its forcings off by percents.
Adjusting a k-distribution's coefficients until its fluxes and heating rates match
line-by-line ones on a set of training columns is common practice in building fast models
(recalled from memory; the formulation here is ours). The steps are Levenberg's (1944,
Q. Appl. Math. 2, 164) and Marquardt's (1963, J. SIAM 11, 431) damped least squares.

Here every g-point is a fixed set of spectral points, so line-by-line gives the fluxes of
each g-point's own points (:func:`training_set`): the fit is one small problem per g-point,
and the g-points are fitted side by side. Each gas's cross-section at a g-point is scaled by
``exp(c(ln p))``, with ``c`` piecewise linear in ln p between knots at table pressures
(``Layout.fit_pressures``) and constant beyond the outer ones; the factors are fitted by
damped Gauss-Newton steps (Levenberg-Marquardt) to the training states' fluxes, heating
rates and forcings (:func:`fit_corrections`) and folded into the tables (``ln k + c``), which
is exact at every layer because the tables are interpolated linearly in ln p and the knots
are table pressures. Since what counts is the errors' sum over the g-points, after the first
iterations each g-point also takes a share of its band's summed errors (the coupling,
``Layout.fit_coupling``). The training columns are the calibration's profiles "as given" and
the variants ``Layout.fit_variants`` names (:mod:`specforce.kdist.cases`); the calibration's
other variants (other temperatures and water) and the benchmark's held-out cases (two warmed
columns; two amounts between the training ones) measure the model on states the fit has not
seen.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import scipy.sparse

from ..errors import SettingsError
from ..radiation.column import Absorbers, Column
from ..radiation.humidity import specific_humidity_from_vmr
from ..radiation.longwave import layer_optical_depths
from ..radiation.transfer import heating_rate, source_fluxes, spectral_fluxes
from ..radiation.workers import run_tasks
from .cases import TRAINING_CHANGES, calibration_states

__all__ = ["TrainingSet", "training_set", "fit_corrections", "apply_corrections", "knot_basis", "FIT_BOUND"]

# What the fit aims at (the tolerances): fluxes 0.5 W m-2, heating rates 0.1 K/day between
# the surface and 1 hPa, forcings 1 % for CO2 and 2 % for the other gases, at every level
# (relative to the larger of the level's forcing and a quarter of the column's largest, so that
# levels where a forcing crosses zero do not take all the weight). Each residual is an error
# divided by its tolerance.
_FLUX_TOL = 0.5
_HEATING_TOL = 0.1
_HEATING_TOP = 100.0  # Pa; above it heating rates count in proportion to pressure (thin layers' are large)
_FORCING_TOL = {"CO2": 0.01}
_OTHER_FORCING_TOL = 0.02
_FORCING_FLOOR = 0.25
_FORCING_LEAST = 0.05  # W m-2: the least forcing a tolerance is taken of (a change the bands barely see)
_ENDS = 3.0  # extra weight of the forcings at the surface and the top, where they are quoted
# Ridge on the corrections (in tolerance units squared per unit of c), bounds, steps.
_RIDGE = 1e-3
FIT_BOUND = 2.0  # largest |c|: factors within e^-2 to e^2
_STEP = 1e-4  # finite-difference step in c
_ITERATIONS = 8
_ALONE = 2  # iterations before the g-points share their bands' errors (fit_corrections' coupling)
_BLOCK = 256  # g-points per task of the normal equations


@dataclass
class _Column:
    """One training column (a base state and its changes): what both models need."""

    log_p: np.ndarray           # layer ln p, (nlay,)
    tau: dict                   # gas -> the unfitted tables' optical depths, (nlay, nstates, ng)
    source: np.ndarray          # Planck sources at the levels, (nlev, nstates, ng)
    surface: np.ndarray         # at the skin temperature, (nstates, ng)
    emissivity: float
    heat: np.ndarray            # heating rate per unit net-flux divergence, (nlay, nstates) [K/day / W m-2]
    up: np.ndarray              # line-by-line fluxes over each g-point's points, (nlev, nstates, ng) [W m-2]
    down: np.ndarray
    pairs: list                 # (base index, perturbed index, tolerance per level (nlev,)) [W m-2]


@dataclass
class TrainingSet:
    """The training columns, and the settings of their transfer."""

    columns: list
    nodes: int
    diffusivity: bool


def training_set(tables, profiles, spectroscopy, settings, subs, weight, gpoint, pool, report=None):
    """Line-by-line fluxes of every g-point's own spectral points in the training states, and the
    unfitted tables' optical depths and sources for the same states.

    Parameters
    ----------
    tables : KTables
        The unfitted tables.
    profiles : sequence of (Profile, str)
        The training columns: a profile and its variant (:data:`CALIBRATION_SETS`' names); each
        gives a base state and its changes (:func:`calibration_states`).
    spectroscopy, settings
        As the tables were built with (the settings over the layout's range).
    subs : list of SpectralGrid
        The build's sub-grids; ``weight`` [cm-1] and ``gpoint`` give each of their points (in
        order, shared end points twice) its quadrature weight and g-point.
    pool : TaskPool
    report : callable, optional
        Called with the fraction done.
    """
    ng = tables.ngpoints
    bounds = np.cumsum([0] + [len(s) for s in subs])
    out = []
    for n, (profile, variant) in enumerate(profiles):
        base, pairs = calibration_states(profile, variant, changes=TRAINING_CHANGES)
        states = [base]
        index = []
        for label, (b, pert) in pairs.items():
            for st in (b, pert):
                if not any(st is x for x in states):
                    states.append(st)
            index.append((label, next(i for i, x in enumerate(states) if x is b),
                          next(i for i, x in enumerate(states) if x is pert)))
        cols = [Column(st, spectroscopy, settings) for st in states]
        # one Absorbers per gas and distinct amount: a state shares the first state's where they agree
        absorbers = []  # per state: {gas: Absorbers}
        for c in cols:
            own = {}
            for g in c.gases:
                same = next((a[g] for c0, a in zip(cols, absorbers) if c0.same_air(c) and c0.same_gas(c, g)), None)
                own[g] = same or Absorbers(c, spectroscopy, [g] if g in spectroscopy.gases else [], settings,
                                           c.continuum and g == "H2O")
            absorbers.append(own)
        unique = list({id(a): a for own in absorbers for a in own.values()}.values())
        lo, hi = float(subs[0].wavenumber[0]), float(subs[-1].wavenumber[-1])
        for a in unique:
            a.prepare_distant(lo, hi, pool)
        nlev = cols[0].profile.nlevels
        up = np.zeros((nlev, len(states), ng))
        dn = np.zeros_like(up)
        for k, sub in enumerate(subs):
            rows = slice(int(bounds[k]), int(bounds[k + 1]))
            x, w = sub.wavenumber, weight[rows]
            m = scipy.sparse.csr_matrix((np.ones(x.size), (np.arange(x.size), gpoint[rows])), shape=(x.size, ng))
            depth = {id(a): layer_optical_depths(a, x, settings, pool) for a in unique}
            for i, (c, own) in enumerate(zip(cols, absorbers)):
                p = c.profile
                tau = sum(depth[id(a)] for a in own.values())
                f = spectral_fluxes(x, tau, p.temperature, p.surface_temperature, p.surface_emissivity,
                                    nodes=settings.nodes, diffusivity=settings.diffusivity, weights=w, pool=pool)
                up[:, i] += (m.T @ (f.flux_up * w).T).T
                dn[:, i] += (m.T @ (f.flux_down * w).T).T
        lay = cols[0].layers
        tau = {g: np.stack([tables.optical_depth(c.layers, [g]) for c in cols], axis=1) for g in cols[0].gases
               if g in tables.log_k}
        src = np.stack([tables.planck_sources(np.r_[c.profile.temperature, c.profile.surface_temperature])
                        for c in cols], axis=1)  # (nlev + 1, nstates, ng)
        heat = np.stack([_heating_factor(c) for c in cols], axis=1)
        tol_pairs = []
        net = up - dn
        for label, i, j in index:
            forcing = (net[:, j] - net[:, i]).sum(axis=-1)  # all g-points: the line-by-line forcing profile
            gas = TRAINING_CHANGES[label][0]
            rel = _FORCING_TOL.get(gas, _OTHER_FORCING_TOL)
            scale = np.maximum(np.abs(forcing), _FORCING_FLOOR * np.max(np.abs(forcing)))
            tol_pairs.append((i, j, rel * np.maximum(scale, _FORCING_LEAST)))
        out.append(_Column(log_p=np.log(lay.pressure), tau=tau, source=src[:-1], surface=src[-1],
                           emissivity=float(cols[0].profile.surface_emissivity), heat=heat, up=up, down=dn,
                           pairs=tol_pairs))
        if report is not None:
            report((n + 1) / len(profiles))
    return TrainingSet(columns=out, nodes=settings.nodes, diffusivity=settings.diffusivity)


def _heating_factor(column):
    """Heating rate per unit net-flux divergence of each layer [K day-1 / (W m-2)]: the heating
    rate (linear in the fluxes) of net fluxes that fall by 1 W m-2 across every layer."""
    p = column.profile.pressure
    q = specific_humidity_from_vmr(column.layers.vmr["H2O"]) if "H2O" in column.layers.vmr else None
    return heating_rate(-np.arange(p.size, dtype=float), np.zeros(p.size), p, q)


def knot_basis(log_p, knots):
    """Hat functions of ln p on ``knots`` (ln p, increasing), constant beyond the outer ones:
    shape (len(log_p), len(knots)); each row sums to 1."""
    lp = np.clip(np.asarray(log_p, dtype=float), knots[0], knots[-1])
    i = np.clip(np.searchsorted(knots, lp) - 1, 0, knots.size - 2)
    f = (lp - knots[i]) / (knots[i + 1] - knots[i])
    out = np.zeros((lp.size, knots.size))
    out[np.arange(lp.size), i] = 1.0 - f
    out[np.arange(lp.size), i + 1] += f
    return out


def _depth(col, c, gases, basis, sel=slice(None)):
    """The optical depths of g-points ``sel`` (nlay, nstates, nsel) for their corrections ``c``
    (ngases, nknots, nsel)."""
    tau = 0.0
    for a, g in enumerate(gases):
        if g in col.tau:
            tau = tau + np.exp(basis @ c[a])[:, None, :] * col.tau[g][..., sel]
    return tau


def _residuals(col, tau, training, sel=slice(None)):
    """The errors of g-points ``sel`` in tolerance units, shape (nresiduals, nsel), for their
    optical depths ``tau`` (nlay, nstates, nsel)."""
    up, dn = source_fluxes(tau, col.source[..., sel], col.surface[..., sel], col.emissivity, nodes=training.nodes,
                           diffusivity=training.diffusivity)
    ref_up, ref_dn = col.up[..., sel], col.down[..., sel]
    parts = [(up[-1] - ref_up[-1]) / _FLUX_TOL, (dn[0] - ref_dn[0]) / _FLUX_TOL]
    net, ref = up - dn, ref_up - ref_dn
    weight = np.minimum(1.0, np.exp(col.log_p) / _HEATING_TOP)[:, None, None] / _HEATING_TOL
    parts.append(weight * col.heat[:, :, None] * ((net[:-1] - net[1:]) - (ref[:-1] - ref[1:])))
    for i, j, tol in col.pairs:
        parts.append(((net[:, j] - net[:, i]) - (ref[:, j] - ref[:, i])) / tol[:, None])
        parts.append(_ENDS * (parts[-1][[0, -1]]))  # the surface and the top again
    return np.concatenate([x.reshape(-1, x.shape[-1]) for x in parts])


def fit_corrections(training, gases, knots, pool=None, report=None, bands=None, coupling=0.0):
    """The corrections ``c`` (ngases, nknots, ng) that fit the training set (see the module
    docstring): damped Gauss-Newton steps, with Jacobians by finite differences taken for blocks
    of g-points at once (each g-point's problem is its own; a task per training column and block,
    so that the threads stay busy and each task's Jacobian small: on the default layout's
    training set, six columns, 168.5 s against 214.0 s with one task per column, the factors
    the same to 8e-7; ``benchmarks/bench_kdist_fit.py``).

    Each g-point's errors shrink on their own; but the errors that count are their sums over a
    band, and small errors of one sign in every g-point add up (the fast OLR came out 0.3-0.4
    W m-2 low in every state). With ``bands`` and a ``coupling`` above 0, after the first
    iterations each g-point aims, at every iteration, at ``coupling`` times (its errors minus
    its share of its band's summed errors) instead of zero: a block-Jacobi step on the band
    sums, in which the g-points of a band share its summed error equally.

    Parameters
    ----------
    training : TrainingSet
    gases : sequence of str
        The tabulated gases, in the order of ``c``'s first axis.
    knots : numpy.ndarray
        ln p of the knots [ln Pa], increasing.
    pool : TaskPool, optional
        Threads to take the training columns on.
    report : callable, optional
        Called with the fraction done.
    bands : numpy.ndarray, optional
        The band of each g-point (indices from 0).
    coupling : float
        In 0-1 (see above; ``Layout.fit_coupling``).

    Returns
    -------
    (numpy.ndarray, dict)
        The corrections, and a record: each iteration's summed squared residuals (from the
        first coupled iteration on, about the coupled aims), and that iteration (counted from 1).
    """
    ng = training.columns[0].up.shape[-1]
    nk = knots.size
    npar = len(gases) * nk
    bases = [knot_basis(col.log_p, knots) for col in training.columns]
    # a gas's factors are free only at g-points where it absorbs
    free = np.zeros((len(gases), ng), bool)
    for col in training.columns:
        for a, g in enumerate(gases):
            if g in col.tau:
                free[a] |= col.tau[g].sum(axis=0).max(axis=0) > 1e-4
    free = np.repeat(free[:, None, :], nk, axis=1).reshape(npar, ng)
    c = np.zeros((npar, ng))

    targets = [0.0] * len(training.columns)  # what each g-point's errors aim at (see the coupling)

    def errors(n, tau, sel=slice(None)):
        r = _residuals(training.columns[n], tau, training, sel)
        return r - (targets[n][:, sel] if np.ndim(targets[n]) else 0.0)

    def loss(cc):
        total = _RIDGE * (cc ** 2).sum(axis=0)
        for n, (col, basis) in enumerate(zip(training.columns, bases)):
            tau = _depth(col, cc.reshape(len(gases), nk, ng), gases, basis)
            total = total + (errors(n, tau) ** 2).sum(axis=0)
        return total

    coupled = bands is not None and coupling > 0
    if coupled:  # each g-point's share of its band's summed errors
        active = free.any(axis=0)
        count = np.bincount(bands, weights=active, minlength=bands.max() + 1)
        share = np.where(active, 1.0 / np.maximum(count[bands], 1.0), 0.0)
        in_band = scipy.sparse.csr_matrix((np.ones(ng), (np.arange(ng), bands)))
    # blocks of g-points (each g-point's problem is its own): a bounded Jacobian, and the threads
    # kept busy to the end
    blocks = [slice(b, min(ng, b + _BLOCK)) for b in range(0, ng, _BLOCK)]
    tasks = [(n, b) for b in blocks for n in range(len(training.columns))]
    history = []
    damping = np.full(ng, 1e-2)
    current = loss(c)
    history.append(float(current.sum()))
    for it in range(_ITERATIONS):
        if coupled and it >= _ALONE:  # new aims, and the loss about them (loss(c), from the same residuals)
            current = _RIDGE * (c ** 2).sum(axis=0)
            for n, (col, basis) in enumerate(zip(training.columns, bases)):
                r = _residuals(col, _depth(col, c.reshape(len(gases), nk, ng), gases, basis), training)
                summed = (in_band.T @ r.T).T  # (nresiduals, nbands)
                targets[n] = coupling * (r - share * summed[:, bands])
                current = current + ((r - targets[n]) ** 2).sum(axis=0)

        def normal(task):  # one column's share of the normal equations, for a block of g-points
            n, block = task
            col, basis = training.columns[n], bases[n]
            cc = c.reshape(len(gases), nk, ng)[..., block]
            tau0 = _depth(col, cc, gases, basis, block)
            r0 = errors(n, tau0, block)
            jac = np.zeros((r0.shape[1], npar, r0.shape[0]))  # each g-point's Jacobian, transposed
            for p in range(npar):  # only the g-points where the parameter is free
                a, k = divmod(p, nk)
                sel = np.flatnonzero(free[p, block])
                if sel.size == 0 or gases[a] not in col.tau:
                    continue
                own = basis @ cc[a][:, sel]
                step = np.exp(own + _STEP * basis[:, k:k + 1]) - np.exp(own)  # gas a's factor, changed at knot k
                tau = tau0[..., sel] + step[:, None, :] * col.tau[gases[a]][..., block][..., sel]
                jac[sel, p] = ((errors(n, tau, block.start + sel) - r0[:, sel]) / _STEP).T
            return jac @ jac.transpose(0, 2, 1), (jac @ r0.T[:, :, None])[:, :, 0]

        shares = iter(run_tasks(pool, normal, tasks))
        a_mat, grad = np.zeros((ng, npar, npar)), np.zeros((ng, npar))
        for b in blocks:  # summed over the columns in their order
            a_sum, g_sum = 0.0, 0.0
            for _ in training.columns:
                a, g = next(shares)
                a_sum, g_sum = a_sum + a, g_sum + g
            a_mat[b], grad[b] = a_sum, g_sum
        a_mat += _RIDGE * np.eye(npar)[None]
        grad += _RIDGE * c.T
        diag = np.einsum("gpp->gp", a_mat)
        start = c.copy()
        pending = free.any(axis=0)  # g-points still to take a step from this linearisation
        for _ in range(4):  # each try more damped where the last one did not lower the loss
            lhs = a_mat + (damping[:, None] * np.maximum(diag, 1e-12))[:, :, None] * np.eye(npar)[None]
            step = -np.linalg.solve(lhs, grad[:, :, None])[:, :, 0].T
            trial = np.where(pending, np.clip(start + step * free, -FIT_BOUND, FIT_BOUND), c)
            new = loss(trial)
            better = pending & (new < current)
            c[:, better] = trial[:, better]
            current = np.where(better, new, current)
            damping = np.where(better, damping / 3.0, np.where(pending, damping * 4.0, damping))
            pending &= ~better
            if not pending.any():
                break
        history.append(float(current.sum()))
        if report is not None:
            report((it + 1) / _ITERATIONS)
    return c.reshape(len(gases), nk, ng), {"loss": history, "coupled_from_iteration": _ALONE + 1 if coupled else None}


def apply_corrections(tables, gases, knots, c):
    """The tables with each gas's ln k raised by its correction at the table pressures; exact at
    any layer because the knots (ln p, increasing) must be table pressures (checked)."""
    lp = np.log(np.asarray(tables.layout.pressure))
    if not all(np.any(np.isclose(k, lp, rtol=0.0, atol=1e-9)) for k in knots):
        raise SettingsError(f"the fit's knots must be table pressures, got {np.exp(knots)} Pa")
    basis = knot_basis(lp, knots)  # (np, nk)
    log_k = dict(tables.log_k)
    for a, g in enumerate(gases):
        if g not in log_k:
            continue
        shift = (basis @ c[a]).T  # (ng, np)
        table = log_k[g]
        log_k[g] = table + shift.reshape(shift.shape + (1,) * (table.ndim - 2))
    return replace(tables, log_k=log_k)
