"""``cageprint envelope``: the isotope envelope of a formula as an ion."""

from __future__ import annotations

import argparse

from ..isotopes import _check_charge, isotope_envelope


def add_parser(sub) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "envelope",
        help="print the isotope envelope (m/z, relative abundance) of a formula",
        description="Isotope envelope of a cage formula such as C60, La@C82 or Sc3N@C80, as "
        "an ion of the given charge (electron mass included), aggregated at nominal mass "
        "or as fine structure.",
    )
    p.add_argument("formula", metavar="FORMULA", help="e.g. C60, C70H2, La@C82, Sc3N@C80")
    p.add_argument("--charge", type=int, default=1, help="ion charge, +-1..+-4 (default 1)")
    p.add_argument("--c13", type=float, default=None,
                   help="13C atom fraction (default 0.0107, the CIAAW representative value)")
    p.add_argument("--fine", action="store_true", help="every isotopologue (fine structure)")
    p.add_argument("--min", type=float, default=1e-4, dest="min_rel",
                   help="smallest relative abundance printed (default 1e-4)")
    p.add_argument("--csv", action="store_true", help="write comma-separated values")
    return p


def run(args) -> int:
    z = _check_charge(args.charge)
    env = isotope_envelope(args.formula, z, c13=args.c13, fine=args.fine)
    rel = env.relative
    keep = rel >= args.min_rel
    if args.csv:
        print("mz,relative_abundance")
        for m, r in zip(env.mz[keep], rel[keep], strict=False):
            print(f"{m:.6f},{r:.6g}")
        return 0
    print(f"# {env.formula} charge {z:+d}, 13C fraction {env.c13:g}, "
          f"{'fine structure' if env.fine else 'aggregated at nominal mass'}")
    print(f"{'mz':>14}  relative_abundance")
    for m, r in zip(env.mz[keep], rel[keep], strict=False):
        print(f"{m:14.6f}  {r:.6f}")
    return 0
