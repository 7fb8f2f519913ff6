"""Speed of the isomer search: prints figures, asserts nothing about time.

    python tests/benchmarks/bench_cage.py            # cold (JIT) + warm runs
    python tests/benchmarks/bench_cage.py --quick    # skip C70

"Cold" is the first run in a fresh process: it includes loading the cached numba kernels
(``--compile`` also times compiling them into an empty cache, what a new install pays once).
"Warm" repeats the same work in the same process.  "search" counts canonical spirals only;
"+ cages" also builds every Cage with its faces and bonds, which is what a caller that
touches the structure pays.

Targets on a 2-core machine: all 1,812 C60 isomers < 3 s; all 8,149 C70 isomers < 15 s; every
IPR isomer C60-C100 (1,267 cages) < 5 s in total.
"""

from __future__ import annotations

import argparse
import os
import platform
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "kit"))

from cageprint.cage import iter_isomers, iter_spirals  # noqa: E402


def _count(n, ipr):
    return sum(len(b) for b in iter_spirals(n, ipr))


def timed(fn, *args):
    t = time.perf_counter()
    c = time.process_time()
    out = fn(*args)
    return out, time.perf_counter() - t, time.process_time() - c


def all_isomers(n, label):
    k, wall, cpu = timed(_count, n, False)
    print(f"{label:5s} C{n} all isomers (search):  {k:6d} in {wall:7.2f} s wall "
          f"({cpu:6.2f} s cpu), {k / wall:8.0f} isomers/s")
    return k


def all_isomers_with_cages(n, label):
    def build():
        m = 0
        for c in iter_isomers(n):
            c.bonds  # noqa: B018 - force the structure
            c.faces  # noqa: B018
            m += 1
        return m

    k, wall, cpu = timed(build)
    print(f"{label:5s} C{n} all isomers (+ cages):  {k:6d} in {wall:7.2f} s wall "
          f"({cpu:6.2f} s cpu), {k / wall:8.0f} isomers/s")


def ipr_range(label):
    total = 0
    t0 = time.perf_counter()
    c0 = time.process_time()
    per = []
    for n in range(60, 102, 2):
        k, wall, _ = timed(_count, n, True)
        total += k
        per.append(f"C{n}:{k}/{wall:.2f}s")
    wall = time.perf_counter() - t0
    cpu = time.process_time() - c0
    print(f"{label:5s} IPR C60-C100 (search):      {total:6d} in {wall:7.2f} s wall "
          f"({cpu:6.2f} s cpu), {total / wall:8.0f} isomers/s")
    print("      per n (count/time): " + " ".join(per))


def compile_from_scratch():
    """First call in a fresh process with an empty numba cache (what a new install pays)."""
    import subprocess
    import tempfile

    code = (
        "import time; t = time.perf_counter(); "
        "from cageprint.cage import count_isomers; count_isomers(20); count_isomers(60, ipr=True); "
        "from cageprint.cage import Cage; Cage.from_spiral(20, range(1, 13)).canonical_spiral; "
        "print(round(time.perf_counter() - t, 2))"
    )
    with tempfile.TemporaryDirectory() as cache:
        env = dict(os.environ, NUMBA_CACHE_DIR=cache,
                   PYTHONPATH=os.path.join(HERE, "..", "..", "kit"))
        out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True,
                             text=True, check=True)
    print(f"cold  compile all kernels (empty cache): {out.stdout.strip()} s")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="skip the C70 runs")
    ap.add_argument("--compile", action="store_true",
                    help="also time a first-ever compile in a fresh process (empty cache)")
    args = ap.parse_args()
    print(f"python {platform.python_version()} on {platform.machine()}, "
          f"{os.cpu_count()} cpus, load {os.getloadavg()[0]:.1f}")
    if args.compile:
        compile_from_scratch()
    # cold: the first runs in this process, including loading the cached kernels
    all_isomers(60, "cold")
    ipr_range("cold")
    # warm: the same work again, kernels loaded
    all_isomers(60, "warm")
    if not args.quick:
        all_isomers(70, "warm")
    ipr_range("warm")
    all_isomers_with_cages(60, "warm")


if __name__ == "__main__":
    main()
