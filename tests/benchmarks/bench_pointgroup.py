"""Benchmark: point-group identification and reduction (prints figures, asserts nothing).

Run: python tests/benchmarks/bench_pointgroup.py
"""

from __future__ import annotations

import math
import pathlib
import sys
import time

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from cageprint.symmetry.pointgroup import identify_point_group  # noqa: E402
from cageprint.symmetry.reduce import reduce_representation, vibrational_analysis  # noqa: E402
from cageprint.symmetry.tables import character_table  # noqa: E402
from test_pointgroup import close, generators, random_rotation  # noqa: E402


def best_of(fn, number: int, repeat: int = 5) -> tuple[float, float]:
    """Best wall time and best CPU time per call, in ms."""
    wall, cpu = math.inf, math.inf
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        for _ in range(number):
            fn()
        wall = min(wall, (time.perf_counter() - t0) / number * 1e3)
        cpu = min(cpu, (time.process_time() - c0) / number * 1e3)
    return wall, cpu


def main() -> None:
    rng = np.random.default_rng(0)
    print("identify_point_group (random orientation, shuffled ops); best of 5")
    print(f"{'group':6s} {'order':>5s} {'wall ms':>8s} {'cpu ms':>8s}")
    for sym in ("Ih", "I", "Th", "Td", "D6h", "D6d", "D5h", "D5d", "D2h", "D3", "C2v", "Cs", "C1"):
        q = random_rotation(rng)
        ops = q @ close(generators(sym)) @ q.T
        ops = ops[rng.permutation(len(ops))]
        n = 40 if len(ops) >= 60 else 200
        wall, cpu = best_of(lambda ops=ops: identify_point_group(ops), n)
        print(f"{sym:6s} {len(ops):5d} {wall:8.3f} {cpu:8.3f}")
    t = character_table("Ih")
    chi = [180, 0, 0, 0, 0, 0, 0, 0, 0, 4]
    wall, cpu = best_of(lambda: reduce_representation(t, chi), 1000)
    print(f"reduce_representation Ih: {wall * 1e3:.1f} µs wall, {cpu * 1e3:.1f} µs cpu")
    wall, cpu = best_of(lambda: vibrational_analysis(t, chi), 500)
    print(f"vibrational_analysis Ih:  {wall * 1e3:.1f} µs wall, {cpu * 1e3:.1f} µs cpu")


if __name__ == "__main__":
    main()
