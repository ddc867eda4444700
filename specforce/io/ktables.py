"""The fast model's table file (HDF5), and where built tables are cached.

One file per set of tables, named by their key (``ktables/<sha256>.h5`` in the cache folder,
:func:`specforce.cache.cache_folder`): the key covers the spectroscopy, the line-shape and grid
settings, the layout and specforce's version (:func:`specforce.kdist.tables.table_key`), so a
change of any of them looks for another file, and a stale table is never used.

Layout of the file (units in each dataset's ``units`` attribute):

``/gpoint_band``                    band of each g-point
``/log_k/<gas>``                    ln cross-section (the mean, times the fit's factor)
                                    [ln(cm2 molecule-1)], (g, p, T[, H2O])
``/planck/gpoint``, ``wavenumber`` [cm-1], ``weight`` [cm-1]   the g-points' Planck weights
attributes: ``format`` ("specforce k-distribution tables"), ``format_version``, ``key``,
``layout`` (JSON), ``provenance`` (JSON), ``calibration`` (JSON).
"""

from __future__ import annotations

import json
import os

import h5py
import numpy as np

from ..cache import cache_folder
from ..errors import SettingsError
from ..kdist.layout import Layout
from ..kdist.tables import KTables
from .files import atomic_path

__all__ = ["write_tables", "read_tables", "cached_tables_path", "tables_record", "tables_text", "calibration_lines",
           "fast_model_lines",
           "FORMAT"]

FORMAT = "specforce k-distribution tables"
# 2: the layout holds the fit (fit_pressures, fit_profiles); a version-1 file would read as fitted
# 3: the layout holds the fit's coupling and extra columns (fit_coupling, fit_variants); a version-2 file
# would read as coupled
# 4: the layout holds the cut by the rise of the emission depth (shift_splits, shift_scale); a version-3 file
# would read as cut by it
_VERSION = 4


def cached_tables_path(key):
    """Path of the cached tables with this key (the file may not exist)."""
    return os.path.join(cache_folder(), "ktables", f"{key}.h5")


def write_tables(tables, path):
    """Write ``tables`` (a KTables) to ``path`` atomically (a killed write leaves no file)."""
    os.makedirs(os.path.dirname(os.path.abspath(path)), exist_ok=True)
    with atomic_path(path, suffix=".h5") as tmp, h5py.File(tmp, "w") as f:
        f.attrs["format"] = FORMAT
        f.attrs["format_version"] = _VERSION
        f.attrs["key"] = tables.key
        f.attrs["layout"] = json.dumps(tables.layout.record())
        f.attrs["provenance"] = json.dumps(tables.provenance, default=str)
        f.attrs["calibration"] = json.dumps(tables.calibration, default=str)
        f.create_dataset("gpoint_band", data=tables.band)
        for gas, table in tables.log_k.items():
            d = f.create_dataset(f"log_k/{gas}", data=table, compression="gzip", shuffle=True)
            d.attrs["units"] = "ln(cm2 molecule-1)"
            d.attrs["dimensions"] = "gpoint, pressure, temperature" + (", water" if table.ndim == 4 else "")
        for name, data, units in (("gpoint", tables.planck_gpoint, "1"),
                                  ("wavenumber", tables.planck_wavenumber, "cm-1"),
                                  ("weight", tables.planck_weight, "cm-1")):
            f.create_dataset(f"planck/{name}", data=data, compression="gzip").attrs["units"] = units


