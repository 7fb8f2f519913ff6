"""Writers: JCAMP-DX (every XYDATA form, XYPOINTS, PEAK TABLE, LINK) and delimited text.

The demo-data generator and the tests write files with these; the readers
read them back exactly (up to the YFACTOR quantisation of the compressed forms,
which the caller controls with ``yfactor=``).
"""

from __future__ import annotations

import os
from collections.abc import Sequence

import numpy as np

from ..errors import SpectrumError
from ..fileio import atomic_write_bytes
from .model import Spectrum

__all__ = ["write_jcamp", "write_jcamp_link", "write_csv", "JCAMP_FORMS", "JCAMP_LINE_LENGTH"]

#: the forms :func:`write_jcamp` knows; "DUP" is SQZ + DIF + DUP (often called DIFDUP)
JCAMP_FORMS = ("AFFN", "PAC", "SQZ", "DIF", "DUP", "XYPOINTS", "PEAK TABLE")
#: JCAMP-DX lines are at most 80 characters
JCAMP_LINE_LENGTH = 80
_EVEN_TOL = 1e-6  # relative spread of x steps tolerated by XYDATA

_DATA_TYPE = {
    "ir": "INFRARED SPECTRUM", "raman": "RAMAN SPECTRUM", "nmr": "NMR SPECTRUM",
    "uvvis": "UV/VIS SPECTRUM", "mass": "MASS SPECTRUM",
}
_XUNITS = {"cm-1": "1/CM", "nm": "NANOMETERS", "ppm": "PPM", "m/z": "M/Z", "Hz": "HZ"}
_YUNITS = {
    "absorbance": "ABSORBANCE", "transmittance": "TRANSMITTANCE",
    "percent transmittance": "TRANSMITTANCE", "intensity": "ARBITRARY UNITS",
}
_SQZ_POS = "@ABCDEFGHI"
_SQZ_NEG = "@abcdefghi"
_DIF_POS = "%JKLMNOPQR"
_DIF_NEG = "%jklmnopqr"
_DUP = "STUVWXYZs"


def _sqz(v: int) -> str:
    s = str(abs(v))
    return (_SQZ_NEG if v < 0 else _SQZ_POS)[int(s[0])] + s[1:]


def _dif(v: int) -> str:
    s = str(abs(v))
    return (_DIF_NEG if v < 0 else _DIF_POS)[int(s[0])] + s[1:]


def _dup(count: int) -> str:
    s = str(count)
    return _DUP[int(s[0]) - 1] + s[1:]


def _fmt(v: float) -> str:
    r = repr(float(v))
    return r[:-2] if r.endswith(".0") else r


def _fmt_x(v: float) -> str:
    """An abscissa without exponent: in compressed lines E and e are SQZ characters."""
    return np.format_float_positional(float(v), trim="-")


def _ints(y: np.ndarray, yfactor: float) -> list[int]:
    q = np.rint(y / yfactor)
    if np.any(np.abs(q) > 2**53):
        raise SpectrumError(f"yfactor={yfactor!r} is too small: |Y| would exceed 2**53")
    return [int(v) for v in q]


def _auto_yfactor(y: np.ndarray) -> float:
    top = float(np.max(np.abs(y))) if y.size else 0.0
    if top == 0:
        return 1.0
    return float(10.0 ** (np.floor(np.log10(top)) - 7))


