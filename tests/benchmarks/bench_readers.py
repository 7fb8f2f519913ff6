"""Reader benchmarks: first mzML load in a fresh process (issue 14: ~5 s with a vocabulary
load before), and the budget checks on hostile inputs.  Prints figures, asserts nothing.

Run: ``.venv/bin/python tests/benchmarks/bench_readers.py``.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve()
KIT, TESTS = str(HERE.parents[2] / "kit"), str(HERE.parents[1])
sys.path[:0] = [KIT, TESTS]

from cageprint.errors import SpectrumFormatError  # noqa: E402
from cageprint.spectra import load_spectrum  # noqa: E402
from fuzzkit import mzml_document  # noqa: E402

FIRST_LOAD = """
import time, sys
t0 = time.perf_counter()
from cageprint.spectra import load_spectrum
t1 = time.perf_counter()
load_spectrum(sys.argv[1])
t2 = time.perf_counter()
load_spectrum(sys.argv[1], spectrum=2)
t3 = time.perf_counter()
print(f"{t1 - t0:.3f} {t2 - t1:.3f} {t3 - t2:.3f}")
"""


def main() -> None:
    mz = np.linspace(715.0, 730.0, 20001)
    y = 1000 * np.exp(-0.5 * ((mz - 720.0) / 0.05) ** 2) + 5
    doc = mzml_document([(f"scan={k}", mz, y, False) for k in (1, 2, 3)])
    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / "three-scans.mzML"
        path.write_bytes(doc)
        env = dict(os.environ, PYTHONPATH=KIT)
        for run in (1, 2, 3):
            out = subprocess.run([sys.executable, "-c", FIRST_LOAD, str(path)], env=env,
                                 capture_output=True, text=True, check=True).stdout.split()
            imp, first, second = map(float, out)
            print(f"mzML fresh process #{run} ({len(doc) / 1e6:.1f} MB, 3 x 20001 points): "
                  f"import {imp:.2f} s, first load {first:.3f} s, next load {second:.3f} s  "
                  f"(load {os.getloadavg()[0]:.1f})")
    hostile = {
        "JCAMP-DX DUP count 99999999": b"##TITLE=t\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED "
        b"SPECTRUM\n##XUNITS=1/CM\n##FIRSTX=400\n##LASTX=410\n##XYDATA=(X++(Y..Y))\n"
        b"400 AS99999999\n##END=\n",
        "CSV with a 100000-digit number": b"ppm,i\n" + b"1" * 100_000 + b",2\n3,4\n",
    }
    for name, data in hostile.items():
        t0 = time.perf_counter()
        try:
            load_spectrum(data)
        except SpectrumFormatError:
            pass
        print(f"{name}: refused in {time.perf_counter() - t0:.4f} s "
              f"(load {os.getloadavg()[0]:.1f})")


if __name__ == "__main__":
    main()
