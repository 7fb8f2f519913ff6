"""Benchmark of the mass step: isotope envelopes against independent libraries, and
observe_mass on a 10^5-point invented spectrum.  Prints figures; asserts nothing.

Run: python tests/benchmarks/bench_mass.py
"""

from __future__ import annotations

import time

from cageprint import isotopes
from cageprint.techniques import mass_match
from cageprint.techniques.mass import observe_mass
from cageprint.techniques.mass_synthetic import synthetic_mass_spectrum


def per_call(fn, min_time=0.5, max_calls=20000):
    """Median-of-3 seconds per call, each round lasting about min_time / 3."""
    fn()
    rounds = []
    for _ in range(3):
        n, t0 = 0, time.perf_counter()
        while True:
            fn()
            n += 1
            dt = time.perf_counter() - t0
            if dt > min_time / 3 or n >= max_calls:
                break
        rounds.append(dt / n)
    return sorted(rounds)[1]


def envelope_uncached(formula):
    # clear the per-element cache so every call computes the envelope from scratch
    isotopes._element_agg.cache_clear()
    return isotopes.isotope_envelope(formula)


def main():
    try:
        import molmass
    except ImportError:  # pragma: no cover
        molmass = None
    try:
        import IsoSpecPy
    except ImportError:  # pragma: no cover
        IsoSpecPy = None

    print("isotope envelope per call (aggregated at nominal mass, 13C = 0.0107)")
    print(f"{'formula':10} {'cageprint':>12} {'cached':>10} {'molmass':>10} {'IsoSpecPy':>10}"
          f" {'ratio vs molmass':>17} {'ratio vs IsoSpecPy':>19}")
    for ours, theirs in (("C84", "C84"), ("La@C82", "LaC82"), ("Sc3N@C80", "Sc3NC80")):
        t_ours = per_call(lambda f=ours: envelope_uncached(f))
        t_cached = per_call(lambda f=ours: isotopes.isotope_envelope(f))
        t_mm = per_call(lambda f=theirs: molmass.Formula(f).spectrum()) if molmass else None
        t_iso = (per_call(lambda f=theirs: IsoSpecPy.IsoTotalProb(0.999999, formula=f))
                 if IsoSpecPy else None)
        mm = f"{t_mm * 1e6:8.1f} us" if t_mm else "       n/a"
        iso = f"{t_iso * 1e6:8.1f} us" if t_iso else "       n/a"
        r_mm = f"{t_ours / t_mm:17.2f}" if t_mm else f"{'n/a':>17}"
        r_iso = f"{t_ours / t_iso:19.2f}" if t_iso else f"{'n/a':>19}"
        print(f"{ours:10} {t_ours * 1e6:9.1f} us {t_cached * 1e6:7.1f} us {mm} {iso}{r_mm}{r_iso}")
    print("(ratio < 1: cageprint is faster; 'cached' reuses per-element distributions)")

    mixture = [("C60", 1, 1.0), ("C70", 1, 0.5), ("C60", 2, 0.15), ("C76", 1, 0.2),
               ("C84", 1, 0.25), ("C58", 1, 0.05), ("C60O", 1, 0.1), ("Sc3N@C80", 1, 0.3)]
    spec = synthetic_mass_spectrum(mixture, resolving_power=10000, noise=0.002, offset=0.3,
                                   seed=1, mz_range=(300.0, 1200.0), points=100_000)
    print()
    print(f"observe_mass on a {len(spec)}-point profile (8 invented species, 0.3 m/z offset)")
    mass_match._library.cache_clear()
    mass_match._envelope_cached.cache_clear()
    t0 = time.perf_counter()
    obs = observe_mass(spec)
    cold = time.perf_counter() - t0
    warm = per_call(lambda: observe_mass(spec), min_time=3.0, max_calls=20)
    print(f"  first call (builds the candidate library): {cold:.3f} s")
    print(f"  later calls:                                {warm:.3f} s")
    print(f"  species found: {len(obs.species)}; offset "
          f"{obs.diagnostics['calibration_offset']:+.4f} m/z")
    big = synthetic_mass_spectrum(mixture, resolving_power=10000, noise=0.002, seed=2,
                                  mz_range=(300.0, 1200.0), points=1_000_000)
    t0 = time.perf_counter()
    observe_mass(big)
    print(f"  10^6 points: {time.perf_counter() - t0:.3f} s")


if __name__ == "__main__":
    main()
