"""``cageprint demo``: write the invented demo scenario's data files."""

from __future__ import annotations

import argparse
import pathlib

from ..demo import default_demo_dir, generate, is_current


def add_parser(sub) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "demo",
        help="write the demo scenario's synthetic spectra and truth table",
        description="Write the demo scenario (an invented lab's HPLC fractions, synthetic "
        "spectra made by a seeded generator, and truth.json).",
    )
    p.add_argument("--out", metavar="DIR", default=None,
                   help="folder to write (default: notebooks/demo-data of the source tree)")
    p.add_argument("--ensure", action="store_true",
                   help="write only if the files are missing or stale")
    return p


def run(args) -> int:
    out = pathlib.Path(args.out) if args.out else default_demo_dir()
    if args.ensure and is_current(out):
        print(f"demo data up to date in {out}")
        return 0
    truth = generate(out)
    n = len(list(out.iterdir()))
    print(f"wrote {n} files for {len(truth['fractions'])} fractions and a soot extract to {out}")
    return 0
