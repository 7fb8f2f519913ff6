"""Accuracy of the mass step on spectra it never saw: fullerene ladders at low resolving power,
and the fitted 13C fraction of enriched samples.  Prints tables; asserts nothing.

The spectra come from ``tests/mass_corpus.py``: isotope lines from IsoSpecPy (its own element
table), an asymmetric pseudo-Voigt peak shape with a tail to high m/z, additive and
counting-like noise, a curved baseline, a constant and a proportional calibration error --
none of it taken from the kit's own generator.

Run: python tests/benchmarks/bench_mass_accuracy.py [seeds per cell, default 12]
"""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import mass_corpus as mc  # noqa: E402  (the independent generator beside the tests)
from cageprint.techniques.mass import PEAK_SNR, observe_mass  # noqa: E402

#: seeds of the benchmark corpus (the test slice uses others)
FIRST_SEED = 5000
RESOLVING_POWERS = (1000, 1500, 2000, 3000)
POLARITIES = ("positive", "negative")


def load() -> str:
    return "load {:.1f} {:.1f} {:.1f}".format(*os.getloadavg())


def ladders(n_seeds: int) -> None:
    print(f"Fullerene ladders ({n_seeds} spectra per row; species with apex S/N >= {PEAK_SNR:g}"
          " are 'present')")
    print(f"{'R':>5} {'polarity':9} {'present':>7} {'found':>7} {'found or listed':>15} "
          f"{'false':>5} {'unexplained':>11} {'spurious':>8} {'s/spectrum':>10}  load")
    missed: list[str] = []
    false: list[str] = []
    for r in RESOLVING_POWERS:
        for pol in POLARITIES:
            tot = np.zeros(6, dtype=int)
            t0 = time.perf_counter()
            for seed in range(FIRST_SEED, FIRST_SEED + n_seeds):
                case = mc.ladder_case(seed, r, pol)
                sc = mc.score(case, observe_mass(case.spectrum))
                tot += (sc.present, sc.found, sc.listed, sc.false, sc.unexplained, sc.spurious)
                missed += [f"R{r} {pol[:3]} seed {seed}: {m}" for m in sc.missed]
                false += [f"R{r} {pol[:3]} seed {seed}: {f}" for f in sc.false_names]
            dt = (time.perf_counter() - t0) / n_seeds
            present, found, listed, nfalse, unexpl, spurious = tot
            print(f"{r:5d} {pol:9} {present:7d} {found / present:7.1%} "
                  f"{(found + listed) / present:15.1%} {nfalse:5d} {unexpl:11d} {spurious:8d} "
                  f"{dt:10.2f}  {load()}")
    print("found: right formula and charge; listed: not found but listed as unexplained at "
          "its m/z;\nfalse: species reported that are not in the spectrum; spurious: unexplained "
          "envelopes where no species is")
    for line in missed[:20]:
        print("  not found:", line)
    for line in false[:20]:
        print("  false:", line)


def enrichment(n_seeds: int) -> None:
    print()
    print("13C fraction fitted per species (c13='fit'); C60, C70 and La@C82, Gaussian lines, "
          "noise 0.3 %")
    print(f"{'R':>6} {'true p':>7} {'species':9} {'mean fit':>9} {'max |error|':>11} "
          f"{'mean stated err':>15} {'max |z|':>7}  load")
    spec = [("C60", {"C": 60}, 1, 1.0), ("C70", {"C": 70}, 1, 0.5),
            ("La@C82", {"La": 1, "C": 82}, 1, 0.2)]
    for r in (2000, 10000):
        for p in (0.0107, 0.05, 0.08, 0.10):
            fits: dict[str, list[tuple[float, float]]] = {}
            for seed in range(n_seeds):
                case = mc.render(spec, resolving_power=r, c13=p, noise=0.003, shot=0.01,
                                 shape="gauss", offset=0.1, seed=FIRST_SEED + seed,
                                 points_per_fwhm=10)
                for s in observe_mass(case.spectrum, c13="fit").species:
                    err = s.c13_fraction_err if s.c13_fraction_err is not None else np.nan
                    fits.setdefault(s.formula, []).append((s.c13_fraction, err))
            for name, _, _, _ in spec:
                got = np.array(fits.get(name, []))
                if got.size == 0:
                    print(f"{r:6d} {p:7.4f} {name:9} {'not found':>9}")
                    continue
                dev = got[:, 0] - p
                z = np.abs(dev) / got[:, 1]
                print(f"{r:6d} {p:7.4f} {name:9} {got[:, 0].mean():9.4f} "
                      f"{np.abs(dev).max():11.4f} {np.nanmean(got[:, 1]):15.4f} "
                      f"{np.nanmax(z):7.1f}  {load()}  ({len(got)}/{n_seeds} found)")
    print("z = |fit - truth| / stated uncertainty")


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 12
    ladders(n)
    enrichment(max(3, n // 3))


if __name__ == "__main__":
    main()
