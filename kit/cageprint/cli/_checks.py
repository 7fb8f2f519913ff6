"""Argument checks shared by the sub-commands: one clear error before any work is done.

Exit statuses of every command (stated in each command's ``--help``):
``EXIT_OK`` 0, ``EXIT_NOTHING`` 1 (ran, but found nothing in a given input),
``EXIT_ERROR`` 2 (bad input or arguments; one line on standard error).
"""

from __future__ import annotations

import os
from pathlib import Path

from ..errors import SessionError

__all__ = ["EXIT_OK", "EXIT_NOTHING", "EXIT_ERROR", "EXIT_STATUS_HELP", "check_text",
           "check_output", "check_count", "one_line"]

EXIT_OK, EXIT_NOTHING, EXIT_ERROR = 0, 1, 2
EXIT_STATUS_HELP = ("exit status: 0 done; 1 ran but found nothing (no peaks, lines, species or "
                    "envelopes in a given spectrum); 2 bad input or arguments (one line on "
                    "stderr)")


def shown(text: str) -> str:
    """``text`` printable on any terminal: undecodable bytes as \\xNN escapes.

    Examples
    --------
    >>> shown("f\\udcffx.jdx")
    'f\\\\xffx.jdx'
    """
    return os.fsencode(text).decode("utf-8", "backslashreplace") if isinstance(text, str) \
        else str(text)


def one_line(message: object) -> str:
    """A message on one line, printable whatever bytes it holds."""
    return " ".join(shown(str(message)).split())


def check_text(value: str | None, what: str) -> None:
    """Refuse text that is not valid UTF-8 (a name typed or a file named in another encoding).

    Examples
    --------
    >>> check_text("fraction B", "--sample")
    >>> check_text("bad\\udcff", "--sample")
    Traceback (most recent call last):
    ...
    cageprint.errors.SessionError: --sample 'bad\\xff': not valid UTF-8 text; ...
    """
    if value is None:
        return
    try:
        value.encode("utf-8")
    except UnicodeEncodeError:
        raise SessionError(
            f"{what} '{shown(value)}': not valid UTF-8 text; rename it (records and reports "
            "are UTF-8)"
        ) from None


def check_output(path: str | None, flag: str, suffix: str = ".out") -> None:
    """An output file path must name a file in an existing folder (checked before the work)."""
    if path is None:
        return
    check_text(path, flag)
    p = Path(path)
    if p.is_dir():
        raise SessionError(f"{flag} {path}: is a folder; give a file name such as "
                           f"{Path(path) / ('result' + suffix)}")
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise SessionError(f"{flag} {path}: the folder {folder} does not exist")


def check_count(value: int, flag: str, minimum: int = 1) -> None:
    """A count option (``--top``) must be a whole number of at least ``minimum``."""
    if value < minimum:
        raise SessionError(f"{flag} {value}: expected a whole number >= {minimum}")
