"""Delimited text spectra (CSV, TSV, whitespace) and plain peak lists.

Columns of numbers, optionally after header and comment lines.  The
delimiter (tab, semicolon, comma, whitespace) and the decimal mark (point or
comma) are sniffed from the first data lines unless given.  Column names come
from the last header line when it has as many fields as the data; units in
brackets, ``"Wavenumber (cm-1)"``, set the x unit and so the technique.
"""

from __future__ import annotations

import io
import re
from dataclasses import dataclass, field

import numpy as np

from ...errors import SpectrumFormatError
from ..units import Y_MEANINGS, normalise_y_unit
from ._common import (
    BYTES_SOURCE,
    ReadLimits,
    build_spectrum,
    check_digits,
    check_input_size,
    decode_text,
    guess_from_unit,
    limits_for,
    resolve_technique,
    sha256,
    x_unit_for,
)

__all__ = ["parse_delimited", "sniff_delimited", "read_table", "describe_table",
           "COMMENT_PREFIXES"]

#: a line starting (after blanks) with one of these is a comment
COMMENT_PREFIXES = ("#", "%", "!", "//")
#: how many data lines decide the delimiter and decimal mark
SNIFF_LINES = 8
#: at most this many header lines before the first numeric line
MAX_HEADER_LINES = 200
#: lines beyond MAX_POINTS allowed for headers and comments before the size check refuses
_LINE_ALLOWANCE = 10_000

_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_NONFINITE = re.compile(r"[+-]?(?:nan|inf|infinity)", re.I)
_BRACKET_UNIT = re.compile(r"^(.*?)\s*[\(\[]\s*(.*?)\s*[\)\]]\s*$")
_SKIP_LINE = re.compile(r"^[ \t]*(?:#|%|!|//|\r?$)", re.M)
# "key: value" (or "key = value") comment and header lines that fill the metadata
_META_KEYS = {
    "title": "title", "sample": "sample", "sample name": "sample", "solvent": "solvent",
    "instrument": "instrument", "frequency": "observe_mhz", "observe frequency": "observe_mhz",
    "spectrometer frequency": "observe_mhz", "observe mhz": "observe_mhz",
}
_KEY_VALUE = re.compile(
    r"^\s*(" + "|".join(sorted((k.replace(" ", r"[\s_-]*") for k in _META_KEYS), key=len,
                               reverse=True)) + r")\s*[:=]\s*(.+)$",
    re.I,
)
_CANDIDATES = (("\t", "."), ("\t", ","), (";", "."), (";", ","), (",", "."), (None, "."),
               (None, ","))
# names that imply an x unit when the header has no bracketed unit (common practice)
_NAME_UNITS = {
    "m/z": "m/z", "mz": "m/z", "mass": "m/z", "wavenumber": "cm-1", "wavenumbers": "cm-1",
    "ramanshift": "cm-1", "ppm": "ppm", "shift": "ppm", "chemicalshift": "ppm",
    "wavelength": "nm", "nm": "nm", "cm-1": "cm-1", "1/cm": "cm-1", "ev": "eV", "energy": "eV",
    "hz": "Hz",
}


def _is_skip(line: str) -> bool:
    s = line.strip()
    return not s or s.startswith(COMMENT_PREFIXES)


def _split(line: str, delim: str | None) -> list[str]:
    if delim is None:
        return line.split()
    parts = [p.strip().strip('"').strip() for p in line.rstrip("\r").split(delim)]
    if len(parts) > 1 and parts[-1] == "":
        parts.pop()  # a trailing delimiter
    return parts


def _is_number_like(cell: str, dec: str) -> bool:
    """A number, or a NaN/inf word (kept as data so that it is reported, not skipped)."""
    return _is_number(cell, dec) or bool(_NONFINITE.fullmatch(cell))


def _is_number(cell: str, dec: str) -> bool:
    if dec == ",":
        if "." in cell:
            return False
        cell = cell.replace(",", ".")
    return bool(_NUMBER.fullmatch(cell))


def _numeric_fields(line: str, delim: str | None, dec: str) -> int:
    """Number of fields if the first two are numbers (later ones may be text), else 0."""
    parts = _split(line, delim)
    if len(parts) < 2 or not (_is_number_like(parts[0], dec) and _is_number_like(parts[1], dec)):
        return 0
    if not (_is_number(parts[0], dec) or _is_number(parts[1], dec)):
        return 0
    return len(parts)


def _all_numeric(line: str, delim: str | None, dec: str) -> bool:
    return all(_is_number(p, dec) for p in _split(line, delim))


