"""Live comparison panel: measured spectrum, threshold controls, predicted vs observed counts."""

from __future__ import annotations

import html
from collections.abc import Sequence

import ipywidgets as w
import numpy as np

from .. import figures
from . import _port
from ._common import Problem, boxed, figure_widget, sync_figure

#: S/N thresholds offered (a dropdown: chemists pick round values)
SNR_CHOICES = (3.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0)
#: solvents offered for excluding their lines (NMR only)
SOLVENTS = ("none", "CS2", "CDCl3", "C6D6", "toluene-d8", "1,2-dichlorobenzene-d4")
_WHAT = {"nmr": "lines", "ir": "IR bands", "raman": "Raman bands", "uvvis": "bands",
         "mass": "ions"}


def predicted_count(candidate, technique: str):
    """What a candidate predicts for a technique, as the number the table shows."""
    if technique == "nmr":
        return len(candidate.nmr_sizes)
    if technique == "ir":
        return candidate.ir_count
    if technique == "raman":
        return candidate.raman_count
    if technique == "uvvis":
        return None if candidate.gap_beta is None else round(candidate.gap_beta, 3)
    return None


class ComparisonPanel:
    """Measured spectrum with picked peaks, thresholds, and the chosen candidates' counts.

    Every control change goes to the session (``set_thresholds``), which
    recomputes only that technique; the panel then redraws the peak markers and
    the table.  The table (``data-cp-table="comparison"``) carries the observed
    count in ``data-observed``.

    Parameters
    ----------
    session : Session
    technique : str
        ``"nmr"``, ``"ir"``, ``"raman"`` or ``"uvvis"``; its spectrum must be loaded.
    chosen : sequence of int, optional
        Isomer numbers to compare (default: the first five of the ranking).
    loader : SpectrumLoader, optional
        When given, a spectrum it loads for this technique replaces the panel's.
    """

    def __init__(self, session, technique: str, chosen: Sequence[int] | None = None,
                 loader=None):
        self.session = session
        self.technique = technique
        self.problem = Problem("cp-compare-error")
        spec = _port.spectrum(session, technique)
        if spec is None:
            raise _missing(technique)
        self.spectrum = spec
        th = _port.thresholds(session, technique)
        try:
            first = _port.observation(session, technique)
        except Exception:  # the panel shows the problem on its first update
            first = None
        used = dict(getattr(first, "thresholds", {}) or {})
        lo, hi = float(spec.x.min()), float(spec.x.max())
        region = th.get("region") or getattr(first, "region", None) or (lo, hi)
        self.snr = w.Dropdown(options=[(f"{v:g}", v) for v in SNR_CHOICES],
                              value=_nearest(th.get("snr", used.get("snr", 5.0))),
                              description="min S/N")
        self.snr.add_class("cp-snr")
        self.prominence = w.FloatLogSlider(value=float(th.get("prominence") or 1e-2), base=10,
                                           min=-4, max=1, step=0.1, description="prominence",
                                           readout_format=".1e", continuous_update=False)
        self.prominence.add_class("cp-prominence")
        self.use_prominence = w.Checkbox(value=th.get("prominence") is not None,
                                         description="use prominence", indent=False)
        self.region = w.FloatRangeSlider(value=(max(lo, float(min(region))),
                                                min(hi, float(max(region)))),
                                         min=lo, max=hi, step=(hi - lo) / 400,
                                         description="region", continuous_update=False,
                                         layout=w.Layout(width="480px"))
        self.region.add_class("cp-region")
        controls = [self.snr, self.use_prominence, self.prominence, self.region]
        self.solvent = None
        if technique == "nmr":
            self.solvent = w.Dropdown(options=SOLVENTS, value=th.get("solvent") or "none",
                                      description="solvent")
            self.solvent.add_class("cp-solvent")
            controls.append(self.solvent)
        labels = self._candidate_options()
        if chosen:
            pick = list(chosen)
        else:  # the first five of the ranking, else of the candidate list
            try:
                pick = [r.candidate.isomer for r in _port.ranking(session).rows[:5]]
            except Exception:  # shown by the first update
                pick = [v for _, v in labels[:5]]
        self.pick = w.SelectMultiple(options=labels, value=[v for v in pick
                                                            if v in {x for _, x in labels}],
                                     description="compare", rows=6)
        self.pick.add_class("cp-pick")
        self.table = w.HTML()
        self.table.add_class("cp-comparison")
        self.fig = figure_widget(figures.spectrum_figure(spec, title=self._title(0)),
                                 "cp-compare-figure")
        self._names = {id(self.snr): "snr", id(self.region): "region",
                       id(self.prominence): "prominence", id(self.use_prominence): "prominence"}
        if self.solvent is not None:
            self._names[id(self.solvent)] = "solvent"
        for c in controls + [self.pick]:
            c.observe(self._changed, names=["value"])
        self.ui = w.VBox([w.HBox(controls[:2]), w.HBox(controls[2:]), self.pick,
                          self.problem.widget, self.table, boxed(self.fig)])
        self.ui.add_class("cp-compare")
        self.observation = None
        if loader is not None:
            loader.on_loaded(self._new_spectrum)
        self.update()

    def _new_spectrum(self, spectrum) -> None:
        """Show a newly loaded spectrum of this technique (others are ignored)."""
        if spectrum.technique != self.technique:
            return
        self.spectrum = spectrum
        lo, hi = float(spectrum.x.min()), float(spectrum.x.max())
        with self.region.hold_trait_notifications():
            self.region.min, self.region.max = min(lo, self.region.min), max(hi, self.region.max)
        with self.fig.batch_update():
            self.fig.data[0].x, self.fig.data[0].y = figures.trace_xy(spectrum)
        self.update()

    # -- state ---------------------------------------------------------------
    def thresholds(self) -> dict:
        """The threshold values the controls currently hold."""
        th = {"snr": float(self.snr.value), "region": tuple(float(v) for v in self.region.value),
              "prominence": float(self.prominence.value) if self.use_prominence.value else None}
        if self.solvent is not None:
            th["solvent"] = None if self.solvent.value == "none" else self.solvent.value
        return th

    def _candidate_options(self):
        out = []
        for c in _port.candidates(self.session):
            out.append((f"{c.formula} {c.isomer} ({c.point_group})", int(c.isomer)))
        return out

    def _title(self, n_obs: int) -> str:
        return f"{self.spectrum.meta.get('title', self.technique)}: {n_obs} " \
               f"{_WHAT.get(self.technique, 'peaks')} observed"

    # -- updates -------------------------------------------------------------
    def _changed(self, change) -> None:
        name = self._names.get(id(change["owner"]))
        self.update(None if name is None else {name: self.thresholds()[name]})

    def update(self, changed: dict | None = None) -> None:
        """Push changed thresholds to the session, then redraw table and figure."""
        try:
            if changed:
                _port.set_thresholds(self.session, self.technique, **changed)
            obs = _port.observation(self.session, self.technique)
            ranking = _port.ranking(self.session)
        except Exception as exc:  # shown in the panel in plain words
            self.problem.show(exc)
            return
        self.problem.clear()
        self.observation = obs
        pos = np.asarray(getattr(obs, "positions", getattr(obs, "bands_nm", ())), float)
        x, y = self.spectrum.x, self.spectrum.y
        heights = np.interp(pos, x, y) if pos.size else pos
        self.table.value = self._table_html(obs, ranking, pos.size)
        with self.fig.batch_update():
            self.fig.data[1].x = pos
            self.fig.data[1].y = heights
            self.fig.data[1].name = f"peaks ({pos.size})"
            self.fig.layout.title.text = self._title(pos.size)
            rx = list(self.region.value)
            self.fig.layout.xaxis.autorange = False  # else plotly ignores the range
            self.fig.layout.xaxis.range = rx[::-1] if self.technique == "nmr" else rx
        sync_figure(self.fig)

    def _table_html(self, obs, ranking, n_obs: int) -> str:
        picked = set(self.pick.value)
        rows = []
        for r in ranking.rows:
            c = r.candidate
            if int(c.isomer) not in picked:
                continue
            v = r.verdicts.get(self.technique)
            rows.append({
                "key": c.isomer, "candidate": f"{c.formula} {c.isomer}",
                "point group": c.point_group, "rank": r.rank,
                "predicted": predicted_count(c, self.technique), "observed": n_obs,
                "verdict": v.verdict if v is not None else "", "score": round(v.score, 2)
                if v is not None else None,
                "why": " ".join(v.reasons) if v is not None else "",
            })
        body = figures.html_table(
            rows, ["candidate", "point group", "rank", "predicted", "observed", "verdict",
                   "score", "why"], name="comparison", key="key",
            caption=f"{n_obs} {_WHAT.get(self.technique, 'peaks')} observed with "
                    + ", ".join(f"{k}={_fmt(v)}" for k, v in self.thresholds().items()))
        return body.replace('data-cp-table="comparison"',
                            f'data-cp-table="comparison" data-observed="{n_obs}"', 1)

    def record(self):
        """Show the current table and a plain (static) figure for the shared copy."""
        from ._common import record

        record(self.fig, self.table.value)


def _fmt(v) -> str:
    if isinstance(v, tuple):
        return "–".join(f"{x:.4g}" for x in v)
    return html.escape(str(v)) if not isinstance(v, float) else f"{v:g}"


def _nearest(v: float) -> float:
    return min(SNR_CHOICES, key=lambda c: abs(c - float(v)))


def _missing(technique: str):
    from ..errors import SessionError

    return SessionError(f"technique {technique!r}: no spectrum loaded in the session; "
                        "load one first (SpectrumLoader or session.load_spectrum)")
