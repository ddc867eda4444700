"""Batch runs: OLR or forcing for many profiles, on Dask, resumable, with weighted means.

The work of one profile is exactly the single-profile computation
(:func:`specforce.api.olr` or :func:`specforce.api.radiative_forcing`), so a batch
result equals the single-profile result bit for bit. A batch only spreads
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

This module is the public entry (:func:`run_batch`, :func:`pack_profiles`); the job and the
work of one profile are in :mod:`specforce.batch_jobs`, the executors and the resumable run in
:mod:`specforce.batch_runner`.
"""

from __future__ import annotations

import os

from .api import _check_whole_spectrum_for, _settings

__all__ = ["run_batch", "pack_profiles"]


def run_batch(profiles, output, changes=None, *, lines=None, builtin=True, continuum_table=None, settings=None,
              adjusted=False,
              responses=False, tropopause=None, weights=None, spectral_resolution=10.0, scheduler=None, workers=None,
              chunk_size=None, fresh=False, progress=None, accept_unusual=False, **options):
    """OLR (no ``changes``) or forcing of many profiles, on Dask, into one netCDF file; see the notes above.

    Each profile is computed exactly as :func:`~specforce.api.olr` or :func:`~specforce.api.radiative_forcing` would
    (bit for bit). Finished chunks are kept in ``OUTPUT.parts/``; running the same call
    again after an interruption computes only the missing ones.

    Parameters
    ----------
    profiles : str, ProfileCollection or sequence
        A profile collection (netCDF with a site dimension; see ``profiles/README.md``),
        a folder of profile files, ``"afgl"`` (the five seasonal AFGL models with area
        weights), or a list of profiles, bundled names and files.
    output : str or os.PathLike
        The result file (``.nc``).
    changes : dict or list, optional
        As for :func:`~specforce.api.radiative_forcing`; without changes the job is OLR.
    lines : str, optional
        A line store (read by every worker; on a remote cluster it must be at the same path).
    continuum_table : str, optional
        A continuum table (as for :func:`~specforce.api.spectroscopy`; read by every worker, at the same path).
        (``continuum=False`` among the options switches the continuum off, as for :func:`~specforce.api.olr`.)
    builtin, settings, options : as for :func:`~specforce.api.spectroscopy` and :func:`~specforce.api.olr`
    adjusted, responses, tropopause : as for :func:`~specforce.api.radiative_forcing`
    weights : sequence of float, optional
        Per-profile weights for the means (default the collection's).
    spectral_resolution : float
        Bins of the stored spectra [cm-1]; 0 for none.
    scheduler : str, optional
        ``tcp://HOST:PORT`` of a running Dask scheduler, or ``"serial"`` (in this process,
        without Dask); default a LocalCluster of ``workers`` processes.
    workers : int, optional
        Default one per core.
    chunk_size : int, optional
        Profiles per task and per part file (default about four chunks per worker, at most 50).
    fresh : bool
        Discard the parts of an earlier, different or unwanted run.
    progress : callable, optional
        ``progress(profiles_done, profiles_total)``.
    accept_unusual : bool
        Waive the plausibility checks of every profile read; the output's ``input``
        attribute records the waiver and what the checks found.

    Returns
    -------
    BatchResult
    """
    from .batch_jobs import BatchJob, resolve_collection
    from .batch_runner import check_batch_paths, run_job as _run
    from .errors import SettingsError
    from .forcing.scenario import parse_change

    check_batch_paths(profiles, output, lines, continuum_table)  # before anything is read or written
    if isinstance(changes, dict):
        perts = tuple(parse_change(g, str(v)) for g, v in changes.items())
    else:
        perts = tuple(changes or ())
    sett = _settings(settings, options)
    if lines is not None:
        from .io.linestore import open_store

        with open_store(lines):
            pass  # a store that cannot be opened fails here, not on every worker
    if continuum_table is not None:
        from .io.continuum_tables import read_continuum_table

        read_continuum_table(continuum_table)  # a bad table fails here, not on every worker
    cores = os.cpu_count() or 1
    if workers is not None and workers < 1:
        raise SettingsError(f"workers must be at least 1, got {workers}")
    threads = max(1, cores // (workers or cores)) if not scheduler else None
    job = BatchJob(perts, sett, lines=os.path.abspath(lines) if lines else None, builtin=builtin,
                   continuum_table=os.path.abspath(continuum_table) if continuum_table else None, adjusted=adjusted,
                   responses=responses, tropopause=tropopause, spectral_resolution=spectral_resolution, threads=threads)
    if perts:
        from .batch_jobs import _worker_spectroscopy
        from .forcing.instantaneous import check_changes_active

        # a change that does nothing fails here, once, not as a zero (or an error) on every profile
        check_changes_active(perts, _worker_spectroscopy(job), sett)
    coll = resolve_collection(profiles, weights, accept_unusual=accept_unusual)
    if responses or adjusted:
        first = next((p for p in coll.profiles if not isinstance(p, Exception)), None)
        if first is not None:
            _check_whole_spectrum_for(first, sett, adjusted, responses)
    return _run(coll, output, job, scheduler=scheduler, workers=workers, chunk_size=chunk_size, fresh=fresh,
                progress=progress)


def pack_profiles(profiles, output, weights=None, labels=None, accept_unusual=False):
    """Write profiles into one profile collection (netCDF), the input of :func:`run_batch`.

    Parameters
    ----------
    profiles : sequence of Profile or str, or "afgl"
        Profiles, bundled names, files or folders of files; ``"afgl"`` for the five
        seasonal AFGL models with their area weights.
    output : str or os.PathLike
    weights, labels : sequence, optional
        One per profile.
    accept_unusual : bool
        Waive the plausibility checks of profiles read from names or files.

    Returns
    -------
    ProfileCollection
        What was written.
    """
    from .io.collection import collect_profiles, write_profile_collection
    from .forcing.sweep import AREA_WEIGHTS

    if isinstance(profiles, str) and profiles.lower() == "afgl":
        profiles, weights = list(AREA_WEIGHTS), list(AREA_WEIGHTS.values()) if weights is None else weights
    coll = collect_profiles([profiles] if isinstance(profiles, (str, os.PathLike)) else list(profiles), weights, labels,
                            accept_unusual=accept_unusual)
    write_profile_collection(coll, output)
    return coll


# ------------------------------------------------------------------ line stores