def _xydata_lines(x: np.ndarray, Y: list[int], form: str) -> list[str]:
    """Lines of (X++(Y..Y)) data in one of the forms; X is written as is (XFACTOR=1)."""
    n = len(Y)
    width = JCAMP_LINE_LENGTH
    lines: list[str] = []
    token = {
        "AFFN": lambda v: " " + str(v),
        "PAC": lambda v: ("+" if v >= 0 else "") + str(v),
        "SQZ": _sqz,
    }.get(form)
    if token is not None:
        i = 0
        while i < n:
            line = _fmt_x(x[i])
            j = i
            while j < n:
                tok = token(Y[j])
                if len(line) + len(tok) > width and j > i:
                    break
                line += tok
                j += 1
            lines.append(line)
            i = j
        return lines
    # DIF and DUP: first ordinate SQZ, then differences; the last ordinate of a line that
    # ends in DIF is repeated at the start of the next line as the Y-check value
    use_dup = form == "DUP"
    i = 0
    while True:
        line = _fmt_x(x[i]) + _sqz(Y[i])
        j = i  # index of the last point on this line
        while j + 1 < n:
            d = Y[j + 1] - Y[j]
            run = 1
            if use_dup:
                while j + 1 + run < n and Y[j + 1 + run] - Y[j + run] == d:
                    run += 1
            while run >= 1:
                tok = _dif(d) + (_dup(run) if run > 1 else "")
                if len(line) + len(tok) <= width:
                    break
                run -= 1 if run > 2 else run  # try the single difference, then give up
            if run < 1:
                break
            line += tok
            j += run
        lines.append(line)
        if j == i and j + 1 < n:
            raise SpectrumError("a JCAMP-DX line cannot hold one value; x or y too long")
        if j + 1 >= n:
            if j > i:
                lines.append(_fmt_x(x[j]) + _sqz(Y[j]))  # final Y-check line
            return lines
        i = j


def _header(s: Spectrum, title: str | None, extra: Sequence[tuple[str, str]] = ()) -> list[str]:
    out = [
        f"##TITLE={title or s.meta.get('title') or 'cageprint spectrum'}",
        "##JCAMP-DX=5.01",
        f"##DATA TYPE={_DATA_TYPE[s.technique]}" + (" PEAK TABLE" if s.kind == "peaks" and
                                                    s.technique != "mass" else ""),
        "##ORIGIN=cageprint",
        f"##OWNER={s.meta.get('owner', 'public domain')}",
    ]
    if s.meta.get("sample"):
        out.append(f"##SAMPLE DESCRIPTION={s.meta['sample']}")
    out.extend(f"##{k}={v}" for k, v in extra)
    return out


def _to_file(text: str, path) -> bytes:
    data = text.encode("utf-8")  # ASCII for every JCAMP-DX label and table; UTF-8 titles
    if path is not None:
        atomic_write_bytes(path, data)
    return data


