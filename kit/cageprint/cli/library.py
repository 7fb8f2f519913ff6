"""``cageprint library``: build, query, describe and export the persistent cage library.

Sub-commands::

    cageprint library build C60-C100 [--all] [--energies xtb] [--scheduler ADDR]
    cageprint library query [C60-C100] [--pattern 11x6+1x2] [--ipr] [--point-group D3]
    cageprint library info
    cageprint library export FOLDER

A build started here that uses a local cluster runs it inside this command,
so no ``__main__`` guard is needed; scripts that call
:func:`cageprint.library.build_library` need one.
"""

from __future__ import annotations

import argparse
import sys

from ..errors import LibraryError
from ..library import (
    build_library,
    export_parquet,
    library_info,
    open_library,
    parse_range,
    query_cages,
)
from ..library.screen import EnergyTask, energy_screen

ENERGY_METHODS = {"xtb": "GFN2-xTB", "gfn2": "GFN2-xTB", "gfn1": "GFN1-xTB"}


def add_parser(sub) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "library",
        help="build and query the persistent cage library (fingerprints, stability indices)",
        description="The cage library: fingerprints and stability indices of every cage of a "
        "size range, built once (on Dask) and read instantly afterwards.",
    )
    lsub = p.add_subparsers(dest="library_command", metavar="ACTION")
    lsub.required = True

    b = lsub.add_parser("build", help="build (or complete) the library for a size range")
    b.add_argument("range", help="cage sizes: C60-C100, C84 or C60,C70")
    b.add_argument("--all", action="store_true", help="every isomer, not only IPR cages")
    b.add_argument("--energies", choices=sorted(ENERGY_METHODS), default=None,
                   help="also relax every cage of the range with GFN2-xTB (tblite; slow: "
                   "see the docs for CPU-hours per 1,000 cages)")
    b.add_argument("--charge", type=int, default=0,
                   help="cage charge for --energies (-6 for M3N@C2n; default 0)")
    b.add_argument("--scheduler", metavar="ADDR", default=None,
                   help="address of a running Dask scheduler (tcp://host:8786); default: "
                   "a local cluster using every core")
    b.add_argument("--workers", type=int, default=None,
                   help="local worker processes (default: every core; 0 = no Dask)")
    _path(b)
    b.add_argument("--quiet", action="store_true", help="no progress bar")

    q = lsub.add_parser("query", help="list library cages matching a 13C pattern and filters")
    q.add_argument("range", nargs="?", default=None, help="cage sizes (default: all stored, or "
                   "the size a --pattern implies)")
    q.add_argument("--pattern", default=None, help="13C pattern, count x orbit size: 11x6+1x2")
    q.add_argument("--ipr", action="store_true", help="IPR cages only")
    q.add_argument("--point-group", default=None, help="only this point group (D3, C2v, ...)")
    q.add_argument("--max-pairs", type=int, default=None, help="at most this many fused "
                   "pentagon pairs")
    q.add_argument("--limit", type=int, default=None, help="at most this many rows")
    q.add_argument("--csv", action="store_true", help="CSV on standard output")
    _path(q)

    i = lsub.add_parser("info", help="what the library holds")
    _path(i)
    e = lsub.add_parser("export", help="write every table as Parquet into a folder")
    e.add_argument("folder")
    _path(e)
    return p


def _path(p: argparse.ArgumentParser) -> None:
    p.add_argument("--path", default=None, help="library file (default: the user's cache "
                   "folder, or $CAGEPRINT_LIBRARY)")


def run(args: argparse.Namespace) -> int:
    return {"build": _build, "query": _query, "info": _info, "export": _export}[
        args.library_command](args)


def _build(args) -> int:
    rep = build_library(args.range, ipr=not args.all, path=args.path, scheduler=args.scheduler,
                        workers=args.workers, progress=not args.quiet)
    print(rep.summary())
    if args.energies:
        method = ENERGY_METHODS[args.energies]
        table = query_cages(args.path, sizes=parse_range(args.range),
                            ipr=None if args.all else True)
        tasks = [EnergyTask(int(r.n), tuple(int(v) for v in r.spiral.split()), args.charge,
                            method) for r in table.itertuples()]
        done = energy_screen(tasks, path=args.path, scheduler=args.scheduler,
                             workers=args.workers, progress=not args.quiet)
        bad = sum(not r.converged for r in done)
        cpu = sum(r.cpu_seconds for r in done)
        print(f"energies ({method}, charge {args.charge:+d}): {len(done)} computed, "
              f"{len(tasks) - len(done)} already stored, {bad} not converged; {cpu:.0f} s CPU")
    return 1 if rep.stopped_early else 0


def _query(args) -> int:
    frame = query_cages(args.path, sizes=args.range, pattern=args.pattern,
                        ipr=True if args.ipr else None, point_group=args.point_group,
                        max_pairs=args.max_pairs, limit=args.limit)
    if args.csv:
        frame.to_csv(sys.stdout, index=False, lineterminator="\n")
        return 0
    if frame.empty:
        print("no cage in the library matches")
        return 0
    shown = frame[["formula", "isomer", "point_group", "nmr_pattern", "pentagon_pairs",
                   "gap_beta", "spiral"]]
    print(shown.to_string(index=False))
    print(f"{len(frame)} cage(s)")
    return 0


def _info(args) -> int:
    info = library_info(args.path)
    print(f"library {info['path']} ({info['size_bytes'] / 1e6:.1f} MB): {info['cages']} cages, "
          f"{info['energies']} energies")
    for r in info["ranges"]:
        print(f"  C{r['n']} {r['scope']}: {r['cages']} cages ({r['ipr_cages']} IPR), "
              f"kit {r['kit_version']}")
    for r in info["partial"]:
        print(f"  C{r['n']} {r['scope']}: incomplete, {r['pieces_done']} of {r['pieces']} "
              "pieces; rerun the build to finish it")
    return 0


def _export(args) -> int:
    con = open_library(args.path, read_only=True)
    try:
        files = export_parquet(con, args.folder)
    except Exception as exc:
        raise LibraryError(f"export to {args.folder}: {exc}") from exc
    finally:
        con.close()
    for f in files:
        print(f)
    return 0
