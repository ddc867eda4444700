"""Batch files: the parts folder (manifest and chunk files), the log, and the assembled result.

For an output ``OUT.nc`` a batch keeps, until it is complete:

- ``OUT.nc.parts/manifest.json``: what the batch is (fingerprints of the job and of
  the input profiles, the chunk ranges), so that a rerun of the same command resumes
  and a different batch is not mixed in;
- ``OUT.nc.parts/chunk-NNNNNN.nc``: the records of one chunk of sites, each written
  under a temporary name and renamed when complete (a chunk file that exists is whole);

and, always, ``OUT.nc.log``: one line per event (chunks written or lost, failed profiles).
The assembled ``OUT.nc`` holds every site exactly once on the input's site dimension,
with units, CF standard names where CF has them, per-site status, weighted means when
there are weights, and the provenance of the run.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import shutil

import numpy as np

from ..errors import ResultFileError
from .files import atomic_path, write_netcdf
from .results import _history, to_jsonable

__all__ = ["FIELDS", "MEAN_FIELDS", "BATCH_CAUTION", "PartsFolder", "BatchLog", "assemble", "batch_text"]

#: What the weighted means are, and are not.
BATCH_CAUTION = ("research estimate: clear-sky longwave radiation of each profile; a weighted mean over profiles "
                 "approximates an area mean only as well as the profiles and weights sample the globe, and it is "
                 "clear-sky, not all-sky (clouds lower CO2 forcing by about a fifth); published assessment forcings "
                 "(e.g. IPCC AR6: 3.93 W m-2 effective forcing for doubled CO2) are all-sky and adjusted or effective")

#: Per-site fields: name -> (shape, units, CF standard name or None, long name).
#: Shapes: "site" (scalar), "level" (computed levels), "layer", "spectral" (job's bins).
FIELDS = {
    "olr": ("site", "W m-2", "toa_outgoing_longwave_flux", "clear-sky outgoing longwave radiation"),
    "surface_down": ("site", "W m-2", "surface_downwelling_longwave_flux_in_air", "clear-sky downward longwave at the surface"),
    "forcing_toa": ("site", "W m-2", None, "instantaneous forcing at the top of the atmosphere"),
    "forcing_tropopause": ("site", "W m-2", None, "instantaneous forcing at the tropopause"),
    "forcing_surface": ("site", "W m-2", None, "instantaneous forcing at the surface"),
    "tropopause_pressure": ("site", "Pa", "tropopause_air_pressure", "tropopause pressure"),
    "olr_base": ("site", "W m-2", "toa_outgoing_longwave_flux", "OLR of the base state"),
    "olr_perturbed": ("site", "W m-2", None, "OLR of the perturbed state"),
    "adjusted_forcing_tropopause": ("site", "W m-2", None, "stratosphere-adjusted forcing at the tropopause"),
    "adjustment_iterations": ("site", "1", None, "iterations of the stratospheric adjustment"),
    "planck_response": ("site", "W m-2 K-1", None, "Planck response (negative)"),
    "water_vapour_response": ("site", "W m-2 K-1", None, "water-vapour response at fixed relative humidity"),
    "no_feedback_warming": ("site", "K", None, "no-feedback warming"),
    "emission_temperature": ("site", "K", None, "emission temperature (OLR/sigma)^(1/4)"),
    "emission_altitude": ("site", "m", None, "lowest altitude at the emission temperature"),
    "level_pressure": ("level", "Pa", "air_pressure", "pressure of the computed levels"),
    "flux_up": ("level", "W m-2", "upwelling_longwave_flux_in_air", "upward longwave flux"),
    "flux_down": ("level", "W m-2", "downwelling_longwave_flux_in_air", "downward longwave flux"),
    "forcing": ("level", "W m-2", None, "instantaneous forcing (change in net downward flux)"),
    "heating_rate": ("layer", "K day-1", "tendency_of_air_temperature_due_to_longwave_heating", "longwave heating rate"),
    "olr_spectrum": ("spectral", "W m-2 (cm-1)-1", None, "OLR spectrum, averaged over the bins"),
    "spectral_forcing_toa": ("spectral", "W m-2 (cm-1)-1", None, "spectral forcing at the top of the atmosphere"),
    "seconds": ("site", "s", None, "computing time of the site"),
}
#: Fields averaged with the weights.
MEAN_FIELDS = ("olr", "surface_down", "forcing_toa", "forcing_tropopause", "forcing_surface", "olr_base",
               "olr_perturbed", "adjusted_forcing_tropopause")
_TEXT = ("status", "changes")
_MANIFEST = "manifest.json"


def _now():
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


class BatchLog:
    """Appends timestamped lines to ``OUTPUT.log``."""

    def __init__(self, output):
        self.path = f"{output}.log"

    def write(self, text):
        with open(self.path, "a", encoding="utf-8") as fh:
            for line in str(text).rstrip("\n").splitlines() or [""]:
                fh.write(f"{_now()} {line}\n")


class PartsFolder:
    """``OUTPUT.parts/``: the manifest and the chunk files of one batch.

    Parameters
    ----------
    output : str
        The batch's output file.
    fresh : bool
        Remove the chunks of an earlier run instead of resuming them.
    """

    def __init__(self, output, fresh=False):
        self.output = os.fspath(output)
        self.folder = f"{self.output}.parts"
        if fresh and os.path.isdir(self.folder):
            shutil.rmtree(self.folder)

    def start(self, **manifest):
        """Create the folder and manifest, or check that an existing one is this batch.

        Raises
        ------
        ResultFileError
            If the folder holds a different batch (another input, job, version or chunking).
        """
        path = os.path.join(self.folder, _MANIFEST)
        manifest = to_jsonable(manifest)
        if os.path.exists(path):
            try:
                with open(path, encoding="utf-8") as fh:
                    old = json.load(fh)
            except (OSError, ValueError):
                old = None
            if old is not None:
                differs = [k for k in ("job", "profiles", "ranges", "sites", "kind") if old.get(k) != manifest.get(k)]
                if differs:
                    raise ResultFileError(
                        f"{self.folder} holds the chunks of a different batch ({', '.join(differs)} differ); "
                        f"rerun with --fresh to discard them, or write to another output")
                return
        os.makedirs(self.folder, exist_ok=True)
        with atomic_path(path) as tmp, open(tmp, "w", encoding="utf-8") as fh:
            json.dump({**manifest, "created": _now()}, fh, indent=1)

    def chunk_path(self, key):
        return os.path.join(self.folder, f"chunk-{key:06d}.nc")

    def done_chunks(self):
        """Keys of the chunks already written (whole: each was renamed into place when complete)."""
        if not os.path.isdir(self.folder):
            return set()
        return {int(n[6:12]) for n in os.listdir(self.folder)
                if n.startswith("chunk-") and n.endswith(".nc") and len(n) == 15 and n[6:12].isdigit()}

    def write_chunk(self, key, records, coll, job, nlev):
        """Write one chunk: [(site index, record)] as a netCDF file (atomically)."""
        ds = _records_dataset(records, job, nlev)
        write_netcdf(ds, self.chunk_path(key))

    def remove(self):
        shutil.rmtree(self.folder, ignore_errors=True)


def _records_dataset(records, job, nlev):
    import xarray as xr

    n = len(records)
    names = sorted({k for _, r in records for k in r if k in FIELDS})
    nspec = None
    data = {"site_index": (("site",), np.array([i for i, _ in records], dtype=np.int64))}
    for name in names:
        shape, units, std, long = FIELDS[name]
        size = {"site": None, "level": nlev, "layer": nlev - 1}.get(shape)
        if shape == "spectral":
            nspec = nspec or next(len(r[name]) for _, r in records if name in r)
            size = nspec
        arr = np.full((n,) if size is None else (n, size), np.nan)
        for j, (_, r) in enumerate(records):
            if name in r:
                v = np.asarray(r[name], dtype=float)
                if size is None:
                    arr[j] = v
                else:
                    arr[j, : v.size] = v
        dims = ("site",) if size is None else ("site", {"level": "level", "layer": "layer"}.get(shape, "wavenumber"))
        data[name] = (dims, arr)
    for name in _TEXT:
        data[name] = (("site",), np.array([str(r.get(name, "")) for _, r in records], dtype=object))
    return xr.Dataset({k: xr.Variable(*v) for k, v in data.items()})


def _spectral_coordinate(job):
    from ..absorption.grids import spectral_edges

    edges = spectral_edges(job.settings.wavenumber_range, job.spectral_resolution)
    return 0.5 * (edges[1:] + edges[:-1]), edges


def assemble(parts, output, coll, job, ranges, accuracy=()):
    """Put the chunks together into ``output`` (atomically), check every site is there once, and
    remove the parts folder.

    Returns
    -------
    dict
        ``ok``, ``failed``, ``means`` ({field: weighted mean}) and ``errors`` ({label: message}).
    """
    import xarray as xr

    from .._version import __version__

    pieces = []
    for key in range(len(ranges)):
        path = parts.chunk_path(key)
        try:
            with xr.open_dataset(path, engine="h5netcdf") as ds:
                pieces.append(ds.load())
        except (OSError, ValueError) as exc:
            os.remove(path)
            raise ResultFileError(f"{path}: damaged chunk file removed ({exc}); run the same command again "
                                  f"to recompute it") from None
    ds = xr.concat(pieces, dim="site", data_vars="all", coords="minimal", join="outer", fill_value=np.nan)
    for var in ds.variables.values():
        var.encoding = {}  # the first chunk's (e.g. a 2-character string width) must not bind the rest
    order = np.argsort(ds["site_index"].values, kind="stable")
    ds = ds.isel(site=order)
    idx = ds["site_index"].values
    if idx.size != len(coll) or not np.array_equal(idx, np.arange(len(coll))):
        raise ResultFileError(f"{parts.folder}: the chunks do not hold every site exactly once "
                              f"({idx.size} records for {len(coll)} sites); rerun with --fresh")
    ds = ds.drop_vars("site_index").rename({"site": coll.dimension})
    ds = ds.assign_coords({coll.dimension: coll.labels})
    ok = ds["status"].values == "ok"
    for name in list(ds.data_vars):
        if name in FIELDS:
            shape, units, std, long = FIELDS[name]
            ds[name].attrs.update({"units": units, "long_name": long, **({"standard_name": std} if std else {})})
    ds["status"].attrs["long_name"] = "'ok', or why the site has no result"
    if "wavenumber" in ds.dims:
        centres, edges = _spectral_coordinate(job)
        ds = ds.assign_coords(wavenumber=("wavenumber", centres[: ds.sizes["wavenumber"]],
                                          {"units": "cm-1", "long_name": f"centre of {job.spectral_resolution:g} "
                                                                       f"cm-1 bins"}))
    means, weights = {}, coll.weights
    if weights is not None:
        ds["weight"] = (coll.dimension, weights, {"units": "1", "long_name": "weight of the site in the means"})
        w = np.where(ok, weights, 0.0)
        covered = float(w.sum() / weights.sum())
        for name in MEAN_FIELDS:
            if name in ds and w.sum() > 0:
                value = float(np.sum(w * np.nan_to_num(ds[name].values)) / w.sum())
                means[name] = value
                ds[f"mean_{name}"] = ((), value, {"units": FIELDS[name][1], "long_name": f"weighted mean of {name}",
                                                  "weight_covered": covered})
        means["weight_covered"] = covered
    settings = {k: v for k, v in job.settings.__dict__.items()}
    ds.attrs.update({
        "Conventions": "CF-1.10",
        "title": f"specforce batch: {job.kind} of {len(coll)} profiles",
        "source": f"specforce {__version__}: line-by-line clear-sky longwave radiative transfer, one profile at a time",
        "history": _history(),
        "comment": BATCH_CAUTION,
        "input": str(coll.source),
        "kind": job.kind,
        "changes": "; ".join(f"{p.gas} {p.text or p.kind}" for p in job.changes),
        "adjusted": int(job.adjusted), "responses": int(job.responses),
        "settings": json.dumps(to_jsonable(settings)),
        "lines": job.lines or "built-in",
        **({"spectroscopy_accuracy": "; ".join(accuracy)} if accuracy else {}),
        "sites_ok": int(ok.sum()), "sites_failed": int((~ok).sum()),
        "specforce_version": __version__,
    })
    write_netcdf(ds, output)
    parts.remove()
    errors = {str(coll.labels[i]): str(ds["status"].values[i]) for i in np.flatnonzero(~ok)}
    return {"ok": int(ok.sum()), "failed": int((~ok).sum()), "means": means, "errors": errors}


def batch_text(result):
    """A batch's outcome in a few lines."""
    lines = [f"batch ({result.kind}): {result.sites} profiles in {result.chunks} chunks; {result.reused} chunks "
             f"done before, {result.computed} computed now" + (f", {result.lost} lost" if result.lost else "")
             + f" ({result.seconds:.1f} s)"]
    if not result.complete:
        lines.append("  incomplete: run the same command again to compute the missing chunks")
        return "\n".join(lines)
    lines.append(f"  wrote {result.output}: {result.ok} ok, {result.failed} failed")
    for label, msg in list(result.errors.items())[:10]:
        lines.append(f"  failed: {label}: {msg}")
    if len(result.errors) > 10:
        lines.append(f"  ... and {len(result.errors) - 10} more (see {result.output}.log)")
    if result.means:
        cover = result.means.get("weight_covered", 1.0)
        lines.append(f"  weighted means ({cover:.1%} of the weight computed):")
        for name in MEAN_FIELDS:
            if name in result.means:
                lines.append(f"    {name:28s} {result.means[name]:10.4f} W m-2")
    lines += [f"  accuracy: {a}" for a in result.accuracy]
    lines.append(f"  {BATCH_CAUTION}")
    return "\n".join(lines)


def read_batch(path):
    """Open an assembled batch result (an :class:`xarray.Dataset`, loaded)."""
    import xarray as xr

    try:
        with xr.open_dataset(path, engine="h5netcdf") as ds:
            if not str(ds.attrs.get("title", "")).startswith("specforce batch"):
                raise ResultFileError(f"{path}: not a specforce batch result")
            return ds.load()
    except (OSError, ValueError) as exc:
        raise ResultFileError(f"{path}: cannot read ({exc})") from None
