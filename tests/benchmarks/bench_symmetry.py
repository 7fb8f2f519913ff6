"""Benchmark: fingerprints of all IPR isomers C60-C100, and automorphisms against networkx.

Prints figures; asserts nothing about time.  Targets (issue 3): the full fingerprint of
every IPR isomer C60..C100, enumeration included, under 10 s; automorphisms of the 24
C84 IPR isomers at least 20x faster than networkx's general matcher.

    .venv/bin/python tests/benchmarks/bench_symmetry.py
"""

from __future__ import annotations

import time

from networkx.algorithms.isomorphism import GraphMatcher

from cageprint.cage import iter_isomers
from cageprint.symmetry import automorphisms, clear_caches, fingerprint


def main() -> None:
    # warm-up (compiled kernels, imports), not timed
    for c in iter_isomers(60, ipr=True):
        fingerprint(c)
    clear_caches()

    t0, c0 = time.perf_counter(), time.process_time()
    cages = [c for n in range(60, 102, 2) for c in iter_isomers(n, ipr=True)]
    for c in cages:
        c.neighbours  # noqa: B018 - wind the spiral up (part of building the cage)
    t1, c1 = time.perf_counter(), time.process_time()
    groups: dict[str, int] = {}
    for c in cages:
        fp = fingerprint(c)
        groups[fp.point_group] = groups.get(fp.point_group, 0) + 1
    t2, c2 = time.perf_counter(), time.process_time()
    print(f"IPR isomers C60..C100: {len(cages)}   (wall clock; CPU time of this process)")
    print(f"  enumeration + cage build : {t1 - t0:7.2f} s  (CPU {c1 - c0:6.2f} s)")
    print(f"  fingerprints             : {t2 - t1:7.2f} s  (CPU {c2 - c1:6.2f} s; "
          f"{1e3 * (t2 - t1) / len(cages):.2f} ms per cage)")
    print(f"  total                    : {t2 - t0:7.2f} s  (CPU {c2 - c0:6.2f} s)   "
          "(target < 10 s)")
    print("  point groups: " + ", ".join(f"{k} {v}" for k, v in
                                         sorted(groups.items(), key=lambda kv: -kv[1])))

    c84 = [c for c in cages if c.n == 84]
    nbs = [c.neighbours for c in c84]
    graphs = [c.graph() for c in c84]
    reps = 5
    t0 = time.perf_counter()
    for _ in range(reps):
        ours = [automorphisms(nb).order for nb in nbs]
    t_ours = (time.perf_counter() - t0) / reps
    t0 = time.perf_counter()
    theirs = [sum(1 for _ in GraphMatcher(g, g).isomorphisms_iter()) for g in graphs]
    t_nx = time.perf_counter() - t0
    assert ours == theirs, "automorphism counts differ from networkx"
    print(f"Automorphisms of the {len(c84)} C84 IPR isomers (orders {sorted(set(ours))}):")
    print(f"  cageprint (darts + rotation system) : {1e3 * t_ours:8.1f} ms")
    print(f"  networkx GraphMatcher               : {1e3 * t_nx:8.1f} ms")
    print(f"  speed-up                            : {t_nx / t_ours:8.1f}x   (target >= 20x)")


if __name__ == "__main__":
    main()
