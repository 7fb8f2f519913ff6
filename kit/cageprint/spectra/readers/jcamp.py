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

import re
from dataclasses import dataclass, field

import numpy as np

from ...errors import SpectrumFormatError
from ..units import normalise_y_unit
from ._common import (
    BYTES_SOURCE,
    MAX_POINTS,
    build_spectrum,
    check_binary,
    guess_from_unit,
    is_blank,
    resolve_technique,
    sha256,
    x_unit_for,
)
from .asdf import AFFN_NUMBER, decode_line, is_compressed

__all__ = ["parse_jcamp", "jcamp_blocks", "sniff_jcamp", "X_CHECK_STEPS", "Y_CHECK_RTOL"]

#: a line's X may differ from the X computed from FIRSTX/LASTX by this many steps
X_CHECK_STEPS = 1.0
#: relative tolerance of the DIF Y-check for non-integer ordinates
Y_CHECK_RTOL = 1e-9

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


def _strip_comment(line: str) -> str:
    k = line.find("$$")
    return line if k < 0 else line[:k]


def _scan(text: str, source: str) -> list[_Block]:
    """Split the file into data blocks (LINK containers are read through)."""
    stack: list[_Block] = []
    leaves: list[_Block] = []
    data_lines: list | None = None
    seen_any = False
    for lineno, raw in enumerate(text.splitlines(), 1):
        line = _strip_comment(raw).rstrip()
        stripped = line.lstrip()
        if stripped.startswith("##"):
            data_lines = None
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
        elif stripped:
            if data_lines is not None:
                data_lines.append((lineno, stripped))
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


def _number(blk: _Block, key: str, source: str, default=None):
    if key not in blk.labels:
        return default
    value, line = blk.labels[key]
    try:
        v = float(value)
    except ValueError:
        raise SpectrumFormatError(
            f"##{key}= must be a number, found {value[:40]!r}", source, line
        ) from None
    if not np.isfinite(v):
        raise SpectrumFormatError(f"##{key}= is not finite ({value!r})", source, line)
    return v


