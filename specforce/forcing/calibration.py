"""The fast model's error against line-by-line, measured on a calibration set and stored with
its tables.

The set: the six AFGL profiles, each as given ("quick") and, in the full set, in four variants,
with their changes (:mod:`specforce.kdist.cases` defines them all). The quick set's states are
also the fit's training states (:mod:`specforce.kdist.fit`), so its errors are in-sample for
the fit; the full set's variants are not.

Each state runs through both models with the same settings; the record keeps, per change,
the largest and the mean relative error of the forcing at the top, the tropopause (WMO) and
the surface, the state of the largest and the largest in each variant, and over all states
(and in each variant) the largest error of OLR, surface downward flux and heating rates
(between the surface and 1 hPa), with the ranges the set spans. The flux errors are kept twice:
over every state run, the changed ones included (CO2 up to 8x), and over the set's states
before their changes (``fluxes_base``): the heating rates of the upper stratosphere under 4-8x
CO2 are the fast model's largest errors.
"""

from __future__ import annotations

import time
from dataclasses import replace

import numpy as np

from ..io.profiles import load_profile
from ..kdist.cases import BASE_AMOUNTS, CALIBRATION_SETS, CHANGES, PROFILES, calibration_states
from ..kdist.solve import remember
from ..radiation.longwave import compute_longwave_states
from .instantaneous import tropopause_level

__all__ = ["calibrate"]

_TOP_PRESSURE = 100.0  # Pa: heating rates are compared between the surface and 1 hPa
_FLUXES = ("olr_W_m2", "surface_down_W_m2", "heating_K_day")  # the flux errors kept


def _largest(by_variant):
    """Each flux error's largest over the variants, and each variant's, rounded for the record."""
    return ({k: round(max(f[k] for f in by_variant.values()), 4) for k in _FLUXES},
            {v: {k: round(x, 4) for k, x in f.items()} for v, f in by_variant.items()})


def _errors(lbl, fast, trop):
    out = {}
    for where, level in (("toa", -1), ("tropopause", trop), ("surface", 0)):
        # forcing: the change of net downward flux
        out[where] = tuple(float(r[0].net_flux[level] - r[1].net_flux[level]) for r in (fast, lbl))
    return out


