"""Plotly figure builders and HTML tables for the notebooks.

Every builder takes results already computed elsewhere (arrays, spectra,
fingerprints, rows) and returns a ``plotly.graph_objects.Figure`` or an HTML
string; nothing here computes science.  This is the only module outside
:mod:`cageprint.widgets` that imports plotly.

Stable hooks for tests and the browser: tables carry ``class="cp-table"`` and
``data-cp-table="<name>"``; rows carry ``data-key``; figures carry
``layout.meta = {"cp": "<name>"}``.
"""

from __future__ import annotations

import html
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import numpy as np
import plotly.graph_objects as go

__all__ = [
    "PALETTE",
    "orbit_colours",
    "orbit_styles",
    "ORBIT_PALETTE",
    "ORBIT_SYMBOLS",
    "ORBIT_SYMBOLS_FLAT",
    "spectrum_figure",
    "stick_figure",
    "level_figure",
    "cage3d_figure",
    "schlegel_figure",
    "html_table",
    "peak_arrays",
    "trace_xy",
]

#: cageprint's own qualitative colours (orbits, candidates); repeated when exhausted
PALETTE: tuple[str, ...] = (
    "#2a6f97", "#e07a1f", "#4d9a43", "#b8336a", "#7b5ea7", "#9c6b30", "#d45d9a", "#5c6b73",
    "#a3a52b", "#1f9c9c", "#c43b2f", "#3d4f9f", "#6aa4c8", "#f0a868", "#8fc785", "#d990b0",
)
_INK = "#26323a"
_MEASURED = "#34495e"
_PEAK = "#d1495b"
_EXCLUDED = "rgba(120,120,120,0.15)"
_BASE_LAYOUT = dict(
    template="simple_white",
    margin=dict(l=60, r=20, t=50, b=50),
    font=dict(family="Helvetica, Arial, sans-serif", size=12, color=_INK),
)


def orbit_colours(k: int) -> list[str]:
    """``k`` colours for ``k`` orbits, in the kit's palette order.

    Examples
    --------
    >>> orbit_colours(2)
    ['#2a6f97', '#e07a1f']
    """
    return [PALETTE[i % len(PALETTE)] for i in range(k)]


#: orbit colours, picked here by a greedy max-min search over a 9-level sRGB grid
#: (CAM02-UCS lightness 30-72, chroma above 8): the smallest CAM02-UCS distance between any
#: two is 12.2, under normal vision and under simulated deuteranomaly, protanomaly and
#: tritanomaly at full severity (the Machado, Oliveira & Fernandes 2009 model)
ORBIT_PALETTE: tuple[str, ...] = (
    "#bf0060", "#9f9fff", "#bf9f00", "#4000ff", "#604000", "#ff609f", "#408000", "#00bfbf",
    "#80609f", "#2080ff", "#800080", "#609f60", "#006040",
)
#: marker shapes of 3D traces (all that scatter3d has); a shape block per orbit size
ORBIT_SYMBOLS: tuple[str, ...] = ("circle", "diamond", "square", "cross", "x", "circle-open",
                                  "diamond-open", "square-open")
#: the same blocks in the flat view, filled throughout (an open marker there would take the
#: white outline every marker has)
ORBIT_SYMBOLS_FLAT: tuple[str, ...] = ORBIT_SYMBOLS[:5] + ("triangle-up", "star", "hexagon")