def _lines(text: str, start: int = 0):
    """Yield (line number, offset, line) lazily from offset ``start``."""
    pos, lineno, n = start, text.count("\n", 0, start) + 1, len(text)
    while pos < n:
        end = text.find("\n", pos)
        if end < 0:
            end = n
        yield lineno, pos, text[pos:end].rstrip("\r")
        pos, lineno = end + 1, lineno + 1


@dataclass
class _Table:
    names: list[str]
    units: list[str | None]
    columns: dict[int, np.ndarray]
    line_of: object
    start_line: int
    header: list[str] = field(default_factory=list)
    delimiter: str | None = None
    decimal: str = "."
    comments: list[str] = field(default_factory=list)


def _parse_name(name: str) -> tuple[str, str | None]:
    m = _BRACKET_UNIT.match(name)
    if m:
        return m.group(1).strip(), m.group(2).strip()
    return name.strip(), None


def _column_index(
    want, names: list[str], ncols: int, default: int | None, what: str, source: str
) -> int | None:
    if want is None:
        return default if default is not None and default < ncols else None
    if isinstance(want, (int, np.integer)) and not isinstance(want, bool):
        if not -ncols <= want < ncols:
            raise SpectrumFormatError(
                f"{what}={want} is out of range: the data have {ncols} columns (0-based)", source
            )
        return int(want) % ncols
    key = str(want).strip().lower()
    for i, name in enumerate(names):
        base, unit = _parse_name(name)
        if key in (name.strip().lower(), base.lower()):
            return i
    shown = ", ".join(repr(n) for n in names) if names else "none (no header line)"
    raise SpectrumFormatError(f"{what}={want!r} names no column; the columns are {shown}", source)