def calibrate(tables, spectroscopy, settings, cases="quick", progress=None, profiles=PROFILES):
    """Measure the fast model against line-by-line on a calibration set; the tables with the record.

    Parameters
    ----------
    tables : KTables
        The tables to calibrate (kept for this process, so that the fast runs use them).
    spectroscopy : Spectroscopy
        The spectroscopy they were built for.
    settings : Settings
        The line-by-line settings they were built with.
    cases : {"quick", "full"}
        The calibration set (see the module docstring and :data:`specforce.kdist.cases.CALIBRATION_SETS`).
    progress : callable, optional
        Called with the fraction done.
    profiles : sequence of str
        The bundled profiles of the set (default the six AFGL ones; fewer for tests).

    Returns
    -------
    KTables
        ``tables`` with ``calibration`` filled in.
    """
    if cases not in CALIBRATION_SETS:
        raise ValueError(f"cases must be one of {', '.join(CALIBRATION_SETS)}, got {cases!r}")
    t_start = time.perf_counter()
    remember(tables)
    lo, hi = tables.layout.edges[0], tables.layout.edges[-1]
    s_lbl = replace(settings, spectral_model="lbl", wavenumber_range=(lo, hi), refine=1)
    s_fast = replace(s_lbl, spectral_model="kdist")
    per_change = {label: {"toa": [], "tropopause": [], "surface": []} for label in CHANGES}
    variants = CALIBRATION_SETS[cases]
    flux = {v: dict.fromkeys(_FLUXES, 0.0) for v in variants}
    flux_base = {v: dict.fromkeys(_FLUXES, 0.0) for v in variants}  # the base states alone
    ranges = {"temperature_K": [np.inf, -np.inf], "H2O": [np.inf, -np.inf]}
    jobs = [(p, v) for p in profiles for v in CALIBRATION_SETS[cases]]
    for n, (name, variant) in enumerate(jobs):
        base, pairs = calibration_states(load_profile(name), variant)
        states = [base] + [pert if b is base else b for b, pert in pairs.values()]
        trop = tropopause_level(base)
        runs = {}
        for model, s in (("lbl", s_lbl), ("kdist", s_fast)):
            runs[model] = compute_longwave_states(states, spectroscopy, s, keep_levels=[trop])
        index = {id(st): k for k, st in enumerate(states)}
        for label, (b, pert) in pairs.items():
            i, j = index[id(b)], index[id(pert)]
            errs = _errors((runs["lbl"][i], runs["lbl"][j]), (runs["kdist"][i], runs["kdist"][j]), trop)
            for where, (fk, fl) in errs.items():
                per_change[label][where].append((fk, fl, name, variant))
        for k, (rl, rk) in enumerate(zip(runs["lbl"], runs["kdist"])):
            below = rl.pressure[1:] >= _TOP_PRESSURE
            errors = {"olr_W_m2": abs(rk.olr - rl.olr), "surface_down_W_m2": abs(rk.surface_down - rl.surface_down),
                      "heating_K_day": float(np.max(np.abs(rk.heating_rate - rl.heating_rate)[below]))}
            for record in (flux[variant], flux_base[variant]) if k == 0 else (flux[variant],):
                for q, e in errors.items():
                    record[q] = max(record[q], e)
        for st in states:
            ranges["temperature_K"] = [min(ranges["temperature_K"][0], float(st.temperature.min())),
                                       max(ranges["temperature_K"][1], float(st.temperature.max()))]
            ranges["H2O"] = [min(ranges["H2O"][0], float(st.vmr["H2O"].min())),
                             max(ranges["H2O"][1], float(st.vmr["H2O"].max()))]
        if progress is not None:
            progress((n + 1) / len(jobs))
    forcing = {}
    for label, by in per_change.items():
        forcing[label] = {}
        for where, pairs in by.items():
            if not pairs:
                continue
            rel = [(100.0 * (fk - fl) / fl, f"{p} {v}", v) for fk, fl, p, v in pairs if abs(fl) > 0.05]
            ab = [fk - fl for fk, fl, _, _ in pairs]
            worst = max(rel, key=lambda r: abs(r[0])) if rel else None
            forcing[label][where] = {"max_abs_percent": round(abs(worst[0]), 3) if rel else None,
                                     "mean_percent": round(float(np.mean([r[0] for r in rel])), 3) if rel else None,
                                     "max_abs_W_m2": round(float(np.max(np.abs(ab))), 4),
                                     "worst_state": worst[1] if rel else None,
                                     "by_variant": {v: round(max(abs(r[0]) for r in rel if r[2] == v), 3)
                                                    for v in variants if any(r[2] == v for r in rel)}}
    amounts = {}
    for g, x in BASE_AMOUNTS.items():
        values = [x] + [x * f if before is None else before for gas, before, f in CHANGES.values() if gas == g]
        amounts[g] = [min(values), max(values)]
    (fluxes, fluxes_by_variant), (fluxes_base, fluxes_base_by_variant) = _largest(flux), _largest(flux_base)
    record = {"set": cases, "profiles": list(profiles), "variants": list(CALIBRATION_SETS[cases]),
              "states": len(jobs), "seconds": round(time.perf_counter() - t_start, 1), "forcing": forcing,
              "fluxes": fluxes, "fluxes_by_variant": fluxes_by_variant,
              "fluxes_base": fluxes_base, "fluxes_base_by_variant": fluxes_base_by_variant,
              "ranges": {**{k: [round(a, 6) for a in v] for k, v in ranges.items()},
                         **{f"{g}_mol_mol": v for g, v in amounts.items()}}}
    return replace(tables, calibration=record)
