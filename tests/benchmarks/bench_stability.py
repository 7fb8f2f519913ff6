"""Stability indices and GFN2-xTB energies: prints figures, asserts nothing about time.

    python tests/benchmarks/bench_stability.py               # indices, xTB costs, C84 check
    python tests/benchmarks/bench_stability.py --no-c84      # skip the 24 C84 relaxations

Prints: the time of the stability indices per cage (IPR C60-C100 and a slice of all C84
isomers, symmetry analysis included and excluded), the cost of one GFN2-xTB single point
and one relaxation for cages of several sizes and charges, CPU-hours per 1,000 relaxed
cages, and the published C84 check: isomers 22 (D2) and 23 (D2d) the two lowest of the 24
IPR cages by relaxed energies (Raghavachari, Chem. Phys. Lett. 1992; Manolopoulos &
Fowler, J. Chem. Phys. 1992; from memory), with both timings and the load averages.
"""

from __future__ import annotations

import argparse
import itertools
import os
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "kit"))

from cageprint.cage import Cage, iter_isomers  # noqa: E402
from cageprint.stability import stability_indices, stability_indices_at  # noqa: E402
from cageprint.symmetry import cage_symmetry, symmetric_geometry  # noqa: E402
from cageprint.symmetry.fingerprint import clear_caches  # noqa: E402


def load() -> str:
    a, b, c = os.getloadavg()
    return f"load {a:.2f} {b:.2f} {c:.2f}"


def bench_indices() -> None:
    cages = [c for n in range(60, 102, 2) for c in iter_isomers(n, ipr=True)]
    clear_caches()
    t = time.process_time()
    for c in cages:
        stability_indices_at(c, (0, -2, -3, -4, -6))
    cold = (time.process_time() - t) / len(cages) * 1e3
    t = time.process_time()
    for c in cages:
        stability_indices_at(c, (0, -2, -3, -4, -6))
    warm = (time.process_time() - t) / len(cages) * 1e3
    print(f"indices, {len(cages)} IPR cages C60-C100 at 5 charges: {cold:.2f} ms CPU per cage "
          f"with the symmetry analysis, {warm:.2f} ms once it is cached ({load()})")
    some = list(itertools.islice(iter_isomers(84), 20000, 22000))
    clear_caches()
    t = time.process_time()
    for c in some:
        cage_symmetry(c)
    sym = (time.process_time() - t) / len(some) * 1e3
    t = time.process_time()
    for c in some:
        stability_indices(c, -6)
    idx = (time.process_time() - t) / len(some) * 1e3
    print(f"indices, 2,000 of all C84 isomers: {sym:.2f} ms symmetry analysis + {idx:.2f} ms "
          f"indices per cage ({load()})")


def bench_xtb() -> None:
    from cageprint.stability.energy import relax_cage, single_point

    cases = [("C60 Ih", 60, (1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32), 0),
             ("C68 D3 6140, charge -6", 68, (1, 2, 9, 11, 14, 16, 22, 27, 29, 31, 33, 35), -6),
             ("C80 Ih 7, charge -6", 80, 7, -6),
             ("C84 D2d 23", 84, 23, 0)]
    for name, n, spiral, q in cases:
        cage = (Cage.from_spiral(n, spiral) if isinstance(spiral, tuple) else
                list(iter_isomers(n, ipr=True))[spiral - 1])
        x = symmetric_geometry(cage).coords
        t, c = time.perf_counter(), time.process_time()
        single_point(cage, x, charge=q)
        sp_wall, sp_cpu = time.perf_counter() - t, time.process_time() - c
        r = relax_cage(cage, charge=q)
        print(f"GFN2-xTB {name}: single point {sp_cpu:.2f} s CPU ({sp_wall:.2f} s wall); "
              f"relaxation {r.steps} steps, {r.evaluations} evaluations, {r.cpu_seconds:.1f} s "
              f"CPU ({r.seconds:.1f} s wall) = {r.cpu_seconds / 3.6:.1f} CPU-hours per 1,000 "
              f"such cages ({load()})", flush=True)


def bench_c84() -> None:
    from cageprint.stability.energy import relative_energies, relax_cage

    cages = list(iter_isomers(84, ipr=True))
    t = time.perf_counter()
    res = [relax_cage(c) for c in cages]
    wall = time.perf_counter() - t
    rel = relative_energies(res)
    order = sorted(range(24), key=lambda k: rel[k])
    cpu = sum(r.cpu_seconds for r in res)
    print(f"C84, 24 IPR cages relaxed (GFN2-xTB, neutral): {cpu:.0f} s CPU, {wall:.0f} s wall "
          f"({load()})")
    for k in order[:6]:
        print(f"  isomer {k + 1:>2}: {rel[k]:+7.1f} kJ/mol")
    two = sorted(k + 1 for k in order[:2])
    print(f"  two lowest: {two} (published: [22, 23]) -> {'OK' if two == [22, 23] else 'MISS'}")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--no-c84", action="store_true")
    args = ap.parse_args()
    print(f"OMP_NUM_THREADS={os.environ.get('OMP_NUM_THREADS', 'unset')}")
    bench_indices()
    try:
        import tblite.interface  # noqa: F401
    except ImportError:
        print("tblite not installed: energy figures skipped (pip install cageprint[energy])")
        return
    bench_xtb()
    if not args.no_c84:
        bench_c84()


if __name__ == "__main__":
    main()