def read_tables(path):
    """Read tables written by :func:`write_tables`; an error naming the file where it is not one."""
    try:
        f = h5py.File(path, "r")
    except OSError as exc:
        raise SettingsError(f"{path}: cannot be read as k-distribution tables ({exc}); build them again with "
                            f"`specforce ktables build`") from None
    with f:
        if f.attrs.get("format") != FORMAT or int(f.attrs.get("format_version", -1)) != _VERSION:
            raise SettingsError(f"{path}: not specforce k-distribution tables of format version {_VERSION}; "
                                f"build them again with `specforce ktables build`")
        try:
            def frozen(v):
                return tuple(frozen(x) for x in v) if isinstance(v, list) else v
            layout = Layout(**{k: frozen(v) for k, v in json.loads(f.attrs["layout"]).items()})
            tables = KTables(
                layout=layout, band=np.asarray(f["gpoint_band"][()], np.int64),
                log_k={gas: np.asarray(f[f"log_k/{gas}"][()]) for gas in f["log_k"]},
                planck_gpoint=np.asarray(f["planck/gpoint"][()], np.int64),
                planck_wavenumber=np.asarray(f["planck/wavenumber"][()]),
                planck_weight=np.asarray(f["planck/weight"][()]), key=str(f.attrs["key"]),
                provenance=json.loads(f.attrs["provenance"]), calibration=json.loads(f.attrs["calibration"]))
        except (KeyError, ValueError, TypeError) as exc:
            raise SettingsError(f"{path}: damaged k-distribution tables ({exc}); build them again with "
                                f"`specforce ktables build`") from None
    return tables


def tables_record(tables):
    """The tables described, JSON-ready: key, bands with their g-points, nodes, provenance and
    calibration."""
    lay = tables.layout
    per = tables.gpoints_per_band()
    return {"key": tables.key, "gpoints": tables.ngpoints,
            "bands": [{"from_cm-1": lay.edges[b], "to_cm-1": lay.edges[b + 1], "gpoints": int(per[b]),
                       "key_gas": lay.key_gases[b], "splits": list(lay.band_splits(b)),
                       "rise_splits": lay.band_shift_splits(b)} for b in range(lay.nbands)],
            "rise_under": f"{lay.shift_scale[0]} x{lay.shift_scale[1]:g}",
            "gases": list(tables.gases), "pressure_Pa": [lay.pressure[0], lay.pressure[-1], len(lay.pressure)],
            "temperature_K": [lay.temperature[0], lay.temperature[-1], len(lay.temperature)],
            "water_mol_mol": list(lay.water), "provenance": tables.provenance, "calibration": tables.calibration}


def calibration_lines(calibration, labels=None):
    """The calibration error as sentences, one per change (those in ``labels``, or all) plus the
    fluxes; a warning sentence where there is no calibration."""
    if not calibration:
        return ["fast model NOT CALIBRATED: its error against line-by-line is unknown; run `specforce ktables "
                "build` (it calibrates) before quoting these numbers"]
    what = f"{calibration.get('states')} states ({calibration.get('set')} calibration set)"
    out = []
    for label, by in calibration.get("forcing", {}).items():
        if labels is not None and label not in labels:
            continue
        parts = [f"{where} {v['max_abs_percent']:.2f} %" for where, v in by.items()
                 if v.get("max_abs_percent") is not None]
        if parts:
            out.append(f"{label} forcing: fast model within " + ", ".join(parts) + f" of line-by-line over {what}")
    fl, base = calibration.get("fluxes", {}), calibration.get("fluxes_base", {})
    if fl:
        out.append(f"fluxes: OLR within {fl.get('olr_W_m2', float('nan')):.2f} W m-2, surface downward within "
                   f"{fl.get('surface_down_W_m2', float('nan')):.2f} W m-2, heating rates within "
                   f"{fl.get('heating_K_day', float('nan')):.3f} K/day (surface to 1 hPa) of line-by-line over {what}"
                   + (" and their changed states (CO2 up to 8x); the states before their changes: OLR "
                      f"{base['olr_W_m2']:.2f}, surface downward {base['surface_down_W_m2']:.2f} W m-2, heating "
                      f"{base['heating_K_day']:.3f} K/day" if base else ""))
    return out


