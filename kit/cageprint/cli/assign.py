"""``cageprint assign``: rank the candidate cages of a formula against measured spectra."""

from __future__ import annotations

import argparse
import csv
import sys
from dataclasses import fields
from pathlib import Path
from typing import Any

from ..errors import SessionError
from ..report import first_candidate_sticks, make_record, save_record, save_report
from ..session import Session
from ..settings import Spec
from ..spectra.fid import FidProcessing
from ..techniques import registry
from ._checks import EXIT_NOTHING, EXIT_STATUS_HELP, check_count, check_output, check_text, shown


def add_parser(sub: Any) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "assign",
        help="rank the candidate cages of a formula against measured spectra",
        description="Generate the candidate cages of FORMULA, compare each with the spectra "
        "given, and print the ranked table (ties shared, ruled-out candidates shown). "
        "Each FILE may be in any format the readers take, including a plain peak list.",
        epilog=EXIT_STATUS_HELP,
    )
    p.add_argument("formula", help="cage formula, e.g. C78 or Sc3N@C80 (a bare 78 also works)")
    p.add_argument("--ipr", action="store_true", help="IPR isomers only (default: all isomers)")
    p.add_argument("--cage-charge", type=int, default=None, metavar="Q",
                   help="formal charge of the cage (default from the formula: 0 for an "
                   "empty cage, -6 for Sc3N@C80)")
    for tech in registry.techniques():
        if tech.cli_flag:
            what = "spectrum or peak list" if tech.needs_spectrum else "input file"
            if tech.key == "nmr":
                what += ", or a raw experiment folder (Bruker, Varian/Agilent) or its zip"
            p.add_argument(tech.cli_flag, dest=f"input_{tech.key}", metavar="FILE",
                           default=None, help=f"{tech.label} {what}")
    p.add_argument("--fid", dest="fid", action="append", default=[], metavar="NAME=VALUE",
                   help="processing of a raw 13C FID, e.g. --fid line_broadening_hz=1 "
                   "--fid phase=manual --fid p0=-35 (repeatable; names: "
                   + ", ".join(f.name for f in fields(FidProcessing)) + ")")
    p.add_argument("--solvent", default=None, help="NMR solvent whose 13C lines are excluded")
    p.add_argument("--weight", action="append", default=[], metavar="TECH=W",
                   help="weight of a technique, e.g. --weight uvvis=0 (repeatable); "
                   "techniques: " + ", ".join(registry.keys()))
    p.add_argument("--set", dest="settings", action="append", default=[],
                   metavar="TECH.NAME=VALUE",
                   help="a setting, e.g. --set nmr.snr=8 (repeatable; see the settings of "
                   "each technique in the record, or cageprint.techniques.thresholds)")
    p.add_argument("--sample", default="", help="sample name written into record and report")
    p.add_argument("--top", type=int, default=30, metavar="N",
                   help="rows printed in the readable table (default 30; CSV has all)")
    p.add_argument("--csv", action="store_true", help="print CSV instead of a readable table")
    p.add_argument("--record", metavar="OUT.json", default=None,
                   help="write the assignment record (JSON)")
    p.add_argument("--report", metavar="OUT.html", default=None,
                   help="write the offline HTML report")
    return p


def _split(item: str, flag: str, example: str) -> tuple[str, str]:
    if "=" not in item:
        raise SessionError(f"{flag} {item!r}: expected {example}")
    key, val = item.split("=", 1)
    return key.strip(), val.strip()


def build_session(args: argparse.Namespace) -> Session:
    """The session the command works on (also used by tests)."""
    formula = args.formula.strip()
    if formula.isdigit():
        formula = f"C{formula}"
    s = Session(formula, cage_charge=args.cage_charge)
    s.sample = args.sample
    for item in args.weight:
        tech, val = _split(item, "--weight", "TECH=W such as uvvis=0.5")
        try:
            weight = float(val)
        except ValueError:
            raise SessionError(f"--weight {item!r}: W must be a number; got {val!r}") from None
        s.set_weight(tech, weight)
    if args.solvent:
        s.set_threshold("nmr", "solvent", args.solvent)
    for item in args.settings:
        key, val = _split(item, "--set", "TECH.NAME=VALUE such as nmr.snr=8")
        if "." not in key:
            raise SessionError(f"--set {item!r}: expected TECH.NAME=VALUE such as nmr.snr=8")
        key_t, name = key.split(".", 1)
        if name not in s.threshold_names(key_t):
            s.set_threshold(key_t, name, None)  # raises, naming the known settings
        s.set_threshold(key_t, name, s.settings(key_t).parse(name, val))
    for technique in registry.techniques():
        path = getattr(args, f"input_{technique.key}", None)
        if path:
            raw = technique.key == "nmr" and (Path(path).is_dir()
                                              or Path(path).suffix.lower() == ".zip")
            opts: dict[str, Any] = {"processing": _fid_settings(args.fid)} if raw else {}
            s.load(technique.key, path, **opts)
    s.set_candidates(ipr=args.ipr)
    return s


