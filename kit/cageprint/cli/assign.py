"""``cageprint assign``: rank the candidate cages of a formula against measured spectra."""

from __future__ import annotations

import argparse
import csv
import sys
from typing import Any

from ..errors import SessionError

_FILES = (("mass", "--ms"), ("nmr", "--nmr"), ("ir", "--ir"), ("raman", "--raman"),
          ("uvvis", "--uv"))


def add_parser(sub) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "assign",
        help="rank the candidate cages of a formula against measured spectra",
        description="Generate the candidate cages of FORMULA, compare each with the spectra "
        "given, and print the ranked table (ties shared, ruled-out candidates shown). "
        "Each FILE may be in any format the readers take, including a plain peak list.",
    )
    p.add_argument("formula", help="cage formula, e.g. C78 or Sc3N@C80 (a bare 78 also works)")
    p.add_argument("--ipr", action="store_true", help="IPR isomers only (default: all isomers)")
    p.add_argument("--cage-charge", type=int, default=None, metavar="Q",
                   help="formal charge of the cage (default from the formula: 0 for an "
                   "empty cage, -6 for Sc3N@C80)")
    for tech, flag in _FILES:
        p.add_argument(flag, dest=tech, metavar="FILE", default=None,
                       help=f"{'UV-vis' if tech == 'uvvis' else tech} spectrum or peak list")
    p.add_argument("--solvent", default=None, help="NMR solvent whose 13C lines are excluded")
    p.add_argument("--weight", action="append", default=[], metavar="TECH=W",
                   help="weight of a technique, e.g. --weight uvvis=0 (repeatable)")
    p.add_argument("--set", dest="settings", action="append", default=[],
                   metavar="TECH.NAME=VALUE",
                   help="a threshold or option, e.g. --set nmr.snr=8 (repeatable)")
    p.add_argument("--sample", default="", help="sample name written into record and report")
    p.add_argument("--top", type=int, default=30, metavar="N",
                   help="rows printed in the readable table (default 30; CSV has all)")
    p.add_argument("--csv", action="store_true", help="print CSV instead of a readable table")
    p.add_argument("--record", metavar="OUT.json", default=None,
                   help="write the assignment record (JSON)")
    p.add_argument("--report", metavar="OUT.html", default=None,
                   help="write the offline HTML report")
    return p


def _value(text: str) -> Any:
    if "," in text:
        return tuple(_value(t) for t in text.split(",") if t.strip())
    low = text.strip().lower()
    if low in ("true", "yes"):
        return True
    if low in ("false", "no"):
        return False
    if low in ("none", ""):
        return None
    try:
        return int(text)
    except ValueError:
        pass
    try:
        return float(text)
    except ValueError:
        return text


def _split(item: str, flag: str, example: str) -> tuple[str, str]:
    if "=" not in item:
        raise SessionError(f"{flag} {item!r}: expected {example}")
    key, val = item.split("=", 1)
    return key.strip(), val.strip()


def build_session(args) -> Any:
    """The session the command works on (also used by tests)."""
    from ..session import Session

    formula = args.formula.strip()
    if formula.isdigit():
        formula = f"C{formula}"
    s = Session(formula, cage_charge=args.cage_charge)
    s.sample = args.sample
    for item in args.weight:
        tech, val = _split(item, "--weight", "TECH=W such as uvvis=0.5")
        try:
            s.set_weight(tech, float(val))
        except ValueError:
            raise SessionError(f"--weight {item!r}: W must be a number; got {val!r}") from None
    if args.solvent:
        s.set_threshold("nmr", "solvent", args.solvent)
    for item in args.settings:
        key, val = _split(item, "--set", "TECH.NAME=VALUE such as nmr.snr=8")
        if "." not in key:
            raise SessionError(f"--set {item!r}: expected TECH.NAME=VALUE such as nmr.snr=8")
        tech, name = key.split(".", 1)
        s.set_threshold(tech, name, _value(val))
    for tech, _flag in _FILES:
        path = getattr(args, tech)
        if path:
            s.load(tech, path)
    s.set_candidates(ipr=args.ipr)
    return s


def _print_table(ranking, top: int, out) -> None:
    techs = ranking.techniques
    short = {"mass": "MS", "nmr": "NMR", "ir": "IR", "raman": "Raman", "uvvis": "UV"}
    head = ["rank", "formula", "isomer", "pg", "score", "verdict"] + [short[t] for t in techs]
    rows = []
    for r in ranking.rows[:top]:
        c = r.candidate
        cells = [str(r.rank) + ("=" if r.tied_with else ""), c.formula, str(c.isomer),
                 c.point_group, f"{r.score:.2f}" if abs(r.score) >= 0.005 else "0.00",
                 r.verdict]
        for t in techs:
            v = r.verdicts[t]
            cells.append("-" if v.verdict == "no data" else v.verdict)
        rows.append(cells)
    widths = [max(len(h), *(len(row[i]) for row in rows)) if rows else len(h)
              for i, h in enumerate(head)]
    print("  ".join(h.ljust(w) for h, w in zip(head, widths, strict=True)), file=out)
    for row in rows:
        print("  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)), file=out)
    if len(ranking) > top:
        print(f"... {len(ranking) - top} more candidates (use --csv for all)", file=out)
    print(file=out)
    no = [t for t in techs if t not in ranking.with_data]
    if no:
        print("no data: " + ", ".join(short[t] for t in no), file=out)
    print("weights: " + ", ".join(f"{short[t]} {ranking.weights[t]:g}" for t in techs),
          file=out)
    first = ranking.top()
    if first:
        r = first[0]
        print(f"first: {', '.join(x.candidate.label for x in first)}"
              + (f" ({r.tie_reason})" if r.tie_reason else ""), file=out)
        for t in ranking.with_data:
            for reason in r.verdicts[t].reasons:
                print(f"  {short[t]}: {reason}", file=out)
    else:
        print("every candidate is ruled out by the evidence as weighted", file=out)


def run(args) -> int:
    from ..report import first_candidate_sticks, make_record, save_record, save_report

    session = build_session(args)
    ranking = session.ranking
    out = sys.stdout
    if args.csv:
        table = ranking.table()
        writer = csv.DictWriter(out, fieldnames=list(table[0]) if table else ["rank"],
                                lineterminator="\n")
        writer.writeheader()
        writer.writerows(table)
    else:
        _print_table(ranking, args.top, out)
    if args.record or args.report:
        record = make_record(session)
        if args.record:
            save_record(record, args.record)
            print(f"record written to {args.record}", file=sys.stderr)
        if args.report:
            save_report(args.report, record, session=session,
                        nmr_sticks=first_candidate_sticks(session))
            print(f"report written to {args.report}", file=sys.stderr)
    return 0
