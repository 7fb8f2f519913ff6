"""Live comparison panel: measured spectrum, setting controls, predicted vs observed counts."""

from __future__ import annotations

import html
from collections.abc import Sequence
from typing import Any

import ipywidgets as w
import numpy as np

from .. import figures
from ..errors import SessionError
from ..evidence import SCORE_NOTE
from ..session import Session
from ..settings import Spec
from ..techniques import registry
from . import _port
from ._common import Problem, boxed, figure_widget, record, sync_figure
from .controls import CAPTIONS, SettingControl, build_controls
from .loader import SpectrumLoader


def predicted_count(candidate: Any, technique: str) -> Any:
    """What a candidate predicts for a technique, as the number the table shows."""
    return registry.get(technique).predicted(candidate)


class ComparisonPanel:
    """Measured spectrum with picked peaks, setting controls, and the chosen candidates' counts.

    The controls are built from the technique's settings dataclass (one per
    setting that names a control, in ``.controls`` keyed by setting name;
    ``panel.snr`` is ``panel.controls["snr"].widget``).  They always show the
    values the session uses.  A control change goes to the session, which
    recomputes only that technique; the panel then redraws the peak markers
    and the table.  The table (``data-cp-table="comparison"``) carries the
    observed count in ``data-observed``; its caption names the settings used.

    Parameters
    ----------
    session : Session
    technique : str
        A registered technique whose spectrum is loaded.
    chosen : sequence of int, optional
        Isomer numbers to compare (default: the first five of the ranking).
    loader : SpectrumLoader, optional
        When given, a spectrum it loads for this technique replaces the panel's.
    """

    def __init__(self, session: Session, technique: str, chosen: Sequence[int] | None = None,
                 loader: SpectrumLoader | None = None):
        self.session = session
        self.technique = technique
        self.tech = registry.get(technique)
        self._syncing = False
        self.problem = Problem("cp-compare-error")
        spec = session.spectra.get(technique)
        if spec is None:
            raise SessionError(f"technique {technique!r}: no spectrum loaded in the session; "
                               "load one first (SpectrumLoader or session.load)")
        self.spectrum = spec
        self.controls = build_controls(session.settings(technique),
                                       (float(spec.x.min()), float(spec.x.max())))
        labels = [(f"{c.formula} {c.isomer} ({c.point_group})", int(c.isomer))
                  for c in session.candidates]
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
        parts = [p for c in self.controls.values() for p in c.parts]
        for c in self.controls.values():
            c.observe(self._changed)
        self.pick.observe(self._changed, names=["value"])
        rows = [w.HBox(parts[i:i + 2]) for i in range(0, len(parts), 2)]
        self.ui = w.VBox([*rows, self.pick, self.problem.widget, self.table, boxed(self.fig)])
        self.ui.add_class("cp-compare")
        self.observation: Any = None
        if loader is not None:
            loader.on_loaded(self._new_spectrum)
        self.update()

    def __getattr__(self, name: str) -> Any:
        controls = self.__dict__.get("controls", {})
        if name in controls:
            return controls[name].widget
        raise AttributeError(f"{type(self).__name__!r} has no attribute {name!r}")

    def _new_spectrum(self, spectrum: Any) -> None:
        """Show a newly loaded spectrum of this technique (others are ignored)."""
        if spectrum.technique != self.technique:
            return
        self.spectrum = spectrum
        lo, hi = float(spectrum.x.min()), float(spectrum.x.max())
        for c in self.controls.values():
            if c.spec.control == "span":
                with c.widget.hold_trait_notifications():
                    c.widget.min, c.widget.max = min(lo, c.widget.min), max(hi, c.widget.max)
        with self.fig.batch_update():
            self.fig.data[0].x, self.fig.data[0].y = figures.trace_xy(spectrum)
        self.update()

    # -- state ---------------------------------------------------------------
    def thresholds(self) -> dict[str, Any]:
        """The setting values the controls currently hold."""
        return {name: c.value() for name, c in self.controls.items()}

    def _title(self, n_obs: int) -> str:
        return f"{self.spectrum.meta.get('title', self.technique)}: {n_obs} " \
               f"{self.tech.observed_noun} observed"

    # -- updates -------------------------------------------------------------
    def _changed(self, change: dict) -> None:
        if self._syncing:  # a control being set to the session's value
            return
        owner = change["owner"]
        name = next((n for n, c in self.controls.items() if owner in c.parts), None)
        self.update(None if name is None else {name: self.controls[name].value()})

    def _show_session_settings(self) -> None:
        """Set every control to the value the session uses, without echoing it back."""
        settings = self.session.settings(self.technique)
        self._syncing = True
        try:
            for c in self.controls.values():
                value = getattr(settings, c.name)
                if not c.shows(value):
                    c.show(value)
        finally:
            self._syncing = False

    def update(self, changed: dict | None = None) -> None:
        """Push changed settings to the session, then redraw controls, table and figure."""
        try:
            if changed:
                _port.set_thresholds(self.session, self.technique, **changed)
            obs = _port.observation(self.session, self.technique)
            ranking = _port.ranking(self.session)
        except Exception as exc:  # shown in the panel in plain words
            self.problem.show(exc)
            self._show_session_settings()
            return
        self.problem.clear()
        self._show_session_settings()
        self.observation = obs
        pos = np.asarray(self.tech.marks(obs), float)
        x, y = self.spectrum.x, self.spectrum.y
        heights = np.interp(pos, x, y) if pos.size else pos
        self.table.value = self._table_html(ranking, pos.size)
        span = next((c for c in self.controls.values() if c.spec.control == "span"), None)
        with self.fig.batch_update():
            self.fig.data[1].x = pos
            self.fig.data[1].y = heights
            self.fig.data[1].name = f"peaks ({pos.size})"
            self.fig.layout.title.text = self._title(pos.size)
            if span is not None:
                rx = list(span.widget.value)
                self.fig.layout.xaxis.autorange = False  # else plotly ignores the range
                self.fig.layout.xaxis.range = rx[::-1] if self.tech.reverse_x else rx
        sync_figure(self.fig)

    def settings_caption(self) -> str:
        """The settings the session used for this observation, as the caption says them."""
        settings = self.session.settings(self.technique)
        specs = settings.specs()
        parts = []
        for name in self.controls:
            spec, value = specs[name], _fmt(getattr(settings, name), specs[name])
            unit = f" {spec.unit}" if spec.unit and value != "none" else ""
            parts.append(f"{CAPTIONS.get(name, name.replace('_', ' '))}: {value}{unit}")
        return ", ".join(parts)

    def _table_html(self, ranking: Any, n_obs: int) -> str:
        picked = set(self.pick.value)
        weight = float(ranking.weights.get(self.technique, 1.0))
        rows = []
        for r in ranking.rows:
            c = r.candidate
            if int(c.isomer) not in picked:
                continue
            v = r.verdicts.get(self.technique)
            rows.append({
                "key": c.isomer, "candidate": f"{c.formula} {c.isomer}",
                "point group": c.point_group, "rank": r.rank,
                "predicted": self.tech.predicted(c), "observed": n_obs,
                "verdict": v.verdict if v is not None else "", "score": round(v.score, 2)
                if v is not None else None,
                "weighted": round(v.score * weight, 2) if v is not None else None,
                "why": " ".join(v.reasons) if v is not None else "",
            })
        body = figures.html_table(
            rows, ["candidate", "point group", "rank", "predicted", "observed", "verdict",
                   "score", "weighted", "why"], name="comparison", key="key",
            caption=f"{n_obs} {self.tech.observed_noun} observed with "
                    + self.settings_caption() + f". {SCORE_NOTE}; "
                    f"weighted: times this technique's weight, {weight:g}")
        return body.replace('data-cp-table="comparison"',
                            f'data-cp-table="comparison" data-observed="{n_obs}"', 1)

    def record(self) -> None:
        """Show the current table and a plain (static) figure for the shared copy."""
        record(self.fig, self.table.value)


def _fmt(v: Any, spec: Spec) -> str:
    if v is None:
        return "none"
    if isinstance(v, tuple) and spec.kind == "span":
        return "–".join(f"{x:.4g}" for x in v)
    return f"{v:g}" if isinstance(v, float) else html.escape(str(v))


__all__ = ["ComparisonPanel", "SettingControl", "predicted_count"]
