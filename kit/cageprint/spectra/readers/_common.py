"""Helpers shared by the readers: decoding, validation, the final Spectrum."""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from typing import Any

import numpy as np

from ...errors import SpectrumError, SpectrumFormatError
from ..model import TECHNIQUES, Spectrum
from ..units import normalise_x_unit, technique_for_x_unit, to_kit_x

#: the largest number of points a reader accepts; larger inputs are refused (not truncated)
MAX_POINTS = 5_000_000
#: a profile spectrum needs at least this many points
MIN_PROFILE_POINTS = 2
#: name used for data given as bytes
BYTES_SOURCE = "<bytes>"


def sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def is_blank(data: bytes) -> bool:
    """True for empty or whitespace-only data (looks at the head first: cheap for big files)."""
    return not data or (not data[:4096].strip() and not data.strip())


def check_binary(data: bytes, source: str) -> None:
    """Refuse data that is clearly not text (NUL bytes or many control bytes)."""
    head = data[:65536]
    nul = head.find(b"\x00")
    if nul >= 0:
        raise SpectrumFormatError(
            f"binary data, not text (NUL byte at offset {nul}); expected a text spectrum file",
            source,
        )
    ctrl = sum(head.count(bytes([c])) for c in range(1, 32) if c not in (9, 10, 12, 13))
    if head and ctrl > 0.05 * len(head):
        raise SpectrumFormatError(
            f"binary data, not text ({ctrl} control bytes in the first {len(head)}); "
            "expected a text spectrum file",
            source,
        )


def decode_text(data: bytes, source: str, encoding: str | None = None) -> str:
    """Decode bytes as text: a BOM, then UTF-8, unless ``encoding`` is given."""
    if is_blank(data):
        raise SpectrumFormatError("empty input: no data at all", source)
    if data.startswith((b"\xff\xfe", b"\xfe\xff")) and encoding is None:
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError as exc:
            raise SpectrumFormatError(f"undecodable UTF-16 text: {exc.reason}", source) from None
    check_binary(data, source)
    enc = encoding or "utf-8-sig"
    try:
        return data.decode(enc)
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise SpectrumFormatError(
            f"undecodable text: byte {data[exc.start:exc.start + 1]!r} at offset {exc.start} is "
            f"not {enc}; pass encoding='latin-1' (or the file's encoding)",
            source,
            line,
        ) from None
    except LookupError:
        raise SpectrumFormatError(f"unknown text encoding {enc!r}", source) from None


def resolve_technique(
    technique: str | None, guessed: str | None, declared: bool, source: str, why: str
) -> str:
    """Choose the technique: the caller's, else the file's; refuse conflicts and blanks.

    ``declared`` is True when the file states its technique outright (JCAMP DATA TYPE, mzML);
    a caller's technique that contradicts it is an error rather than a silent override.
    """
    if technique is not None and technique not in TECHNIQUES:
        raise SpectrumFormatError(
            f"technique={technique!r} is not one of {', '.join(TECHNIQUES)}", source
        )
    if technique is not None:
        if declared and guessed is not None and guessed != technique:
            raise SpectrumFormatError(
                f"the file declares a {guessed} spectrum ({why}) but technique={technique!r} "
                "was given; pass technique=None to use the file's",
                source,
            )
        return technique
    if guessed is None:
        raise SpectrumFormatError(
            f"cannot tell the technique from the file ({why}); pass technique= one of "
            f"{', '.join(TECHNIQUES)}",
            source,
        )
    return guessed


def x_unit_for(
    unit_text: str | None, technique: str | None, source: str, line: int | None = None
) -> str | None:
    """Canonical x unit of a file's unit text; None if absent; error if unknown."""
    if unit_text is None or not str(unit_text).strip():
        return None
    unit = normalise_x_unit(unit_text)
    if unit is None:
        raise SpectrumFormatError(
            f"unknown x unit {unit_text!r}; expected one of m/z, cm-1, ppm, Hz, nm, um, eV "
            "(or pass x_unit=)",
            source,
            line,
        )
    return unit


def guess_from_unit(unit: str | None) -> str | None:
    return technique_for_x_unit(unit) if unit else None


def build_spectrum(
    x: np.ndarray,
    y: np.ndarray,
    *,
    technique: str,
    x_unit: str | None,
    y_unit: str,
    kind: str,
    source: str,
    meta: Mapping[str, Any],
    widths: np.ndarray | None = None,
    observe_mhz: float | None = None,
    line_of=None,
    max_points: int = MAX_POINTS,
    check_order: bool = True,
) -> Spectrum:
    """Validate arrays from a reader and make the Spectrum (converting x to the kit unit).

    ``line_of(i)`` maps a point index to its line (or record) number for messages.
    """

    def where(i):
        return line_of(int(i)) if line_of is not None else None

    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if x.size != y.size:
        raise SpectrumFormatError(f"{x.size} x values but {y.size} y values", source)
    n = x.size
    if n == 0:
        raise SpectrumFormatError("no data points found", source)
    if n > max_points:
        raise SpectrumFormatError(
            f"{n} points is more than MAX_POINTS={max_points}; crop or decimate the file, or "
            "pass max_points=",
            source,
        )
    for name, arr in (("x", x), ("y", y)) + ((("width", widths),) if widths is not None else ()):
        bad = ~np.isfinite(arr)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise SpectrumFormatError(
                f"{name} value {float(arr[i])!r} is not a finite number (point {i + 1})",
                source, where(i),
            )
    if kind == "profile" and n < MIN_PROFILE_POINTS:
        raise SpectrumFormatError(
            f"only {n} data point; a profile spectrum needs at least {MIN_PROFILE_POINTS}", source,
            where(0),
        )
    if n > 1 and check_order:
        dx = np.diff(x)
        zero = dx == 0
        if zero.any():
            i = int(np.flatnonzero(zero)[0]) + 1
            raise SpectrumFormatError(
                f"duplicate x value {float(x[i])!r} (points {i} and {i + 1}); x must not repeat",
                source, where(i),
            )
        if kind == "profile":
            sign = np.sign(dx[0])
            wrong = np.sign(dx) != sign
            if wrong.any():
                i = int(np.flatnonzero(wrong)[0]) + 1
                direction = "increasing" if sign > 0 else "decreasing"
                raise SpectrumFormatError(
                    f"x is not monotonic: x was {direction} but goes from {float(x[i - 1])!r} "
                    f"to {float(x[i])!r} at point {i + 1}",
                    source, where(i),
                )
    kit_unit = TECHNIQUES[technique]
    meta = dict(meta)
    if x_unit is not None and x_unit != kit_unit:
        try:
            xc = to_kit_x(x, x_unit, kit_unit, observe_mhz)
        except SpectrumError as exc:
            raise SpectrumFormatError(
                f"x unit {x_unit!r} does not fit a {technique} spectrum: {exc}", source
            ) from None
        if widths is not None:
            # widths convert through the local derivative |dx_kit/dx|
            lo = to_kit_x(x - widths / 2, x_unit, kit_unit, observe_mhz)
            hi = to_kit_x(x + widths / 2, x_unit, kit_unit, observe_mhz)
            widths = np.abs(hi - lo)
        meta["x_unit_in_file"] = x_unit
        x = xc
    try:
        return Spectrum(
            x, y, technique=technique, x_unit=kit_unit, y_unit=y_unit, kind=kind,
            widths=widths, meta=meta,
        )
    except SpectrumError as exc:  # pragma: no cover - validated above
        raise SpectrumFormatError(str(exc), source) from None
