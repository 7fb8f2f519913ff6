"""Helpers shared by the readers: decoding, validation, the final Spectrum."""

from __future__ import annotations

import hashlib
import math
import re
import warnings
import zlib
from collections.abc import Mapping
from dataclasses import dataclass, fields, replace
from typing import Any

import numpy as np

from ...errors import ReaderWarning, ReadLimitError, SpectrumError, SpectrumFormatError
from ..model import TECHNIQUES, Spectrum
from ..units import normalise_x_unit, technique_for_x_unit, to_kit_x

#: the largest number of points a reader accepts; larger inputs are refused (not truncated)
MAX_POINTS = 5_000_000
#: the most digits one number may have (a float64 holds 17 significant digits)
MAX_DIGITS = 40
#: the most bytes one binary array may inflate to (8 bytes for each of MAX_POINTS values)
MAX_DECOMPRESSED_BYTES = 8 * MAX_POINTS
#: the deepest XML element nesting accepted (mzML needs about 10)
MAX_DEPTH = 64
#: the longest input read at all, in bytes
MAX_INPUT_BYTES = 2_000_000_000

# the physical window of x in the kit's unit for each technique (closed interval); a value
# outside is a damaged file or a wrong unit. Common practice, no source: m/z and wavelengths
# and IR wavenumbers are positive; Raman shifts may be negative (anti-Stokes); 13C shifts of
# diamagnetic and paramagnetic fullerenes lie well inside +-1000 ppm.
PHYSICAL_X_RANGE: Mapping[str, tuple[float, float]] = {
    "mass": (0.0, 1e6), "ir": (0.0, 1e5), "raman": (-1e5, 1e5), "nmr": (-1000.0, 1000.0),
    "uvvis": (0.0, 1e5),
}


@dataclass(frozen=True)
class ReadLimits:
    """The resource budget of every reader, checked before anything is allocated.

    Parameters
    ----------
    max_points : int
        Decoded points of one spectrum (also the bound on DUP/DIF expansion).
    max_digits : int
        Digits in one number (integers of thousands of digits are refused).
    max_decompressed_bytes : int
        Bytes one compressed (zlib/base64) array may inflate to.
    max_depth : int
        XML element nesting depth.
    max_input_bytes : int
        Size of the whole input.

    Examples
    --------
    >>> ReadLimits().max_points == MAX_POINTS
    True
    >>> ReadLimits(max_points=10**7).max_points
    10000000
    """

    max_points: int = MAX_POINTS
    max_digits: int = MAX_DIGITS
    max_decompressed_bytes: int = MAX_DECOMPRESSED_BYTES
    max_depth: int = MAX_DEPTH
    max_input_bytes: int = MAX_INPUT_BYTES

    def __post_init__(self) -> None:
        for f in fields(self):
            v = getattr(self, f.name)
            if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < 1:
                raise SpectrumError(f"ReadLimits.{f.name} must be a whole number >= 1, got {v!r}")


def limits_for(limits: ReadLimits | None, max_points: int | None = None) -> ReadLimits:
    """The limits a reader works with: ``limits`` (default ``ReadLimits()``), ``max_points`` on top.

    Examples
    --------
    >>> limits_for(None, 20).max_points
    20
    """
    out = limits if limits is not None else ReadLimits()
    if not isinstance(out, ReadLimits):
        raise SpectrumError(f"limits= must be a ReadLimits, got {type(out).__name__}")
    if max_points is not None and max_points != out.max_points:
        out = replace(out, max_points=max_points)
    return out


def over_limit(what: str, name: str, value: int, source: str, line: int | None = None,
               hint: str = "") -> ReadLimitError:
    """The kit's error for an input beyond ``ReadLimits.<name>`` (returned, to be raised)."""
    return ReadLimitError(
        f"{what} is more than {name}={value}{hint}; to read it anyway pass "
        f"limits=ReadLimits({name}=...)",
        source, line,
    )


def check_input_size(data: bytes, source: str, limits: ReadLimits) -> None:
    if len(data) > limits.max_input_bytes:
        raise over_limit(f"the input of {len(data)} bytes", "max_input_bytes",
                         limits.max_input_bytes, source)


def check_digits(text: str | bytes, source: str, limits: ReadLimits, first_line: int = 1) -> None:
    """Refuse a run of more than ``limits.max_digits`` digits anywhere in ``text``.

    Examples
    --------
    >>> check_digits("1 2\\n3 " + "9" * 50, "<bytes>", ReadLimits())
    Traceback (most recent call last):
    ...
    cageprint.errors.ReadLimitError: <bytes>, line 2: a number with 50 digits is more than ...
    """
    n = limits.max_digits
    pattern = r"\d{" + str(n + 1) + ",}"
    if isinstance(text, bytes):
        pattern = pattern.encode()
    m = re.search(pattern, text)
    if m is not None:
        nl = b"\n" if isinstance(text, bytes) else "\n"
        line = first_line + text.count(nl, 0, m.start())
        raise over_limit(f"a number with {m.end() - m.start()} digits", "max_digits", n,
                         source, line)


