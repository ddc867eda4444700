"""Batch jobs: what a batch computes, and the work of one profile on a worker.

A :class:`BatchJob` says what each profile gets (OLR or forcing, settings, line data);
:func:`run_profile` computes one profile exactly as the single-profile API does and
returns its record; chunks of profiles are the tasks. The executors and the resumable
run are in :mod:`specforce.batch_runner`; the user's entry is :func:`specforce.batch.run_batch`.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import sys
import time
import traceback
from dataclasses import asdict, dataclass, field, replace

import numpy as np

from .absorption.grids import spectral_edges
from .errors import SettingsError, SpecforceError
from .io.collection import ProfileCollection, check_weights, collect_profiles, read_profile_collection
from .radiation.longwave import Settings

__all__ = ["BatchJob", "run_profile", "resolve_collection", "chunk_ranges", "default_chunk_size"]

#: Chunks aimed at per worker (load balance and the granularity of a resume), and the largest chunk.
CHUNKS_PER_WORKER = 4
MAX_CHUNK = 50


@dataclass(frozen=True)
class BatchJob:
    """What a batch computes for each profile.

    Attributes
    ----------
    changes : tuple of Perturbation
        The changes of a forcing job; empty for OLR.
    settings : Settings
    lines : str or None
        Line store (path; it must be readable at the same path on every worker).
    builtin : bool
        Use the built-in spectroscopy where the store has no lines.
    continuum_table : str or None
        A continuum table from the user (path, readable at the same path on every worker).
    adjusted, responses : bool
        Also the stratosphere-adjusted forcing; also the Planck and water-vapour responses.
    tropopause : float or None
        Tropopause pressure [Pa]; default each profile's WMO lapse-rate tropopause.
    spectral_resolution : float
        Width of the bins of the stored spectra [cm-1]; 0 to store none.
    threads : int or None
        Threads of the numerical kernels per worker (default: numba's choice).
    """

    changes: tuple = ()
    settings: Settings = field(default_factory=Settings)
    lines: str | None = None
    builtin: bool = True
    continuum_table: str | None = None
    adjusted: bool = False
    responses: bool = False
    tropopause: float | None = None
    spectral_resolution: float = 10.0
    threads: int | None = None

    def __post_init__(self):
        if self.spectral_resolution < 0 or not math.isfinite(self.spectral_resolution):
            raise SettingsError(f"spectral_resolution must be >= 0 [cm-1], got {self.spectral_resolution}")
        r = self.spectral_resolution / self.settings.output_resolution
        if self.spectral_resolution and (r < 1 or abs(r - round(r)) > 1e-9):
            raise SettingsError(f"spectral_resolution must be a whole multiple of the output bins "
                                f"({self.settings.output_resolution:g} cm-1), got {self.spectral_resolution:g}")
        if (self.adjusted or self.responses or self.tropopause is not None) and not self.changes:
            raise SettingsError("adjusted, responses and tropopause belong to a forcing job; give changes")

    @property
    def kind(self):
        """"forcing" or "olr"."""
        return "forcing" if self.changes else "olr"

    def fingerprint(self):
        """A digest of everything that decides the results (for resuming)."""
        from ._version import __version__

        # threads do not change the results
        record = {"job": _jsonable(asdict(replace(self, threads=None, settings=replace(self.settings, threads=None)))),
                  "version": __version__}
        for name in ("lines", "continuum_table"):
            path = getattr(self, name)
            if path:
                st = os.stat(path)
                record[name] = [os.path.abspath(path), st.st_size, st.st_mtime_ns]
        return hashlib.sha256(json.dumps(record, sort_keys=True).encode()).hexdigest()


def _jsonable(x):
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, float) and not math.isfinite(x):
        return str(x)
    if isinstance(x, (np.floating, np.integer)):
        return x.item()
    return x


# ------------------------------------------------------------------ the work of one profile (on a worker)

_LOADED = {}  # this process's spectroscopy of the last job: {(lines, builtin, continuum_table): Spectroscopy}
_PREPARED = []  # non-empty once this (worker) process is prepared


def _worker_spectroscopy(job):
    """The job's spectroscopy, loaded once per process and kept for later chunks."""
    from .api import spectroscopy

    key = (job.lines, job.builtin, job.continuum_table)
    if key not in _LOADED:
        _LOADED.clear()
        _LOADED[key] = spectroscopy(job.lines, builtin=job.builtin, continuum_table=job.continuum_table)
    return _LOADED[key]


def job_accuracy(job):
    """The measured accuracy of the built-in lines for the gases a forcing job changes (tuple of str)."""
    if not job.changes:
        return ()
    from .molecular.builtin import accuracy_statements

    return tuple(accuracy_statements([p.gas for p in job.changes], _worker_spectroscopy(job).provenance))


def _prepare_worker(job):
    """On a Dask worker (never in a user's process): the allocator, once per process, and the
    kernels' threads, for the calling thread (numba's setting is per thread, and Dask may run
    tasks on several)."""
    if not _PREPARED:
        _restore_allocator()
        _PREPARED.append(True)
    threads = job.threads or _env_threads()
    if threads:
        import numba

        numba.set_num_threads(max(1, min(threads, numba.config.NUMBA_NUM_THREADS)))


def _env_threads():
    """OMP_NUM_THREADS of this process, if set: how many threads a Dask worker is meant to use (1 by
    Dask's default, so that several workers on one machine do not oversubscribe its cores)."""
    try:
        return int(os.environ["OMP_NUM_THREADS"])
    except (KeyError, ValueError):
        return None


def _restore_allocator():
    """Undo the allocator setting of Dask's nanny, which made every run 2.5 times slower here.

    Dask starts workers with ``MALLOC_TRIM_THRESHOLD_=65536``; with it glibc stops adapting
    its mmap threshold, so each of the pipeline's large temporary arrays is mapped and
    unmapped afresh (measured: OLR of MLS 11.9 s in such a worker, 4.7 s without the
    setting, 5.8 s with the thresholds raised again here). Only on glibc, only when the
    setting is present.
    """
    if "MALLOC_TRIM_THRESHOLD_" not in os.environ or not sys.platform.startswith("linux"):
        return
    import ctypes

    try:
        libc = ctypes.CDLL("libc.so.6")
    except OSError:
        return
    m_trim_threshold, m_mmap_threshold = -1, -3  # glibc malloc.h
    libc.mallopt(m_mmap_threshold, 128 * 1024 * 1024)
    libc.mallopt(m_trim_threshold, 256 * 1024 * 1024)


def run_profile(profile, job, spectroscopy=None):
    """The record of one profile: its scalars, level fields and binned spectrum, or its error.

    Parameters
    ----------
    profile : Profile
    job : BatchJob
    spectroscopy : Spectroscopy, optional
        Default the job's (loaded once per process).

    Returns
    -------
    dict
        ``status`` ("ok" or the error message), ``seconds`` and the job's fields
        (see :data:`FIELDS`); failed profiles have only ``status``, ``seconds`` and,
        for unexpected errors, ``traceback``.
    """
    from . import api

    t0 = time.perf_counter()
    spec = spectroscopy if spectroscopy is not None else _worker_spectroscopy(job)
    settings = job.settings
    if settings.threads is None and (job.threads or _env_threads()):  # this worker's share of the cores
        settings = replace(settings, threads=job.threads or _env_threads())
    try:
        if job.kind == "olr":
            res = api.olr(profile, spec, settings)
            rec = _olr_record(res, job)
        else:
            res = api.radiative_forcing(profile, list(job.changes), spec, settings, adjusted=job.adjusted,
                                        responses=job.responses, tropopause=job.tropopause)
            rec = _forcing_record(res, job)
        rec["status"] = "ok"
    except SpecforceError as exc:
        rec = {"status": f"{type(exc).__name__}: {exc}"}
    except Exception as exc:  # a bug must not stop 10,000 profiles; it is recorded with its traceback
        rec = {"status": f"internal error, {type(exc).__name__}: {exc}", "traceback": traceback.format_exc()}
    rec["seconds"] = time.perf_counter() - t0
    return rec


def _binned(res_wavenumber, spectrum, job):
    """Average a 0.1 cm-1 spectrum into bins of the job's spectral resolution."""
    lo, hi = job.settings.wavenumber_range
    edges = spectral_edges(job.settings.wavenumber_range, job.spectral_resolution)
    idx = np.clip(np.searchsorted(edges, res_wavenumber, side="right") - 1, 0, edges.size - 2)
    width = np.diff(edges)
    return np.bincount(idx, weights=spectrum * job.settings.output_resolution, minlength=width.size) / width


def _olr_record(res, job):
    rec = {"olr": res.olr, "surface_down": res.surface_down, "flux_up": res.flux_up, "flux_down": res.flux_down,
           "heating_rate": res.heating_rate, "level_pressure": res.pressure}
    if job.spectral_resolution:
        rec["olr_spectrum"] = _binned(res.wavenumber, res.olr_spectrum, job)
    return rec


def _forcing_record(res, job):
    rec = {"forcing_toa": res.toa, "forcing_tropopause": res.tropopause, "forcing_surface": res.surface,
           "tropopause_pressure": res.tropopause_pressure, "olr_base": res.base.olr, "olr_perturbed": res.perturbed.olr,
           "forcing": res.forcing, "level_pressure": res.base.pressure,
           "changes": "; ".join(c["text"] for c in res.changes)}
    if res.adjusted is not None:
        rec["adjusted_forcing_tropopause"] = res.adjusted.forcing_tropopause
        rec["adjustment_iterations"] = res.adjusted.iterations
    if res.responses is not None:
        r = res.responses
        rec.update(planck_response=r.planck_response, water_vapour_response=r.water_vapour_response,
                   no_feedback_warming=r.no_feedback_warming, emission_temperature=r.emission_temperature,
                   emission_altitude=r.emission_altitude)
    if job.spectral_resolution:
        rec["spectral_forcing_toa"] = _binned(res.wavenumber, res.spectral_toa, job)
    return rec


def _run_chunk_on_worker(job, items):
    """:func:`_run_chunk` on a Dask worker, which is first prepared (:func:`_prepare_worker`)."""
    _prepare_worker(job)
    return _run_chunk(job, items)


def _run_chunk(job, items):
    """Run one chunk: [(site index, Profile)] -> [(site index, record)]."""
    spec = _worker_spectroscopy(job)
    return [(i, run_profile(p, job, spec)) for i, p in items]


# ------------------------------------------------------------------ input and chunks (on the client)

def resolve_collection(source, weights=None, accept_unusual=False):
    """The profiles of a batch.

    Parameters
    ----------
    source : str, ProfileCollection or sequence
        A profile collection file (``.nc`` with a site dimension; see
        :mod:`specforce.io.collection`), a folder of profile files, ``"afgl"`` (the five
        seasonal AFGL models with :data:`specforce.forcing.sweep.AREA_WEIGHTS`), a
        :class:`ProfileCollection`, or a list of profiles, names and files.
    weights : sequence of float, optional
        Overrides the collection's weights.
    accept_unusual : bool
        Waive the profiles' plausibility checks (see :class:`specforce.radiation.atmosphere.Profile`).
    """
    from .forcing.sweep import AREA_WEIGHTS

    if isinstance(source, ProfileCollection):
        coll = source
    elif isinstance(source, str) and source.lower() == "afgl":
        coll = collect_profiles(list(AREA_WEIGHTS), weights=list(AREA_WEIGHTS.values()), accept_unusual=accept_unusual)
    elif isinstance(source, (str, os.PathLike)) and os.path.isfile(source):
        coll = read_profile_collection(source, accept_unusual=accept_unusual)
    elif isinstance(source, (str, os.PathLike)):
        coll = collect_profiles([source], accept_unusual=accept_unusual)
    else:
        coll = collect_profiles(list(source), accept_unusual=accept_unusual)
    if weights is not None:
        coll = replace(coll, weights=check_weights(weights, len(coll), "weights"))
    return coll


def chunk_ranges(n, chunk_size):
    """[(start, stop)] of consecutive chunks of ``chunk_size`` sites covering ``n`` sites."""
    return [(a, min(n, a + chunk_size)) for a in range(0, n, chunk_size)]


def default_chunk_size(n, workers):
    """About :data:`CHUNKS_PER_WORKER` chunks per worker, at most :data:`MAX_CHUNK` sites each."""
    return int(min(MAX_CHUNK, max(1, n // (CHUNKS_PER_WORKER * max(1, workers)))))


def _input_fingerprint(coll):
    h = hashlib.sha256()
    h.update(str(coll.dimension).encode())
    for label, p in zip(coll.labels, coll.profiles):
        h.update(str(label).encode())
        if isinstance(p, Exception):
            h.update(str(p).encode())
            continue
        for arr in (p.pressure, p.temperature, p.altitude, *(p.vmr[g] for g in sorted(p.vmr))):
            h.update(np.ascontiguousarray(arr, dtype=float).tobytes())
        h.update(repr((sorted(p.vmr), p.surface_temperature, p.surface_emissivity)).encode())
    return h.hexdigest()
