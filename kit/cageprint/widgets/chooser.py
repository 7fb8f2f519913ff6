"""Candidate chooser: formula, all isomers or IPR, filters, a sortable table, a picker."""

from __future__ import annotations

from typing import Any

import ipywidgets as w

from .. import figures
from ..cage import Cage
from ..candidate import Candidate
from ..errors import CageprintError
from ..library import PAIRS_MEMO, library_candidates
from ..session import Session
from ..symmetry import character_table
from ._common import Problem

#: sort keys offered: label -> (row key, descending?)
SORTS = {"isomer number": ("isomer", False), "point group order": ("order", True),
         "13C lines": ("lines", False), "IR bands": ("ir", False),
         "Raman bands": ("raman", False), "Hückel gap": ("gap", True)}
#: rows per page of the table (the filters and sort act on every row; pages turn through them)
MAX_ROWS = 200
_COLUMNS = ["isomer", "point group", "13C pattern", "lines", "IR", "Raman", "gap/|β|",
            "fused pentagons"]


def _group_order(pg: str) -> int:
    """Rough size of a point group from its label, for sorting (no science relies on it)."""
    try:
        return int(character_table(pg).order)
    except CageprintError:  # an unknown label sorts last
        return 0


def _fused_pairs(c: Candidate) -> int:
    pairs = Cage.from_spiral(c.n, c.spiral).fused_pentagon_pairs  # a count
    return int(pairs) if not hasattr(pairs, "__len__") else len(pairs)


