"""The threads of one longwave calculation: how many, and the pool that runs its tasks.

A longwave calculation is many independent pieces of work: in each spectral block,
every layer's optical depth (one task per layer and set of absorbers), then the
transfer in fixed runs of points (one task per run). :class:`TaskPool` runs such
tasks on a number of threads and returns their results in submission order.

Why a thread pool over kernels compiled without the GIL (numba ``nogil``), rather than
numba's parallel loops inside each kernel:

* the work is uneven: lines crowd into bands, so equal slices of a spectral block
  carry very different numbers of lines, and a parallel loop's fixed split leaves
  threads idle; a pool hands out the next task to whichever thread is free;
* a task holds one layer's line parameters for one block and nothing else, so
  memory stays bounded by the threads, not by the layers;
* one count governs everything (line sums, Fourier transforms and transfer), and it
  is a per-call setting, so a batch worker can take its share of the cores;
* numba's default threading layer cannot run parallel kernels from several threads
  at once, which a pool of calculations (or a user's own threads) would do.

Results do not depend on the thread count: every task writes only its own part,
and partial sums are added in a fixed order after the tasks end.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

from ..errors import SettingsError

__all__ = ["available_cores", "thread_count", "TaskPool", "run_tasks"]


def available_cores():
    """Cores this process may run on (its CPU affinity where the system reports one)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def thread_count(threads):
    """The number of threads ``threads`` asks for: None for every available core, else a whole
    number >= 1 (more than the cores is allowed, and useless)."""
    if threads is None:
        return available_cores()
    if isinstance(threads, bool) or int(threads) != threads or threads < 1:
        raise SettingsError(f"threads must be a whole number >= 1, or None for every core "
                            f"({available_cores()} here), got {threads!r}")
    return int(threads)


class TaskPool:
    """Runs independent tasks on ``threads`` threads (see :func:`thread_count`); with one
    thread, in the calling thread. Use as a context manager::

        with TaskPool(4) as pool:
            rows = pool.map(layer_depth, range(nlayers))
    """

    def __init__(self, threads=None):
        self.threads = thread_count(threads)
        self._executor = None if self.threads == 1 else ThreadPoolExecutor(self.threads,
                                                                           thread_name_prefix="specforce")

    def map(self, function, items):
        """[function(item) for item in items], run on the pool's threads; the results in order.
        The error of the first task (in the order of the items) that fails is raised here at once;
        the tasks already running end when the pool closes."""
        if self._executor is None:
            return [function(item) for item in items]
        return list(self._executor.map(function, items))

    def close(self):
        if self._executor is not None:
            self._executor.shutdown(wait=True, cancel_futures=True)
            self._executor = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False


def run_tasks(pool, function, items):
    """``pool.map(function, items)``, or in the calling thread where ``pool`` is None."""
    return [function(item) for item in items] if pool is None else pool.map(function, items)