def _block_lines(s: Spectrum, form: str, title: str | None, yfactor: float | None,
                 x_unit: str | None, descending: bool, *, block_id=None) -> list[str]:
    form = form.upper().replace("_", " ")
    form = {"DIFDUP": "DUP", "PEAKTABLE": "PEAK TABLE"}.get(form, form)
    if form not in JCAMP_FORMS:
        raise SpectrumError(f"form={form!r} is not one of {', '.join(JCAMP_FORMS)}")
    x = np.asarray(s.x, dtype=float)
    y = np.asarray(s.y, dtype=float)
    unit = s.x_unit
    extra: list[tuple[str, str]] = []
    if block_id is not None:
        extra.append(("BLOCK_ID", str(block_id)))
    if s.technique == "nmr":
        if s.meta.get("observe_mhz"):
            extra.append((".OBSERVE FREQUENCY", _fmt(s.meta["observe_mhz"])))
        extra.append((".OBSERVE NUCLEUS", "^13C"))
        if s.meta.get("solvent"):
            extra.append((".SOLVENT NAME", str(s.meta["solvent"])))
        if x_unit == "Hz":
            mhz = s.meta.get("observe_mhz")
            if not mhz:
                raise SpectrumError("x_unit='Hz' needs meta['observe_mhz'] on the spectrum")
            x = x * float(mhz)
            unit = "Hz"
    elif x_unit not in (None, s.x_unit):
        raise SpectrumError(f"x_unit={x_unit!r}: only NMR spectra can be written in Hz")
    w = s.widths
    if descending:
        x, y = x[::-1], y[::-1]
        w = w[::-1] if w is not None else None
    head = _header(s, title, extra)
    head += [f"##XUNITS={_XUNITS.get(unit, unit.upper())}",
             f"##YUNITS={_YUNITS.get(s.y_unit, s.y_unit.upper())}"]
    n = x.size
    if form in ("XYPOINTS", "PEAK TABLE"):
        yf = 1.0 if yfactor is None else float(yfactor)
        head += ["##XFACTOR=1", f"##YFACTOR={_fmt(yf)}", f"##NPOINTS={n}"]
        if form == "PEAK TABLE" and w is not None:
            head.append("##PEAK TABLE=(XYW..XYW)")
            rows = [f"{_fmt(a)},{_fmt(b / yf)},{_fmt(c)}" for a, b, c in zip(x, y, w,
                                                                             strict=True)]
        else:
            head.append(f"##{form}=(XY..XY)")
            rows = [f"{_fmt(a)},{_fmt(b / yf)}" for a, b in zip(x, y, strict=True)]
        # several pairs a line, space separated, within the line length
        lines, cur = [], ""
        for r in rows:
            if cur and len(cur) + 1 + len(r) > JCAMP_LINE_LENGTH:
                lines.append(cur)
                cur = r
            else:
                cur = f"{cur} {r}" if cur else r
        if cur:
            lines.append(cur)
        return head + lines + ["##END="]
    if s.kind != "profile":
        raise SpectrumError(f"form={form!r} needs a profile spectrum; use form='PEAK TABLE'")
    if n > 1:
        steps = np.diff(x)
        if np.ptp(steps) > _EVEN_TOL * abs(steps.mean()):
            raise SpectrumError(
                "x is not evenly spaced (XYDATA needs a constant step); use form='XYPOINTS'"
            )
    if form == "AFFN" and yfactor is None:
        yf = 1.0
        Y = None
    else:
        yf = float(yfactor) if yfactor is not None else _auto_yfactor(y)
        Y = _ints(y, yf)
    head += [
        "##XFACTOR=1", f"##YFACTOR={_fmt(yf)}", f"##FIRSTX={_fmt(x[0])}",
        f"##LASTX={_fmt(x[-1])}", f"##NPOINTS={n}", f"##FIRSTY={_fmt(y[0])}",
    ]
    if n > 1:
        head.append(f"##DELTAX={_fmt((x[-1] - x[0]) / (n - 1))}")
    head.append("##XYDATA=(X++(Y..Y))")
    if Y is None:  # plain AFFN with exact decimal ordinates
        lines, i = [], 0
        while i < n:
            line, j = _fmt_x(x[i]), i
            while j < n and (len(line) + 1 + len(_fmt(y[j])) <= JCAMP_LINE_LENGTH or j == i):
                line += " " + _fmt(y[j])
                j += 1
            lines.append(line)
            i = j
    else:
        lines = _xydata_lines(x, Y, form)
    return head + lines + ["##END="]


def write_jcamp(
    spectrum: Spectrum,
    path: str | os.PathLike | None = None,
    *,
    form: str | None = None,
    title: str | None = None,
    yfactor: float | None = None,
    x_unit: str | None = None,
    descending: bool = False,
) -> bytes:
    """Write a spectrum as JCAMP-DX 5.01 text; return the bytes (and write ``path`` if given).

    Parameters
    ----------
    form : str, optional
        ``"AFFN"``, ``"PAC"``, ``"SQZ"``, ``"DIF"``, ``"DUP"`` (SQZ+DIF+DUP)
        for ``##XYDATA=(X++(Y..Y))`` (evenly spaced x); ``"XYPOINTS"``; or
        ``"PEAK TABLE"`` (the default for peak lists; ``"DUP"`` otherwise).
    yfactor : float, optional
        Ordinates are written as integers Y with y = Y * yfactor (compressed
        forms); default a power of ten giving about 8 significant digits.
        AFFN without ``yfactor`` writes exact decimal ordinates.
    x_unit : {"Hz"}, optional
        NMR only: write x in Hz using ``meta["observe_mhz"]``.
    descending : bool
        Write x from high to low (as IR files often are).

    Examples
    --------
    >>> s = Spectrum([400.0, 402.0, 404.0], [0.1, 0.25, 0.2], technique="ir",
    ...              y_unit="absorbance")
    >>> print(write_jcamp(s, form="DIF", yfactor=0.01).decode().split("##XYDATA")[1])
    =(X++(Y..Y))
    400A0J5n
    404B0
    ##END=
    <BLANKLINE>
    """
    form = form or ("PEAK TABLE" if spectrum.kind == "peaks" else "DUP")
    lines = _block_lines(spectrum, form, title, yfactor, x_unit, descending)
    return _to_file("\n".join(lines) + "\n", path)


