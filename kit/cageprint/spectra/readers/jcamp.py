"""JCAMP-DX 4.24 / 5.x reader, written for the kit (no third-party parser).

Supports ``##XYDATA=(X++(Y..Y))`` in AFFN, PAC and the compressed ASDF forms
(SQZ, DIF, DUP) with the DIF Y-check, ``##XYPOINTS=(XY..XY)``,
``##PEAK TABLE=(XY..XY)`` / ``(XYW..XYW)``, FIRSTX/LASTX/XFACTOR/YFACTOR,
the NPOINTS check, multi-block LINK files (choose with ``block=``) and the
NMR labels ``.OBSERVE FREQUENCY``, ``.OBSERVE NUCLEUS``, ``.SHIFT REFERENCE``
and ``.SOLVENT NAME`` (x in Hz is converted to ppm).

References
----------
R. S. McDonald, P. A. Wilks, "JCAMP-DX: A standard form for exchange of
infrared spectra in computer readable form", Appl. Spectrosc. 42, 151 (1988).
A. N. Davies, P. Lampen, "JCAMP-DX for NMR", Appl. Spectrosc. 47, 1093 (1993).
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass, field

import numpy as np

from ...errors import SpectrumFormatError
from ..model import TECHNIQUES
from ..units import normalise_y_unit
from ._common import (
    BYTES_SOURCE,
    PHYSICAL_X_RANGE,
    ReadLimits,
    build_spectrum,
    check_binary,
    check_input_size,
    check_physical_range,
    guess_from_unit,
    is_blank,
    limits_for,
    reader_warning,
    resolve_technique,
    sha256,
    x_unit_for,
)
from .asdf import AFFN_NUMBER, decode_line
from .jcamp_data import X_CHECK_STEPS, Y_CHECK_RTOL, decode_pairs, decode_xydata, number

__all__ = ["parse_jcamp", "jcamp_blocks", "sniff_jcamp", "X_CHECK_STEPS", "Y_CHECK_RTOL"]

#: a label this similar (difflib ratio) to a data-table label, followed by data lines, is taken
#: for a damaged one
DAMAGED_LABEL_RATIO = 0.7

_DATA_LABELS = ("XYDATA", "XYPOINTS", "PEAKTABLE", "DATATABLE", "NTUPLES", "RADATA",
                "XYDATATABLE")
_DATA_TYPES = (
    ("NMR", "nmr"), ("RAMAN", "raman"), ("INFRARED", "ir"), ("IR ", "ir"), ("FTIR", "ir"),
    ("UV", "uvvis"), ("VIS", "uvvis"), ("MASS", "mass"),
)


def _norm_label(label: str) -> str:
    return re.sub(r"[\s\-/_]", "", label).upper()


@dataclass
class _Block:
    title: str
    line: int
    labels: dict = field(default_factory=dict)  # label -> (value, line)
    data: tuple | None = None  # (label, form, line, [(lineno, text)])
    children: int = 0  # data blocks found before this block began (for ##BLOCKS=)
    stray: tuple | None = None  # (label, label line, data line): data lines after a plain label


def _strip_comment(line: str) -> str:
    k = line.find("$$")
    return line if k < 0 else line[:k]


def _looks_like_data(text: str, source: str, lineno: int) -> bool:
    """True for a line that decodes as an (X++(Y..Y)) or (XY..XY) line with an ordinate."""
    if not (text[:1].isdigit() or text[:1] in "+-."):
        return False
    try:
        _, vals, _ = decode_line(text, lineno, source, room=10_000, room_why="a data line")
    except SpectrumFormatError:
        return False
    return bool(vals)


def _damaged_label(key: str) -> str | None:
    """The data-table label ``key`` is most likely a damaged copy of, if any."""
    best = max(_DATA_LABELS, key=lambda d: difflib.SequenceMatcher(None, key, d).ratio())
    ratio = difflib.SequenceMatcher(None, key, best).ratio()
    return best if ratio >= DAMAGED_LABEL_RATIO and not key.startswith("$") else None


def _stray_error(blk: _Block, source: str) -> SpectrumFormatError:
    label, lline, dline = blk.stray
    return SpectrumFormatError(
        f"block {blk.title!r} has data lines (from line {dline}) after ##{label}= (line "
        f"{lline}) but no data-table label: a damaged ##XYDATA= / ##PEAK TABLE= label?",
        source, lline,
    )


def _scan(text: str, source: str) -> list[_Block]:
    """Split the file into data blocks (LINK containers are read through)."""
    stack: list[_Block] = []
    leaves: list[_Block] = []
    data_lines: list | None = None
    seen_any = False
    last_label = None  # (label text, key, line) of the last plain label
    for lineno, raw in enumerate(text.splitlines(), 1):
        line = _strip_comment(raw).rstrip()
        stripped = line.lstrip()
        if stripped.startswith("##"):
            data_lines = None
            last_label = None
            seen_any = True
            label, eq, value = stripped[2:].partition("=")
            if not eq:
                raise SpectrumFormatError(
                    f"label line without '=': {stripped[:60]!r}", source, lineno
                )
            key = _norm_label(label)
            value = value.strip()
            if key == "TITLE":
                stack.append(_Block(value, lineno, children=len(leaves)))
                continue
            if not stack:
                raise SpectrumFormatError(
                    f"##{label.strip()}= before any ##TITLE=; a JCAMP-DX block starts with "
                    "##TITLE=",
                    source, lineno,
                )
            blk = stack[-1]
            if key == "END":
                done = stack.pop()
                if done.data is None and done.stray is not None:
                    raise _stray_error(done, source)
                if done.data is not None:
                    leaves.append(done)
                elif "BLOCKS" in done.labels:
                    value, bline = done.labels["BLOCKS"]
                    held = len(leaves) - done.children
                    if value.strip() != str(held):
                        raise SpectrumFormatError(
                            f"LINK block {done.title!r} declares ##BLOCKS={value.strip()} but "
                            f"holds {held} data blocks",
                            source, bline,
                        )
                elif _norm_label(done.labels.get("DATATYPE", ("", 0))[0]) != "LINK":
                    leaves.append(done)  # a block without data: reported when chosen
                continue
            if key in _DATA_LABELS:
                if blk.data is not None:
                    raise SpectrumFormatError(
                        f"second data table ##{label.strip()}= in block {blk.title!r} (the "
                        f"first is at line {blk.data[2]})",
                        source, lineno,
                    )
                data_lines = []
                blk.data = (key, re.sub(r"\s", "", value).upper(), lineno, data_lines)
                continue
            blk.labels[key] = (value, lineno)
            last_label = (label.strip(), key, lineno)
        elif stripped:
            if data_lines is not None:
                data_lines.append((lineno, stripped))
            elif (stack and last_label is not None and stack[-1].stray is None
                  and not last_label[1].startswith("$")
                  and _looks_like_data(stripped, source, lineno)):
                blk = stack[-1]
                blk.stray = (last_label[0], last_label[2], lineno)
                if _damaged_label(last_label[1]):
                    raise _stray_error(blk, source)
            elif not stack and not seen_any:
                raise SpectrumFormatError(
                    f"not JCAMP-DX: expected '##TITLE=' first, found {stripped[:40]!r}",
                    source, lineno,
                )
            # other text (continuation of a label value, text after the last ##END) is ignored
    if stack:
        b = stack[-1]
        raise SpectrumFormatError(
            f"block {b.title!r} starting at line {b.line} has no ##END= (truncated file?)",
            source, b.line,
        )
    if not seen_any:
        raise SpectrumFormatError("not JCAMP-DX: no ##LABEL= lines", source)
    return leaves


def _technique_of(blk: _Block) -> tuple[str | None, str]:
    dt = blk.labels.get("DATATYPE", ("", 0))[0].upper()
    for word, tech in _DATA_TYPES:
        if word in dt + " ":
            return tech, f"##DATA TYPE={dt}"
    return None, f"##DATA TYPE={dt or '(none)'}"


def jcamp_blocks(data: bytes, source: str = BYTES_SOURCE, **_: object) -> list[dict]:
    """List the data blocks of a JCAMP-DX file (LINK containers read through).

    Examples
    --------
    >>> txt = b"##TITLE=a\\n##JCAMP-DX=5.01\\n##DATA TYPE=INFRARED SPECTRUM\\n" \\
    ...       b"##XUNITS=1/CM\\n##YUNITS=ABSORBANCE\\n##PEAK TABLE=(XY..XY)\\n500,1\\n##END=\\n"
    >>> jcamp_blocks(txt)
    [{'index': 0, 'title': 'a', 'data_type': 'INFRARED SPECTRUM', 'table': 'PEAKTABLE', \
'block_id': None, 'npoints': None, 'line': 1}]
    """
    text = _decode(data, source)
    out = []
    for i, b in enumerate(_scan(text, source)):
        npts = b.labels.get("NPOINTS", (None, 0))[0]
        out.append({
            "index": i, "title": b.title,
            "data_type": b.labels.get("DATATYPE", ("", 0))[0],
            "table": b.data[0] if b.data else None,
            "block_id": b.labels.get("BLOCKID", (None, 0))[0],
            "npoints": _whole(npts),
            "line": b.line,
        })
    return out


def _whole(text) -> int | None:
    """A label's value as a whole number, or None (absent, not a number, not finite)."""
    if text is None or len(text) > 40 or not AFFN_NUMBER.fullmatch(text.strip()):
        return None
    v = float(text)
    return int(v) if np.isfinite(v) and v == int(v) else None


