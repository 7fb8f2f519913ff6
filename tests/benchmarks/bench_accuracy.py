"""Accuracy of the 13C assignment on a seeded corpus of realistic spectra; prints a table.

The corpus (``tests/corpus/nmr13c.py``) is made apart from the matcher's assumptions: other
line shapes, relaxation-spread intensities, lock multiplets (declared and undeclared),
coincidences, impurities, rolling baselines, S/N 5-50, IPR C60-C100, non-IPR endohedral
C66/C68, single isomers and two-isomer mixtures (minor share 15-50 %).  Each case goes through
the public path (text file -> reader -> session ranking).  Asserts nothing.

Run: python tests/benchmarks/bench_accuracy.py [cases, default 320] [first seed, default 1000]
(``CAGEPRINT_BENCH_NMR='{"integral_tol": 0.3}'`` tries other NMR settings;
``CAGEPRINT_CORPUS_INTENSITY=saturation`` makes the corpus with the partial-saturation
intensity model instead of the default log-normal one, see ``tests/corpus/nmr13c.py``)

After the main table, a reliability table: the cases per band of the share the kit gives
its first-rank group, and how often the true isomer is in that group.
"""

from __future__ import annotations

import json
import os
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from corpus import runner  # noqa: E402


def _print_table(table: dict[str, dict[str, float]], first_col: int = 16) -> None:
    """Rows of figures; counts as integers, sizes and times with two decimals, the rest %."""
    cols = list(next(iter(table.values())))
    print(f"{'':{first_col}}" + "".join(f"{c[:22]:>24}" for c in cols))
    for name, row in table.items():
        cells = []
        for c in cols:
            v = row[c]
            cells.append(f"{int(v):>24d}" if c == "cases" else
                         f"{v:>24.1%}" if c not in ("mean first group size", "median s/case")
                         else f"{v:>24.2f}")
        print(f"{name:{first_col}}" + "".join(cells))


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 320
    first = int(sys.argv[2]) if len(sys.argv) > 2 else 1000
    t0 = time.perf_counter()
    outcomes = []
    misses = []
    settings = json.loads(os.environ.get("CAGEPRINT_BENCH_NMR", "{}"))
    model = runner.intensity_model()
    for k, o in enumerate(runner.run(range(first, first + n), settings, intensity=model), 1):
        outcomes.append(o)
        if not o.in_first or o.ruled_out:
            t = o.truth
            misses.append(f"  seed {o.seed}: {t.formula} {t.isomers} {t.patterns} shares "
                          f"{tuple(round(x, 2) for x in t.shares)} S/N {t.snr:.0f} lock "
                          f"{t.lock or '-'} declared {t.solvent_declared!r} first group "
                          f"{o.first_size} (share {o.first_share:.3f})"
                          f"{' RULED OUT' if o.ruled_out else ''}")
        if k % 40 == 0:
            print(f"  {k}/{n} cases, {time.perf_counter() - t0:.0f} s", file=sys.stderr)
    print(f"13C accuracy on {n} corpus cases (seeds {first}-{first + n - 1}), intensity "
          f"model {model!r}{f', NMR settings {settings}' if settings else ''}; "
          f"load {' '.join(f'{x:.1f}' for x in os.getloadavg())}; "
          f"{time.perf_counter() - t0:.0f} s in all")
    _print_table(runner.summary(outcomes))
    print("targets (issue 10): true in first group >= 95 % single, >= 90 % mixtures; "
          "partner named >= 90 %; true ruled out <= 1 %; first group one pattern")
    print(f"split by unresolved pairs (true cage lines closer than "
          f"{runner.nmr13c.UNRESOLVED_HZ:g} Hz, made by the corpus's coincidences)")
    _print_table(runner.by_resolution(outcomes), first_col=28)
    print("reliability: share the kit gives its first-rank group vs. true isomer in it")
    _print_table(runner.reliability(outcomes))
    print(f"misses ({len(misses)}):")
    print("\n".join(misses[:60]))


if __name__ == "__main__":
    main()