def write_jcamp_link(
    spectra: Sequence[Spectrum],
    path: str | os.PathLike | None = None,
    *,
    forms: Sequence[str] | str | None = None,
    titles: Sequence[str] | None = None,
    title: str = "cageprint link",
    yfactor: float | None = None,
) -> bytes:
    """Write several spectra as one multi-block JCAMP-DX LINK file.

    Examples
    --------
    >>> a = Spectrum([1.0, 2.0], [1.0, 2.0], technique="ir")
    >>> text = write_jcamp_link([a, a], forms="AFFN", titles=["one", "two"]).decode()
    >>> text.count("##TITLE="), "##BLOCKS=2" in text
    (3, True)
    """
    if not spectra:
        raise SpectrumError("write_jcamp_link needs at least one spectrum")
    if forms is None or isinstance(forms, str):
        forms = [forms] * len(spectra)
    titles = list(titles) if titles is not None else [None] * len(spectra)
    if len(forms) != len(spectra) or len(titles) != len(spectra):
        raise SpectrumError("forms and titles must have one entry per spectrum")
    lines = [f"##TITLE={title}", "##JCAMP-DX=5.01", "##DATA TYPE=LINK",
             f"##BLOCKS={len(spectra)}"]
    for k, (s, f, t) in enumerate(zip(spectra, forms, titles, strict=True), start=1):
        f = f or ("PEAK TABLE" if s.kind == "peaks" else "DUP")
        lines += _block_lines(s, f, t, yfactor, None, False, block_id=k)
    lines.append("##END=")
    return _to_file("\n".join(lines) + "\n", path)


def write_csv(
    spectrum: Spectrum,
    path: str | os.PathLike | None = None,
    *,
    delimiter: str = ",",
    decimal: str = ".",
    header: bool = True,
    comments: Sequence[str] = (),
) -> bytes:
    """Write a spectrum as delimited text (x, y[, width]) with a unit-bearing header.

    Values are written with Python's shortest round-trip repr, so the
    delimited reader gets the same floats back.

    Examples
    --------
    >>> s = Spectrum([720.0, 721.0], [100.0, 65.5], technique="mass")
    >>> print(write_csv(s, delimiter=";", decimal=",").decode())
    m/z (m/z);intensity
    720;100
    721;65,5
    <BLANKLINE>
    """
    if decimal == "," and delimiter == ",":
        raise SpectrumError("decimal=',' needs another delimiter (';' or tab)")
    cols = [spectrum.x, spectrum.y]
    names = [f"{_xname(spectrum)} ({spectrum.x_unit})", spectrum.y_unit]
    if spectrum.widths is not None:
        cols.append(spectrum.widths)
        names.append(f"width ({spectrum.x_unit})")
    out = [f"# {c}" for c in comments]
    if header:
        out.append(delimiter.join(names))
    strs = [[_fmt(v) for v in c] for c in cols]
    if decimal == ",":
        strs = [[v.replace(".", ",") for v in c] for c in strs]
    out.extend(delimiter.join(row) for row in zip(*strs, strict=True))
    return _to_file("\n".join(out) + "\n", path)


def _xname(s: Spectrum) -> str:
    return {"mass": "m/z", "ir": "wavenumber", "raman": "raman shift", "nmr": "shift",
            "uvvis": "wavelength"}[s.technique]
