"""The assignment record (JSON) and the offline HTML report, both written atomically.

The record holds what is needed to trust and redo an assignment: the input
checksums, the thresholds and weights, the versions of the kit and its
libraries, the observations and the ranked table.  :func:`load_record`
gives it back; :func:`record_ranking` turns it into the same
:class:`~cageprint.evidence.Ranking`.

The HTML report is one self-contained file (no scripts, no fonts or styles
from the network).  Figures are inline SVG drawn here from plain data; a UI
layer may pass pre-rendered figure HTML (it must then be self-contained).
Every string that came from a user or a file is HTML-escaped.

Saving is atomic: the text goes to a temporary file in the target folder,
is flushed and fsync'ed, then ``os.replace`` puts it in place, so a crash
during a save leaves any earlier file intact.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import html
import json
import os  # noqa: F401 - kept as report.os for callers that patch it
import platform
from collections.abc import Mapping, Sequence
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path
from typing import Any

import numpy as np

from .cage import Cage
from .errors import CageprintError, SessionError
from .evidence import Ranking, label
from .fileio import atomic_write_text
from .plain import plain
from .techniques import registry
from .techniques.nmr import estimated_stick_spectrum

__all__ = [
    "RECORD_FORMAT",
    "atomic_write_text",
    "make_record",
    "save_record",
    "load_record",
    "record_ranking",
    "render_html",
    "save_report",
    "write_report",
    "svg_spectrum",
]

#: tag written into every record
RECORD_FORMAT = "cageprint-record/1"
#: at most this many candidate rows are written into the HTML table
REPORT_MAX_ROWS = 200

_LIBRARIES = ("cageprint", "numpy", "scipy", "networkx", "pandas")


def _versions() -> dict[str, str]:
    out = {"python": platform.python_version()}
    for lib in _LIBRARIES:
        try:
            out[lib] = version(lib)
        except PackageNotFoundError:
            out[lib] = "not installed"
    return out


def _checksum(spectrum: Any) -> tuple[str, str]:
    sha = dict(spectrum.meta).get("sha256")
    if sha:
        return str(sha), "file bytes"
    h = hashlib.sha256()
    h.update(np.ascontiguousarray(spectrum.x, dtype="<f8").tobytes())
    h.update(np.ascontiguousarray(spectrum.y, dtype="<f8").tobytes())
    return h.hexdigest(), "x and y arrays (float64, little-endian)"


def _plain_processing(proc: dict) -> dict:
    keep = ("settings", "points", "size", "group_delay", "p0", "p1", "phase_mode",
            "reference", "reference_offset_ppm", "from", "SI", "SF", "OFFSET", "SW_p")
    return json.loads(json.dumps({k: proc[k] for k in keep if k in proc}, default=float))


def processing_words(proc: dict) -> str:
    """One line saying how a raw FID was processed (settings, phase, reference)."""
    if proc.get("from") == "1r":
        return "the stored processed spectrum (1r) was read as it is"
    st = proc.get("settings", {})
    return (f"{st.get('window', '')} window {st.get('line_broadening_hz', 0):g} Hz, "
            f"zero filled {proc.get('points')} -> {proc.get('size')} points, group delay "
            f"{proc.get('group_delay', 0):g} points, phase p0 {proc.get('p0', 0):.1f} deg, "
            f"p1 {proc.get('p1', 0):.1f} deg ({proc.get('phase_mode', '')}), baseline "
            f"order {st.get('baseline_order', '')}, reference: {proc.get('reference', '')}")


def make_record(session: Any, *, sample: str | None = None) -> dict[str, Any]:
    """The assignment record of a session, as a JSON-ready dict.

    Parameters
    ----------
    session : Session
    sample : str, optional
        Sample name (defaults to ``session.sample``).
    """
    ranking = session.ranking
    inputs: dict[str, Any] = {}
    observations: dict[str, Any] = {}
    for t in session.techniques_with_data():
        spec = session.spectra.get(t)
        if spec is not None:
            sha, of = _checksum(spec)
            inputs[t] = {"source": session.sources.get(t, ""), "sha256": sha,
                         "sha256_of": of, "format": str(dict(spec.meta).get("format", "")),
                         "kind": spec.kind, "points": len(spec)}
            proc = dict(spec.meta).get("processing")
            if isinstance(proc, dict):  # a raw FID: how it was processed, to redo it
                inputs[t]["processing"] = _plain_processing(proc)
        obs = session.observation(t)
        if hasattr(obs, "to_dict"):
            observations[t] = obs.to_dict()
    return {
        "format": RECORD_FORMAT,
        "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "sample": session.sample if sample is None else str(sample),
        "formula": session.formula, "cage_charge": session.cage_charge, "ipr": session.ipr,
        "n_candidates": len(session.candidates),
        "inputs": inputs,
        "settings": plain({t: session.settings(t).values() for t in ranking.techniques}),
        "thresholds": plain({t: c for t in ranking.techniques
                             if (c := session.settings(t).changed())}),
        "weights": dict(ranking.weights),
        "versions": _versions(),
        "observations": observations,
        "ranking": ranking.to_dict(),
    }


def save_record(record: Mapping[str, Any], path: str | Path) -> Path:
    """Write a record as JSON, atomically."""
    text = json.dumps(plain(record), indent=1, default=str)
    return atomic_write_text(path, text + "\n")


def read_json(path: str | Path, what: str) -> Any:
    """Parse a JSON file; a SessionError names the file, the line and ``what`` it should be."""
    p = Path(path)
    try:
        return json.loads(p.read_text(encoding="utf-8"))
    except OSError as exc:
        raise SessionError(f"{p}: cannot read the {what} ({exc.strerror})") from None
    except json.JSONDecodeError as exc:
        raise SessionError(f"{p}, line {exc.lineno}: not a JSON {what} ({exc.msg})") from None
    except UnicodeDecodeError as exc:
        raise SessionError(f"{p}: not a JSON {what} (byte {exc.start}: not UTF-8)") from None
    except RecursionError:
        raise SessionError(f"{p}: not a {what}: nested too deeply to read") from None


def load_record(path: str | Path) -> dict[str, Any]:
    """Read a record written by :func:`save_record`."""
    p = Path(path)
    d = read_json(p, "record")
    if not isinstance(d, dict) or d.get("format") != RECORD_FORMAT:
        found = d.get("format") if isinstance(d, dict) else type(d).__name__
        raise SessionError(f"{p}: expected a record of format {RECORD_FORMAT!r}; "
                           f"found {found!r}")
    return d


def record_ranking(record: Mapping[str, Any]) -> Ranking:
    """The ranked table stored in a record."""
    return Ranking.from_dict(record["ranking"])


# ------------------------------------------------------------------ SVG


def svg_spectrum(x: Sequence[float], y: Sequence[float], *, kind: str = "profile",
                 marks: Sequence[float] = (), sticks: Sequence[tuple[float, float]] = (),
                 reverse_x: bool = False, x_label: str = "", title: str = "",
                 width: int = 640, height: int = 200) -> str:
    """A small inline SVG of a spectrum (polyline or sticks), marked lines, and
    optional reference sticks drawn downwards (e.g. an estimated stick spectrum).

    Examples
    --------
    >>> svg = svg_spectrum([1, 2, 3], [0, 1, 0], title="<b>")
    >>> svg.startswith("<svg") and "&lt;b&gt;" in svg
    True
    """
    xa = np.asarray(x, float)
    ya = np.asarray(y, float)
    xs = np.concatenate([xa, [s[0] for s in sticks]]) if len(sticks) else xa
    lo, hi = float(xs.min()), float(xs.max())
    if hi <= lo:
        lo, hi = lo - 1.0, hi + 1.0
    pad = 0.02 * (hi - lo)
    lo, hi = lo - pad, hi + pad
    top = float(np.max(np.abs(ya))) or 1.0
    ml, mr, mt, mb = 10, 10, 22, 30
    base = mt + (height - mt - mb) * (0.62 if len(sticks) else 1.0)
    span = base - mt

    def px(v: float) -> float:
        f = (v - lo) / (hi - lo)
        if reverse_x:
            f = 1.0 - f
        return ml + f * (width - ml - mr)

    def py(v: float) -> float:
        return base - span * v / top

    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
             f'viewBox="0 0 {width} {height}" role="img" class="spec">']
    if title:
        parts.append(f'<text x="{ml}" y="14" font-size="12">{html.escape(title)}</text>')
    parts.append(f'<line x1="{ml}" y1="{base:.1f}" x2="{width - mr}" y2="{base:.1f}" '
                 'stroke="#888" stroke-width="0.6"/>')
    if kind == "peaks":
        for xi, yi in zip(xa, ya, strict=True):
            parts.append(f'<line x1="{px(xi):.1f}" y1="{base:.1f}" x2="{px(xi):.1f}" '
                         f'y2="{py(yi):.1f}" stroke="#1f3a93" stroke-width="1.2"/>')
    else:
        step = max(1, xa.size // 1500)
        pts = " ".join(f"{px(a):.1f},{py(b):.1f}" for a, b in zip(xa[::step], ya[::step],
                                                                  strict=True))
        parts.append(f'<polyline fill="none" stroke="#1f3a93" stroke-width="0.8" '
                     f'points="{pts}"/>')
    for m in marks:
        parts.append(f'<circle cx="{px(m):.1f}" cy="{mt - 4}" r="2.2" fill="#c0392b"/>')
    if len(sticks):
        smax = max(s[1] for s in sticks) or 1.0
        down = height - mb - base - 4
        for pos, h in sticks:
            parts.append(f'<line x1="{px(pos):.1f}" y1="{base:.1f}" x2="{px(pos):.1f}" '
                         f'y2="{base + down * h / smax:.1f}" stroke="#7d8a2e" '
                         'stroke-width="1.2"/>')
    for t in np.linspace(lo + pad, hi - pad, 5):
        parts.append(f'<text x="{px(t):.1f}" y="{height - 14}" font-size="10" '
                     f'text-anchor="middle">{t:.4g}</text>')
    if x_label:
        parts.append(f'<text x="{width / 2:.0f}" y="{height - 2}" font-size="10" '
                     f'text-anchor="middle">{html.escape(x_label)}</text>')
    parts.append("</svg>")
    return "".join(parts)


# ------------------------------------------------------------------ HTML

_CSS = """
body{font-family:sans-serif;margin:1.5em;max-width:72em;color:#222}
table{border-collapse:collapse;font-size:0.85em;margin:0.5em 0}
th,td{border:1px solid #ccc;padding:2px 6px;text-align:left;vertical-align:top}
th{background:#eee}tr.out td{color:#999}tr.top td{background:#f3f8ec}
.note{color:#555;font-size:0.85em}.spec{border:1px solid #ddd;margin:4px 0}
"""


def _e(value: Any) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _x_label(t: str) -> str:
    return registry.get(t).x_unit if t in registry.keys() else ""


def _figure_for(t: str, session: Any, sticks: Sequence[tuple[float, float]]) -> str:
    spec = session.spectra[t]
    obs = session.observation(t)
    tech = registry.get(t)
    marks = [float(m) for m in tech.marks(obs)]
    x, y = spec.x, spec.y
    if t == "nmr":
        lo, hi = obs.region if hasattr(obs, "region") else (x.min(), x.max())
        m = (x >= lo - 5) & (x <= hi + 5)
        if m.sum() >= 1:
            x, y = x[m], y[m]
    title = f"{tech.label}: {session.sources.get(t, '') or 'measured'}"
    if sticks and t == "nmr":
        title += " (below: estimated stick spectrum of the first-ranked candidate)"
    return svg_spectrum(x, y, kind=spec.kind, marks=marks, sticks=sticks if t == "nmr" else (),
                        reverse_x=tech.reverse_x, x_label=_x_label(t), title=title)


def _observation_summary(t: str, o: Mapping[str, Any]) -> str:
    """One line in words about an observation record."""
    unit = _x_label(t)
    parts: list[str] = []
    if "positions" in o:
        pos = o.get("positions") or []
        word = "lines" if t == "nmr" else "bands"
        shown = ", ".join(f"{p:.5g}" for p in pos[:40])
        parts.append(f"{len(pos)} {word} counted" + (f" at {shown} {unit}" if pos else ""))
        reg = o.get("region")
        if reg:
            parts.append(f"region {reg[0]:g}-{reg[1]:g} {unit}")
    if t == "uvvis":
        onset = o.get("onset_nm")
        parts.append("no onset found" if onset is None else f"onset {onset:.0f} nm")
        bands = o.get("bands_nm") or []
        if bands:
            parts.append("bands at " + ", ".join(f"{b:.0f}" for b in bands) + " nm")
    if t == "mass":
        return "see the mass step"
    excl = o.get("excluded") or []
    if excl:
        parts.append("left out: " + "; ".join(
            f"{e.get('position', 0):.5g} ({e.get('reason', '')})" for e in excl[:12])
            + (f"; and {len(excl) - 12} more" if len(excl) > 12 else ""))
    return "; ".join(parts) + "."


def render_html(record: Mapping[str, Any], *, session: Any = None,
                figures_html: Mapping[str, str] | None = None,
                nmr_sticks: Sequence[tuple[float, float]] = ()) -> str:
    """The offline HTML report of a record.

    Parameters
    ----------
    record : mapping
        From :func:`make_record` or :func:`load_record`.
    session : Session, optional
        When given, its spectra are drawn as inline SVG.
    figures_html : mapping title -> html, optional
        Pre-rendered, self-contained figure HTML from the UI layer (inserted
        as given; the titles are escaped).
    nmr_sticks : sequence of (ppm, height), optional
        An estimated stick spectrum drawn under the measured 13C spectrum.

    Examples
    --------
    >>> from cageprint.evidence import Candidate, TechniqueVerdict, rank
    >>> c = Candidate("C60", 60, 1, "Ih", (60,), 4, 10, 0.757)
    >>> r = rank([c], {"ir": [TechniqueVerdict("ir", 0.0, "consistent")]})
    >>> page = render_html({"sample": "<script>x</script>", "ranking": r.to_dict()})
    >>> "<script>x" in page, "&lt;script&gt;x&lt;/script&gt;" in page
    (False, True)
    """
    ranking = record_ranking(record)
    sample = record.get("sample", "")
    out = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
           f"<title>cageprint assignment: {_e(sample or record.get('formula', ''))}</title>",
           f"<style>{_CSS}</style></head><body>"]
    out.append(f"<h1>Cage assignment: {_e(sample) or 'unnamed sample'}</h1>")
    out.append("<p>")
    out.append(f"Formula <b>{_e(record.get('formula', ''))}</b>; "
               f"{len(ranking)} candidates"
               + (" (IPR isomers)" if record.get("ipr") else "")
               + f"; created {_e(record.get('created', ''))}.</p>")
    top = ranking.top()
    if top:
        names = ", ".join(f"{_e(r.candidate.label)}" for r in top)
        out.append(f"<p><b>First rank:</b> {names}"
                   + (f" <span class='note'>({_e(top[0].tie_reason)})</span>"
                      if top[0].tie_reason else "") + "</p>")
    else:
        out.append("<p><b>Every candidate is ruled out</b> by the evidence as weighted.</p>")
    # inputs
    out.append("<h2>Inputs</h2><table><tr><th>technique</th><th>source</th><th>format</th>"
               "<th>points</th><th>sha256</th></tr>")
    for t in ranking.techniques:
        inp = record.get("inputs", {}).get(t)
        if inp is None:
            out.append(f"<tr><td>{_e(label(t))}</td><td colspan='4' class='note'>no data</td></tr>")
            continue
        out.append(f"<tr><td>{_e(label(t))}</td><td>{_e(inp.get('source'))}</td>"
                   f"<td>{_e(inp.get('format'))}</td><td>{_e(inp.get('points'))}</td>"
                   f"<td><code>{_e(inp.get('sha256'))}</code></td></tr>")
        if inp.get("processing"):
            out.append(f"<tr><td></td><td colspan='4' class='note'>processed from the raw FID: "
                       f"{_e(processing_words(inp['processing']))}</td></tr>")
    out.append("</table>")
    w = ", ".join(f"{_e(label(t))} {ranking.weights.get(t, 0):g}" for t in ranking.techniques)
    out.append(f"<p class='note'>Weights: {_e(w)}. Scores are log-likelihood-like "
               "(0 = perfect fit, more negative = worse); the share is the posterior share of "
               "each candidate among the kept ones; candidates whose totals differ by less "
               f"than {ranking.tie_tol:g} are not separable with this evidence and share a "
               "rank.</p>")
    th = record.get("thresholds", {})
    set_th = {t: v for t, v in th.items() if v}
    if set_th:
        items = "; ".join(f"{label(t)}: " + ", ".join(f"{k} = {v}" for k, v in v.items())
                          for t, v in set_th.items())
        out.append(f"<p class='note'>Thresholds changed from the defaults: {_e(items)}</p>")
    obs = record.get("observations", {})
    if obs:
        out.append("<h2>What was observed</h2><ul>")
        for t in ranking.techniques:
            o = obs.get(t)
            if o:
                out.append(f"<li>{_e(label(t))}: {_e(_observation_summary(t, o))}</li>")
        out.append("</ul>")
    # figures
    figs: list[str] = []
    if session is not None:
        for t in ranking.techniques:
            if t in session.spectra:
                figs.append(_figure_for(t, session, nmr_sticks))
    for title, frag in (figures_html or {}).items():
        figs.append(f"<h3>{_e(title)}</h3>{frag}")
    if figs:
        out.append("<h2>Spectra</h2>" + "".join(f"<div>{f}</div>" for f in figs))
    # table
    out.append("<h2>Ranked candidates</h2><table><tr><th>rank</th><th>isomer</th>"
               "<th>point group</th><th>13C pattern</th><th>score</th><th>verdict</th>")
    for t in ranking.techniques:
        out.append(f"<th>{_e(label(t))}</th>")
    out.append("<th>why</th></tr>")
    for r in ranking.rows[:REPORT_MAX_ROWS]:
        c = r.candidate
        cls = "out" if r.ruled_out else ("top" if r.rank == 1 else "")
        out.append(f"<tr class='{cls}'><td>{r.rank}</td><td>{_e(c.isomer)}</td>"
                   f"<td>{_e(c.point_group)}</td><td>{_e(c.pattern)}</td>"
                   f"<td>{r.score:.2f}</td><td>{_e(r.verdict)}</td>")
        for t in ranking.techniques:
            v = r.verdicts[t]
            word = ranking.shown_verdict(r, t)
            cell = _e(word) if word != v.verdict or word == "no data" \
                else f"{_e(word)} ({v.score:.2f})"
            out.append(f"<td>{cell}</td>")
        why = " ".join(r.reasons)
        if r.tie_reason:
            why = f"{r.tie_reason}. {why}"
        out.append(f"<td>{_e(why)}</td></tr>")
    out.append("</table>")
    if len(ranking) > REPORT_MAX_ROWS:
        out.append(f"<p class='note'>{len(ranking) - REPORT_MAX_ROWS} further candidates are "
                   "in the JSON record.</p>")
    vers = record.get("versions", {})
    if vers:
        out.append("<p class='note'>Versions: "
                   + _e(", ".join(f"{k} {v}" for k, v in vers.items())) + "</p>")
    out.append("</body></html>")
    return "\n".join(out)


def save_report(path: str | Path, record: Mapping[str, Any], **options: Any) -> Path:
    """Render the HTML report of a record and write it atomically."""
    return atomic_write_text(path, render_html(record, **options))


def write_report(session: Any, path: str | Path, *, record_path: str | Path | None = None,
                 figures_html: Mapping[str, str] | None = None,
                 nmr_sticks: Sequence[tuple[float, float]] | None = None) -> dict[str, Any]:
    """Make the record of a session, write the HTML report (and the record JSON if asked).

    ``nmr_sticks`` defaults to the estimated stick spectrum of the first-ranked
    candidate when its cage can be rebuilt (else none).  Returns the record.
    """
    record = make_record(session)
    if record_path is not None:
        save_record(record, record_path)
    if nmr_sticks is None:
        nmr_sticks = first_candidate_sticks(session)
    save_report(path, record, session=session, figures_html=figures_html,
                nmr_sticks=nmr_sticks)
    return record


def first_candidate_sticks(session: Any) -> list[tuple[float, float]]:
    """Estimated 13C sticks (ppm, carbons) of the first-ranked candidate, or [] if unavailable."""
    first = session.ranking.top()
    if "nmr" not in session.spectra or not first or not first[0].candidate.spiral:
        return []
    try:
        c = first[0].candidate
        st = estimated_stick_spectrum(Cage.from_spiral(c.n, c.spiral))
    except CageprintError:
        return []
    return list(zip(st.positions, st.heights, strict=True))