def _fid_settings(items: list[str]) -> FidProcessing:
    """--fid NAME=VALUE items as FidProcessing (numbers where the field is a number)."""
    kinds = {f.name: type(getattr(FidProcessing(), f.name)) for f in fields(FidProcessing)}
    values: dict[str, Any] = {}
    for item in items:
        key, val = _split(item, "--fid", "NAME=VALUE such as line_broadening_hz=1")
        if key not in kinds:
            raise SessionError(f"--fid {item!r}: unknown name {key!r}; names: "
                               + ", ".join(kinds))
        kind = kinds[key]
        try:
            if key == "reference":
                values[key] = val if val in ("stored", "solvent", "tms") else float(val)
            else:
                values[key] = kind(val)
        except ValueError:
            raise SessionError(f"--fid {item!r}: {key} takes a {kind.__name__}; got "
                               f"{val!r}") from None
    try:
        return FidProcessing(**values)
    except Exception as exc:
        raise SessionError(f"--fid: {exc}") from None


def _setting_text(value: Any, spec: Spec) -> str:
    if value is None:
        return "none"
    if isinstance(value, tuple) and spec.kind == "span":
        return f"{value[0]:g}-{value[1]:g}" + (f" {spec.unit}" if spec.unit else "")
    if isinstance(value, float):
        return f"{value:g}" + (f" {spec.unit}" if spec.unit else "")
    return str(value)


def settings_used(session: Session, technique: str) -> str:
    """The main settings a technique used (its widget controls, and any changed), in words."""
    settings = session.settings(technique)
    changed = settings.changed()
    parts = [f"{name}={_setting_text(value, spec)}"
             for name, spec in settings.specs().items()
             if spec.control or name in changed
             for value in [getattr(settings, name)]]
    return ", ".join(parts)


def _print_table(session: Session, top: int, out: Any) -> None:
    ranking = session.ranking
    techs = ranking.techniques
    short = {t: registry.get(t).short for t in techs}
    head = ["rank", "formula", "isomer", "pg", "score", "verdict", "share"] + [
        short[t] for t in techs]
    rows = []
    for r in ranking.rows[:top]:
        c = r.candidate
        cells = [str(r.rank) + ("=" if r.tied_with else ""), c.formula, str(c.isomer),
                 c.point_group, f"{r.score:.2f}" if abs(r.score) >= 0.005 else "0.00",
                 r.verdict, f"{r.share:.1%}"]
        for t in techs:
            word = ranking.shown_verdict(r, t)
            cells.append("-" if word == "no data" else word)
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
    for t in ranking.with_data:
        print(f"settings used, {short[t]}: {settings_used(session, t)}", file=out)
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


def check_args(args: argparse.Namespace) -> None:
    """Refuse bad arguments before any work (and before any file is written)."""
    check_text(args.formula, "FORMULA")
    check_text(args.sample, "--sample")
    for technique in registry.techniques():
        if technique.cli_flag:
            check_text(getattr(args, f"input_{technique.key}", None), technique.cli_flag)
    check_output(args.record, "--record", ".json")
    check_output(args.report, "--report", ".html")
    check_count(args.top, "--top")


def found_nothing(session: Session) -> str | None:
    """Why the run found nothing: a spectrum given in which no line, band or peak was seen."""
    for t in session.techniques_with_data():
        tech = registry.get(t)
        if not tech.needs_spectrum:
            continue
        if len(tech.marks(session.observation(t))) == 0:
            return (f"nothing found: no {tech.observed_noun} observed in the {tech.label} "
                    f"spectrum '{shown(session.sources.get(t, ''))}' with the settings used "
                    f"({settings_used(session, t)}); lower a threshold with --set")
    return None


def run(args: argparse.Namespace) -> int:
    check_args(args)
    session = build_session(args)
    nothing = found_nothing(session)
    if nothing is not None:
        print(f"cageprint assign: {nothing}", file=sys.stderr)
        return EXIT_NOTHING
    ranking = session.ranking
    out = sys.stdout
    if args.csv:
        table = ranking.table()
        writer = csv.DictWriter(out, fieldnames=list(table[0]) if table else ["rank"],
                                lineterminator="\n")
        writer.writeheader()
        writer.writerows(table)
    else:
        _print_table(session, args.top, out)
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
