"""ASCII squeezed difference form (ASDF) of JCAMP-DX: decoding one (X++(Y..Y)) line.

AFFN and PAC numbers, SQZ (``@A-I``, ``a-i``), DIF (``%J-R``, ``j-r``) and DUP
(``S-Z``, ``s``) characters as defined by JCAMP-DX 4.24 (R. S. McDonald,
P. A. Wilks, Appl. Spectrosc. 42, 151 (1988)); the same forms serve NMR
(A. N. Davies, P. Lampen, Appl. Spectrosc. 47, 1093 (1993)).

The form is decided line by line, as each line of a table stands on its own:
a line holding a pseudo-digit other than ``E``/``e`` is compressed; a line
that reads as AFFN numbers (``1.5E-3`` with its exponent) with an ordinate is
AFFN; anything else (``400E12``, where ``E`` can only be SQZ +5) is
compressed.  So one ``@`` on one line no longer turns a whole plain table into
compressed decoding.

Every expansion is budgeted before it is made: a DUP count may not take the
line past the ``room`` left (the point limit, or the declared NPOINTS).
"""

from __future__ import annotations

import itertools
import re

from ...errors import ReadLimitError, SpectrumFormatError

__all__ = ["decode_line", "line_is_compressed", "AFFN_NUMBER"]

_SQZ = {c: d for d, c in enumerate("@ABCDEFGHI")} | {c: -d for d, c in
                                                     enumerate("@abcdefghi") if d}
_DIF = {c: d for d, c in enumerate("%JKLMNOPQR")} | {c: -d for d, c in
                                                     enumerate("%jklmnopqr") if d}
_DUP = {c: d for d, c in enumerate("STUVWXYZs", start=1)}
# ASDF characters that cannot be part of an AFFN number (E/e may be exponents)
_COMPRESSED_RE = re.compile(r"[@A-DF-Ia-df-i%J-Rj-rS-Zs]")
_TOKEN_ASDF = re.compile(
    r"([@A-Ia-i%J-Rj-rS-Zs])(\d*(?:\.\d*)?)|([+-]?(?:\d+\.?\d*|\.\d+))|(\?)|([\s,;]+)"
)
_TOKEN_AFFN = re.compile(
    r"([+-]?(?:\d+\.?\d*|\.\d+)(?:[Ee][+-]?\d+)?)|(\?)|([\s,;]+)"
)
AFFN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[Ee][+-]?\d+)?")


def line_is_compressed(text: str) -> bool:
    """True when one (X++(Y..Y)) line is in an ASDF form, False for AFFN.

    Examples
    --------
    >>> line_is_compressed("400 1.5E-3 2.5E-3"), line_is_compressed("400E12")
    (False, True)
    >>> line_is_compressed("400 A00J00%")
    True
    """
    if _COMPRESSED_RE.search(text):
        return True
    # token by token (one pass, no backtracking): AFFN numbers and '?' apart, X and an ordinate
    numbers, pos, sep_before = 0, 0, True
    while pos < len(text):
        m = _TOKEN_AFFN.match(text, pos)
        if m is None:
            return True
        if m.group(3) is not None:
            sep_before = True
        elif not sep_before and numbers:
            return True  # "1+2" or "1E5E3": numbers run together, as only PAC/SQZ write them
        else:
            numbers += 1
            sep_before = False
        pos = m.end()
    return numbers < 2


def _num(text: str, source: str, lineno: int) -> int | float:
    try:
        return float(text) if ("." in text or "e" in text or "E" in text) else int(text)
    except ValueError:  # only beyond Python's own digit limit, i.e. a raised max_digits
        raise SpectrumFormatError(f"unreadable number of {len(text)} characters", source,
                                  lineno) from None


def _dup_count(ch: str, digits: str, source: str, lineno: int) -> int:
    if not digits.isdigit() and digits:
        raise SpectrumFormatError(
            f"DUP count {ch}{digits} is not a whole number (a DUP character is followed by "
            "digits only)",
            source, lineno,
        )
    return int(str(_DUP[ch]) + digits)


def decode_line(line: str, lineno: int, source: str, *, room: int, room_why: str):
    """Decode one (X++(Y..Y)) line -> (x value, [y values], ends_in_dif).

    ``room`` is how many ordinates the line may still add; a DUP count beyond
    it raises :class:`~cageprint.errors.ReadLimitError` before anything is
    expanded, naming ``room_why`` (the limit it comes from).

    Examples
    --------
    >>> decode_line("400 A00J00%U", 7, "<bytes>", room=10, room_why="NPOINTS")
    (400, [100, 200, 200, 200, 200], True)
    """
    compressed = line_is_compressed(line)
    pattern = _TOKEN_ASDF if compressed else _TOKEN_AFFN
    vals: list = []
    x = None
    last = None  # ("x"|"abs"|"dif", value)
    pos = 0
    n = len(line)
    while pos < n:
        m = pattern.match(line, pos)
        if m is None:
            raise SpectrumFormatError(
                f"unexpected character {line[pos]!r} in XYDATA at column {pos + 1}",
                source, lineno,
            )
        pos = m.end()
        if compressed:
            ch, digits, affn, missing, sep = m.groups()
        else:
            affn, missing, sep = m.groups()
            ch = digits = None
        if sep is not None:
            continue
        if missing is not None:
            raise SpectrumFormatError("missing value '?' in XYDATA", source, lineno)
        if affn is not None:
            v = _num(affn, source, lineno)
            kind = "abs"
        elif ch in _SQZ or ch in _DIF:
            d = _SQZ[ch] if ch in _SQZ else _DIF[ch]
            mag = _num(str(abs(d)) + (digits or ""), source, lineno)
            v = -mag if d < 0 else mag
            kind = "abs" if ch in _SQZ else "dif"
        else:  # DUP
            count = _dup_count(ch, digits or "", source, lineno)
            if last is None:
                raise SpectrumFormatError(
                    f"DUP count {ch}{digits} with no value before it", source, lineno
                )
            if last[0] == "x":
                raise SpectrumFormatError("DUP applied to the X value", source, lineno)
            if len(vals) + count - 1 > room:
                raise ReadLimitError(
                    f"DUP count {ch}{digits} repeats a value {count} times, past {room_why}",
                    source, lineno,
                )
            if count < 1:
                raise SpectrumFormatError(f"DUP count {ch}{digits} is below 1", source, lineno)
            if last[0] == "dif":
                vals.extend(itertools.accumulate([last[1]] * (count - 1), initial=vals[-1]))
                del vals[-count]  # accumulate repeats its start value
            else:
                vals.extend([last[1]] * (count - 1))
            continue
        if x is None:
            if kind == "dif":
                raise SpectrumFormatError("line starts with a DIF value instead of X",
                                          source, lineno)
            x = v
            last = ("x", v)
            continue
        if len(vals) >= room:
            raise ReadLimitError(f"the line holds more values than {room_why} allows",
                                 source, lineno)
        if kind == "dif":
            if not vals:
                raise SpectrumFormatError(
                    "DIF value with no ordinate before it on the line", source, lineno
                )
            vals.append(vals[-1] + v)
        else:
            vals.append(v)
        last = (kind, v)
    ends_dif = last is not None and last[0] == "dif"
    return x, vals, ends_dif