def read_table(data: bytes, source: str, opts: dict, wanted: dict) -> _Table:
    """Parse the numeric table; ``wanted`` maps role -> (option value, default index)."""
    import pandas as pd  # slow to import: only when a table is read

    encoding = opts.pop("encoding", None)
    limits = opts["limits"]
    check_input_size(data, source, limits)
    utf8 = (str(encoding or "utf-8").lower().replace("_", "-") in ("utf-8", "utf8", "utf-8-sig")
            and not data.startswith((b"\xff\xfe", b"\xfe\xff")))
    max_points = limits.max_points
    # refuse oversized input from the byte count alone, before decoding anything
    utf16 = data.startswith((b"\xff\xfe", b"\xfe\xff"))
    nlines = data.count(b"\n\x00" if data.startswith(b"\xff\xfe") else b"\x00\n") if utf16 \
        else data.count(b"\n")
    if nlines > max_points + _LINE_ALLOWANCE:
        raise SpectrumFormatError(
            f"about {nlines} lines is more than MAX_POINTS={max_points}; crop or decimate the "
            "file, or pass max_points=",
            source,
        )
    text = decode_text(data, source, encoding)
    check_digits(text, source, limits)
    mac_endings = "\n" not in text and "\r" in text
    if mac_endings:
        text = text.replace("\r", "\n")
    delim_opt = opts.pop("delimiter", "auto")
    dec_opt = opts.pop("decimal", "auto")
    if delim_opt in ("whitespace", " "):
        delim_opt = None
    cands = [
        (d, c) for d, c in _CANDIDATES
        if (delim_opt == "auto" or d == delim_opt) and (dec_opt == "auto" or c == dec_opt)
    ]
    if not cands:
        cands = [(delim_opt, "." if dec_opt == "auto" else dec_opt)]

    header: list[tuple[int, str]] = []
    first = None
    sniff: list[str] = []
    comments: list[str] = []
    for lineno, offset, line in _lines(text):
        if _is_skip(line):
            if first is None and line.strip() and len(comments) < MAX_HEADER_LINES:
                comments.append(line.strip().lstrip("#%!/").strip())
            continue
        if first is None:
            if any(_numeric_fields(line, d, c) for d, c in cands):
                first = (lineno, offset)
                sniff.append(line)
            else:
                header.append((lineno, line))
                if len(header) > MAX_HEADER_LINES:
                    raise SpectrumFormatError(
                        f"no numeric data in the first {MAX_HEADER_LINES} non-comment lines; "
                        f"expected columns of numbers, found {header[0][1][:60]!r}",
                        source, header[0][0],
                    )
        else:
            sniff.append(line)
            if len(sniff) >= SNIFF_LINES:
                break
    if first is None:
        where = header[-1] if header else (None, "")
        raise SpectrumFormatError(
            "no line of at least two numeric columns found; expected x and y columns "
            f"(last line read: {where[1][:60]!r})",
            source, where[0],
        )

    def score(cand):
        counts = [_numeric_fields(s, *cand) for s in sniff]
        if counts[0] == 0:
            return -1
        same = sum(c == counts[0] for c in counts)
        return 2 * same + all(_all_numeric(s, *cand) for s in sniff)

    best = max(cands, key=score)  # max keeps the first of equal scores
    delim, dec = best
    ncols = _numeric_fields(sniff[0], delim, dec)

    for hl, htext in header:
        parts = _split(htext, delim)
        if len(parts) == ncols and _is_number(parts[0], dec):
            # a data row with a bad cell, not a header line: report it rather than skip it
            bad = next(p for p in parts[1:] if not _is_number_like(p, dec))
            raise SpectrumFormatError(
                f"non-numeric cell {bad[:40]!r} in column {parts.index(bad) + 1}; expected a "
                f"number with decimal mark {dec!r}",
                source, hl,
            )
    names: list[str] = []
    if header:
        parts = _split(header[-1][1], delim)
        if len(parts) == ncols:
            names = parts
    units = [_parse_name(n)[1] for n in names] if names else [None] * ncols

    idx = {}
    for role, (want, default) in wanted.items():
        idx[role] = _column_index(want, names, ncols, default, f"{role}_column", source)
    use = sorted({i for i in idx.values() if i is not None})

    start_line, start_off = first
    # the data lines as bytes for the C parser when the text is plain UTF-8 (no copy through a
    # Python str); otherwise, or when comment lines must be filtered, as text
    raw_rest = None
    if utf8 and not mac_endings:
        bom = 3 if data.startswith(b"\xef\xbb\xbf") else 0
        raw_rest = data[bom + len(text[:start_off].encode("utf-8")):].rstrip()
    has_comment_chars = (
        any(c in raw_rest for c in (b"#", b"%", b"!", b"//")) if raw_rest is not None
        else any(c in text[start_off:] for c in ("#", "%", "!", "//"))
    )
    body_cache: dict = {}

    def body_text() -> str:
        if "body" not in body_cache:
            body_cache["body"] = text[start_off:].rstrip()
        return body_cache["body"]

    if has_comment_chars and _SKIP_LINE.search(body_text()):
        # comment lines among the data: filter lines in Python, keeping their numbers
        kept = [(k, ln) for k, ln in enumerate(body_text().split("\n"), start_line)
                if not _is_skip(ln)]
        line_numbers = np.fromiter((k for k, _ in kept), dtype=np.int64, count=len(kept))
        body_cache["body"] = "\n".join(ln for _, ln in kept)
        raw_rest = None

        def line_of(i, _ln=line_numbers):
            return int(_ln[i]) if 0 <= i < _ln.size else None
    else:
        # blank lines are skipped by the parser; line numbers are worked out only for messages
        kept = None
        cache: dict = {}

        def line_of(i, _s=start_line):
            if "plain" not in cache:
                cache["plain"] = body_text().count("\n") + 1 == nrows[0]
            if cache["plain"]:
                return _s + i
            if "ln" not in cache:
                cache["ln"] = [k for k, ln in enumerate(body_text().split("\n"), _s)
                               if ln.strip()]
            return cache["ln"][i] if 0 <= i < len(cache["ln"]) else None
    nrows = [0]

    def locate(reason: str | None):
        """Find the first bad line (slow pass); with ``reason`` None, return if all is well."""
        seq = kept if kept is not None else (
            (k, ln) for k, ln in enumerate(body_text().split("\n"), start_line)
        )
        for k, ln in seq:
            if not ln.strip():
                continue
            parts = _split(ln, delim)
            if len(parts) != ncols:
                raise SpectrumFormatError(
                    f"{len(parts)} fields where the data have {ncols} (mismatched column "
                    f"lengths): {ln.strip()[:60]!r}",
                    source, k,
                )
            for i in use:
                cell = parts[i]
                if _NONFINITE.fullmatch(cell):
                    raise SpectrumFormatError(
                        f"column {i + 1} holds {cell!r}, not a finite number", source, k
                    )
                if not _is_number(cell, dec):
                    raise SpectrumFormatError(
                        f"non-numeric cell {cell[:40]!r} in column {i + 1}; expected a number "
                        f"with decimal mark {dec!r}",
                        source, k,
                    )
        if reason is not None:
            raise SpectrumFormatError(f"could not parse the numeric table ({reason})", source)

    sep = r"\s+" if delim is None else delim
    common = dict(sep=sep, decimal=dec, header=None, engine="c", skipinitialspace=True,
                  skip_blank_lines=True, index_col=False)

    def source_io():
        return io.BytesIO(raw_rest) if raw_rest is not None else io.StringIO(body_text())

    try:
        frame = pd.read_csv(source_io(), dtype=np.float64, **common)
    except (ValueError, pd.errors.ParserError):
        # a bad line in a used column raises here with its line; else only unused
        # columns hold text and the used ones are re-read on their own
        locate(None)
        try:
            frame = pd.read_csv(source_io(), usecols=use, dtype=np.float64, **common)
        except (ValueError, pd.errors.ParserError) as exc:
            locate(str(exc).splitlines()[0][:120])
        frame.columns = use
    if frame.shape[1] == ncols + 1 and frame[frame.columns[-1]].isna().all():
        frame = frame.iloc[:, :ncols]  # a trailing delimiter on every line
    if frame.shape[1] != ncols and frame.shape[1] != len(use):
        locate(f"{frame.shape[1]} columns where {ncols} were expected")
    if frame.isna().to_numpy().any():
        locate(None)
        # only whitespace-only lines are left to explain the gaps: drop their empty rows
        frame = frame[~frame.isna().all(axis=1)]
    nrows[0] = len(frame)
    cols = {i: frame[i].to_numpy(dtype=float) for i in use}
    if len(frame) > max_points:
        raise SpectrumFormatError(
            f"{len(frame)} points is more than MAX_POINTS={max_points}; crop or decimate the "
            "file, or pass max_points=",
            source,
        )
    table = _Table(
        names=names, units=units, columns={r: cols[i] if i is not None else None
                                           for r, i in idx.items()},
        line_of=line_of, start_line=start_line, header=[h for _, h in header],
        delimiter=delim, decimal=dec, comments=comments,
    )
    table.idx = idx
    return table


