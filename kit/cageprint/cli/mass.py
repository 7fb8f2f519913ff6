"""``cageprint mass``: the species (cage formulas, charges, abundances) in a mass spectrum."""

from __future__ import annotations

import argparse
import sys

from ..errors import FormulaError
from ..spectra.readers import load_spectrum
from ..techniques.mass import MASS_TOL_FLOOR, MASS_TOL_PPM, PEAK_SNR, observe_mass
from ._checks import EXIT_NOTHING, EXIT_STATUS_HELP
from ._checks import shown as printable

COLUMNS = ("formula", "charge", "mz", "relative_abundance", "error_ppm", "envelope_score",
           "kind", "cage_n", "cage_charge", "c13_fraction", "c13_fraction_err")


def add_parser(sub) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "mass",
        help="list the cage species found in a mass spectrum",
        description="Find isotope envelopes, charges, the calibration offset and the cage "
        "formulas in a mass spectrum (CSV/text columns, peak list, JCAMP-DX or mzML); print "
        "one species a row, then every envelope above the noise that no species explains "
        "(on standard error with --csv).",
        epilog=EXIT_STATUS_HELP,
    )
    p.add_argument("file", metavar="FILE", help="mass spectrum file")
    p.add_argument("--csv", action="store_true", help="write comma-separated values")
    p.add_argument("--ppm", type=float, default=MASS_TOL_PPM,
                   help=f"mass tolerance in ppm (default {MASS_TOL_PPM:g})")
    p.add_argument("--floor", type=float, default=MASS_TOL_FLOOR,
                   help=f"absolute mass tolerance floor in m/z (default {MASS_TOL_FLOOR:g}; "
                   "raise it for low-resolution data)")
    p.add_argument("--snr", type=float, default=PEAK_SNR,
                   help=f"peak threshold in noise standard deviations (default {PEAK_SNR:g})")
    p.add_argument("--c13", default=None,
                   help="13C fraction: a number, or 'fit' to fit it per species "
                   "(default natural, 0.0107)")
    p.add_argument("--no-calibrate", action="store_true",
                   help="do not estimate a calibration offset from the C_n ladder")
    p.add_argument("--negative", action="store_true", help="negative-ion spectrum")
    return p


def _c13(value):
    if value is None or value == "fit":
        return value
    try:
        return float(value)
    except ValueError:
        raise FormulaError(f"--c13 must be a number or 'fit', got {value!r}") from None


def run(args) -> int:
    spectrum = load_spectrum(args.file, technique="mass")
    obs = observe_mass(
        spectrum, snr=args.snr, ppm=args.ppm, floor=args.floor, c13=_c13(args.c13),
        calibrate=not args.no_calibrate, polarity="negative" if args.negative else None,
    )
    rows = [
        (s.formula, f"{s.charge:+d}" if not args.csv else str(s.charge), f"{s.mz:.5f}",
         f"{s.relative_abundance:.4f}", f"{s.error_ppm:.2f}", f"{s.envelope_score:.4f}",
         s.kind, str(s.cage_n), str(s.cage_charge), f"{s.c13_fraction:.4f}",
         "" if s.c13_fraction_err is None else f"{s.c13_fraction_err:.4f}")
        for s in obs.species
    ]
    unexplained = [f"# unexplained envelope at m/z {u.mz:.3f} (height {u.relative_height:.3g} "
                   f"of the tallest; m/z {u.mz_lo:.1f}-{u.mz_hi:.1f}): {u.reason}"
                   for u in obs.unexplained]
    if not rows and not unexplained:  # envelopes no species explains are a finding
        d = obs.diagnostics
        print(f"cageprint mass: nothing found: no cage species and no isotope envelope in "
              f"'{printable(args.file)}' ({d['n_peaks']} peaks above snr={args.snr:g}); lower "
              "--snr or widen --ppm",
              file=sys.stderr)
        return EXIT_NOTHING
    if args.csv:
        print(",".join(COLUMNS))
        for r in rows:
            print(",".join(r))
        for line in unexplained:
            print(line, file=sys.stderr)
        return 0
    shown = [[v or "-" for v in row] for row in rows]
    widths = [max([len(c), *(len(row[i]) for row in shown)]) for i, c in enumerate(COLUMNS)]
    print("  ".join(c.ljust(w) for c, w in zip(COLUMNS, widths, strict=True)).rstrip())
    for row in shown:
        print("  ".join(v.ljust(w) for v, w in zip(row, widths, strict=True)).rstrip())
    d = obs.diagnostics
    route = ("isotope peaks resolved" if d["route"] == "peaks" else
             f"isotope peaks blended (resolving power ~{d['resolving_power']:.0f}): envelopes "
             "compared as profiles")
    print(f"# {len(rows)} species; calibration offset {d['calibration_offset']:+.4f} m/z "
          f"({d['calibration']}); {d['n_peaks']} peaks; {route}; {len(unexplained)} "
          "unexplained envelopes")
    fitted = [s for s in obs.species if s.c13_fraction_err is not None]
    if fitted:
        print("# 13C fraction fitted per species: " + ", ".join(
            f"{s.formula} {s.c13_fraction:.4f} +- {s.c13_fraction_err:.4f}" for s in fitted))
    for s in obs.species:
        if s.alternatives:
            print(f"# {s.formula}: also fits {', '.join(s.alternatives[:6])}")
    for line in unexplained:
        print(line)
    return 0