class CandidateChooser:
    """Generate the candidate cages of a formula and pick a few to compare.

    Parameters
    ----------
    session : Session
        Receives the formula and candidates (``set_formula``/``set_candidates``).
    formula : str, optional
        Start with this formula (else the session's, e.g. from the mass step).
    ipr : bool
        IPR isomers only (default) or all isomers.
    library : bool or path, optional
        Read the candidates from the cage library (``True``: the default file;
        a path: that file), building the missing sizes first with a progress
        bar; default: generate them (``cageprint.library.library_candidates``).
    """

    def __init__(self, session: Session, formula: str | None = None, ipr: bool = True, *,
                 library: Any = None):
        self.session = session
        self.library = library
        self.problem = Problem("cp-chooser-error")
        self.formula = w.Text(value=formula or session.formula or "", description="formula",
                              placeholder="C78 or Sc3N@C80", continuous_update=False)
        self.formula.add_class("cp-formula")
        self.ipr = w.ToggleButtons(options=[("IPR only", True), ("all isomers", False)],
                                   value=bool(ipr))
        self.ipr.add_class("cp-ipr")
        self.point_group = w.Dropdown(options=["any"], value="any", description="point group")
        self.point_group.add_class("cp-pg-filter")
        self.fused = w.Dropdown(options=[("any", -1)], value=-1, description="fused pent.")
        self.fused.add_class("cp-fused-filter")
        self.sort = w.Dropdown(options=list(SORTS), value="isomer number", description="sort by")
        self.sort.add_class("cp-sort")
        self.pick = w.SelectMultiple(options=[], description="compare", rows=6)
        self.pick.add_class("cp-chosen")
        self.table = w.HTML()
        self.table.add_class("cp-candidates")
        self.rows: list[dict] = []
        self._visible: list[dict] = []
        self.page = 0
        self.prev = w.Button(description="◀ previous", layout=w.Layout(width="120px"))
        self.prev.add_class("cp-page-prev")
        self.next = w.Button(description="next ▶", layout=w.Layout(width="120px"))
        self.next.add_class("cp-page-next")
        self.page_info = w.HTML()
        self.page_info.add_class("cp-page-info")
        self.prev.on_click(lambda _b: self.turn(-1))
        self.next.on_click(lambda _b: self.turn(+1))
        self.building = w.Output()  # the library build's progress bar, while it runs
        self.building.add_class("cp-library-progress")
        self.formula.observe(self._regenerate, names=["value"])
        self.ipr.observe(self._regenerate, names=["value"])
        for c in (self.point_group, self.fused, self.sort, self.pick):
            c.observe(self._redraw, names=["value"])
        self.ui = w.VBox([w.HBox([self.formula, self.ipr]),
                          w.HBox([self.point_group, self.fused, self.sort]),
                          self.problem.widget, self.building, self.pick,
                          w.HBox([self.prev, self.page_info, self.next]), self.table])
        self.ui.add_class("cp-chooser")
        if self.formula.value:
            if session.candidates and session.formula == self.formula.value \
                    and (session.ipr is None or session.ipr == bool(ipr)):
                self._rebuild_rows()
            else:
                self._regenerate(None)

    @property
    def chosen(self) -> tuple[int, ...]:
        """Isomer numbers picked for comparison."""
        return tuple(self.pick.value)

    def _regenerate(self, _change: Any) -> None:
        text = self.formula.value.strip()
        if not text:
            return
        try:
            self.session.set_formula(text)
            # the progress bar of the work below shows in self.building while it runs (a
            # live page keeps captured outputs on its side: only clear_output() empties them)
            self.building.clear_output()
            try:
                with self.building:
                    if self.library is None:
                        self.session.set_candidates(ipr=self.ipr.value, progress=True)
                    else:  # a missing size is built first
                        path = None if self.library is True else self.library
                        self.session.set_candidates(
                            library_candidates(text, self.ipr.value, path=path))
            finally:
                self.building.clear_output()
        except Exception as exc:  # shown in the widget, candidates left as they were
            self.problem.show(exc)
            return
        self.problem.clear()
        self._rebuild_rows()

    def _fused_count(self, c: Candidate) -> int:
        if self.session.ipr:
            return 0
        # library candidates carry the stored count in their memo: no cage graph is built
        return int(c.memo(PAIRS_MEMO, _fused_pairs))

    def _rebuild_rows(self) -> None:
        cands = self.session.candidates
        self.rows = [{
            "isomer": c.isomer, "point group": c.point_group, "order": _group_order(c.point_group),
            "13C pattern": c.pattern, "lines": len(c.nmr_sizes), "ir": c.ir_count,
            "raman": c.raman_count, "gap": c.gap_beta, "IR": c.ir_count, "Raman": c.raman_count,
            "gap/|β|": None if c.gap_beta is None else round(c.gap_beta, 3),
            "fused pentagons": self._fused_count(c),
        } for c in cands]
        groups = sorted({r["point group"] for r in self.rows},
                        key=lambda g: (-_group_order(g), g))
        fused = sorted({r["fused pentagons"] for r in self.rows})
        with self.pick.hold_trait_notifications():
            self.point_group.options = ["any", *groups]
            self.point_group.value = "any"
            self.fused.options = [("any", -1)] + [(str(f), f) for f in fused]
            self.fused.value = -1
        self._redraw(None)

    def visible_rows(self) -> list[dict]:
        """Rows passing the filters, in the chosen order."""
        rows = [r for r in self.rows
                if self.point_group.value in ("any", r["point group"])
                and self.fused.value in (-1, r["fused pentagons"])]
        key, desc = SORTS[self.sort.value]
        rows.sort(key=lambda r: (r[key] is None, -(r[key] or 0) if desc else (r[key] or 0),
                                 r["isomer"]))
        return rows

    def turn(self, step: int) -> None:
        """Show the next (``+1``) or previous (``-1``) page of the filtered, sorted rows."""
        last = max(0, (len(self._visible) - 1) // MAX_ROWS)
        self.page = min(last, max(0, self.page + int(step)))
        self._draw_page()

    def _redraw(self, change: Any) -> None:
        owner = None if change is None else change["owner"]
        if owner is not self.pick:  # filters or sort changed: every row again, first page
            self._visible = self.visible_rows()
            self.page = 0
        self._draw_page()

    def _draw_page(self) -> None:
        rows = self._visible
        start = self.page * MAX_ROWS
        shown = rows[start:start + MAX_ROWS]
        # the picker offers this page's cages and keeps what was picked on other pages
        by_iso = {r["isomer"]: r for r in rows}
        picked = [v for v in self.pick.value if v in by_iso]
        on_page = {r["isomer"] for r in shown}
        order = [r["isomer"] for r in shown] + [v for v in picked if v not in on_page]
        opts = [(f"{self.session.formula} {v} ({by_iso[v]['point group']})", v) for v in order]
        if [o[1] for o in self.pick.options] != order or list(self.pick.value) != picked:
            self.pick.unobserve(self._redraw, names=["value"])
            self.pick.options = opts
            self.pick.value = picked
            self.pick.observe(self._redraw, names=["value"])
        what = "IPR isomers" if self.session.ipr else "isomers"
        numbering = "IPR" if self.session.ipr else "all-isomer"
        end = start + len(shown)
        self.prev.disabled = self.page == 0
        self.next.disabled = end >= len(rows)
        self.page_info.value = (f'<span class="cp-page" data-page="{self.page + 1}">'
                                f"rows {start + 1 if shown else 0}–{end} of {len(rows)}</span>")
        self.table.value = figures.html_table(
            shown, _COLUMNS, name="candidates", key="isomer", highlight=self.pick.value,
            caption=f"{len(rows)} of {len(self.rows)} {what} of {self.session.formula} "
                    f"(numbers of the {numbering} list); rows {start + 1 if shown else 0}"
                    f"–{end}",
            max_rows=MAX_ROWS)