def _decode(data: bytes, source: str, limits: ReadLimits | None = None) -> str:
    check_input_size(data, source, limits or ReadLimits())
    if is_blank(data):
        raise SpectrumFormatError("empty input: no data at all", source)
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError as exc:
            raise SpectrumFormatError(f"undecodable UTF-16 text: {exc.reason}", source) from None
    check_binary(data, source)
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("latin-1")  # data tables are ASCII; only free text can differ


def _choose(blocks: list[_Block], block, source: str) -> tuple[int, _Block]:
    if not blocks:
        raise SpectrumFormatError("no data block (##XYDATA=, ##XYPOINTS=, ##PEAK TABLE=)", source)
    if block is None:
        with_data = [i for i, b in enumerate(blocks) if b.data is not None]
        i = with_data[0] if with_data else 0
        return i, blocks[i]
    if isinstance(block, (int, np.integer)) and not isinstance(block, bool):
        if not -len(blocks) <= block < len(blocks):
            raise SpectrumFormatError(
                f"block={block} is out of range: the file has {len(blocks)} data blocks "
                "(0-based; see list_blocks)",
                source,
            )
        i = int(block) % len(blocks)
        return i, blocks[i]
    for i, b in enumerate(blocks):
        if str(block) in (b.title, b.labels.get("BLOCKID", ("\0", 0))[0]):
            return i, b
    titles = ", ".join(repr(b.title) for b in blocks)
    raise SpectrumFormatError(f"block={block!r} matches no block title or id; blocks: {titles}",
                              source)


