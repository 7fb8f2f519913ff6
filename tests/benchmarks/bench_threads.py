"""One search thread or two: prints wall and CPU times, asserts nothing about time.

    python tests/benchmarks/bench_threads.py            # all C66 and C72, IPR C100 and C110
    python tests/benchmarks/bench_threads.py --rounds 5

The isomer search splits large trees into parts searched by ``WORKERS`` threads
(cageprint.cage.isomers).  This runs the same searches with 1 and with 2 threads,
interleaved (1, 2, 1, 2, ...), and prints the best wall time of each with the load
averages: the default is chosen from these figures on a quiet machine.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "kit"))

from cageprint.cage import isomers, iter_spirals  # noqa: E402

CASES = ((66, False), (72, False), (100, True), (110, True))


def run(n: int, ipr: bool, workers: int) -> tuple[float, float, int]:
    isomers.WORKERS = workers
    isomers.forget_dead_states()  # cold: each run learns its own dead states
    t, c = time.perf_counter(), time.process_time()
    count = sum(len(b) for b in iter_spirals(n, ipr))
    return time.perf_counter() - t, time.process_time() - c, count


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args()
    default = isomers.WORKERS
    run(60, False, 1)  # load the compiled kernels
    print(f"cores {os.cpu_count()}, default WORKERS = {default}, "
          f"load {' '.join(f'{v:.2f}' for v in os.getloadavg())}")
    for n, ipr in CASES:
        best: dict[int, tuple[float, float]] = {}
        count = 0
        for _ in range(args.rounds):
            for w in (1, 2):
                wall, cpu, count = run(n, ipr, w)
                if w not in best or wall < best[w][0]:
                    best[w] = (wall, cpu)
        kind = "IPR" if ipr else "all"
        print(f"C{n} {kind:>3} ({count} cages): 1 thread {best[1][0]:6.2f} s wall "
              f"({best[1][1]:.2f} s CPU); 2 threads {best[2][0]:6.2f} s wall "
              f"({best[2][1]:.2f} s CPU); 2 vs 1: {best[1][0] / best[2][0]:.2f}x "
              f"(load {os.getloadavg()[0]:.2f})")
    isomers.WORKERS = default


if __name__ == "__main__":
    main()
