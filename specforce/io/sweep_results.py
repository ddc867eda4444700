"""Concentration sweeps as files and text: an :class:`xarray.Dataset`, a JSON-ready dict and a table.

The one rendering of :class:`specforce.forcing.sweep.SweepResult`; its ``to_dataset()``,
``to_dict()`` and ``summary()`` call these. The settings stay a
:class:`specforce.radiation.longwave.Settings` in the sweep's provenance and become a dict
only here (:func:`specforce.io.results.provenance_record`).
"""

from __future__ import annotations

import json
import warnings

from .results import CAUTION, provenance_record, settings_record, to_jsonable

__all__ = ["sweep_dataset", "sweep_dict", "sweep_text"]


def _refit_record(fits, long_keys):
    """The refits as plain dicts; ``long_keys`` names the residuals with their unit and adds the largest."""
    out = {}
    for k, f in (fits or {}).items():
        rec = {"form": f.form, "coefficients": f.coefficients, "standard_errors": f.standard_errors}
        if long_keys:
            rec.update({"rms_residual_W_m2": f.rms_residual, "max_residual_W_m2": f.max_residual})
        else:
            rec["rms_residual"] = f.rms_residual
        rec["warning"] = f.warning
        out[k] = rec
    return out


def sweep_dict(sweep):
    """Concentrations, forcings, each formula's value, refits and provenance of a sweep, JSON-ready."""
    from ..forcing.formulas import COMPARISON_NOTE, FormulaRangeWarning
    from ..forcing.refits import forcing_per_doubling

    p = sweep.provenance
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", FormulaRangeWarning)
        published = sweep.formulas()
    per_doubling = (forcing_per_doubling(sweep.concentration, sweep.weighted)
                    if sweep.gas == "CO2" and len(sweep.concentration) >= 2 else None)
    return to_jsonable({
        "gas": sweep.gas, "unit": sweep.unit, "reference": sweep.reference, "background": sweep.background,
        "wavenumber_range_cm-1": list(sweep.wavenumber_range), "comparison_omitted": sweep.comparison_omitted,
        "concentration": sweep.concentration, "profiles": sweep.profiles, "weights": sweep.weights,
        "forcing_kind": sweep.kind, "forcing": dict(zip(sweep.profiles, sweep.forcing)),
        "forcing_toa": dict(zip(sweep.profiles, sweep.forcing_toa)),
        "weighted_forcing": sweep.weighted, "formulas": published,
        "refits": _refit_record(sweep.refits, long_keys=True),
        "forcing_per_doubling_W_m2": per_doubling,
        "formula_range_warnings": sorted({str(w.message) for w in caught}),
        "comparison_note": COMPARISON_NOTE, "spectroscopy_accuracy": sweep.spectroscopy_accuracy,
        "caution": CAUTION,
        "spectroscopy": p.get("spectroscopy"),
        "settings": settings_record(p.get("settings")), "run_seconds": p.get("seconds"),
        **({"profile_checks": p["profile_checks"]} if p.get("profile_checks") else {}),
    })


