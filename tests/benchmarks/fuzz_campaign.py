"""Seeded mutation-fuzzing campaign of every reader family; prints figures, asserts nothing.

Each input is read in a worker process whose address space is limited (RLIMIT_AS: its
starting size plus ``--memory-mb``) and which the parent kills after ``--timeout`` seconds,
so a memory or time bomb is counted, not suffered.  Per input the worker measures the
wall time and the peak of Python-tracked allocations (tracemalloc, which numpy arrays,
bytes and lists report to) and checks the spectrum invariants (tests/fuzzkit.py).

Outcomes: ok (a spectrum passing its invariants), kit-error (a CageprintError),
violation (a spectrum breaking an invariant), foreign (any other exception),
over-time, over-memory (MemoryError or a dead worker).  Done when (issue 14): 0 foreign,
0 violation, 0 over-time, 0 over-memory.

Run: ``python tests/benchmarks/fuzz_campaign.py --seconds 600`` (per family; default 20,
a quick look); ``--family jcamp`` for one; ``--seed`` to vary the run.
"""

from __future__ import annotations

import argparse
import collections
import multiprocessing as mp
import os
import resource
import sys
import time
import tracemalloc
import warnings
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve()
sys.path.insert(0, str(HERE.parents[2] / "kit"))
sys.path.insert(0, str(HERE.parents[1]))

import fuzzkit  # noqa: E402


def _vm_bytes() -> int:
    with open("/proc/self/statm") as fh:
        return int(fh.read().split()[0]) * os.sysconf("SC_PAGE_SIZE")


def _worker(conn, fmt: str, memory_mb: int, warm: list) -> None:
    warnings.simplefilter("ignore")
    for data in warm:  # import (pandas, lxml...) and warm the reader before the limits
        fuzzkit.run_one(data, fmt)
    limit = _vm_bytes() + memory_mb * 2**20
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    tracemalloc.start()
    conn.send("ready")  # the warm-up is not charged to the first input's time limit
    while True:
        data = conn.recv()
        if data is None:
            return
        tracemalloc.reset_peak()
        t0 = time.perf_counter()
        try:
            outcome, detail = fuzzkit.run_one(data, fmt)
        except MemoryError:
            outcome, detail = "over-memory", "MemoryError"
        dt = time.perf_counter() - t0
        conn.send((outcome, detail, dt, tracemalloc.get_traced_memory()[1]))


class Pool:
    """One worker process, restarted after a kill."""

    def __init__(self, fmt: str, memory_mb: int, warm: list):
        self.fmt, self.memory_mb, self.warm = fmt, memory_mb, warm
        self.ctx = mp.get_context("fork")
        self._start()

    def _start(self) -> None:
        self.conn, child = self.ctx.Pipe()
        self.proc = self.ctx.Process(
            target=_worker, args=(child, self.fmt, self.memory_mb, self.warm), daemon=True)
        self.proc.start()
        if not (self.conn.poll(300) and self.conn.recv() == "ready"):
            raise RuntimeError("the fuzz worker did not start")

    def run(self, data: bytes, timeout: float):
        self.conn.send(data)
        if self.conn.poll(timeout):
            try:
                return self.conn.recv()
            except EOFError:
                pass
            self._restart()
            return "over-memory", "worker died", timeout, 0
        self._restart()
        return "over-time", f"no answer in {timeout} s", timeout, 0

    def _restart(self) -> None:
        self.proc.kill()
        self.proc.join()
        self._start()

    def close(self) -> None:
        self.conn.send(None)
        self.proc.join(5)


def campaign(family: str, seconds: float, seed: int, timeout: float, memory_mb: int,
             keep: Path | None):
    fmt, seeds_fn = fuzzkit.FAMILIES[family]
    seeds = seeds_fn()
    rng = np.random.default_rng(seed)
    pool = Pool(fmt, memory_mb, seeds)
    counts: collections.Counter = collections.Counter()
    examples: dict[str, str] = {}
    worst_t = worst_m = 0.0
    n = 0
    t_end = time.perf_counter() + seconds
    t0 = time.perf_counter()
    load0 = os.getloadavg()[0]
    while time.perf_counter() < t_end:
        data = fuzzkit.mutate(rng, seeds[n % len(seeds)])
        outcome, detail, dt, peak = pool.run(data, timeout)
        n += 1
        counts[outcome] += 1
        worst_t, worst_m = max(worst_t, dt), max(worst_m, peak)
        if outcome not in ("ok", "kit-error") and outcome + detail not in examples:
            examples[outcome + detail] = f"{outcome}: {detail}"
            if keep is not None:
                keep.mkdir(parents=True, exist_ok=True)
                (keep / f"{family}-{n}.bin").write_bytes(data)
    pool.close()
    wall = time.perf_counter() - t0
    return {"family": family, "inputs": n, "per_s": n / wall, "counts": dict(counts),
            "max_s": worst_t, "max_mb": worst_m / 2**20, "load": (load0, os.getloadavg()[0]),
            "examples": list(examples.values())[:10]}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seconds", type=float, default=20.0, help="per family")
    ap.add_argument("--family", action="append", choices=sorted(fuzzkit.FAMILIES))
    ap.add_argument("--seed", type=int, default=14)
    ap.add_argument("--timeout", type=float, default=5.0, help="per input, seconds")
    ap.add_argument("--memory-mb", type=int, default=500, help="per input, above the start")
    ap.add_argument("--keep", type=Path, help="folder for failing inputs")
    args = ap.parse_args(argv)
    print(f"fuzz campaign: seed {args.seed}, {args.seconds:g} s per family, limits "
          f"{args.timeout:g} s and {args.memory_mb} MB per input, {os.cpu_count()} cores")
    for family in args.family or sorted(fuzzkit.FAMILIES):
        r = campaign(family, args.seconds, args.seed, args.timeout, args.memory_mb, args.keep)
        c = r["counts"]
        print(f"{family:10s} {r['inputs']:8d} inputs {r['per_s']:7.0f}/s  ok {c.get('ok', 0)}  "
              f"kit-error {c.get('kit-error', 0)}  violation {c.get('violation', 0)}  "
              f"foreign {c.get('foreign', 0)}  over-time {c.get('over-time', 0)}  "
              f"over-memory {c.get('over-memory', 0)}  max {r['max_s']:.3f} s "
              f"{r['max_mb']:.1f} MB/input  load {r['load'][0]:.1f}->{r['load'][1]:.1f}",
              flush=True)
        for e in r["examples"]:
            print(f"    {e}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
