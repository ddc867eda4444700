"""Benchmark: line-record import and the HDF5 line store.

Prints: parse throughput (plain text and .gz/.bz2/.xz/.zip inputs), import
throughput, peak memory of a large import (in a child process), store size
against text size, and the time to select a 50 cm-1 window from the store. The
input is synthetic (invented lines, generated here by repeating one template
record with increasing wavenumber), so that the figures do not depend on data
outside the project. Repeated records compress far better than real line lists,
so the compressed-input rows are an upper bound; the decompressor, not the
parser, sets their pace.

    python benchmarks/bench_linestore.py [--size-gb 1.0] [--workdir /tmp]
"""

import argparse
import bz2
import gzip
import lzma
import os
import subprocess
import sys
import tempfile
import time
import zipfile

import numpy as np

from specforce.io.linerecords import format_record, iter_record_blocks
from specforce.io.lineimport import import_lines
from specforce.io.linestore import open_store

TEMPLATE = dict(molecule=2, isotopologue=1, intensity=1.234e-22, einstein_a=1.5e-1, gamma_air=0.0712,
                gamma_self=0.089, lower_energy=234.5678, n_air=0.75, delta_air=-0.000844,
                global_upper="       0 1 1 01", global_lower="       0 0 0 01", local_lower="     R 12e     ",
                uncertainty="366332", references="  9  9 11 11", g_upper=25.0, g_lower=27.0)


def make_file(path, n_lines, piece=250_000):
    """Write n_lines sorted synthetic records, in pieces (bounded memory)."""
    rec = np.frombuffer((format_record(wavenumber=0.0, **TEMPLATE) + "\n").encode(), dtype=np.uint8)
    rng = np.random.default_rng(0)
    with open(path, "wb") as fh:
        for start in range(0, n_lines, piece):
            n = min(piece, n_lines - start)
            rows = np.tile(rec, (n, 1))
            wn = 10.0 + (start + np.arange(n)) * (2990.0 / n_lines)
            rows[:, 3:15] = np.frombuffer("".join(f"{w:12.6f}" for w in wn).encode(), np.uint8).reshape(n, 12)
            s = rng.uniform(1, 9.999, n)
            rows[:, 15:20] = np.frombuffer("".join(f"{v:5.3f}" for v in s).encode(), np.uint8).reshape(n, 5)
            fh.write(rows.tobytes())


CHILD = """
import sys, time, resource
from specforce.io.lineimport import import_lines
t = time.perf_counter()
import_lines([sys.argv[1]], sys.argv[2])
print(time.perf_counter() - t, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size-gb", type=float, default=1.0, help="size of the large input file [GB]")
    ap.add_argument("--workdir", default=tempfile.gettempdir())
    args = ap.parse_args()
    work = tempfile.mkdtemp(prefix="specforce-bench-", dir=args.workdir)
    n_big = int(args.size_gb * 1e9 / 161)
    big = os.path.join(work, "big.par")
    t = time.perf_counter()
    make_file(big, n_big)
    size = os.path.getsize(big)
    print(f"input: {n_big:,} synthetic records, {size / 1e9:.2f} GB (generated in {time.perf_counter() - t:.1f} s)")

    # warm the JIT cache on a small file
    small = os.path.join(work, "small.par")
    make_file(small, 1_000_000)
    for _ in iter_record_blocks(small):
        pass

    t = time.perf_counter()
    n = sum(b["wavenumber"].size for b in iter_record_blocks(small))
    dt = time.perf_counter() - t
    print(f"parse only (1e6 records):            {n / dt / 1e6:6.2f} M records/s")

    # compressed inputs: the codec sets the pace (decompression is single-threaded)
    medium = os.path.join(work, "medium.par")
    make_file(medium, 200_000)
    with open(medium, "rb") as fh:
        raw = fh.read()
    def write_zip(path):
        with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as zf:
            zf.writestr("medium.par", raw)

    def write_with(opener):
        def write(path):
            with opener(path) as fh:
                fh.write(raw)
        return write

    for ext, write in (("gz", write_with(lambda p: gzip.open(p, "wb", compresslevel=6))),
                       ("bz2", write_with(lambda p: bz2.open(p, "wb"))),
                       ("xz", write_with(lambda p: lzma.open(p, "wb", preset=1))),
                       ("zip", write_zip)):
        path = f"{medium}.{ext}"
        write(path)
        t = time.perf_counter()
        n_c = sum(b["wavenumber"].size for b in iter_record_blocks(path))
        dt = time.perf_counter() - t
        print(f"parse .{ext:3s} input (2e5 records):   {n_c / dt / 1e6:6.2f} M records/s")

    for comp in ("lzf", None):
        t = time.perf_counter()
        import_lines([small], os.path.join(work, "small.h5"), compression=comp)
        dt = time.perf_counter() - t
        ratio = os.path.getsize(os.path.join(work, "small.h5")) / os.path.getsize(small)
        print(f"import, compression={str(comp):4s} (1e6):    {n / dt / 1e6:6.2f} M records/s, store/text size {ratio:.3f}")

    out = subprocess.run([sys.executable, "-c", CHILD, big, os.path.join(work, "big.h5")],
                         check=True, capture_output=True, text=True).stdout.split()
    dt, rss_kb = float(out[0]), int(out[1])
    print(f"import of {size / 1e9:.2f} GB:                 {dt:6.1f} s, {n_big / dt / 1e6:.2f} M records/s, "
          f"peak RSS {rss_kb / 1024:.0f} MB, store/text size "
          f"{os.path.getsize(os.path.join(work, 'big.h5')) / size:.3f}")

    with open_store(os.path.join(work, "small.h5")) as st:
        times = []
        for lo in np.linspace(100, 2900, 20):
            t = time.perf_counter()
            ll = st.select(wavenumber_range=(lo, lo + 50))
            times.append(time.perf_counter() - t)
        print(f"select 50 cm-1 window from 1e6 lines: median {np.median(times) * 1e3:.1f} ms "
              f"({len(ll):,} lines each)")
    for name in os.listdir(work):
        os.remove(os.path.join(work, name))
    os.rmdir(work)


if __name__ == "__main__":
    main()