def _shift_reference(blk: _Block, source: str):
    """Parse ##.SHIFT REFERENCE=(kind, compound, point, ppm) -> (compound, point, ppm)."""
    if ".SHIFTREFERENCE" not in blk.labels:
        return None
    value, line = blk.labels[".SHIFTREFERENCE"]
    parts = [p.strip() for p in value.strip().strip("()").split(",")]
    try:
        point, ppm = float(parts[2]), float(parts[3])
    except (IndexError, ValueError):
        raise SpectrumFormatError(
            f"##.SHIFT REFERENCE= should read (INTERNAL, compound, point, ppm), found {value!r}",
            source, line,
        ) from None
    lo, hi = PHYSICAL_X_RANGE["nmr"]
    if not (np.isfinite(ppm) and lo <= ppm <= hi):
        raise SpectrumFormatError(
            f"##.SHIFT REFERENCE= gives the shift {parts[3]!r}, not a finite number within "
            f"{lo:g} to {hi:g} ppm",
            source, line,
        )
    if not (np.isfinite(point) and point == int(point) and 1 <= point <= 10**12):
        raise SpectrumFormatError(
            f"##.SHIFT REFERENCE= names point {parts[2]!r}, not a whole point number",
            source, line,
        )
    return parts[1], int(point), ppm


