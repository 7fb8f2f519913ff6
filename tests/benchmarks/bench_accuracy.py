"""Accuracy of the 13C assignment on a seeded corpus of realistic spectra; prints a table.

The corpus (``tests/corpus/nmr13c.py``) is made apart from the matcher's assumptions: other
line shapes, relaxation-spread intensities, lock multiplets (declared and undeclared),
coincidences, impurities, rolling baselines, S/N 5-50, IPR C60-C100, non-IPR endohedral
C66/C68, single isomers and two-isomer mixtures (minor share 15-50 %).  Each case goes through
the public path (text file -> reader -> session ranking).  Asserts nothing.

Run: python tests/benchmarks/bench_accuracy.py [cases, default 320] [first seed, default 1000]
(``CAGEPRINT_BENCH_NMR='{"integral_tol": 0.3}'`` tries other NMR settings)
"""

from __future__ import annotations

import json
import os
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from corpus import runner  # noqa: E402


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 320
    first = int(sys.argv[2]) if len(sys.argv) > 2 else 1000
    t0 = time.perf_counter()
    outcomes = []
    misses = []
    settings = json.loads(os.environ.get("CAGEPRINT_BENCH_NMR", "{}"))
    for k, o in enumerate(runner.run(range(first, first + n), settings), 1):
        outcomes.append(o)
        if not o.in_first or o.ruled_out:
            t = o.truth
            misses.append(f"  seed {o.seed}: {t.formula} {t.isomers} {t.patterns} shares "
                          f"{tuple(round(x, 2) for x in t.shares)} S/N {t.snr:.0f} lock "
                          f"{t.lock or '-'} declared {t.solvent_declared!r} first group "
                          f"{o.first_size}{' RULED OUT' if o.ruled_out else ''}")
        if k % 40 == 0:
            print(f"  {k}/{n} cases, {time.perf_counter() - t0:.0f} s", file=sys.stderr)
    table = runner.summary(outcomes)
    cols = list(next(iter(table.values())))
    print(f"13C accuracy on {n} corpus cases (seeds {first}-{first + n - 1}); "
          f"load {' '.join(f'{x:.1f}' for x in os.getloadavg())}; "
          f"{time.perf_counter() - t0:.0f} s in all")
    print(f"{'':16}" + "".join(f"{c[:22]:>24}" for c in cols))
    for name, row in table.items():
        cells = []
        for c in cols:
            v = row[c]
            cells.append(f"{int(v):>24d}" if c == "cases" else
                         f"{v:>24.1%}" if c not in ("mean first group size", "median s/case")
                         else f"{v:>24.2f}")
        print(f"{name:16}" + "".join(cells))
    print("targets (issue 10): true in first group >= 95 % single, >= 90 % mixtures; "
          "partner named >= 90 %; true ruled out <= 1 %; first group one pattern")
    print(f"misses ({len(misses)}):")
    print("\n".join(misses[:60]))


if __name__ == "__main__":
    main()
