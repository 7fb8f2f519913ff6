"""The ``cageprint`` command line.

Each sub-command lives in its own module of this package and offers two
functions: ``add_parser(subparsers)`` (declare the command and its options)
and ``run(args) -> int`` (do the work, print, return the exit code).  A new
command is added by writing such a module, importing it here and naming it in
``COMMANDS``.

Errors of the kit (:class:`cageprint.errors.CageprintError`) are printed on
one line to standard error and the command exits with status 2; a command that
ran but found nothing in its input exits with 1 (see `cli._checks`).  Warnings of the
readers are printed as one line each; third-party library warnings are muted.
"""

from __future__ import annotations

import argparse
import sys
import warnings
from collections.abc import Sequence
from types import ModuleType

from .. import __version__
from ..errors import CageprintError, ReaderWarning
from . import assign, demo, envelope, isomers, library, mass, notebooks, warmup
from ._checks import EXIT_ERROR, one_line

#: sub-command name -> its module in this package
COMMANDS: dict[str, ModuleType] = {
    "isomers": isomers,
    "mass": mass,
    "envelope": envelope,
    "assign": assign,
    "demo": demo,
    "run-notebooks": notebooks,
    "library": library,
    "warm-up": warmup,
}


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser with every sub-command."""
    parser = argparse.ArgumentParser(
        prog="cageprint",
        description="Candidate carbon cages, their predicted fingerprints, and the "
        "comparison with measured spectra.",
    )
    parser.add_argument("--version", action="version", version=f"cageprint {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True
    for module in COMMANDS.values():
        p = module.add_parser(sub)
        p.set_defaults(_run=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)

    def show(message, category, *_):  # the kit's warnings as one line each; libraries' muted
        if issubclass(category, ReaderWarning):
            print(f"cageprint {args.command}: warning: {one_line(message)}", file=sys.stderr)

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("always")
            warnings.showwarning = show
            return int(args._run(args) or 0)
    except CageprintError as exc:
        print(f"cageprint {args.command}: error: {one_line(exc)}", file=sys.stderr)
        return EXIT_ERROR
    except BrokenPipeError:  # e.g. `cageprint isomers 60 | head`
        return 0
