"""The endohedral screen of the literature, end to end, on a local Dask cluster.

    python tests/benchmarks/bench_cascade.py                 # Sc3N@C68, shortlist 36
    python tests/benchmarks/bench_cascade.py --shortlist 12 --workers 2

Sc3N@C68 -> C68 isomer 6140 (D3, three fused pentagon pairs) first among all 6,332 C68
cages (Stevenson et al., Nature 2000; Campanera, Bo & Poblet, Angew. Chem. Int. Ed. 2005):
the library gives the indices of every cage, the index estimate at charge -6 keeps the
best few dozen, GFN2-xTB relaxes those hexaanions, the ones within 30 kJ/mol of the lowest
are relaxed again with Sc3N inside (--model stepwise, the default), and those cluster
energies rank them (--model anion or cluster: one model for the whole shortlist); one
Dask task per cage.  Prints what plain indices would pick, the cascade's ranking,
its CPU time and CPU-hours per 1,000 relaxed cages, with the load averages (shared machine:
re-measure on a quiet one).  Nothing is asserted about time.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
from pathlib import Path

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "kit"))

from cageprint.library import library_indices, query_cages  # noqa: E402
from cageprint.library.screen import CLUSTER_WINDOW, cascade  # noqa: E402


def load() -> str:
    a, b, c = os.getloadavg()
    return f"load {a:.2f} {b:.2f} {c:.2f}"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--formula", default="Sc3N@C68")
    ap.add_argument("--shortlist", type=int, default=36)
    ap.add_argument("--workers", type=int, default=None)
    ap.add_argument("--window", type=float, default=CLUSTER_WINDOW)
    ap.add_argument("--model", default=None, choices=["stepwise", "anion", "cluster"],
                    help="stepwise (default for M3N): anions, then the cluster for the "
                         "lowest; anion; cluster")
    ap.add_argument("--path", default=None, help="library file to reuse (default: a new one)")
    args = ap.parse_args()
    tmp = None
    path = args.path
    if path is None:
        tmp = Path(tempfile.mkdtemp(prefix="cageprint-bench-cascade-"))
        path = tmp / "lib.duckdb"
    try:
        res = cascade(args.formula, shortlist=args.shortlist, path=path, workers=args.workers,
                      model=args.model, window=args.window, progress=False)
        print(res.summary(top=12))
        idx = library_indices(res.n, res.charge, path)
        table = query_cages(path, sizes=[res.n]).set_index("spiral")

        def iso(key):
            return int(table.loc[" ".join(str(int(v)) for v in key.split()), "isomer"])

        fewest = min(s.pentagon_pairs for s in idx.values())
        widest = max(idx, key=lambda k: idx[k].anion_gap)
        print(f"plain indices: fewest fused pairs {fewest}; widest anion gap: isomer "
              f"{iso(widest)} with {idx[widest].pentagon_pairs} fused pairs")
        anions = sum(r.anion_kjmol is not None for r in res.rows)
        clusters = sum(r.cluster_kjmol is not None for r in res.rows)
        cpu = res.energy_cpu_seconds
        if anions + clusters and cpu:
            print(f"relaxations: {anions} bare anions and {clusters} cages with the cluster, "
                  f"{cpu:.0f} s CPU in all")
        total = res.build_cpu_seconds + cpu
        print(f"cascade CPU time: {total:.0f} s ({total / 3600:.2f} CPU-hours), "
              f"{res.wall_seconds:.0f} s wall ({load()})")
        best = res.best
        print(f"first: isomer {best.isomer} ({best.point_group}, {best.pentagon_pairs} fused "
              f"pairs) -> {'OK' if best.isomer == 6140 else 'MISS'} (published: 6140, D3)")
    finally:
        if tmp is not None:
            shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":  # the local cluster's worker processes import this file
    main()
