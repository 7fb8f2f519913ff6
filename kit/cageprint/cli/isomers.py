"""``cageprint isomers N``: list the isomers of C_N in canonical-spiral order.

The rows are built from :data:`COLUMNS`, a list of ``(header, function)``
pairs taking a :class:`~cageprint.cage.Cage` and returning a value; more
columns (e.g. fingerprints) are added by appending to that list.  The
``isomer`` column is the number in the list shown: the IPR number with
``--ipr``, the number among all isomers without.
"""

from __future__ import annotations

import argparse
import csv
import sys
from collections.abc import Callable

from ..cage import Cage, check_n, iter_isomers
from ..errors import CageprintError
from ..symmetry import fingerprint


def _spiral(cage: Cage) -> str:
    return " ".join(str(p) for p in cage.spiral)


#: (header, value function) of every column, in order; the first three are fixed
COLUMNS: list[tuple[str, Callable[[Cage], object]]] = [
    ("formula", lambda c: c.formula),
    ("isomer", lambda c: c.isomer),
    ("spiral", _spiral),
    ("fused_pentagon_pairs", lambda c: c.fused_pentagon_pairs),
]


def _fingerprint_column(name: str) -> Callable[[Cage], object]:
    # fingerprint is cached per cage: one analysis serves every column
    return lambda c: fingerprint(c).columns()[name]


#: predicted fingerprint columns (point group, 13C pattern, IR/Raman counts, Hückel gap)
COLUMNS += [
    (name, _fingerprint_column(name))
    for name in ("point_group", "nmr_lines", "nmr_pattern", "ir_active", "raman_active",
                 "gap_beta")
]


#: the columns listed when none are asked for: the cages alone, no fingerprints computed
CAGE_COLUMNS = ("formula", "isomer", "spiral", "fused_pentagon_pairs")


#: the readable table's columns, in its order, with their headings: what a chemist asks first
#: (symmetry, 13C lines, band counts, fused pentagons, gap), the face spiral last; the CSV
#: keeps the column names and order of :data:`COLUMNS` for scripts
READABLE = {"formula": ("cage", 6), "isomer": ("no.", 7), "point_group": ("point group", 11),
            "nmr_lines": ("13C lines", 9), "nmr_pattern": ("13C pattern", 16),
            "ir_active": ("IR bands", 8), "raman_active": ("Raman bands", 11),
            "fused_pentagon_pairs": ("fused pentagon pairs", 20), "gap_beta": ("gap/|β|", 8),
            "spiral": ("face spiral", 0)}


def rows(n: int, ipr: bool = False, progress: bool = False,
         columns: tuple[str, ...] | None = None):
    """Yield the header, then one list of values per isomer.

    ``columns`` names the columns (default: all of :data:`COLUMNS`); a fingerprint is
    computed only when a fingerprint column is asked for.

    Examples
    --------
    >>> for row in rows(28):
    ...     print(row)
    ['formula', 'isomer', 'spiral', 'fused_pentagon_pairs', 'point_group', 'nmr_lines',
     'nmr_pattern', 'ir_active', 'raman_active', 'gap_beta']
    ['C28', 1, '1 2 3 4 5 7 10 12 13 14 15 16', 20, 'D2', 7, '7x4', 57, 78, 0.0934]
    ['C28', 2, '1 2 3 5 7 9 10 11 12 13 14 15', 18, 'Td', 3, '2x12+1x4', 11, 23, 0.0]
    """
    n = check_n(n, name="N")  # fail before the header is printed
    listed = (lambda c: c.isomer) if ipr else (lambda c: c.isomer_all)
    known = dict(COLUMNS)
    wanted = tuple(known) if columns is None else tuple(columns)
    unknown = [c for c in wanted if c not in known]
    if unknown or not wanted:
        raise CageprintError(f"unknown column(s) {', '.join(unknown) or '(none given)'}; "
                             f"columns: {', '.join(known)}")
    chosen = [(name, listed if name == "isomer" else known[name]) for name in wanted]

    def _rows():
        yield [name for name, _ in chosen]
        for cage in iter_isomers(n, ipr=ipr, progress=progress):
            yield [fn(cage) for _, fn in chosen]

    return _rows()


def add_parser(subparsers) -> argparse.ArgumentParser:
    p = subparsers.add_parser(
        "isomers",
        help="list the isomers of C_N (canonical spiral order, literature numbers)",
        description="List every isomer of the fullerene C_N, or only those obeying the "
        "isolated pentagon rule, numbered by canonical face spiral.",
    )
    p.add_argument("n", type=int, metavar="N", help="number of carbon atoms (even, >= 20, not 22)")
    p.add_argument("--ipr", action="store_true", help="only isolated-pentagon (IPR) isomers")
    p.add_argument("--csv", action="store_true", help="comma-separated values with a header row")
    p.add_argument(
        "--progress", action="store_true", help="show a progress bar on standard error"
    )
    p.add_argument(
        "--columns", default=",".join(CAGE_COLUMNS), metavar="LIST",
        help="comma-separated columns, or 'all' (default: the cages alone, "
        f"{','.join(CAGE_COLUMNS)}; fingerprint columns such as point_group, nmr_pattern, "
        "ir_active, gap_beta compute each cage's fingerprint)",
    )
    return p


def run(args: argparse.Namespace) -> int:
    out = sys.stdout
    cols = None if args.columns.strip() == "all" else tuple(
        c.strip() for c in args.columns.split(",") if c.strip())
    it = rows(args.n, ipr=args.ipr, progress=args.progress, columns=cols)
    header = next(it)
    if args.csv:
        w = csv.writer(out, lineterminator="\n")
        w.writerow(header)
        for row in it:
            w.writerow(row)
        return 0
    order = [header.index(h) for h in READABLE if h in header]
    number = "IPR no." if args.ipr else "all no."  # the heading says which numbering it is
    shown = [(number, READABLE["isomer"][1]) if header[i] == "isomer" else READABLE[header[i]]
             for i in order]
    fmt = "  ".join(f"{{:<{max(len(t), w)}}}" for t, w in shown[:-1]) + "  {}"
    if len(shown) == 1:
        fmt = "{}"
    out.write(fmt.format(*(t for t, _ in shown)).rstrip() + "\n")
    count = 0
    for row in it:
        out.write(fmt.format(*(str(row[i]) for i in order)).rstrip() + "\n")
        count += 1
    kind = ("IPR isomer" if args.ipr else "isomer") + ("" if count == 1 else "s")
    out.write(f"{count} {kind} of C{args.n}\n")
    return 0
