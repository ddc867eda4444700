"""Batch runs: OLR or forcing for many profiles, on Dask, resumable, with weighted means.

The work of one profile is exactly the single-profile computation
(:func:`specforce.api.olr` or :func:`specforce.api.radiative_forcing`), so a batch
result equals the single-profile result bit for bit. This module only spreads
profiles over workers and keeps the books:

- profiles go to workers in *chunks* (a task each); a worker loads the line data
  once and keeps it for every later chunk;
- each finished chunk is written by the client to ``OUTPUT.parts/chunk-NNNNNN.nc``
  under a temporary name that is renamed when complete, next to a
  ``manifest.json`` that fingerprints the input and the job;
- run again with the same input and job, a batch computes only the chunks that
  are missing; the output is assembled when every chunk is there, with every
  profile exactly once, and the parts folder is removed;
- a profile that cannot be read or computed (a validation error, an adjustment that
  does not converge) is recorded with its message in the output and the log
  (``OUTPUT.log``), and the batch goes on.

Executors: a :class:`distributed.LocalCluster` of worker processes by default (one
per core), an existing cluster by its scheduler address (``tcp://HOST:PORT``;
its workers need specforce installed and the line store at the same path), or
``"serial"``: in this process, one chunk after the other, without Dask.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import re
import sys
import time
import traceback
from dataclasses import asdict, dataclass, field, replace

import numpy as np

from .errors import SettingsError, SpecforceError
from .io.collection import ProfileCollection, check_weights, collect_profiles, read_profile_collection
from .radiation.longwave import Settings

__all__ = ["BatchJob", "BatchResult", "run_batch", "run_profile", "resolve_collection", "chunk_ranges",
           "default_chunk_size", "local_cluster", "check_batch_paths", "check_scheduler_address"]

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
        from . import __version__

        record = {"job": _jsonable(asdict(self) | {"threads": None}), "version": __version__}
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
    try:
        if job.kind == "olr":
            res = api.olr(profile, spec, job.settings)
            rec = _olr_record(res, job)
        else:
            res = api.radiative_forcing(profile, list(job.changes), spec, job.settings, adjusted=job.adjusted,
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
    edges = _spectral_edges(job)
    idx = np.clip(np.searchsorted(edges, res_wavenumber, side="right") - 1, 0, edges.size - 2)
    width = np.diff(edges)
    return np.bincount(idx, weights=spectrum * job.settings.output_resolution, minlength=width.size) / width


def _spectral_edges(job):
    lo, hi = job.settings.wavenumber_range
    n = max(1, int(math.ceil((hi - lo) / job.spectral_resolution - 1e-9)))
    return np.minimum(lo + job.spectral_resolution * np.arange(n + 1), hi)


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


# ------------------------------------------------------------------ executors

class _Serial:
    """Runs chunks in this process, in order (no Dask)."""

    workers = 1

    def run(self, job, chunks):
        for key, items in chunks:
            try:
                yield key, _run_chunk(job, items), None
            except Exception as exc:  # noqa: BLE001 - reported like a lost worker
                yield key, None, exc

    def close(self):
        pass


#: Dask's network protocols for a scheduler address, and how long a connection may take.
SCHEDULER_PROTOCOLS = ("tcp", "tls", "ucx", "ws", "wss")
CONNECT_TIMEOUT = 5  # [s]
_ADDRESS = re.compile(r"^(?:(?P<protocol>[A-Za-z][A-Za-z0-9+.-]*)://)?"
                      r"(?P<host>\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9._-]+):(?P<port>\d{1,5})$")


def check_scheduler_address(scheduler):
    """Check the form of a scheduler address before anything is computed.

    Parameters
    ----------
    scheduler : str or None
        ``PROTOCOL://HOST:PORT`` (``tcp://10.0.0.5:8786``; the protocol defaults to tcp),
        ``"serial"`` or None (a local cluster).

    Raises
    ------
    SettingsError
        Naming the address and the expected form.
    """
    if scheduler is None or scheduler == "serial":
        return
    m = _ADDRESS.match(str(scheduler))
    hint = ("give the address the scheduler prints when it starts, as tcp://HOST:PORT (e.g. tcp://10.0.0.5:8786), "
            "or 'serial' to run in this process without Dask")
    if m is None:
        raise SettingsError(f"scheduler (--scheduler) {scheduler!r} is not a Dask scheduler address; {hint}")
    if (m["protocol"] or "tcp").lower() not in SCHEDULER_PROTOCOLS:
        raise SettingsError(f"scheduler (--scheduler) {scheduler!r}: unknown protocol {m['protocol']!r} (Dask "
                            f"knows {', '.join(SCHEDULER_PROTOCOLS)}); {hint}")
    if not 0 < int(m["port"]) < 65536:
        raise SettingsError(f"scheduler (--scheduler) {scheduler!r}: port {m['port']} is not 1-65535; {hint}")


def _probe_scheduler(address, timeout=CONNECT_TIMEOUT):
    """Ask the server at ``address`` who it is, all within ``timeout`` seconds; a SettingsError
    unless a Dask scheduler answers (nothing listening, a firewall, a server of another kind, on
    which Dask's own client would wait for ever)."""
    import asyncio
    import threading

    from distributed.comm import connect

    async def ask():
        comm = await connect(address, timeout=timeout)
        try:
            await comm.write({"op": "identity", "reply": True})
            return await comm.read()
        finally:
            comm.abort()

    outcome = {}

    def run():  # in a thread of its own: the caller may be inside an event loop (a notebook)
        try:
            outcome["reply"] = asyncio.run(asyncio.wait_for(ask(), timeout))
        except Exception as exc:  # noqa: BLE001 - every failure is reported below
            outcome["error"] = exc

    thread = threading.Thread(target=run, name="specforce-scheduler-probe", daemon=True)
    thread.start()
    thread.join(timeout + 2.0)
    reply = outcome.get("reply")
    if isinstance(reply, dict) and reply.get("type") == "Scheduler":
        return
    exc = outcome.get("error")
    detail = (f"{type(exc).__name__}: {exc}".rstrip(": ") if exc is not None else
              "a server answered, not as a Dask scheduler" if "reply" in outcome else "no answer")
    raise SettingsError(f"scheduler (--scheduler) {address}: no Dask scheduler answered there within {timeout} s "
                        f"({detail}); start the scheduler, or check the address and that this machine can reach it")


class _Dask:
    """Runs chunks on a dask.distributed cluster: a LocalCluster of processes, or one given by address."""

    def __init__(self, scheduler=None, workers=None, threads=None):
        try:
            from distributed import Client
        except ImportError:  # pragma: no cover - a dependency, but installs can be partial
            raise SettingsError("batch runs on Dask need the 'distributed' package: pip install distributed") from None
        self.cluster, self.own_client = None, True
        if scheduler:
            current = _current_client()
            if current is not None and current.scheduler.address == scheduler:
                self.client, self.own_client = current, False  # the script's own client: share it, leave it open
            else:
                try:
                    self.client = Client(scheduler, timeout=f"{CONNECT_TIMEOUT}s", set_as_default=False)
                except (OSError, TimeoutError, ValueError) as exc:
                    raise SettingsError(f"scheduler (--scheduler) {scheduler}: no Dask scheduler answered there "
                                        f"within {CONNECT_TIMEOUT} s ({exc}); start it, or check the address and "
                                        f"that this machine can reach it") from None
        else:
            self.cluster = local_cluster(workers, threads)
            self.client = Client(self.cluster, set_as_default=False)
        self.workers = max(1, len(self.client.scheduler_info().get("workers", {})) or (workers or 1))

    def run(self, job, chunks):
        from distributed import as_completed

        futures = {self.client.submit(_run_chunk_on_worker, job, items, pure=False, key=f"specforce-chunk-{key}-{os.getpid()}"):
                   key for key, items in chunks}
        for fut in as_completed(futures, loop=self.client.loop):
            key = futures[fut]
            try:
                yield key, fut.result(), None
            except Exception as exc:  # noqa: BLE001 - KilledWorker and the like: the chunk stays missing
                yield key, None, exc
            fut.release()

    def close(self):
        if self.own_client:
            self.client.close()
        if self.cluster is not None:
            self.cluster.close()


def local_cluster(workers=None, threads=None, **kwargs):
    """A :class:`distributed.LocalCluster` of worker processes set up for specforce.

    Parameters
    ----------
    workers : int, optional
        Worker processes (default one per core).
    threads : int, optional
        Threads of the numerical kernels in each (default cores / workers).
    kwargs
        Passed on (``host``, ...).

    Dask's default worker environment limits threads to one and sets an allocator
    threshold that slows this code 2.5-fold (see :func:`_restore_allocator`); these
    workers get their share of the cores and the ordinary allocator instead.
    """
    import logging

    import dask
    from distributed import LocalCluster

    n = workers or os.cpu_count() or 1
    threads = threads or max(1, (os.cpu_count() or 1) // n)
    env = {"OMP_NUM_THREADS": str(threads), "MKL_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}
    # The workers run dask_setup below (restarted ones too: each nanny keeps this configuration).
    with dask.config.set({"distributed.nanny.pre-spawn-environ": env, "distributed.worker.preload": [__name__]}):
        # no dashboard; the scheduler's own HTTP server (health, metrics) on any free local port, not on
        # 8787, which a second cluster on the machine would find taken (and warn about, on the terminal)
        scheduler_kwargs = {"dashboard_address": "127.0.0.1:0", **kwargs.pop("scheduler_kwargs", {})}
        return LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=None,
                            silence_logs=logging.ERROR, scheduler_kwargs=scheduler_kwargs, **kwargs)


def dask_setup(worker):
    """Run by each worker of :func:`local_cluster` as it starts (Dask's preload hook): it ignores SIGINT.

    Ctrl-C in a terminal interrupts every process of the foreground group, the local
    cluster's workers too; the client alone must handle it (it stops the batch, keeps
    the finished chunks and closes the cluster), instead of each worker printing its
    own traceback.
    """
    import signal
    import threading

    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGINT, signal.SIG_IGN)


def _current_client():
    """The Dask client this process already uses, if any (two clients in one process do not mix)."""
    from distributed import default_client

    try:
        return default_client()
    except ValueError:
        return None


# ------------------------------------------------------------------ the run

@dataclass(frozen=True)
class BatchResult:
    """The outcome of a batch.

    Attributes
    ----------
    output : str or None
        The result file (None while chunks are missing).
    sites, ok, failed : int
        Profiles in the batch, computed, and recorded with an error.
    chunks, reused, computed, lost : int
        Chunks in the batch, found done from an earlier run, computed now, and lost
        (a worker died too often; run the same command again).
    seconds : float
        Wall-clock time of this run.
    means : dict
        Weighted means over the computed profiles (empty without weights).
    errors : dict
        {site label: message} of the failed profiles.
    """

    output: str | None
    sites: int
    ok: int
    failed: int
    chunks: int
    reused: int
    computed: int
    lost: int
    seconds: float
    means: dict = field(default_factory=dict)
    errors: dict = field(default_factory=dict)
    kind: str = "olr"

    @property
    def complete(self):
        """Whether every chunk is done and the output written."""
        return self.output is not None

    def to_dict(self):
        """JSON-ready summary."""
        from .io.results import CAUTION

        return {"output": self.output, "kind": self.kind, "sites": self.sites, "ok": self.ok, "failed": self.failed,
                "chunks": self.chunks, "chunks_reused": self.reused, "chunks_computed": self.computed,
                "chunks_lost": self.lost, "seconds": round(self.seconds, 3), "complete": self.complete,
                "means": self.means, "errors": {str(k): v for k, v in self.errors.items()}, "caution": CAUTION}

    def summary(self):
        """A few lines of text."""
        from .io.batchfiles import batch_text

        return batch_text(self)


def run_batch(source, output, job, *, weights=None, scheduler=None, workers=None, chunk_size=None, fresh=False,
              progress=None):
    """Run a batch (see the module notes).

    Parameters
    ----------
    source : see :func:`resolve_collection`
    output : str or os.PathLike
        The netCDF file to write; ``OUTPUT.parts/`` and ``OUTPUT.log`` sit beside it.
    job : BatchJob
    weights : sequence of float, optional
        Per-site weights for the means (default the collection's, if any).
    scheduler : str, optional
        ``tcp://HOST:PORT`` of a running Dask scheduler, or ``"serial"`` to run in this
        process without Dask; default a LocalCluster on this machine.
    workers : int, optional
        Workers of the LocalCluster (default one per core).
    chunk_size : int, optional
        Profiles per chunk (default :func:`default_chunk_size`).
    fresh : bool
        Discard the chunks of an earlier run of this output instead of resuming.
    progress : callable, optional
        Called as ``progress(profiles_done, profiles_total)``.

    Returns
    -------
    BatchResult
    """
    from .io import batchfiles
    from .io.files import check_output_path

    t0 = time.perf_counter()
    check_scheduler_address(scheduler)
    out = check_output_path(output, (".nc",), "batch output")
    if scheduler not in (None, "serial"):
        _probe_scheduler(scheduler)  # before the parts folder and the log are made
    check_batch_paths(source, out, job.lines, job.continuum_table)
    coll = resolve_collection(source, weights)
    if len(coll) == 0:
        raise SettingsError("the batch has no profiles")
    n = len(coll)
    if workers is not None and workers < 1:
        raise SettingsError(f"workers must be at least 1, got {workers}")
    nworkers = 1 if scheduler == "serial" else (workers or os.cpu_count() or 1)
    size = chunk_size or default_chunk_size(n, nworkers)
    if size < 1:
        raise SettingsError(f"chunk_size must be at least 1, got {size}")
    ranges = chunk_ranges(n, size)
    parts = batchfiles.PartsFolder(out, fresh=fresh)
    parts.start(job=job.fingerprint(), profiles=_input_fingerprint(coll), ranges=ranges, sites=n, kind=job.kind,
                source=coll.source)
    log = batchfiles.BatchLog(out)
    done = parts.done_chunks()
    todo = [k for k in range(len(ranges)) if k not in done]
    log.write(f"batch of {n} profiles from {coll.source}: {len(ranges)} chunks of up to {size}, "
              f"{len(done)} done before, {len(todo)} to compute ({job.kind})")
    nlev = _max_levels(coll, job)
    sites_done = sum(ranges[k][1] - ranges[k][0] for k in done)
    if progress:
        progress(sites_done, n)
    lost = 0
    if todo:
        executor = _Serial() if scheduler == "serial" else _Dask(scheduler, workers, job.threads)
        try:
            chunks = []
            for k in todo:
                a, b = ranges[k]
                ready = [(i, coll.profiles[i]) for i in range(a, b) if not isinstance(coll.profiles[i], Exception)]
                chunks.append((k, ready))
            for key, records, exc in executor.run(job, chunks):
                a, b = ranges[key]
                if exc is not None:
                    lost += 1
                    log.write(f"chunk {key} (sites {a}-{b - 1}) lost: {type(exc).__name__}: {exc}")
                    continue
                recs = dict(records)
                for i in range(a, b):
                    if isinstance(coll.profiles[i], Exception):
                        recs[i] = {"status": f"ProfileError: {coll.profiles[i]}", "seconds": 0.0}
                parts.write_chunk(key, [(i, recs[i]) for i in range(a, b)], coll, job, nlev)
                for i in range(a, b):
                    if recs[i]["status"] != "ok":
                        log.write(f"{coll.dimension} {coll.labels[i]}: {recs[i]['status']}")
                        if "traceback" in recs[i]:
                            log.write(recs[i]["traceback"])
                log.write(f"chunk {key} (sites {a}-{b - 1}) written")
                sites_done += b - a
                if progress:
                    progress(sites_done, n)
        except KeyboardInterrupt:
            log.write(f"interrupted with {sites_done} of {n} profiles done; run the same command again to resume")
            raise
        finally:
            executor.close()
    computed = len(todo) - lost
    if lost:
        log.write(f"{lost} chunk(s) lost; run the same command again to compute them")
        return BatchResult(None, n, 0, 0, len(ranges), len(done), computed, lost, time.perf_counter() - t0,
                           kind=job.kind)
    summary = batchfiles.assemble(parts, out, coll, job, ranges)
    log.write(f"wrote {out}: {summary['ok']} ok, {summary['failed']} failed")
    return BatchResult(out, n, summary["ok"], summary["failed"], len(ranges), len(done), computed, 0,
                       time.perf_counter() - t0, means=summary["means"], errors=summary["errors"], kind=job.kind)


def check_batch_paths(source, output, lines=None, continuum_table=None):
    """Refuse, before anything is read, a batch whose output, parts folder or log is (or holds) one of
    its input files: the profiles (``source``, see :func:`resolve_collection`), the line store or the
    continuum table. Raises :class:`~specforce.errors.OutputPathError` naming both."""
    from .io.files import check_outputs_not_inputs

    items = [source] if isinstance(source, (str, os.PathLike)) else []
    if isinstance(source, (list, tuple)):
        items = [x for x in source if isinstance(x, (str, os.PathLike))]
    out = os.fspath(output)
    check_outputs_not_inputs([("batch output", out), ("the batch's parts folder", f"{out}.parts"),
                              ("the batch's log", f"{out}.log")],
                             [("profiles", x) for x in items]
                             + [("line store", lines), ("continuum table", continuum_table)])


def _max_levels(coll, job):
    """Levels of the largest computed column (profiles' levels, refined)."""
    r = job.settings.refine
    sizes = [(p.nlevels - 1) * r + 1 for p in coll.profiles if not isinstance(p, Exception)]
    return max(sizes, default=2)