def _units_of(table: _Table, i: int | None) -> tuple[str, str | None]:
    if i is None or not table.names:
        return "", None
    return _parse_name(table.names[i])


def _x_unit_from_header(table: _Table, i: int, source: str, given: str | None):
    if given is not None:
        return x_unit_for(given, None, source)
    name, unit = _units_of(table, i)
    if unit:
        return x_unit_for(unit, None, source, table.start_line - 1)
    key = re.sub(r"\s+", "", name).lower()
    return _NAME_UNITS.get(key)


def _guess(table: _Table, x_unit: str | None) -> tuple[str | None, str]:
    guessed = guess_from_unit(x_unit)
    why = f"x unit {x_unit!r}" if x_unit else "no x unit in a header line"
    if guessed is None and x_unit == "cm-1":
        words = " ".join(table.header).lower()
        if "raman" in words:
            guessed = "raman"
        elif any(w in words for w in ("absorbance", "transmittance", "infrared", "ftir")):
            guessed = "ir"
        else:
            why = "x in cm-1 fits both IR and Raman"
    return guessed, why


def _y_meaning(given: str | None, name: str, unit: str | None) -> str:
    """y meaning from the caller, else the column name, else its unit ("Absorbance (AU)")."""
    if given:
        return normalise_y_unit(given)
    n = normalise_y_unit(name) if name else None
    u = (unit or "").strip()
    if n == "transmittance" and u in ("%", "percent"):
        return "percent transmittance"
    if n in Y_MEANINGS:
        return n
    if u and normalise_y_unit(u) in Y_MEANINGS:
        return normalise_y_unit(u)
    return n or (normalise_y_unit(u) if u else "intensity")


def _meta(table: _Table, data: bytes, source: str, fmt: str) -> dict:
    m = {
        "source": source,
        "sha256": sha256(data),
        "format": fmt,
        "columns": list(table.names),
        "delimiter": {None: "whitespace", "\t": "tab"}.get(table.delimiter, table.delimiter),
        "decimal": table.decimal,
        "header_lines": list(table.header),
        "comments": list(table.comments),
    }
    for text in table.comments + table.header:
        k = _KEY_VALUE.match(text)
        if not k:
            continue
        key = _META_KEYS[re.sub(r"[\s_-]+", " ", k.group(1).strip().lower())]
        value = k.group(2).strip()
        if key == "observe_mhz":
            num = _NUMBER.match(value.replace(",", "."))
            if num:
                m.setdefault(key, float(num.group(0)))
        else:
            m.setdefault(key, value)
    if "title" not in m and table.comments:
        m["title"] = table.comments[0]
    return m