def orbit_styles(orbits: Sequence[Sequence[int]], flat: bool = False) -> list[tuple[str, str]]:
    """A (colour, marker) pair per orbit, no two alike for up to 104 orbits.

    Orbits of one size share a marker shape (a new shape every 13 orbits of that
    size) and differ in colour (:data:`ORBIT_PALETTE`, told apart under the common
    colour-vision deficiencies too), so the size class reads from the shape; when
    the size classes need more than the 8 shapes, pairs run through the shapes in
    orbit order instead (still distinct up to 13 x 8 = 104 orbits, enough for a
    C1 cage of 100 atoms).  ``flat`` takes the flat view's filled shapes
    (:data:`ORBIT_SYMBOLS_FLAT`) in place of the 3D ones.

    Examples
    --------
    >>> orbit_styles([(0, 1), (2,), (3, 4)])
    [('#bf0060', 'circle'), ('#bf0060', 'diamond'), ('#9f9fff', 'circle')]
    """
    palette = ORBIT_PALETTE
    k = len(palette)
    shapes = ORBIT_SYMBOLS_FLAT if flat else ORBIT_SYMBOLS
    sizes = sorted({len(o) for o in orbits}, reverse=True)
    counts = {s: sum(len(o) == s for o in orbits) for s in sizes}
    blocks, start = {}, 0
    for s in sizes:
        blocks[s] = start
        start += -(-counts[s] // k)
    seen: dict[int, int] = {}
    out = []
    for i, o in enumerate(orbits):
        if start <= len(shapes):
            j = seen.get(len(o), 0)
            seen[len(o)] = j + 1
            out.append((palette[j % k], shapes[blocks[len(o)] + j // k]))
        else:
            out.append((palette[i % k], shapes[(i // k) % len(shapes)]))
    return out


def peak_arrays(peaks: Any) -> tuple[np.ndarray, np.ndarray]:
    """Positions and heights from a peak result, a list of peaks, or an ``(x, y)`` pair.

    Accepts an object with ``positions``/``heights`` arrays (or ``x``/``y``),
    an iterable of objects or mappings with ``position`` and ``height``, or a
    pair of arrays.

    Examples
    --------
    >>> peak_arrays(([1.0, 2.0], [5.0, 6.0]))[0].tolist()
    [1.0, 2.0]
    >>> peak_arrays([{"position": 3.0, "height": 1.0}])[1].tolist()
    [1.0]
    """
    if peaks is None:
        return np.zeros(0), np.zeros(0)
    for px, py in (("positions", "heights"), ("x", "y")):
        if hasattr(peaks, px) and hasattr(peaks, py):
            return np.asarray(getattr(peaks, px), float), np.asarray(getattr(peaks, py), float)
    if hasattr(peaks, "peaks"):
        return peak_arrays(peaks.peaks)
    if isinstance(peaks, tuple) and len(peaks) == 2 and np.ndim(peaks[0]) == 1:
        return np.asarray(peaks[0], float), np.asarray(peaks[1], float)
    xs, ys = [], []
    for p in peaks:
        if isinstance(p, Mapping):
            xs.append(p["position"])
            ys.append(p.get("height", 0.0))
        else:
            xs.append(p.position)
            ys.append(getattr(p, "height", 0.0))
    return np.asarray(xs, float), np.asarray(ys, float)


def trace_xy(spectrum) -> tuple[np.ndarray, np.ndarray]:
    """x and y to draw: the profile itself, or one stick per line of a peak list.

    Examples
    --------
    >>> from cageprint.spectra import Spectrum
    >>> x, y = trace_xy(Spectrum([1.0, 2.0], [3.0, 4.0], technique="ir", kind="peaks"))
    >>> x.tolist()[:3], y.tolist()[:2]
    ([1.0, 1.0, nan], [0.0, 3.0])
    """
    x = np.asarray(spectrum.x, float)
    y = np.asarray(spectrum.y, float)
    if spectrum.kind != "peaks":
        return x, y
    nan = np.full_like(x, np.nan)
    return (np.column_stack([x, x, nan]).ravel(),
            np.column_stack([np.zeros_like(y), y, nan]).ravel())


def _axis_title(spectrum) -> tuple[str, str]:
    xu = {"ppm": "δ / ppm", "cm-1": "wavenumber / cm⁻¹", "nm": "wavelength / nm", "m/z": "m/z"}
    return xu.get(spectrum.x_unit, spectrum.x_unit), spectrum.y_unit


def spectrum_figure(
    spectrum,
    peaks: Any = None,
    title: str | None = None,
    excluded: Iterable[tuple[float, float]] = (),
    region: tuple[float, float] | None = None,
    name: str = "spectrum",
) -> go.Figure:
    """A measured spectrum with its picked peaks marked.

    Trace 0 is the spectrum, trace 1 the peak markers (always present, maybe
    empty), so widgets can update both in place.  ``excluded`` x-ranges (solvent
    lines, artefact regions) are shaded; ``region`` limits the x axis.

    Examples
    --------
    >>> from cageprint.spectra import Spectrum
    >>> s = Spectrum([140, 145, 150], [0, 1, 0], technique="nmr")
    >>> fig = spectrum_figure(s, peaks=([145.0], [1.0]))
    >>> [t.name for t in fig.data], fig.layout.xaxis.autorange
    (['spectrum', 'peaks (1)'], 'reversed')
    """
    px, py = peak_arrays(peaks)
    if spectrum.kind != "peaks" and px.size:
        # picked heights are above the fitted baseline; the marker sits on the drawn curve
        py = np.interp(px, np.asarray(spectrum.x, float), np.asarray(spectrum.y, float))
    fig = go.Figure(layout=_BASE_LAYOUT)
    tx, ty = trace_xy(spectrum)
    fig.add_scatter(x=tx, y=ty, mode="lines", name=name,
                    line=dict(color=_MEASURED, width=1.2))
    fig.add_scatter(x=px, y=py, mode="markers", name=f"peaks ({px.size})",
                    marker=dict(symbol="triangle-down", size=9, color=_PEAK),
                    hovertemplate="%{x:.2f}<extra>peak</extra>")
    xt, yt = _axis_title(spectrum)
    fig.update_layout(title=title or spectrum.meta.get("title", spectrum.technique),
                      xaxis_title=xt, yaxis_title=yt, meta={"cp": "spectrum"}, height=380,
                      showlegend=True, legend=dict(orientation="h", y=1.02, x=1, xanchor="right"))
    for lo, hi in excluded:
        fig.add_vrect(x0=lo, x1=hi, fillcolor=_EXCLUDED, line_width=0, layer="below")
    if region is not None:
        fig.update_xaxes(range=list(region))
    if spectrum.technique == "nmr":  # the trade draws chemical shift decreasing to the right
        fig.update_xaxes(autorange="reversed")
        if region is not None:
            fig.update_xaxes(range=[max(region), min(region)], autorange=False)
    return fig


def stick_figure(
    spectrum,
    sticks: Mapping[str, tuple[Sequence[float], Sequence[float]]],
    peaks: Any = None,
    title: str = "measured and predicted",
    note: str = "",
    region: tuple[float, float] | None = None,
) -> go.Figure:
    """Measured spectrum on top, each candidate's predicted sticks in its own panel below.

    ``sticks`` maps a candidate label to ``(positions, relative intensities)``.  Every
    panel shares the x axis; a candidate's sticks rise from zero to their intensity
    relative to its largest (1 = the biggest orbit), so no candidate hides another.
    ``note`` is printed under the title.

    Examples
    --------
    >>> from cageprint.spectra import Spectrum
    >>> s = Spectrum([140, 145, 150], [0, 1, 0], technique="nmr")
    >>> fig = stick_figure(s, {"C60 Ih": ([143.0], [1.0])})
    >>> len(fig.data), fig.layout.yaxis2.title.text
    (3, 'C60 Ih')
    """
    from plotly.subplots import make_subplots  # lazy: only this figure has panels

    base = spectrum_figure(spectrum, peaks, title=title, region=region)
    k = len(sticks)
    fig = make_subplots(rows=1 + k, cols=1, shared_xaxes=True, vertical_spacing=0.03,
                        row_heights=[0.55] + [0.45 / k] * k if k else [1.0])
    fig.update_layout(_BASE_LAYOUT)
    for t in base.data:
        fig.add_trace(t, row=1, col=1)
    fig.update_yaxes(title_text=base.layout.yaxis.title.text, row=1, col=1)
    for row, (label, (pos, inten)) in enumerate(sticks.items(), start=2):
        pos = np.asarray(pos, float)
        inten = np.asarray(inten, float)
        top = float(inten.max()) if inten.size and inten.max() > 0 else 1.0
        xs = np.repeat(pos, 3)
        ys = np.column_stack([np.zeros_like(pos), inten / top, np.full_like(pos, np.nan)])
        fig.add_scatter(x=xs, y=ys.ravel(), mode="lines", name=f"predicted: {label}",
                        line=dict(color=PALETTE[(row - 2) % len(PALETTE)], width=2),
                        connectgaps=False, hoverinfo="x+name", row=row, col=1)
        fig.update_yaxes(title_text=label, range=[0, 1.1], tickvals=[0, 0.5, 1],
                         title_font=dict(size=11), row=row, col=1)
    xaxis = base.layout.xaxis
    fig.update_xaxes(autorange=xaxis.autorange, range=xaxis.range)
    fig.update_xaxes(title_text=xaxis.title.text, row=1 + k, col=1)
    head = html.escape(str(base.layout.title.text or ""))
    if note:
        head += f"<br><span style='font-size:11px'>{html.escape(note)}</span>"
    fig.update_layout(title=dict(text=head), meta={"cp": "sticks"}, height=300 + 110 * k,
                      showlegend=True, margin=dict(l=80, r=20, t=80 if note else 60, b=50),
                      legend=dict(orientation="h", y=1.0, x=1, xanchor="right",
                                  yanchor="bottom"))
    return fig


def level_figure(levels, title: str = "Hückel π levels", homo: float | None = None,
                 lumo: float | None = None) -> go.Figure:
    """Energy-level diagram from ``(energy_beta, degeneracy, irrep, occupancy)`` tuples.

    Energies are λ in units of β (E = α + λβ, β < 0): the y axis shows λ itself and
    runs downwards, so bonding levels (λ > 0) sit low on the page and every tick, bar and
    label reads the same λ.  A ``g``-fold level is drawn as ``g`` short bars side by
    side; filled levels dark, empty ones light; HOMO and LUMO labels sit beside their bars.

    Examples
    --------
    >>> fig = level_figure([(0.618, 5, "hu", 10), (-0.139, 3, "t1u", 0)])
    >>> fig.layout.yaxis.title.text
    'λ (units of β; bonding down)'
    """
    xs, ys, cols, text = [], [], [], []
    for lam, deg, irrep, occ in levels:
        deg = int(deg)
        for j in range(deg):
            x0 = j - (deg - 1) / 2
            xs += [x0 - 0.35, x0 + 0.35, None]
            ys += [lam, lam, None]
        cols.append("#1b2a36" if occ else "#9fb3c2")
        text.append(f"{irrep or ''} λ={lam:.3f} ×{deg} occ {occ}")
    fig = go.Figure(layout=_BASE_LAYOUT)
    start = 0
    for (_lam, deg, _irrep, _occ), col, t in zip(levels, cols, text, strict=True):
        n = 3 * int(deg)
        fig.add_scatter(x=xs[start:start + n], y=ys[start:start + n], mode="lines",
                        line=dict(color=col, width=3), showlegend=False, hoverinfo="text",
                        hovertext=t)
        start += n
    for val, label, shift in ((homo, "HOMO", -9), (lumo, "LUMO", 9)):
        if val is not None:  # HOMO label just below its level, LUMO just above (gap 0 too)
            width = max([(int(d) - 1) / 2 for lam, d, _i, _o in levels
                         if abs(lam - val) < 1e-6] or [0.0])
            fig.add_annotation(x=width + 0.45, y=val, text=f"{label} λ={val:.3f}",
                               showarrow=False, xanchor="left", yshift=shift)
    fig.update_layout(title=title, yaxis_title="λ (units of β; bonding down)",
                      yaxis=dict(autorange="reversed"),
                      xaxis=dict(visible=False, range=[-6, 8]), height=520,
                      meta={"cp": "levels"})
    return fig


def _bond_lines(coords: np.ndarray, bonds) -> list[np.ndarray]:
    b = np.asarray(bonds, int).reshape(-1, 2)
    out = []
    for d in range(coords.shape[1]):
        seg = np.full((b.shape[0], 3), np.nan)
        seg[:, 0] = coords[b[:, 0], d]
        seg[:, 1] = coords[b[:, 1], d]
        out.append(seg.ravel())
    return out


def _orbit_label(k: int, orbit: Sequence[int]) -> str:
    return f"orbit {k + 1}: {len(orbit)} C"


def _orbit_hover(k: int, orbit: Sequence[int], total: int) -> list[str]:
    # every atom says its orbit and the orbit's size: one orbit, one 13C line of that intensity
    return [f"C{i + 1} · orbit {k + 1} of {total} · {len(orbit)} C, one 13C line"
            for i in orbit]


def cage3d_figure(xyz, bonds, orbits: Sequence[Sequence[int]], title: str = "") -> go.Figure:
    """The cage in 3D with its carbon orbits coloured; legend = orbit sizes.

    Examples
    --------
    >>> xyz = [[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0]]
    >>> fig = cage3d_figure(xyz, [(0, 2), (1, 3)], [(0, 1), (2, 3)])
    >>> [t.name for t in fig.data]
    ['bonds', 'orbit 1: 2 C', 'orbit 2: 2 C']
    """
    xyz = np.asarray(xyz, float)
    lx, ly, lz = _bond_lines(xyz, bonds)
    fig = go.Figure(layout=_BASE_LAYOUT)
    fig.add_scatter3d(x=lx, y=ly, z=lz, mode="lines", name="bonds", hoverinfo="skip",
                      line=dict(color="#8a969e", width=3), showlegend=False)
    for k, (orb, (col, sym)) in enumerate(zip(orbits, orbit_styles(orbits), strict=True)):
        idx = np.asarray(orb, int)
        fig.add_scatter3d(x=xyz[idx, 0], y=xyz[idx, 1], z=xyz[idx, 2], mode="markers",
                          name=_orbit_label(k, orb), marker=dict(size=5, color=col, symbol=sym),
                          hovertext=_orbit_hover(k, orb, len(orbits)), hoverinfo="text")
    axis = dict(visible=False)
    fig.update_layout(title=title, height=480, meta={"cp": "cage3d"},
                      scene=dict(xaxis=axis, yaxis=axis, zaxis=axis, aspectmode="data"),
                      legend=dict(title="carbon orbits"))
    return fig


def schlegel_figure(xy, bonds, orbits: Sequence[Sequence[int]], title: str = "") -> go.Figure:
    """Flat (Schlegel-type) drawing with the same orbit colours as :func:`cage3d_figure`.

    Examples
    --------
    >>> fig = schlegel_figure([[0, 0], [1, 0], [0, 1]], [(0, 1), (1, 2)], [(0,), (1, 2)])
    >>> fig.layout.meta["cp"]
    'schlegel'
    """
    xy = np.asarray(xy, float)
    lx, ly = _bond_lines(xy, bonds)
    fig = go.Figure(layout=_BASE_LAYOUT)
    fig.add_scatter(x=lx, y=ly, mode="lines", line=dict(color="#8a969e", width=1.2),
                    hoverinfo="skip", showlegend=False, name="bonds")
    for k, (orb, (col, sym)) in enumerate(zip(orbits, orbit_styles(orbits, flat=True),
                                              strict=True)):
        idx = np.asarray(orb, int)
        fig.add_scatter(x=xy[idx, 0], y=xy[idx, 1], mode="markers", name=_orbit_label(k, orb),
                        marker=dict(size=8, color=col, symbol=sym,
                                    line=dict(width=0.5, color="white")),
                        hovertext=_orbit_hover(k, orb, len(orbits)), hoverinfo="text")
    fig.update_layout(title=title, height=480, meta={"cp": "schlegel"},
                      xaxis=dict(visible=False), legend=dict(title="carbon orbits"),
                      yaxis=dict(visible=False, scaleanchor="x", scaleratio=1))
    return fig


#: a few rules so the tables read the same in widgets, notebooks and HTML exports
_TABLE_STYLE = (
    "<style>.cp-table{border-collapse:collapse;font-size:12px;margin:4px 0}"
    ".cp-table th,.cp-table td{padding:2px 8px;text-align:left;vertical-align:top;"
    "line-height:1.35;"
    "border-bottom:1px solid #dde3e8}.cp-table th{border-bottom:2px solid #26323a}"
    ".cp-table caption{text-align:left;font-weight:600;padding:2px 0}"
    ".cp-table tr.cp-picked td{background:#fdf1d8}</style>"
)


def _cell(v: Any) -> str:
    if isinstance(v, float):
        return "" if np.isnan(v) else f"{v:.10g}"  # callers round; m/z keeps its decimals
    return html.escape("" if v is None else str(v))


def html_table(
    rows: Sequence[Mapping[str, Any]],
    columns: Sequence[str] | None = None,
    *,
    name: str = "table",
    key: str | None = None,
    highlight: Iterable[Any] = (),
    caption: str = "",
    max_rows: int | None = None,
) -> str:
    """An escaped HTML table with stable hooks (``cp-table``, ``data-cp-table``, ``data-key``).

    Parameters
    ----------
    rows : sequence of mappings
        One mapping per row; missing cells are left empty.
    columns : sequence of str, optional
        Column order (default: keys of the first row).
    name : str
        Value of the table's ``data-cp-table`` attribute.
    key : str, optional
        Column whose value becomes each row's ``data-key``.
    highlight : iterable
        Keys of rows to mark with class ``cp-picked``.
    caption : str
        Caption above the table (escaped).
    max_rows : int, optional
        Show at most this many rows and say how many were left out.

    Examples
    --------
    >>> print(html_table([{"a": 1, "b": "<x>"}], name="demo", key="a"))  # doctest: +ELLIPSIS
    <table class="cp-table" data-cp-table="demo" data-rows="1">...<td>&lt;x&gt;</td>...
    """
    cols = list(columns) if columns is not None else (list(rows[0]) if rows else [])
    marked = {str(h) for h in highlight}
    shown = rows if max_rows is None else rows[:max_rows]
    parts = [f'<table class="cp-table" data-cp-table="{html.escape(name)}" '
             f'data-rows="{len(rows)}">', _TABLE_STYLE]
    if caption:
        parts.append(f"<caption>{html.escape(caption)}</caption>")
    parts.append("<thead><tr>" + "".join(f"<th>{html.escape(c)}</th>" for c in cols)
                 + "</tr></thead><tbody>")
    for r in shown:
        attrs = ""
        if key is not None:
            k = str(r.get(key, ""))
            attrs = f' data-key="{html.escape(k)}"'
            if k in marked:
                attrs += ' class="cp-picked"'
        parts.append(f"<tr{attrs}>" + "".join(f"<td>{_cell(r.get(c))}</td>" for c in cols)
                     + "</tr>")
    parts.append("</tbody></table>")
    if max_rows is not None and len(rows) > max_rows:
        parts.append(f'<p class="cp-more">{len(rows) - max_rows} more rows not shown</p>')
    return "".join(parts)
