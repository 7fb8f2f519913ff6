"""Interaction latency of the live widgets with 450 candidates (all IPR isomers of C100).

Measures, without a browser, the time from a control change to an updated
comparison table and figure (session recompute of the affected technique,
ranking, HTML table, FigureWidget batch update and state sync).  Target:
< 100 ms.  Prints figures; asserts nothing about time.

Run: .venv/bin/python tests/benchmarks/bench_widgets.py
"""

from __future__ import annotations

import statistics
import time

import numpy as np

from cageprint.demo import synth
from cageprint.session import Session
from cageprint.spectra import Spectrum
from cageprint.widgets import AssignmentBoard, CandidateChooser, ComparisonPanel, _port

#: seconds spent inside the session (observe, compare, rank) during the current timed call
_IN_SESSION = [0.0]


def _count_session_time(name: str) -> None:
    fn = getattr(_port, name)

    def timed(*args, **kwargs):
        t0 = time.perf_counter()
        try:
            return fn(*args, **kwargs)
        finally:
            _IN_SESSION[0] += time.perf_counter() - t0

    setattr(_port, name, timed)


for _name in ("observation", "ranking", "set_thresholds", "set_weights"):
    _count_session_time(_name)


def _spectrum(sizes, seed=7) -> Spectrum:
    """An invented 13C profile with one line per orbit (seeded shifts and noise)."""
    rng = np.random.default_rng(seed)
    x = np.linspace(120.0, 160.0, 20001)
    shifts = np.sort(rng.uniform(130.0, 152.0, len(sizes)))
    y = synth.lines(x, shifts, 0.25 * np.asarray(sizes, float), 0.03)
    y += rng.normal(0.0, 0.01, x.size)
    return Spectrum(x, y, technique="nmr", meta={"title": "invented C100 13C"})


def _timed(fn, repeats: int) -> tuple[list[float], list[float]]:
    total, session = [], []
    for i in range(repeats):
        _IN_SESSION[0] = 0.0
        t0 = time.perf_counter()
        fn(i)
        total.append((time.perf_counter() - t0) * 1e3)
        session.append(_IN_SESSION[0] * 1e3)
    return total, session


def _report(label: str, timing: tuple[list[float], list[float]]) -> None:
    total, session = timing
    widget = [t - s for t, s in zip(total, session, strict=True)]
    print(f"{label:<44} median {statistics.median(total):7.1f} ms (session "
          f"{statistics.median(session):6.1f}, widget {statistics.median(widget):5.1f})   "
          f"max {max(total):7.1f} ms   (n={len(total)})")


def main() -> None:
    t0 = time.perf_counter()
    session = Session("C100")
    session.set_candidates(ipr=True)
    n = len(session.candidates)
    print(f"candidates: {n} IPR isomers of C100, built in {time.perf_counter() - t0:.1f} s "
          "(fingerprints; once per session)")
    session.set_spectrum("nmr", _spectrum(session.candidates[0].nmr_sizes))
    t0 = time.perf_counter()
    panel = ComparisonPanel(session, "nmr")
    print(f"comparison panel built in {(time.perf_counter() - t0) * 1e3:.0f} ms")
    snr_values = (5.0, 10.0, 20.0)  # the usual range; S/N 3 lets noise in (timed apart)

    def snr(i):
        panel.snr.value = snr_values[(i + 1) % len(snr_values)]

    def snr_low(i):
        panel.snr.value = 3.0 if i % 2 == 0 else 5.0

    def region(i):
        lo, hi = panel.region.value
        panel.region.value = (lo + (0.5 if i % 2 == 0 else -0.5), hi)

    picks = [c.isomer for c in session.candidates]

    def pick(i):
        panel.pick.value = tuple(picks[(5 * i) % n:(5 * i) % n + 5])

    _report("S/N threshold -> table + figure", _timed(snr, 12))
    panel.snr.value = 5.0
    _report("region -> table + figure", _timed(region, 12))
    _report("S/N 3 <-> 5 (noise peaks become lines)", _timed(snr_low, 6))
    panel.snr.value = 5.0
    _report("candidate pick -> table", _timed(pick, 12))

    board = AssignmentBoard(session)

    def weight(i):
        board.weights["nmr"].value = 1.0 + 0.1 * ((i % 5) + 1)

    _report("weight -> ranked table (450 rows, 50 drawn)", _timed(weight, 12))

    chooser = CandidateChooser(session, "C100", ipr=True)
    groups = [g for g in chooser.point_group.options if g != "any"]

    def filt(i):
        chooser.point_group.value = groups[i % len(groups)] if i % 2 else "any"

    _report("chooser filter -> candidate table", _timed(filt, 12))
    print("target: < 100 ms from a control change to the updated table and figure; "
          "'session' = observe + compare + rank in the headless session, "
          "'widget' = table HTML + figure update + state sync")


if __name__ == "__main__":
    main()
