"""Isomer enumeration against a plain-Python reference, and the shape of its progress.

    python tests/benchmarks/bench_enumeration.py             # ratios C50/C56, C60, tail C80
    python tests/benchmarks/bench_enumeration.py --big       # also all C100, IPR C120 tail
    python tests/benchmarks/bench_enumeration.py --ipr150    # also IPR C150 (long)
    python tests/benchmarks/bench_enumeration.py --hexagons  # also the C100 search from
                                                             # hexagons (about 20 min)

Prints figures, asserts nothing about time.  Every figure is one search thread
(``WORKERS = 1``), so they hold for one core; the load averages are printed with them.

- **ratio**: the kit's search against ``tests/reference_spiral.py`` (the same face-spiral
  method in plain Python lists, with only the plain cuts), runs interleaved
  (kit, reference, kit), the kit's best time used.  Target: >= 150x on C50 and C56.
- **speed**: all 1,812 C60 isomers (< 0.5 s), all C100 (< 60 s), IPR C150 (< 5 min).
- **tail**: the search cut into subtrees by estimated work (:func:`plan_subtrees`), each
  timed; how much of the time the last 10 % of the estimated work took (target <= 15 %)
  and the slowest subtree.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "kit"))
sys.path.insert(0, os.path.join(HERE, ".."))

import numpy as np  # noqa: E402

import reference_spiral  # noqa: E402
from cageprint.cage import _kernels as K  # noqa: E402
from cageprint.cage import isomers  # noqa: E402


def _load() -> str:
    try:
        return "load %.2f %.2f %.2f" % os.getloadavg()
    except OSError:  # pragma: no cover
        return "load n/a"


def kit_time(n: int, ipr: bool) -> tuple[float, int]:
    isomers.forget_dead_states()  # cold: nothing learnt from an earlier run
    t = time.perf_counter()
    count = sum(len(b) for b in isomers.iter_spirals(n, ipr))
    return time.perf_counter() - t, count


def ratio(n: int) -> None:
    k1, c1 = kit_time(n, False)
    t = time.perf_counter()
    ref = reference_spiral.spirals(n)
    tr = time.perf_counter() - t
    k2, c2 = kit_time(n, False)
    kit = min(k1, k2)
    same = c1 == c2 == len(ref)
    print(f"C{n} all: kit {kit:.3f} s, reference {tr:.1f} s, ratio {tr / kit:.0f}x "
          f"({len(ref)} isomers, counts agree: {same}); {_load()}", flush=True)


def speed(n: int, ipr: bool, target: float) -> None:
    wall, count = kit_time(n, ipr)
    kind = "IPR" if ipr else "all"
    print(f"C{n} {kind}: {count} isomers in {wall:.2f} s (target < {target:g} s), "
          f"{count / wall:.0f} isomers/s; {_load()}", flush=True)


def tail(n: int, ipr: bool) -> None:
    t0 = time.perf_counter()
    plan = isomers.plan_subtrees(n, ipr)
    planning = time.perf_counter() - t0
    times, weights, count = [], [], 0
    for prefix, depth, w in plan:
        t = time.perf_counter()
        count += len(isomers._part(n, ipr, prefix, depth))
        times.append(time.perf_counter() - t)
        weights.append(w)
    ts, ws = np.array(times), np.array(weights)
    done_w = np.cumsum(ws) / ws.sum()
    done_t = np.cumsum(ts) / ts.sum()
    i = int(np.searchsorted(done_w, 0.9))
    kind = "IPR" if ipr else "all"
    print(f"C{n} {kind}: {count} isomers, {len(plan)} subtrees planned in {planning:.2f} s, "
          f"searched in {ts.sum():.1f} s; the last 10 % of the work took "
          f"{100 * (1 - done_t[i]):.1f} % of the time (target <= 15 %); slowest subtree "
          f"{ts.max():.2f} s; {_load()}", flush=True)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--big", action="store_true", help="also all C100 and the IPR C120 tail")
    ap.add_argument("--ipr150", action="store_true", help="also IPR C150 (long)")
    ap.add_argument("--hexagons", action="store_true",
                    help="also the C100 search from hexagons that fills HEXAGON_START_CAGES")
    args = ap.parse_args()
    isomers.WORKERS = 1
    print(f"cores {os.cpu_count()}, one search thread; {_load()}")
    kit_time(40, False)  # load the compiled kernels
    for n in (50, 56):
        ratio(n)
    speed(60, False, 0.5)
    tail(80, False)
    if args.big:
        speed(100, False, 60)
        tail(120, True)
    if args.ipr150:
        speed(150, True, 300)
    if args.hexagons:
        hexagons(100)


def hexagons(n: int) -> None:
    # the search from hexagons alone: what a list of a size missing from the table costs extra
    isomers.forget_dead_states()
    t = time.perf_counter()
    found = [tuple(r) for b in isomers._run(K.new_search_state(n, 6), False) for r in b.tolist()]
    wall = time.perf_counter() - t
    known = list(isomers.HEXAGON_START_CAGES.get(n, ()))
    print(f"C{n} from hexagons: {len(found)} cage(s) in {wall:.0f} s (as listed in "
          f"HEXAGON_START_CAGES: {found == known}); {_load()}", flush=True)


if __name__ == "__main__":
    main()
