"""Benchmark of spectrum reading and processing; prints figures, asserts nothing.

Targets (issue 4): a 10^6-point CSV loads in under 2 s; pick_peaks on 10^5
points well under 0.5 s.  Run: ``.venv/bin/python tests/benchmarks/bench_spectra.py``.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "kit"))

from cageprint.spectra import (  # noqa: E402
    Spectrum,
    integrate,
    load_spectrum,
    pick_peaks,
    write_csv,
    write_jcamp,
)


def best_of(fn, repeat=3):
    times = []
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return min(times), out


def invented(n, lo, hi, technique, n_lines=40, seed=0):
    rng = np.random.default_rng(seed)
    x = np.linspace(lo, hi, n)
    w = (hi - lo) / n * 8
    y = 0.1 + 1e-4 * (x - lo) / (hi - lo)
    for c, h in zip(rng.uniform(lo, hi, n_lines), rng.uniform(0.05, 1.0, n_lines), strict=True):
        y = y + h / (1 + ((x - c) / (w / 2)) ** 2)
    return Spectrum(x, y + rng.normal(0, 0.005, n), technique=technique)


def _mzml(mz, intensity) -> bytes:
    """A one-spectrum mzML with zlib-compressed base64 float64 arrays."""
    import base64
    import zlib

    def array(a, accession, name):
        b = base64.b64encode(zlib.compress(np.asarray(a, "<f8").tobytes())).decode()
        return (f'<binaryDataArray encodedLength="{len(b)}">'
                '<cvParam cvRef="MS" accession="MS:1000523" name="64-bit float"/>'
                '<cvParam cvRef="MS" accession="MS:1000574" name="zlib compression"/>'
                f'<cvParam cvRef="MS" accession="{accession}" name="{name}"/>'
                f"<binary>{b}</binary></binaryDataArray>")

    return ('<?xml version="1.0" encoding="utf-8"?>\n<mzML xmlns="http://psi.hupo.org/ms/mzml" '
            'version="1.1.0"><run id="r"><spectrumList count="1">'
            f'<spectrum index="0" id="scan=1" defaultArrayLength="{len(mz)}">'
            '<cvParam cvRef="MS" accession="MS:1000511" name="ms level" value="1"/>'
            '<cvParam cvRef="MS" accession="MS:1000128" name="profile spectrum"/>'
            '<binaryDataArrayList count="2">' + array(mz, "MS:1000514", "m/z array")
            + array(intensity, "MS:1000515", "intensity array")
            + "</binaryDataArrayList></spectrum></spectrumList></run></mzML>\n").encode()


def main():
    print("cageprint spectra benchmark (best of 3, wall clock)")
    big = invented(1_000_000, 100.0, 2000.0, "mass")
    csv = write_csv(big)
    t, s = best_of(lambda: load_spectrum(csv))
    print(f"load_spectrum CSV, {len(s):,} points ({len(csv) / 1e6:.1f} MB): {t:.3f} s "
          "(target < 2 s)")
    csv_ws = write_csv(big, delimiter="\t", decimal=",")
    t, s = best_of(lambda: load_spectrum(csv_ws))
    print(f"load_spectrum TSV with decimal comma, {len(s):,} points: {t:.3f} s")
    commented = b"# invented demo\n" + csv.replace(b"\n1000.", b"\n# note\n1000.", 1)
    t, s = best_of(lambda: load_spectrum(commented))
    print(f"load_spectrum CSV with a comment among the data, {len(s):,} points: {t:.3f} s")

    mid = invented(100_000, 400.0, 4000.0, "ir", seed=1)
    mid = mid.replace(x=np.round(mid.x, 6), y=np.round(mid.y, 5))
    for form in ("AFFN", "DUP"):
        jdx = write_jcamp(mid.replace(x=np.linspace(400.0, 4000.0, len(mid))), form=form,
                          yfactor=1e-5)
        t, s = best_of(lambda jdx=jdx: load_spectrum(jdx))
        print(f"load_spectrum JCAMP-DX {form}, {len(s):,} points ({len(jdx) / 1e6:.1f} MB): "
              f"{t:.3f} s")

    mz = np.linspace(600.0, 1200.0, 100_000)
    xml = _mzml(mz, invented(mz.size, 600.0, 1200.0, "mass", seed=3).y)
    load_spectrum(xml)  # the PSI-MS vocabulary is loaded once per process
    t, s = best_of(lambda: load_spectrum(xml))
    print(f"load_spectrum mzML (zlib), {len(s):,} points ({len(xml) / 1e6:.1f} MB): {t:.3f} s")

    for n in (10_000, 100_000):
        s = invented(n, 400.0, 4000.0, "ir", seed=2)
        t, p = best_of(lambda s=s: pick_peaks(s))
        print(f"pick_peaks (arpls baseline, parabola fit), {n:,} points, {len(p)} peaks: "
              f"{t:.3f} s (target < 0.5 s at 10^5)")
        t, p = best_of(lambda s=s: pick_peaks(s, baseline=None))
        print(f"pick_peaks (no baseline), {n:,} points, {len(p)} peaks: {t:.3f} s")
        t, p = best_of(lambda s=s: pick_peaks(s, fit="lorentzian"))
        print(f"pick_peaks (lorentzian fit), {n:,} points, {len(p)} peaks: {t:.3f} s")
        t, _ = best_of(lambda s=s, p=p: integrate(s, p))
        print(f"integrate {len(p)} regions, {n:,} points: {t:.4f} s")


if __name__ == "__main__":
    main()
