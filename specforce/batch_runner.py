"""The batch runner: executors (a Dask cluster, local or by address, or this process) and the
resumable run of a :class:`~specforce.batch_jobs.BatchJob` over a profile collection, with its
parts folder, log and assembled output (see :mod:`specforce.batch` for the whole story).
"""

from __future__ import annotations

import os
import re
import time
from dataclasses import dataclass, field

from .batch_jobs import (_input_fingerprint, _run_chunk, _run_chunk_on_worker, chunk_ranges, default_chunk_size,
                         job_accuracy, resolve_collection)
from .errors import SettingsError

__all__ = ["BatchResult", "run_job", "local_cluster", "check_batch_paths", "check_scheduler_address"]


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
    threshold that slows this code 2.5-fold (see :func:`specforce.batch_jobs._restore_allocator`); these
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
    accuracy : tuple of str
        The measured accuracy of the built-in lines for the gases changed (none for gases
        from an imported list; see :func:`specforce.molecular.builtin.accuracy_statements`).
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
    accuracy: tuple = ()

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
                "means": self.means, "errors": {str(k): v for k, v in self.errors.items()},
                "spectroscopy_accuracy": list(self.accuracy), "caution": CAUTION}

    def summary(self):
        """A few lines of text."""
        from .io.batchfiles import batch_text

        return batch_text(self)


def run_job(source, output, job, *, weights=None, scheduler=None, workers=None, chunk_size=None, fresh=False,
            progress=None):
    """Run a batch job (see the notes of :mod:`specforce.batch`).

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
        if not scheduler and (job.settings.grid, job.settings.method, job.settings.spectral_model) == (
                "graded", "fast", "lbl"):
            # on a cold cache, on every core before the local workers start: each would compile them in turn
            from .radiation.compile_ahead import compile_ahead

            compile_ahead()
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
    accuracy = job_accuracy(job)
    summary = batchfiles.assemble(parts, out, coll, job, ranges, accuracy=accuracy)
    log.write(f"wrote {out}: {summary['ok']} ok, {summary['failed']} failed")
    return BatchResult(out, n, summary["ok"], summary["failed"], len(ranges), len(done), computed, 0,
                       time.perf_counter() - t0, means=summary["means"], errors=summary["errors"], kind=job.kind,
                       accuracy=accuracy)


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
