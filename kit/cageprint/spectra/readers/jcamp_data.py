"""Decoding the data table of one JCAMP-DX block, with the cross-checks that catch damage.

``##XYDATA=(X++(Y..Y))`` lines (AFFN or ASDF, decided per line) and
``(XY..XY)`` / ``(XYW..XYW)`` pairs.  Beside the DIF Y-check of the standard
(R. S. McDonald, P. A. Wilks, Appl. Spectrosc. 42, 151 (1988)), the labels a
file states about its data must agree with the data: ``##NPOINTS=``, the X of
every line (against FIRSTX/LASTX and against the previous line and its count
of values), ``##DELTAX=`` and ``##FIRSTY=`` (so a damaged ``##YFACTOR=`` or a
lost value is an error naming the line, not a silently changed spectrum).
Every tolerance is half a step or one quantisation step plus the precision
the file printed the number with.
"""

from __future__ import annotations

import re

import numpy as np

from ...errors import ReadLimitError, SpectrumFormatError
from ._common import ReadLimits, check_digits, over_limit
from .asdf import AFFN_NUMBER, decode_line

__all__ = ["decode_xydata", "decode_pairs", "X_CHECK_STEPS", "Y_CHECK_RTOL", "FIRSTY_RTOL"]

#: a line's X may differ from the X computed from FIRSTX/LASTX (and from the previous line's X
#: plus its values) by this many steps, plus the precision X is printed with
X_CHECK_STEPS = 0.5
#: relative tolerance of the DIF Y-check for non-integer ordinates
Y_CHECK_RTOL = 1e-9
#: relative tolerance of ##FIRSTY= against the first decoded Y (beside half a YFACTOR step and
#: the precision FIRSTY is printed with)
FIRSTY_RTOL = 1e-6

_LEADING_NUMBER = re.compile(r"\s*[+-]?(\d*)(?:\.(\d*))?(?:[Ee]([+-]?\d+))?")


def resolution(text: str) -> float:
    """One unit in the last printed digit of the number ``text`` starts with.

    Examples
    --------
    >>> resolution("400.25 A00"), resolution("17"), resolution("1.5E-3")
    (0.01, 1.0, 0.0001)
    """
    m = _LEADING_NUMBER.match(text)
    decimals = len(m.group(2) or "") if m else 0
    exponent = int(m.group(3)) if m and m.group(3) and len(m.group(3)) < 6 else 0
    return 10.0 ** (exponent - decimals)


def number(blk, key: str, source: str, default=None):
    """The value of a numeric label, or ``default``; errors name the label's line."""
    if key not in blk.labels:
        return default
    value, line = blk.labels[key]
    if len(value) > 100:
        raise SpectrumFormatError(f"##{key}= is {len(value)} characters long, not a number",
                                  source, line)
    try:
        v = float(value)
    except ValueError:
        raise SpectrumFormatError(
            f"##{key}= must be a number, found {value[:40]!r}", source, line
        ) from None
    if not np.isfinite(v):
        raise SpectrumFormatError(f"##{key}= is not finite ({value!r})", source, line)
    return v


def _npoints(blk, source: str, limits: ReadLimits):
    npoints = number(blk, "NPOINTS", source)
    if npoints is None:
        return None
    value, line = blk.labels["NPOINTS"]
    if npoints != int(npoints) or npoints < 1:
        raise SpectrumFormatError(f"##NPOINTS={value} is not a positive whole number",
                                  source, line)
    if npoints > limits.max_points:
        raise SpectrumFormatError(
            f"##NPOINTS={int(npoints)} is more than MAX_POINTS={limits.max_points}; pass "
            "max_points= to read it",
            source, line,
        )
    return int(npoints)


def _lines_decoded(lines, source: str, limits: ReadLimits, npoints):
    """Decode every line; -> (ys, xchecks [(lineno, x_in_file, first index, x text)])."""
    # a declared NPOINTS bounds the expansion too (with room, so a wrong NPOINTS is reported
    # as such by the count check afterwards)
    cap = limits.max_points if npoints is None else min(limits.max_points, 2 * npoints + 100)
    why = (f"MAX_POINTS={limits.max_points}" if cap == limits.max_points
           else f"##NPOINTS={npoints} (at most {cap} values are read)")
    ys: list = []
    xchecks: list = []
    prev_dif = False
    for lineno, text in lines:
        check_digits(text, source, limits, lineno)
        # the Y-check value of a DIF line is dropped again, hence the one spare value
        room = cap - len(ys) + (1 if prev_dif else 0)
        if room < 0:
            raise ReadLimitError(f"the data hold more values than {why}", source, lineno)
        x, vals, ends_dif = decode_line(text, lineno, source, room=room, room_why=why)
        if x is None:
            continue
        if prev_dif and vals:
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
        xchecks.append((lineno, x, index, text))
        ys.extend(vals)
        prev_dif = ends_dif
    return ys, xchecks


