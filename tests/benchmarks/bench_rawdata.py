"""Raw NMR folders: load + process speed, and the smallest line separation resolved.

    python tests/benchmarks/bench_rawdata.py

Prints figures; asserts nothing about time.  Targets (issue 12): loading and processing a
64k-point FID < 0.5 s; a pair 0.012 ppm apart resolved with the default line broadening.
The folders are written by nmrglue from an invented signal (tests/rawnmr_fixtures.py).
"""

from __future__ import annotations

import os
import platform
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "kit"))
sys.path.insert(0, os.path.join(HERE, ".."))

import rawnmr_fixtures as R  # noqa: E402
from cageprint.spectra.readers import load_spectrum  # noqa: E402


def _resolved(spec, a: float, b: float) -> bool:
    """Two maxima, with a dip between them below 90 % of the lower one."""
    m = (spec.x > min(a, b) - 0.01) & (spec.x < max(a, b) + 0.01)
    x, y = spec.x[m], spec.y[m]
    ya, yb = (y[np.argmin(np.abs(x - p))] for p in (a, b))
    between = (x > min(a, b)) & (x < max(a, b))
    if not between.any():
        return False
    return bool(y[between].min() < 0.9 * min(ya, yb))


def main() -> None:
    print(f"python {platform.python_version()} on {platform.machine()}, {os.cpu_count()} cpus, "
          f"load {os.getloadavg()[0]:.1f}")
    with tempfile.TemporaryDirectory() as tmp:
        for vendor, writer in (("bruker", R.write_bruker), ("varian", R.write_varian)):
            for points in (32768, 65536):
                sig = R.Signal(complex_points=points,
                               group_delay=76.0 if vendor == "bruker" else 0.0)
                folder = writer(Path(tmp) / f"{vendor}{points}", sig)
                load_spectrum(folder)  # first call imports nmrglue and scipy pieces
                times = []
                for _ in range(5):
                    t = time.perf_counter()
                    load_spectrum(folder)
                    times.append(time.perf_counter() - t)
                print(f"{vendor:7s} {points:6d} complex points: load + process "
                      f"{min(times):.3f} s best, {np.median(times):.3f} s median of 5")
        for mhz in (100.6, 125.7, 150.9):
            smallest = None
            for sep in np.arange(0.020, 0.0035, -0.001):
                lines = ((150.10, 1.0), (145.0, 1.0), (145.0 - sep, 1.0))
                sig = R.Signal(mhz=mhz, lines=lines, complex_points=65536)
                folder = R.write_bruker(Path(tmp) / f"sep{mhz}{sep:.3f}", sig)
                if _resolved(load_spectrum(folder), 145.0, 145.0 - sep):
                    smallest = sep
                else:
                    break
            print(f"{mhz:5.1f} MHz, lines 0.8 Hz wide, default broadening: smallest separation "
                  f"resolved {smallest:.3f} ppm ({smallest * mhz:.2f} Hz)")


if __name__ == "__main__":
    main()