def tables_text(tables):
    """The tables described in a few lines of text (what ``specforce ktables info`` prints)."""
    rec = tables_record(tables)
    lines = [f"k-distribution tables {tables.key[:16]}... ({rec['gpoints']} g-points, gases "
             f"{', '.join(rec['gases'])})",
             "  bands [cm-1] (g-points, key gas): " + "; ".join(
                 f"{b['from_cm-1']:g}-{b['to_cm-1']:g} ({b['gpoints']}, {b['key_gas']}"
                 + (f"; {b['rise_splits']} parts by the emission depth's rise under {rec['rise_under']}"
                    if b["rise_splits"] > 1 else "") + ")"
                 for b in rec["bands"]),
             f"  nodes: {rec['pressure_Pa'][2]} pressures {rec['pressure_Pa'][0]:g}-{rec['pressure_Pa'][1]:g} Pa, "
             f"{rec['temperature_K'][2]} temperatures {rec['temperature_K'][0]:g}-{rec['temperature_K'][1]:g} K, "
             f"water {', '.join(f'{w:g}' for w in rec['water_mol_mol'])} mol/mol",
             f"  overlap: {tables.provenance.get('overlap', '')}",
             f"  built {tables.provenance.get('built', '?')} in {tables.provenance.get('build_seconds', '?')} s "
             f"from {tables.provenance.get('spectroscopy', '?')} ({tables.provenance.get('grid_points', '?')} "
             f"line-by-line points); reference {tables.provenance.get('reference', '?')}"]
    fit = tables.provenance.get("fit")
    if isinstance(fit, dict):
        columns = fit["training_profiles"] + fit.get("training_variants", [])
        lines.append(f"  fit: each gas's cross-sections scaled at every g-point by a factor piecewise linear in ln p "
                     f"(knots {', '.join(f'{p:.3g}' for p in fit['knots_Pa'])} Pa), fitted to line-by-line fluxes, "
                     f"heating rates and forcings of {', '.join(columns)}"
                     + (f", coupled by {fit['coupling']:g} within bands" if fit.get("coupling") else "")
                     + f" in {fit['seconds']} s; "
                     f"factors {fit['factor_range'][0]:g}-{fit['factor_range'][1]:g}, "
                     f"{fit['factors_at_bound']} at the bound")
    elif fit:
        lines.append(f"  fit: {fit}")
    lines += ["  " + s for s in calibration_lines(tables.calibration)]
    cal = tables.calibration or {}
    if len(cal.get("variants", ())) > 1:  # where the errors are: the largest forcing error in each variant
        for label, by in cal.get("forcing", {}).items():
            parts = [f"{where} " + ", ".join(f"{v} {x:.2f}" for v, x in d["by_variant"].items()) + " %"
                     for where, d in by.items() if d.get("by_variant")]
            if parts:
                lines.append(f"    {label} by variant: " + "; ".join(parts))
        base = cal.get("fluxes_base_by_variant", {})
        for v, f in cal.get("fluxes_by_variant", {}).items():
            b = base.get(v)
            lines.append(f"    fluxes, {v}: OLR {f['olr_W_m2']:.2f}, surface downward {f['surface_down_W_m2']:.2f} "
                         f"W m-2, heating {f['heating_K_day']:.3f} K/day"
                         + (f" (before the changes: {b['olr_W_m2']:.2f}, {b['surface_down_W_m2']:.2f} W m-2, "
                            f"{b['heating_K_day']:.3f} K/day)" if b else ""))
    return "\n".join(lines)


def fast_model_lines(provenances, gases=None):
    """What a fast-mode result must say of its model: the k-distribution, its calibration error
    (for the changes of ``gases``, or all) and where the states leave the tables' or the
    calibration's ranges; [] for a line-by-line result.

    Parameters
    ----------
    provenances : sequence of dict
        The provenance of each state's longwave result.
    gases : sequence of str, optional
        The gases changed.
    """
    recs = [p.get("kdist") for p in provenances if p.get("kdist")]
    if not recs:
        return []
    rec = recs[0]
    cal = rec.get("calibration") if isinstance(rec.get("calibration"), dict) else {}
    labels = None if gases is None else [k for k in cal.get("forcing", {}) if k.split()[0] in gases]
    out = [f"fast model: k-distribution ({rec.get('gpoints')} g-points in {rec.get('bands')} bands; spectra are "
           f"band means), tables {str(rec.get('key'))[:12]}, built from specforce's line-by-line"]
    out += calibration_lines(cal, labels)
    seen = []
    for r in recs:
        for w in r.get("outside_tables", []) + r.get("outside_calibration", []):
            if w not in seen:
                seen.append(w)
    return out + [f"warning: {w}" for w in seen]
