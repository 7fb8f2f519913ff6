"""Cage library builds on a local Dask cluster: prints figures, asserts nothing about time.

    python tests/benchmarks/bench_library.py            # C84, all 51,592 isomers; C68 chooser
    python tests/benchmarks/bench_library.py --n 70     # a smaller size for a quick look

One run builds the same range twice into fresh files, with 1 and with 2 local worker
processes, and prints both times and the speed-up (the machine is shared: the load
averages are printed beside every figure; re-measure on a quiet machine).  Then a second
build of the finished range (must compute nothing), the read-back time of the whole range,
the chooser's read of all C68 cages, and CPU-hours per 1,000 cages for sizing a cluster.

Targets (issue 11): C84 all isomers with 2 workers < 3 min, read back < 1 s, speed-up 1 -> 2
workers >= 1.7x; the chooser shows all 6,332 C68 cages from the library < 2 s.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
import time
from pathlib import Path

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "kit"))

from cageprint.library import build_library, library_cages, query_cages  # noqa: E402


def load() -> str:
    a, b, c = os.getloadavg()
    return f"load {a:.2f} {b:.2f} {c:.2f}"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=84)
    ap.add_argument("--chooser-n", type=int, default=68)
    args = ap.parse_args()
    tmp = Path(tempfile.mkdtemp(prefix="cageprint-bench-lib-"))
    try:
        times = {}
        for workers in (1, 2):
            path = tmp / f"w{workers}.duckdb"
            print(f"C{args.n} all isomers, {workers} worker(s): building ... ({load()})",
                  flush=True)
            rep = build_library([args.n], ipr=False, path=path, workers=workers,
                                progress=False)
            times[workers] = rep.wall_seconds
            r = rep.ranges[0]
            print(f"  {r.cages} cages in {rep.wall_seconds:.1f} s wall, {rep.cpu_seconds:.1f} s "
                  f"CPU in tasks, {r.pieces} pieces ({load()})", flush=True)
            if workers == 2:
                per_1000 = rep.cpu_seconds / 3600 / (r.cages / 1000)
                print(f"  cost: {per_1000:.4f} CPU-hours per 1,000 C{args.n} cages "
                      "(enumeration + fingerprint + indices)")
        print(f"speed-up 1 -> 2 workers: {times[1] / times[2]:.2f}x (same run; {load()})")
        path = tmp / "w2.duckdb"
        rep = build_library([args.n], ipr=False, path=path, workers=2, progress=False)
        print(f"second build: {rep.computed} pieces computed, {rep.wall_seconds:.2f} s ({load()})")
        t = time.perf_counter()
        table = query_cages(path, sizes=[args.n])
        print(f"read back {len(table)} rows: {time.perf_counter() - t:.3f} s ({load()})")
        size = path.stat().st_size / 1e6
        print(f"library file {size:.1f} MB")
        # the chooser's data source and the chooser itself, all isomers of the chooser size
        build_library([args.chooser_n], ipr=False, path=path, workers=2, progress=False)
        t = time.perf_counter()
        rows = library_cages(args.chooser_n, ipr=False, path=path, build=False)
        print(f"chooser source: {len(rows)} C{args.chooser_n} cages read in "
              f"{time.perf_counter() - t:.3f} s ({load()})")
        try:
            from cageprint.session import Session
            from cageprint.widgets.chooser import CandidateChooser
        except ImportError:
            print("ipywidgets missing: chooser timing skipped")
        else:
            t = time.perf_counter()
            ch = CandidateChooser(Session(), f"C{args.chooser_n}", ipr=False, library=path)
            print(f"chooser: {len(ch.session.candidates)} C{args.chooser_n} candidates shown "
                  f"from the library in {time.perf_counter() - t:.3f} s ({load()})")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":  # the local cluster's worker processes import this file
    main()
