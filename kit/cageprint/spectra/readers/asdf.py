"""ASCII squeezed difference form (ASDF) of JCAMP-DX: decoding one (X++(Y..Y)) line.

AFFN and PAC numbers, SQZ (``@A-I``, ``a-i``), DIF (``%J-R``, ``j-r``) and DUP
(``S-Z``, ``s``) characters as defined by JCAMP-DX 4.24 (R. S. McDonald,
P. A. Wilks, Appl. Spectrosc. 42, 151 (1988)).
"""

from __future__ import annotations

import re

from ...errors import SpectrumFormatError

__all__ = ["decode_line", "is_compressed", "AFFN_NUMBER"]

_SQZ = {c: d for d, c in enumerate("@ABCDEFGHI")} | {c: -d for d, c in
                                                     enumerate("@abcdefghi") if d}
_DIF = {c: d for d, c in enumerate("%JKLMNOPQR")} | {c: -d for d, c in
                                                     enumerate("%jklmnopqr") if d}
_DUP = {c: d for d, c in enumerate("STUVWXYZs", start=1)}
# ASDF characters that cannot be part of an AFFN number (E/e may be exponents): one of them
# anywhere in a table makes the whole table compressed, where E/e are then SQZ digits
_COMPRESSED_RE = re.compile(r"[@A-DF-Ia-df-i%J-Rj-rS-Zs]")
_TOKEN_ASDF = re.compile(
    r"([@A-Ia-i%J-Rj-rS-Zs])(\d*(?:\.\d*)?)|([+-]?(?:\d+\.?\d*|\.\d+))|(\?)|([\s,;]+)"
)
_TOKEN_AFFN = re.compile(
    r"([+-]?(?:\d+\.?\d*|\.\d+)(?:[Ee][+-]?\d+)?)|(\?)|([\s,;]+)"
)
AFFN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[Ee][+-]?\d+)?")


def is_compressed(lines) -> bool:
    """True when any of the (lineno, text) lines holds an ASDF character."""
    return any(_COMPRESSED_RE.search(t) for _, t in lines)


def _num(text: str) -> int | float:
    return float(text) if ("." in text or "e" in text or "E" in text) else int(text)



def decode_line(line: str, lineno: int, compressed: bool, source: str):
    """Decode one (X++(Y..Y)) line -> (x value, [y values], ends_in_dif)."""
    pattern = _TOKEN_ASDF if compressed else _TOKEN_AFFN
    vals: list = []
    x = None
    last = None  # ("abs"|"dif", value)
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
            v = _num(affn)
            kind = "abs"
        elif ch in _SQZ:
            d = _SQZ[ch]
            mag = _num(str(abs(d)) + (digits or ""))
            v = -mag if d < 0 else mag
            kind = "abs"
        elif ch in _DIF:
            d = _DIF[ch]
            mag = _num(str(abs(d)) + (digits or ""))
            v = -mag if d < 0 else mag
            kind = "dif"
        else:  # DUP
            count = int(str(_DUP[ch]) + (digits or ""))
            if last is None:
                raise SpectrumFormatError(
                    f"DUP count {ch}{digits} with no value before it", source, lineno
                )
            if last[0] == "x":
                raise SpectrumFormatError("DUP applied to the X value", source, lineno)
            for _ in range(count - 1):
                vals.append(vals[-1] + last[1] if last[0] == "dif" else last[1])
            continue
        if x is None:
            if kind == "dif":
                raise SpectrumFormatError("line starts with a DIF value instead of X",
                                          source, lineno)
            x = v
            last = ("x", v)
            continue
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