def sweep_text(sweep):
    """A sweep as a table next to the formulas, with the refits, in text."""
    from ..forcing.formulas import COMPARISON_NOTE

    d = sweep_dict(sweep)
    u, gas = sweep.unit, sweep.gas
    lo, hi = sweep.wavenumber_range
    lines = [f"{gas} sweep, reference {sweep.reference:g} {u}; profiles "
             + ", ".join(f"{n} ({w:.3g})" for n, w in zip(sweep.profiles, sweep.weights)),
             f"  forcing: {sweep.kind}, range {lo:g}-{hi:g} cm-1 [W m-2]; spectroscopy: "
             f"{(d['spectroscopy'] or {}).get('kind')}"]
    lines += [f"  accuracy: {a}" for a in d["spectroscopy_accuracy"]]
    names = list(d["formulas"])
    head = f"{gas + ' [' + u + ']':>14} {'specforce':>10}" + "".join(f"{n:>16}" for n in names)
    if gas == "CO2":
        head += f"{'per 2x':>8}"
    lines.append(head)
    for j, c in enumerate(sweep.concentration):
        row = f"{c:14.5g} {sweep.weighted[j] + 0.0:10.3f}" + "".join(
            f"{d['formulas'][n][j] + 0.0:8.3f} ({sweep.weighted[j] - d['formulas'][n][j] + 0.0:+6.2f})"
            for n in names)
        if d["forcing_per_doubling_W_m2"] is not None:
            row += f"{d['forcing_per_doubling_W_m2'][j]:8.3f}"
        lines.append(row)
    if names:
        lines.append("  (formula value, with specforce minus formula in brackets)")
    else:
        lines.append(f"  no comparison with the published formulas and no refits: {sweep.comparison_omitted}")
    for key, f in (sweep.refits or {}).items():
        coef = ", ".join(f"{k} = {v:.5g} +- {f.standard_errors[k]:.2g}" for k, v in f.coefficients.items())
        lines.append(f"  refit {key}: {f.form}: {coef}; rms residual {f.rms_residual:.3g} W m-2")
        if f.warning:
            lines.append(f"    warning: {f.warning}")
    lines += [f"  note: {note}" for note in d["formula_range_warnings"]]
    lines += [f"  profile {k}: {v}" for k, v in (d.get("profile_checks") or {}).items()]
    lines += [f"  {COMPARISON_NOTE}"] if names else []
    lines += [f"  {CAUTION}", f"  ({sweep.provenance.get('seconds', 0):.1f} s)"]
    return "\n".join(lines)


def sweep_dataset(sweep):
    """An :class:`xarray.Dataset` of a sweep, with dimensions ``concentration`` and ``profile``.

    Holds the forcings, each formula's value and the weighted forcing minus it, and
    (when given) the refit coefficients as attributes.
    """
    import xarray as xr

    from ..forcing.formula_choice import FORMULAS
    from ..forcing.formulas import COMPARISON_NOTE

    data = {
        "forcing_tropopause": (("profile", "concentration"), sweep.forcing_tropopause,
                               {"units": "W m-2", "long_name": "instantaneous forcing at the tropopause"}),
        "forcing_toa": (("profile", "concentration"), sweep.forcing_toa,
                        {"units": "W m-2", "long_name": "instantaneous forcing at the top of the atmosphere"}),
        "weighted_forcing": ("concentration", sweep.weighted,
                             {"units": "W m-2", "long_name": f"weighted mean forcing ({sweep.kind})"}),
    }
    if sweep.forcing_adjusted is not None:
        data["forcing_adjusted"] = (("profile", "concentration"), sweep.forcing_adjusted,
                                    {"units": "W m-2", "long_name": "stratosphere-adjusted forcing at the tropopause"})
    for name, values in sweep.formulas(warn=False).items():
        data[f"formula_{name}"] = ("concentration", values, {"units": "W m-2", "long_name": FORMULAS[name]})
        data[f"difference_{name}"] = ("concentration", sweep.weighted - values,
                                      {"units": "W m-2", "long_name": f"weighted forcing minus {name}"})
    attrs = {
        "title": f"specforce concentration sweep of {sweep.gas}",
        "gas": sweep.gas,
        "reference_concentration": sweep.reference,
        "concentration_unit": sweep.unit,
        "forcing_kind": sweep.kind,
        "comparison_note": COMPARISON_NOTE,
        "wavenumber_range_cm-1": list(sweep.wavenumber_range),
        "provenance": json.dumps(to_jsonable(provenance_record(sweep.provenance))),
        "Conventions": "CF-1.10",
        "source": f"specforce {sweep.provenance.get('specforce_version', '')}: line-by-line clear-sky longwave forcing",
        "comment": CAUTION,
    }
    if sweep.comparison_omitted:
        attrs["comparison_omitted"] = sweep.comparison_omitted
    if sweep.spectroscopy_accuracy:
        attrs["spectroscopy_accuracy"] = "; ".join(sweep.spectroscopy_accuracy)
    if sweep.refits:
        attrs["refits"] = json.dumps(to_jsonable(_refit_record(sweep.refits, long_keys=False)))
    return xr.Dataset(
        data,
        coords={
            "concentration": ("concentration", sweep.concentration, {"units": sweep.unit}),
            "profile": ("profile", list(sweep.profiles)),
            "weight": ("profile", sweep.weights),
            "tropopause_pressure": ("profile", sweep.tropopause_pressure, {"units": "Pa"}),
        },
        attrs=attrs,
    )