def _decode_xydata(blk: _Block, source: str, max_points: int):
    label, form, start, lines = blk.data
    if form not in ("(X++(Y..Y))", "(X++(R..R))", "(X++(I..I))"):
        raise SpectrumFormatError(
            f"unsupported ##XYDATA= variable list {form!r}; expected (X++(Y..Y))", source, start
        )
    if not lines:
        raise SpectrumFormatError("##XYDATA= has no data lines", source, start)
    firstx = _number(blk, "FIRSTX", source)
    lastx = _number(blk, "LASTX", source)
    npoints = _number(blk, "NPOINTS", source)
    xfactor = _number(blk, "XFACTOR", source, 1.0)
    yfactor = _number(blk, "YFACTOR", source, 1.0)
    deltax = _number(blk, "DELTAX", source)
    if firstx is None:
        raise SpectrumFormatError("##XYDATA= needs ##FIRSTX=", source, start)
    if npoints is not None:
        if npoints != int(npoints) or npoints < 1:
            raise SpectrumFormatError(
                f"##NPOINTS={blk.labels['NPOINTS'][0]} is not a positive whole number",
                source, blk.labels["NPOINTS"][1],
            )
        if npoints > max_points:
            raise SpectrumFormatError(
                f"##NPOINTS={int(npoints)} is more than MAX_POINTS={max_points}; pass "
                "max_points= to read it",
                source, blk.labels["NPOINTS"][1],
            )
    step = None
    if lastx is not None and npoints is not None and npoints > 1:
        step = (lastx - firstx) / (npoints - 1)
    elif deltax is not None:
        step = deltax
    compressed = is_compressed(lines)
    ys: list = []
    xchecks: list[tuple[int, float, int]] = []
    prev_dif = False
    for lineno, text in lines:
        x, vals, ends_dif = decode_line(text, lineno, compressed, source)
        if x is None:
            continue
        check = prev_dif and bool(vals)
        if check:
            first, last = vals[0], ys[-1]
            same = first == last if isinstance(first, int) and isinstance(last, int) else \
                abs(first - last) <= Y_CHECK_RTOL * max(abs(first), abs(last), 1e-300)
            if not same:
                raise SpectrumFormatError(
                    f"DIF Y-check failed: the line starts with Y={first} but the previous line "
                    f"ended with Y={last} (corrupt or edited compressed data)",
                    source, lineno,
                )
            index = len(ys) - 1
            vals = vals[1:]
        else:
            index = len(ys)
        xchecks.append((lineno, x * xfactor, index))
        ys.extend(vals)
        if len(ys) > max_points:
            raise SpectrumFormatError(
                f"more than MAX_POINTS={max_points} points; pass max_points= to read it",
                source, lineno,
            )
        prev_dif = ends_dif
    n = len(ys)
    if n == 0:
        raise SpectrumFormatError("##XYDATA= holds no values", source, start)

    def first_x_failure(dx):
        for lineno, xl, index in xchecks:
            expect = firstx + index * dx
            if abs(xl - expect) > X_CHECK_STEPS * abs(dx) * (1 + 1e-9):
                return lineno, xl, index, expect
        return None

    if npoints is not None and n != int(npoints):
        # a wrong NPOINTS leaves the line X values consistent with the real count;
        # a lost or extra line does not, and the X-check then points at it
        real = (lastx - firstx) / (n - 1) if lastx is not None and n > 1 else None
        fail = first_x_failure(step) if step else None
        if fail is None or (real and first_x_failure(real) is None):
            raise SpectrumFormatError(
                f"##NPOINTS={int(npoints)} declared but the XYDATA hold {n} values",
                source, start,
            )
        lineno, xl, index, expect = fail
        raise SpectrumFormatError(
            f"X-check failed: the line's X={xl:g} but point {index + 1} should be at "
            f"{expect:g} (a lost or extra data line?; the block holds {n} values where "
            f"##NPOINTS={int(npoints)}; tolerance X_CHECK_STEPS={X_CHECK_STEPS} steps)",
            source, lineno,
        )
    if step:
        fail = first_x_failure(step)
        if fail is not None:
            lineno, xl, index, expect = fail
            raise SpectrumFormatError(
                f"X-check failed: the line's X={xl:g} but point {index + 1} should be at "
                f"{expect:g} (a lost or extra data line?; tolerance "
                f"X_CHECK_STEPS={X_CHECK_STEPS} steps)",
                source, lineno,
            )
    if lastx is not None and n > 1:
        x = firstx + np.arange(n) * ((lastx - firstx) / (n - 1))
        x[-1] = lastx
    elif step is not None:
        x = firstx + np.arange(n) * step
    elif n == 1:
        x = np.array([firstx])
    else:
        raise SpectrumFormatError("##XYDATA= needs ##LASTX= or ##DELTAX=", source, start)
    y = np.asarray(ys, dtype=float) * yfactor
    return x, y, None, "profile", lambda i, _s=start: _s


def _decode_pairs(blk: _Block, source: str, max_points: int):
    label, form, start, lines = blk.data
    width = {"(XY..XY)": 2, "(XYW..XYW)": 3, "(XYM..XYM)": 3}.get(form)
    if width is None:
        raise SpectrumFormatError(
            f"unsupported ##{label}= variable list {form!r}; expected (XY..XY) or (XYW..XYW)",
            source, start,
        )
    values: list[float] = []
    lines_of: list[int] = []
    for lineno, text in lines:
        if "?" in text:
            raise SpectrumFormatError(f"missing value '?' in ##{label}=", source, lineno)
        rest = AFFN_NUMBER.sub(" ", text)
        bad = re.sub(r"[\s,;]", "", rest)
        if bad:
            raise SpectrumFormatError(
                f"unexpected text {bad[:20]!r} in ##{label}=; expected numbers", source, lineno
            )
        found = [float(t) for t in AFFN_NUMBER.findall(text)]
        values.extend(found)
        lines_of.extend([lineno] * len(found))
        if len(values) > width * max_points:
            raise SpectrumFormatError(
                f"more than MAX_POINTS={max_points} points; pass max_points= to read it",
                source, lineno,
            )
    if len(values) % width:
        raise SpectrumFormatError(
            f"##{label}={form} holds {len(values)} numbers, not a multiple of {width}",
            source, lines_of[-1] if lines_of else start,
        )
    arr = np.asarray(values, dtype=float).reshape(-1, width)
    npoints = _number(blk, "NPOINTS", source)
    if npoints is not None and int(npoints) != arr.shape[0]:
        raise SpectrumFormatError(
            f"##NPOINTS={int(npoints)} declared but ##{label}= holds {arr.shape[0]} points",
            source, start,
        )
    xfactor = _number(blk, "XFACTOR", source, 1.0)
    yfactor = _number(blk, "YFACTOR", source, 1.0)
    x = arr[:, 0] * xfactor
    y = arr[:, 1] * yfactor
    w = arr[:, 2] * xfactor if width == 3 and form == "(XYW..XYW)" else None
    kind = "peaks" if label == "PEAKTABLE" else "profile"
    rows = np.asarray(lines_of[::width], dtype=np.int64)
    return x, y, w, kind, lambda i, _r=rows: int(_r[i]) if 0 <= i < _r.size else None


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
            "npoints": int(float(npts)) if npts not in (None, "") and
            AFFN_NUMBER.fullmatch(npts.strip()) else None,
            "line": b.line,
        })
    return out