def _x_failure(xchecks, firstx: float, dx: float, xfactor: float):
    """First line whose X disagrees with FIRSTX + index * dx, or with the previous line."""
    prev = None
    for lineno, xf, index, text in xchecks:
        xl, res = xf * xfactor, resolution(text) * abs(xfactor) / 2
        expect = firstx + index * dx
        if abs(xl - expect) > X_CHECK_STEPS * abs(dx) + res + 1e-9 * abs(expect):
            return lineno, xl, index, expect, None
        if prev is not None:
            plin, pxl, pindex, pres = prev
            if abs((xl - pxl) - (index - pindex) * dx) > X_CHECK_STEPS * abs(dx) + res + pres:
                return lineno, xl, index, pxl + (index - pindex) * dx, (plin, index - pindex)
        prev = (lineno, xl, index, res)
    return None


def _x_check_error(fail, source: str, n: int, npoints) -> SpectrumFormatError:
    lineno, xl, index, expect, local = fail
    held = f"; the block holds {n} values where ##NPOINTS={npoints}" if npoints else ""
    where = f"point {index + 1} should be at {expect:g}"
    if local is not None:
        where += f", {local[1]} values after the X of line {local[0]}"
    return SpectrumFormatError(
        f"X-check failed: the line's X={xl:g} but {where} (a lost or extra data line?"
        f"{held}; tolerance X_CHECK_STEPS={X_CHECK_STEPS} steps)",
        source, lineno,
    )


def decode_xydata(blk, source: str, limits: ReadLimits):
    """Decode ``##XYDATA=(X++(Y..Y))`` -> (x, y, widths, kind, line_of)."""
    label, form, start, lines = blk.data
    if form not in ("(X++(Y..Y))", "(X++(R..R))", "(X++(I..I))"):
        raise SpectrumFormatError(
            f"unsupported ##XYDATA= variable list {form!r}; expected (X++(Y..Y))", source, start
        )
    if not lines:
        raise SpectrumFormatError("##XYDATA= has no data lines", source, start)
    firstx = number(blk, "FIRSTX", source)
    lastx = number(blk, "LASTX", source)
    xfactor = number(blk, "XFACTOR", source, 1.0)
    yfactor = number(blk, "YFACTOR", source, 1.0)
    deltax = number(blk, "DELTAX", source)
    if firstx is None:
        raise SpectrumFormatError("##XYDATA= needs ##FIRSTX=", source, start)
    npoints = _npoints(blk, source, limits)
    ys, xchecks = _lines_decoded(lines, source, limits, npoints)
    n = len(ys)
    if n == 0:
        raise SpectrumFormatError("##XYDATA= holds no values", source, start)
    step = None
    if lastx is not None and npoints is not None and npoints > 1:
        step = (lastx - firstx) / (npoints - 1)
    elif deltax is not None:
        step = deltax
    if npoints is not None and n != npoints:
        # a wrong NPOINTS leaves the line X values consistent with the real count;
        # a lost or extra line does not, and the X-check then points at it
        real = (lastx - firstx) / (n - 1) if lastx is not None and n > 1 else None
        fail = _x_failure(xchecks, firstx, step, xfactor) if step else None
        if fail is None or (real and _x_failure(xchecks, firstx, real, xfactor) is None):
            raise SpectrumFormatError(
                f"##NPOINTS={npoints} declared but the XYDATA hold {n} values", source, start,
            )
        raise _x_check_error(fail, source, n, npoints)
    if lastx is not None and n > 1:
        grid = (lastx - firstx) / (n - 1)
        if deltax is not None:
            _check_deltax(blk, deltax, grid, n, source)
        step = grid
    if step:
        fail = _x_failure(xchecks, firstx, step, xfactor)
        if fail is not None:
            raise _x_check_error(fail, source, n, None)
    if lastx is not None and n > 1:
        x = firstx + np.arange(n) * ((lastx - firstx) / (n - 1))
        x[-1] = lastx
    elif step is not None:
        x = firstx + np.arange(n) * step
    elif n == 1:
        x = np.array([firstx])
    else:
        raise SpectrumFormatError("##XYDATA= needs ##LASTX= or ##DELTAX=", source, start)
    try:
        y = np.asarray(ys, dtype=float) * yfactor
    except OverflowError:
        raise SpectrumFormatError("an ordinate is too large for a float", source,
                                  start) from None
    _check_firsty(blk, float(y[0]), yfactor, source)
    return x, y, None, "profile", lambda i, _s=start: _s


