"""Assignment board: ranked candidates with reasons, technique weights, export."""

from __future__ import annotations

import html
import os
import pathlib
from typing import Any

import ipywidgets as w

from .. import figures
from ..evidence import SCORE_NOTE, Ranking, label
from ..fileio import confined_path
from ..session import Session
from ..techniques import registry
from . import _port
from ._common import Problem


def ranking_rows(ranking: Ranking, limit: int | None = None) -> list[dict[str, Any]]:
    """Rows of the ranked table as the board and the static record show them."""
    rows = []
    for r in ranking.rows[:limit]:
        c = r.candidate
        d = {"key": c.isomer, "rank": r.rank, "candidate": f"{c.formula} {c.isomer}",
             "point group": c.point_group, "score": round(r.score, 2), "share": f"{r.share:.1%}",
             "verdict": r.verdict}
        for t in ranking.techniques:
            d[label(t)] = ranking.shown_verdict(r, t)
        d["tie"] = r.tie_reason
        d["reasons"] = " ".join(r.reasons)
        rows.append(d)
    return rows


def ranking_html(ranking: Ranking, limit: int | None = 50) -> str:
    """The ranked table as escaped HTML (``data-cp-table="ranking"``)."""
    cols = ["rank", "candidate", "point group", "score", "verdict",
            *[label(t) for t in ranking.techniques], "tie", "reasons"]
    top = ", ".join(f"{r.candidate.formula} {r.candidate.isomer}" for r in ranking.top())
    return figures.html_table(ranking_rows(ranking, limit), cols, name="ranking", key="key",
                              highlight=[r.candidate.isomer for r in ranking.top()],
                              caption=f"Rank 1: {top or 'none'}; weights " + ", ".join(
                                  f"{label(t)} {ranking.weights[t]:g}"
                                  for t in ranking.techniques) + f". {SCORE_NOTE}; "
                              "share: each candidate's posterior share among those kept",
                              max_rows=limit)


class AssignmentBoard:
    """Ranked table with reasons, a weight per technique, and an export button.

    Parameters
    ----------
    session : Session
    out_dir : path-like
        Where the export writes ``<name>.json`` (record) and ``<name>.html`` (report).
    name : str
        Base name of the exported files.
    """

    def __init__(self, session: Session, out_dir: str | os.PathLike = "results",
                 name: str = "assignment"):
        self.session = session
        self.out_dir = pathlib.Path(out_dir)
        self.problem = Problem("cp-board-error")
        wts = session.weights
        self.weights = {t.key: w.FloatSlider(value=wts[t.key], min=0.0, max=3.0, step=0.1,
                                             description=t.label, continuous_update=False)
                        for t in registry.techniques()}
        for t, s in self.weights.items():
            s.add_class(f"cp-weight-{t}")
            s.observe(self._weight, names=["value"])
        self.name = w.Text(value=name, description="file name")
        # a button sized to its caption (the default width cut it to "export record + re...")
        self.export_button = w.Button(description="export record + report", icon="download",
                                      layout=w.Layout(width="auto"))
        self.export_button.add_class("cp-export")
        self.export_button.on_click(self.export)
        self.exported = w.HTML()
        self.exported.add_class("cp-exported")
        self.table = w.HTML()
        self.table.add_class("cp-ranking")
        self.ui = w.VBox([w.HBox(list(self.weights.values())[:3]),
                          w.HBox(list(self.weights.values())[3:]),
                          w.HBox([self.name, self.export_button]), self.exported,
                          self.problem.widget, self.table])
        self.ui.add_class("cp-board")
        self.refresh()

    def _weight(self, change) -> None:
        for t, s in self.weights.items():
            if s is change["owner"]:
                try:
                    _port.set_weights(self.session, {t: change["new"]})
                except Exception as exc:
                    self.problem.show(exc)
                    return
        self.refresh()

    def refresh(self) -> None:
        """Redraw the ranked table from the session."""
        try:
            ranking = _port.ranking(self.session)
        except Exception as exc:
            self.problem.show(exc)
            return
        self.problem.clear()
        self.table.value = ranking_html(ranking)

    def export(self, _button=None) -> tuple[pathlib.Path, pathlib.Path] | None:
        """Write the assignment record (JSON) and the HTML report; say where."""
        try:
            rec = confined_path(self.out_dir, self.name.value or "assignment", ".json")
            rep = rec.with_suffix(".html")
            self.out_dir.mkdir(parents=True, exist_ok=True)
            _port.export(self.session, rec, rep)
        except Exception as exc:
            self.exported.value = ""  # an older "written:" line must not sit above a new error
            self.problem.show(f"Export failed, nothing was overwritten: {exc}")
            return None
        self.problem.clear()
        self.exported.value = (f'<span class="cp-export-done">written: {html.escape(str(rec))}, '
                               f"{html.escape(str(rep))}</span>")
        return rec, rep
