"""Cage view: the chosen cage in 3D and flat, carbon orbits coloured, orbit sizes in the legend."""

from __future__ import annotations

from typing import Any

import ipywidgets as w
import plotly.graph_objects as go

from .. import figures
from ..cage import Cage
from ..candidate import Candidate
from ..errors import CageError
from ..layout2d import schlegel_layout, schlegel_projection, tutte_layout
from ..session import Session
from ..symmetry import fingerprint, symmetric_geometry
from ._common import Problem, boxed, figure_widget, sync_figure


def cage_figures(candidate: Candidate) -> tuple[go.Figure, go.Figure]:
    """(3D figure, flat figure) of a candidate (built from its spiral)."""
    cage = Cage.from_spiral(candidate.n, candidate.spiral)
    fp = fingerprint(cage)
    orbits = fp.nmr.orbits
    geo = symmetric_geometry(cage)
    _xy, face = schlegel_layout(cage)
    try:  # a perspective view through one hexagon reads best; Tutte's drawing if it fails
        xy = schlegel_projection(geo.coords, face)
    except CageError:
        xy = tutte_layout(cage.n, cage.bonds, face)
    title = f"{candidate.formula} isomer {candidate.isomer} ({fp.point_group}), " \
            f"13C pattern {fp.nmr.pattern}"
    return (figures.cage3d_figure(geo.coords, cage.bonds, orbits, title=title),
            figures.schlegel_figure(xy, cage.bonds, orbits, title="flat projection"))


class CageView:
    """Pick a candidate; see it in 3D and as a flat projection with its orbits coloured.

    Parameters
    ----------
    session : Session
        Supplies the candidates.
    isomer : int, optional
        Candidate shown first (default: the first candidate).
    """

    def __init__(self, session: Session, isomer: int | None = None):
        self.session = session
        cands = session.candidates
        self.problem = Problem("cp-cageview-error")
        opts = [(f"{c.formula} {c.isomer} ({c.point_group})", c.isomer) for c in cands]
        first = isomer if isomer is not None else (opts[0][1] if opts else None)
        self.pick = w.Dropdown(options=opts, value=first, description="cage")
        self.pick.add_class("cp-cage-pick")
        f3, f2 = cage_figures(self._candidate(first)) if first is not None else (None, None)
        self.fig3d = figure_widget(f3 or figures.cage3d_figure([[0, 0, 0]], [], []),
                                   "cp-cage3d")
        self.fig2d = figure_widget(f2 or figures.schlegel_figure([[0, 0]], [], []),
                                   "cp-schlegel")
        self.pick.observe(self._changed, names=["value"])
        self.ui = w.VBox([self.pick, self.problem.widget,
                          w.HBox([boxed(self.fig3d), boxed(self.fig2d)])])
        self.ui.add_class("cp-cageview")

    def _candidate(self, isomer: int | None) -> Candidate | None:
        for c in self.session.candidates:
            if c.isomer == isomer:
                return c
        return None

    def _changed(self, change: Any) -> None:
        try:
            f3, f2 = cage_figures(self._candidate(change["new"]))
        except Exception as exc:
            self.problem.show(exc)
            return
        self.problem.clear()
        for fw, new in ((self.fig3d, f3), (self.fig2d, f2)):
            with fw.batch_update():
                fw.data = []
                fw.add_traces(list(new.data))
                fw.layout.title.text = new.layout.title.text
            sync_figure(fw)
