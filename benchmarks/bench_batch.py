"""Benchmark: batch throughput on Dask against single-profile runs in one process, side by side.

Ten profiles (the six AFGL models, the invented demo sounding, and mls, tropical and
saw warmed by 1 K), built-in lines, full range 10-3000 cm-1, default settings. Printed:

* the old way: one process calling ``specforce.olr`` / ``specforce.radiative_forcing``
  profile after profile (the spectroscopy loaded once, kernels warm);
* the batch on a LocalCluster with 2 and with 1 workers, each in a fresh process:
  cluster start-up, time to the last profile, profiles per minute, scaling efficiency at 2 workers, overhead per
  profile against the in-process loop, and peak RSS per worker;
* the batch as a user runs it (``run_batch(..., workers=2)``, cluster included), and the
  ratio of its time to the in-process loop;
* the resume: a batch stopped after its first chunks, then the same call again;
* with ``--scaling``: throughput against workers, 3 profiles per worker, for 1, 2, 4, 8, 16
  workers as far as the machine has cores, each worker on one thread, and the efficiency
  against 1 worker times the number of workers (cluster start-up left out).

Run on an otherwise idle machine (about 6 minutes on 2 cores):

    python benchmarks/bench_batch.py
    python benchmarks/bench_batch.py --job olr      # or forcing
    python benchmarks/bench_batch.py --scaling      # the workers table, 2xCO2 forcing
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import tempfile
import time

import numpy as np


def _profiles():
    from specforce.io.profiles import load_profile

    out = [load_profile(n) for n in ("tropical", "mls", "mlw", "sas", "saw", "usstd", "demo")]
    for n in ("mls", "tropical", "saw"):
        p = load_profile(n)
        out.append(p.copy(temperature=p.temperature + 1.0, surface_temperature=p.surface_temperature + 1.0,
                          name=f"{p.name} +1 K"))
    return out


def _peak_rss_mb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _in_process(profiles, changes, spec):
    import specforce

    t = time.perf_counter()
    for p in profiles:
        if changes:
            specforce.radiative_forcing(p, changes, spec)
        else:
            specforce.olr(p, spec)
    return time.perf_counter() - t


def _on_cluster(profiles, changes, workers, folder, threads=None):
    from distributed import Client

    import specforce
    from specforce.batch_runner import local_cluster

    t0 = time.perf_counter()
    cluster = local_cluster(workers, threads)  # as run_batch starts its own
    client = Client(cluster)
    # warm each worker (imports, numba cache, built-in lines) with a tiny run, as a long batch amortises it
    specforce.run_batch(profiles[:workers], os.path.join(folder, f"warm{workers}.nc"), changes,
                        scheduler=cluster.scheduler_address, wavenumber_range=(660.0, 661.0), chunk_size=1)
    startup = time.perf_counter() - t0
    t = time.perf_counter()
    r = specforce.run_batch(profiles, os.path.join(folder, f"b{workers}.nc"), changes,
                            scheduler=cluster.scheduler_address, chunk_size=1)
    seconds = time.perf_counter() - t
    rss = list(client.run(_peak_rss_mb).values())
    client.close()
    cluster.close()
    assert r.complete and r.ok == len(profiles), r.summary()
    return startup, seconds, rss


def _on_cluster_in_new_process(job, workers, per_worker=None):
    """:func:`_on_cluster` in a fresh Python process: a cluster closed earlier in the same process
    left the next one's workers 2-2.5 times slower (measured), which is not what a user sees.
    ``per_worker``: that many profiles per worker and one thread each (the scaling table)."""
    import json
    import subprocess
    import sys

    extra = ["--per-worker", str(per_worker)] if per_worker else []
    out = subprocess.run([sys.executable, __file__, "--job", job, "--cluster", str(workers), *extra], check=True,
                         capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def scaling(job="forcing", per_worker=3):
    from specforce.radiation.workers import available_cores

    cores = available_cores()
    label = "2xCO2 forcing" if job == "forcing" else "OLR"
    print(f"{label}: throughput against workers, {per_worker} profiles per worker, one thread each, "
          f"{cores} cores (warm workers, start-up left out):")
    print("  workers  profiles   seconds   profiles/hour   per worker/hour   efficiency")
    base = None
    for w in (1, 2, 4, 8, 16):
        if w > cores:
            break
        _, seconds, rss = _on_cluster_in_new_process(job, w, per_worker)
        rate = w * per_worker / seconds * 3600
        base = base or rate
        print(f"  {w:7d} {w * per_worker:9d} {seconds:9.1f} {rate:15.0f} {rate / w:17.0f} {rate / (w * base):11.0%}"
              f"   (peak RSS per worker {max(rss):.0f} MB)", flush=True)


def _as_user(profiles, changes, folder):
    import specforce

    t = time.perf_counter()
    r = specforce.run_batch(profiles, os.path.join(folder, "user.nc"), changes, workers=2)
    assert r.complete
    return time.perf_counter() - t


class _Stop(Exception):
    pass


def _resume(profiles, changes, folder):
    import specforce

    out = os.path.join(folder, "resume.nc")

    def stop(done, total):
        if done >= 4:
            raise _Stop

    t = time.perf_counter()
    try:
        specforce.run_batch(profiles, out, changes, scheduler="serial", chunk_size=2, progress=stop)
    except _Stop:
        pass
    first = time.perf_counter() - t
    t = time.perf_counter()
    r = specforce.run_batch(profiles, out, changes, scheduler="serial", chunk_size=2)
    return first, time.perf_counter() - t, r


def bench(job):
    import specforce

    profiles = _profiles()
    n = len(profiles)
    changes = {"CO2": "2x"} if job == "forcing" else None
    label = "2xCO2 forcing" if changes else "OLR"
    folder = tempfile.mkdtemp()
    try:
        spec = specforce.spectroscopy()
        specforce.olr("mls", spec, wavenumber_range=(660.0, 661.0))  # compile / load the kernels
        old = _in_process(profiles, changes, spec)
        print(f"{label}, {n} profiles, built-in lines, 10-3000 cm-1:")
        print(f"  in one process, profile after profile  {old:8.1f} s   {n / old * 60:6.1f} profiles/min   "
              f"peak RSS {_peak_rss_mb():.0f} MB", flush=True)
        times = {}
        for w in (2, 1):
            startup, seconds, rss = _on_cluster_in_new_process(job, w)
            times[w] = seconds
            print(f"  batch, {w} worker{'s' if w > 1 else ' '} (warm)               {seconds:8.1f} s   "
                  f"{n / seconds * 60:6.1f} profiles/min   start-up {startup:5.1f} s   peak RSS per worker "
                  f"{', '.join(f'{x:.0f}' for x in rss)} MB", flush=True)
        print(f"  overhead per profile, 1 worker vs in-process: {(times[1] - old) / n:+.2f} s "
              f"({(times[1] - old) / old:+.1%})")
        print(f"  scaling efficiency at 2 workers: {times[1] / (2 * times[2]):.0%}  (time ratio 1/2 workers "
              f"{times[1] / times[2]:.2f})")
        user = _as_user(profiles, changes, folder)
        print(f"  run_batch(workers=2) as a user runs it, cluster included: {user:.1f} s; "
              f"in-process loop / batch = {old / user:.2f}", flush=True)
        first, second, r = _resume(profiles, changes, folder)
        print(f"  resume: stopped after {r.reused} of {r.chunks} chunks ({first:.1f} s); the same call again "
              f"computed {r.computed} chunks in {second:.1f} s")
        print(f"  per core: {n / times[2] * 60 * 60 / 2:.0f} profiles per hour per core (2 workers, warm)")
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--job", choices=["olr", "forcing", "both"], default="both")
    ap.add_argument("--scaling", action="store_true", help="the table of throughput against workers")
    ap.add_argument("--cluster", type=int, help=argparse.SUPPRESS)  # internal: one cluster measurement
    ap.add_argument("--per-worker", type=int, help=argparse.SUPPRESS)  # internal: profiles per worker, 1 thread
    args = ap.parse_args()
    if args.cluster:
        import json

        folder = tempfile.mkdtemp()
        profiles = _profiles()
        if args.per_worker:
            profiles = [profiles[k % len(profiles)] for k in range(args.cluster * args.per_worker)]
        try:
            print(json.dumps(_on_cluster(profiles, {"CO2": "2x"} if args.job == "forcing" else None, args.cluster,
                                         folder, 1 if args.per_worker else None)))
        finally:
            shutil.rmtree(folder, ignore_errors=True)
        return
    if args.scaling:
        scaling("olr" if args.job == "olr" else "forcing")
        return
    for job in (("olr", "forcing") if args.job == "both" else (args.job,)):
        bench(job)
        print(flush=True)


if __name__ == "__main__":
    np.seterr(all="ignore")
    main()