def _x_unit(blk: _Block, tech: str, x, given: str | None, source: str, meta: dict):
    """The file's x unit: ##XUNITS=, else the caller's ``x_unit``, else inferred with a warning."""
    text, line = blk.labels.get("XUNITS", (None, None))
    xu = x_unit_for(text, None, source, line)
    if given is not None:
        want = x_unit_for(given, None, source)
        if xu is not None and want != xu:
            raise SpectrumFormatError(
                f"the file declares ##XUNITS={text} but x_unit={given!r} was given; pass "
                "x_unit=None to use the file's",
                source, line,
            )
        return want
    if xu is not None:
        return xu
    unit = TECHNIQUES[tech]
    if tech == "nmr":  # JCAMP-DX NMR tables are commonly in Hz (Davies & Lampen 1993)
        raise SpectrumFormatError(
            "the NMR block has no ##XUNITS=: its x may be Hz or ppm; pass x_unit='Hz' or "
            "x_unit='ppm'",
            source, blk.line,
        )
    lo, hi = PHYSICAL_X_RANGE[tech]
    if np.any((x < lo) | (x > hi)):
        raise SpectrumFormatError(
            f"the block has no ##XUNITS= and x from {float(np.min(x)):g} to "
            f"{float(np.max(x)):g} is not a {tech} axis in {unit}; pass x_unit=",
            source, blk.line,
        )
    reader_warning(meta, f"no ##XUNITS=: x read as {unit} (the {tech} unit); pass x_unit= "
                   "to state it", source, blk.line)
    return unit


def _with_reference(s, ref, x, *, xu, mhz, blk: _Block, source: str, apply: bool):
    compound, point, ppm = ref
    xs_file = x if xu != "Hz" else x / mhz
    line = blk.labels[".SHIFTREFERENCE"][1]
    if not 1 <= point <= xs_file.size:
        raise SpectrumFormatError(
            f"##.SHIFT REFERENCE= names point {point} but the block has {xs_file.size}",
            source, line,
        )
    offset = ppm - xs_file[point - 1]
    m2 = dict(s.meta)
    m2["shift_reference"] = {"compound": compound, "point": point, "ppm": ppm,
                             "offset_applied": float(offset) if apply else 0.0}
    m2.setdefault("solvent", compound)
    new_x = s.x + offset if apply else s.x
    try:
        check_physical_range(new_x, "nmr", source)
    except SpectrumFormatError as exc:
        raise SpectrumFormatError(
            f"after ##.SHIFT REFERENCE= (offset {offset:g} ppm): "
            f"{str(exc).split(': ', 1)[-1]}",
            source, line,
        ) from None
    return s.replace(x=new_x, meta=m2)


def _decode_table(blk: _Block, source: str, limits: ReadLimits):
    if blk.data is None:
        raise SpectrumFormatError(
            f"block {blk.title!r} has no data table (##XYDATA=, ##XYPOINTS= or ##PEAK TABLE=)",
            source, blk.line,
        )
    label = blk.data[0]
    if label == "XYDATA":
        return decode_xydata(blk, source, limits)
    if label in ("XYPOINTS", "PEAKTABLE"):
        return decode_pairs(blk, source, limits)
    raise SpectrumFormatError(
        f"##{label}= tables are not supported; expected ##XYDATA=, ##XYPOINTS= or "
        "##PEAK TABLE=",
        source, blk.data[2],
    )