def _check_deltax(blk, deltax: float, grid: float, n: int, source: str) -> None:
    value, line = blk.labels["DELTAX"]
    drift = abs(deltax - grid) * (n - 1)
    if drift > X_CHECK_STEPS * abs(grid) + resolution(value) / 2 * (n - 1):
        raise SpectrumFormatError(
            f"##DELTAX={value} disagrees with (LASTX - FIRSTX) / (NPOINTS - 1) = {grid:g} "
            f"(the last X would move by {drift:g}; tolerance X_CHECK_STEPS={X_CHECK_STEPS} "
            "steps); check ##FIRSTX=, ##LASTX=, ##NPOINTS= and ##DELTAX=",
            source, line,
        )


def _check_firsty(blk, y0: float, yfactor: float, source: str) -> None:
    if "FIRSTY" not in blk.labels:
        return
    firsty = number(blk, "FIRSTY", source)
    value, line = blk.labels["FIRSTY"]
    # a writer rounds Y = FIRSTY / YFACTOR to a whole number: half a step, plus printing
    tol = abs(yfactor) / 2 + resolution(value) / 2 + FIRSTY_RTOL * max(abs(firsty), abs(y0))
    if abs(firsty - y0) > tol:
        yline = blk.labels.get("YFACTOR", (None, None))[1]
        raise SpectrumFormatError(
            f"##FIRSTY={value} but the first decoded Y is {y0:g} (Y x YFACTOR={yfactor:g}"
            + (f" from line {yline}" if yline else "")
            + f"); a damaged ##YFACTOR= or data line? (tolerance half a YFACTOR step, "
            f"FIRSTY_RTOL={FIRSTY_RTOL})",
            source, line,
        )


def decode_pairs(blk, source: str, limits: ReadLimits):
    """Decode ``(XY..XY)`` / ``(XYW..XYW)`` tables -> (x, y, widths, kind, line_of)."""
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
        check_digits(text, source, limits, lineno)
        if "?" in text:
            raise SpectrumFormatError(f"missing value '?' in ##{label}=", source, lineno)
        rest = AFFN_NUMBER.sub(" ", text)
        bad = re.sub(r"[\s,;]", "", rest)
        if bad:
            raise SpectrumFormatError(
                f"unexpected text {bad[:20]!r} in ##{label}=; expected numbers", source, lineno
            )
        found = [float(t) for t in AFFN_NUMBER.findall(text)]
        if len(values) + len(found) > width * limits.max_points:
            raise over_limit(f"##{label}= with more points", "max_points", limits.max_points,
                             source, lineno)
        values.extend(found)
        lines_of.extend([lineno] * len(found))
    if len(values) % width:
        raise SpectrumFormatError(
            f"##{label}={form} holds {len(values)} numbers, not a multiple of {width}",
            source, lines_of[-1] if lines_of else start,
        )
    arr = np.asarray(values, dtype=float).reshape(-1, width)
    npoints = number(blk, "NPOINTS", source)
    if npoints is not None and npoints != arr.shape[0]:
        raise SpectrumFormatError(
            f"##NPOINTS={int(npoints)} declared but ##{label}= holds {arr.shape[0]} points",
            source, start,
        )
    xfactor = number(blk, "XFACTOR", source, 1.0)
    yfactor = number(blk, "YFACTOR", source, 1.0)
    x = arr[:, 0] * xfactor
    y = arr[:, 1] * yfactor
    w = arr[:, 2] * xfactor if width == 3 and form == "(XYW..XYW)" else None
    kind = "peaks" if label == "PEAKTABLE" else "profile"
    rows = np.asarray(lines_of[::width], dtype=np.int64)
    if arr.shape[0]:
        _check_firsty(blk, float(y[0]), 0.0, source)
    return x, y, w, kind, lambda i, _r=rows: int(_r[i]) if 0 <= i < _r.size else None