def _decode(data: bytes, source: str) -> str:
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
        return parts[1], int(float(parts[2])), float(parts[3])
    except (IndexError, ValueError):
        raise SpectrumFormatError(
            f"##.SHIFT REFERENCE= should read (INTERNAL, compound, point, ppm), found {value!r}",
            source, line,
        ) from None


def parse_jcamp(data: bytes, source: str = BYTES_SOURCE, *, technique: str | None = None,
                block=None, observe_mhz: float | None = None, max_points: int = MAX_POINTS,
                apply_shift_reference: bool = True, meta: dict | None = None):
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
    text = _decode(data, source)
    blocks = _scan(text, source)
    index, blk = _choose(blocks, block, source)
    if blk.data is None:
        raise SpectrumFormatError(
            f"block {blk.title!r} has no data table (##XYDATA=, ##XYPOINTS= or ##PEAK TABLE=)",
            source, blk.line,
        )
    label = blk.data[0]
    if label in ("XYDATA",):
        x, y, w, kind, line_of = _decode_xydata(blk, source, max_points)
    elif label in ("XYPOINTS", "PEAKTABLE"):
        x, y, w, kind, line_of = _decode_pairs(blk, source, max_points)
    else:
        raise SpectrumFormatError(
            f"##{label}= tables are not supported; expected ##XYDATA=, ##XYPOINTS= or "
            "##PEAK TABLE=",
            source, blk.data[2],
        )
    xunits = blk.labels.get("XUNITS", (None, None))
    xu = x_unit_for(xunits[0], None, source, xunits[1])
    guessed, why = _technique_of(blk)
    declared = guessed is not None
    if guessed is None:
        guessed = guess_from_unit(xu)
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
    mhz = _number(blk, ".OBSERVEFREQUENCY", source)
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
        max_points=max_points, check_order=kind == "profile",
    )
    if kind == "peaks" and np.unique(s.x).size != s.x.size:
        raise SpectrumFormatError("duplicate peak position in ##PEAK TABLE=", source,
                                  blk.data[2])
    if ref is not None:
        compound, point, ppm = ref
        xs_file = x if xu != "Hz" else x / mhz
        if not 1 <= point <= xs_file.size:
            raise SpectrumFormatError(
                f"##.SHIFT REFERENCE= names point {point} but the block has {xs_file.size}",
                source, blk.labels[".SHIFTREFERENCE"][1],
            )
        offset = ppm - xs_file[point - 1]
        m2 = dict(s.meta)
        m2["shift_reference"] = {"compound": compound, "point": point, "ppm": ppm,
                                 "offset_applied": float(offset) if apply_shift_reference
                                 else 0.0}
        m2.setdefault("solvent", compound)
        s = s.replace(x=s.x + offset if apply_shift_reference else s.x, meta=m2)
    return s


def sniff_jcamp(head: bytes) -> float:
    """Confidence that ``head`` starts a JCAMP-DX file."""
    text = head.removeprefix(b"\xef\xbb\xbf").lstrip()[:200].upper()
    if text.startswith(b"##TITLE") or text.startswith(b"##JCAMP"):
        return 1.0
    return 0.3 if b"##XYDATA" in head.upper() or b"##JCAMP-DX" in head.upper() else 0.0