def inflate(data: bytes, limit: int, source: str, line: int | None = None,
            stated: str | None = None) -> bytes:
    """zlib-decompress ``data``, refusing output beyond ``limit`` bytes before it is made.

    ``limit`` is ``max_decompressed_bytes``, or the size the file ``stated``
    for the array (then named in the message).

    Examples
    --------
    >>> inflate(zlib.compress(b"abc"), 10, "<bytes>")
    b'abc'
    """
    d = zlib.decompressobj()
    try:
        out = d.decompress(data, limit + 1)  # at most one byte past the limit is ever made
    except zlib.error as exc:
        raise SpectrumFormatError(f"corrupt zlib data ({exc})", source, line) from None
    if len(out) > limit and stated is not None:
        raise SpectrumFormatError(f"{stated} inflates past the {limit} bytes its stated "
                                  "length needs (damaged data or a wrong length)", source, line)
    if len(out) > limit:
        raise over_limit(f"a compressed array inflating past {limit} bytes",
                         "max_decompressed_bytes", limit, source, line)
    if not d.eof:
        raise SpectrumFormatError("truncated zlib data (the stream has no end)", source, line)
    return out


def reader_warning(meta: dict, message: str, source: str, line: int | None = None) -> None:
    """Issue a :class:`ReaderWarning` and record it in ``meta["warnings"]`` for the UI."""
    where = f"{source}" + (f", line {line}" if line is not None else "")
    text = f"{where}: {message}"
    meta.setdefault("warnings", []).append(text)
    warnings.warn(text, ReaderWarning, stacklevel=3)


def check_physical_range(x: np.ndarray, technique: str, source: str, *, file_unit=None,
                         file_x=None, line_of=None) -> None:
    """Refuse x values outside ``PHYSICAL_X_RANGE[technique]`` (after unit conversion).

    Examples
    --------
    >>> check_physical_range(np.array([-619.9]), "uvvis", "a.csv", file_unit="eV",
    ...                      file_x=np.array([-2.0]))
    Traceback (most recent call last):
    ...
    cageprint.errors.SpectrumFormatError: a.csv: x value -2.0 eV is -619.9 nm, outside ...
    """
    lo, hi = PHYSICAL_X_RANGE.get(technique, (-math.inf, math.inf))
    bad = (x < lo) | (x > hi)
    if not bad.any():
        return
    i = int(np.flatnonzero(bad)[0])
    unit = TECHNIQUES[technique]
    shown = f"{float(x[i])!r} {unit}"
    if file_unit is not None and file_unit != unit and file_x is not None:
        shown = f"{float(file_x[i])!r} {file_unit} is {float(x[i]):g} {unit}"
    raise SpectrumFormatError(
        f"x value {shown}, outside the physical range {lo:g} to {hi:g} {unit} of a "
        f"{technique} spectrum (point {i + 1}); check the unit and the data",
        source, line_of(i) if line_of is not None else None,
    )
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
    file_x = x
    if x_unit is not None and x_unit != kit_unit:
        try:
            with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
                xc = to_kit_x(x, x_unit, kit_unit, observe_mhz)
        except SpectrumError as exc:
            raise SpectrumFormatError(
                f"x unit {x_unit!r} does not fit a {technique} spectrum: {exc}", source
            ) from None
        bad = ~np.isfinite(xc)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise SpectrumFormatError(
                f"x value {float(x[i])!r} {x_unit} has no finite {kit_unit} value (point "
                f"{i + 1})",
                source, where(i),
            )
        if widths is not None:
            # widths convert through the local derivative |dx_kit/dx|
            lo = to_kit_x(x - widths / 2, x_unit, kit_unit, observe_mhz)
            hi = to_kit_x(x + widths / 2, x_unit, kit_unit, observe_mhz)
            widths = np.abs(hi - lo)
        meta["x_unit_in_file"] = x_unit
        x = xc
    check_physical_range(x, technique, source, file_unit=x_unit, file_x=file_x, line_of=where)
    try:
        return Spectrum(
            x, y, technique=technique, x_unit=kit_unit, y_unit=y_unit, kind=kind,
            widths=widths, meta=meta,
        )
    except SpectrumError as exc:  # pragma: no cover - validated above
        raise SpectrumFormatError(str(exc), source) from None