def parse_jcamp(data: bytes, source: str = BYTES_SOURCE, *, technique: str | None = None,
                block=None, observe_mhz: float | None = None, max_points: int | None = None,
                apply_shift_reference: bool = True, meta: dict | None = None,
                x_unit: str | None = None, limits: ReadLimits | None = None):
    """Read one spectrum from JCAMP-DX text.

    Parameters
    ----------
    data : bytes
    source : str
        File name for messages.
    technique : str, optional
        Guessed from ``##DATA TYPE=`` (then the x units) when None.
    block : int or str, optional
        Which data block of a LINK file: 0-based index, title or
        ``##BLOCK_ID=``; default the first (see :func:`jcamp_blocks`).
    observe_mhz : float, optional
        Spectrometer frequency for NMR x in Hz when the file lacks
        ``##.OBSERVE FREQUENCY=``.
    apply_shift_reference : bool
        Shift the ppm axis so the point named by ``##.SHIFT REFERENCE=`` sits at
        its stated shift.
    x_unit : str, optional
        The x unit of a block without ``##XUNITS=`` (without it the unit is
        inferred from the technique with a :class:`~cageprint.errors.ReaderWarning`,
        and an NMR block is refused: Hz or ppm cannot be told apart).
    limits : ReadLimits, optional
        Resource budget (points, digits, input size); ``max_points`` overrides
        its ``max_points``.

    Examples
    --------
    >>> txt = (b"##TITLE=demo\\n##JCAMP-DX=4.24\\n##DATA TYPE=INFRARED SPECTRUM\\n"
    ...        b"##XUNITS=1/CM\\n##YUNITS=ABSORBANCE\\n##XFACTOR=1\\n##YFACTOR=0.001\\n"
    ...        b"##FIRSTX=400\\n##LASTX=410\\n##NPOINTS=6\\n##XYDATA=(X++(Y..Y))\\n"
    ...        b"400 A00J00%J00j00\\n408 B00%\\n##END=\\n")
    >>> s = parse_jcamp(txt)
    >>> s.technique, s.x.tolist(), s.y.tolist()
    ('ir', [400.0, 402.0, 404.0, 406.0, 408.0, 410.0], [0.1, 0.2, 0.2, 0.3, 0.2, 0.2])
    """
    limits = limits_for(limits, max_points)
    text = _decode(data, source, limits)
    blocks = _scan(text, source)
    index, blk = _choose(blocks, block, source)
    x, y, w, kind, line_of = _decode_table(blk, source, limits)
    label = blk.data[0]
    xunits = blk.labels.get("XUNITS", (None, None))
    xu = x_unit_for(xunits[0], None, source, xunits[1])
    guessed, why = _technique_of(blk)
    declared = guessed is not None
    if guessed is None:
        guessed = guess_from_unit(xu or (x_unit_for(x_unit, None, source) if x_unit else None))
        why = f"{why}, x unit {xu!r}"
    tech = resolve_technique(technique, guessed, declared, source, why)
    m = {
        "source": source, "sha256": sha256(data), "format": "jcamp",
        "title": blk.title, "block": index, "blocks": len(blocks), "table": label,
        "jcamp_version": blk.labels.get("JCAMPDX", ("", 0))[0],
        "data_type": blk.labels.get("DATATYPE", ("", 0))[0],
    }
    for key, name in (("ORIGIN", "origin"), ("OWNER", "owner"), ("SAMPLEDESCRIPTION", "sample"),
                      ("BLOCKID", "block_id"), ("DATE", "date"), ("LONGDATE", "date"),
                      (".SOLVENTNAME", "solvent"), (".OBSERVENUCLEUS", "nucleus")):
        if key in blk.labels:
            m[name] = blk.labels[key][0]
    xu = _x_unit(blk, tech, x, x_unit, source, m)
    mhz = number(blk, ".OBSERVEFREQUENCY", source)
    if mhz is not None:
        m["observe_mhz"] = mhz
    elif observe_mhz is not None:
        mhz = float(observe_mhz)
        m["observe_mhz"] = mhz
    if tech == "nmr":
        nucleus = m.get("nucleus", "").replace("^", "").strip().upper()
        if nucleus and nucleus != "13C":
            raise SpectrumFormatError(
                f"##.OBSERVE NUCLEUS={m['nucleus']}: the kit reads 13C NMR spectra only",
                source, blk.labels[".OBSERVENUCLEUS"][1],
            )
        if xu == "Hz" and mhz is None:
            raise SpectrumFormatError(
                "x is in Hz but the block has no ##.OBSERVE FREQUENCY=; pass observe_mhz=",
                source, blk.line,
            )
    ref = _shift_reference(blk, source) if tech == "nmr" else None
    yunits = blk.labels.get("YUNITS", ("", 0))[0]
    m.update(meta or {})
    s = build_spectrum(
        x, y, technique=tech, x_unit=xu, y_unit=normalise_y_unit(yunits or "intensity"),
        kind=kind, source=source, meta=m, widths=w, observe_mhz=mhz, line_of=line_of,
        max_points=limits.max_points, check_order=kind == "profile",
    )
    if kind == "peaks" and np.unique(s.x).size != s.x.size:
        raise SpectrumFormatError("duplicate peak position in ##PEAK TABLE=", source,
                                  blk.data[2])
    if ref is not None:
        s = _with_reference(s, ref, x, xu=xu, mhz=mhz, blk=blk, source=source,
                            apply=apply_shift_reference)
    return s


def sniff_jcamp(head: bytes) -> float:
    """Confidence that ``head`` starts a JCAMP-DX file."""
    text = head.removeprefix(b"\xef\xbb\xbf").lstrip()[:200].upper()
    if text.startswith(b"##TITLE") or text.startswith(b"##JCAMP"):
        return 1.0
    return 0.3 if b"##XYDATA" in head.upper() or b"##JCAMP-DX" in head.upper() else 0.0