def describe_table(table, data: bytes, source: str, fmt: str, *, technique, x_unit, y_unit,
                   observe_mhz, meta):
    """Technique, x unit, y meaning, metadata and spectrometer MHz of a read table."""
    xu = _x_unit_from_header(table, table.idx["x"], source, x_unit)
    guessed, why = _guess(table, xu)
    tech = resolve_technique(technique, guessed, False, source, why)
    yname, yunit = _units_of(table, table.idx["y"])
    yu = _y_meaning(y_unit, yname, yunit)
    m = _meta(table, data, source, fmt)
    m.update(meta or {})
    if observe_mhz is not None:
        m["observe_mhz"] = float(observe_mhz)
    observe_mhz = m.get("observe_mhz")
    if xu == "Hz" and observe_mhz is None:
        raise SpectrumFormatError(
            "x is in Hz; pass observe_mhz= (the spectrometer frequency in MHz) to get ppm", source
        )
    return tech, xu, yu, m, observe_mhz


def parse_delimited(data: bytes, source: str = BYTES_SOURCE, *, technique: str | None = None,
                    x_column=None, y_column=None, x_unit: str | None = None,
                    y_unit: str | None = None, observe_mhz: float | None = None,
                    delimiter: str = "auto", decimal: str = "auto",
                    encoding: str | None = None, max_points: int | None = None,
                    meta: dict | None = None, limits: ReadLimits | None = None):
    """Read a profile spectrum from delimited text (CSV, TSV, whitespace columns).

    Parameters
    ----------
    data : bytes
        The file content.
    source : str
        File name for messages (``"<bytes>"`` when there is none).
    technique : str, optional
        ``mass``, ``ir``, ``raman``, ``nmr`` or ``uvvis``; guessed from the x unit when None.
    x_column, y_column : int or str, optional
        Column index (0-based) or header name; default the first two columns.
    x_unit, y_unit : str, optional
        Override the units found in the header (x in Hz needs ``observe_mhz``).
    delimiter : {"auto", ",", ";", "\\t", "whitespace"}
    decimal : {"auto", ".", ","}
    encoding : str, optional
        Text encoding; UTF-8 (with or without BOM) by default.
    max_points : int, optional
        Refuse files with more points (default ``MAX_POINTS``).
    limits : ReadLimits, optional
        The resource budget (points, digits in a number, input size).

    Returns
    -------
    Spectrum

    Raises
    ------
    SpectrumFormatError
        Naming the source, the line and the problem.

    Examples
    --------
    >>> s = parse_delimited(b"wavenumber (cm-1);absorbance\\n500,5;0,1\\n510,0;0,3\\n",
    ...                     technique="ir")
    >>> s.x.tolist(), s.y.tolist(), s.y_unit
    ([500.5, 510.0], [0.1, 0.3], 'absorbance')
    """
    limits = limits_for(limits, max_points)
    opts = dict(delimiter=delimiter, decimal=decimal, encoding=encoding, limits=limits)
    table = read_table(data, source, opts, {"x": (x_column, 0), "y": (y_column, 1)})
    tech, xu, yu, m, observe_mhz = describe_table(
        table, data, source, "delimited", technique=technique, x_unit=x_unit, y_unit=y_unit,
        observe_mhz=observe_mhz, meta=meta,
    )
    return build_spectrum(
        table.columns["x"], table.columns["y"], technique=tech, x_unit=xu, y_unit=yu,
        kind="profile", source=source, meta=m, observe_mhz=observe_mhz,
        line_of=table.line_of, max_points=limits.max_points,
    )


def sniff_delimited(head: bytes) -> float:
    """Confidence (0..1) that ``head`` starts a delimited numeric text file."""
    try:
        text = head.decode("utf-8", errors="strict")
    except UnicodeDecodeError as exc:
        text = head[: exc.start].decode("utf-8")  # a multi-byte character cut at the end
    if "\x00" in text:
        return 0.0
    lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    if (len(head) >= 4096 or len(text) < len(head)) and len(lines) > 1:
        lines = lines[:-1]  # the last line may be cut
    seen = 0
    for k, line in enumerate(lines):
        if k > 60:
            break
        if _is_skip(line):
            continue
        if any(_numeric_fields(line, d, c) for d, c in _CANDIDATES):
            seen += 1
            if seen >= 2:
                return 0.5
    return 0.2 if seen else 0.0
