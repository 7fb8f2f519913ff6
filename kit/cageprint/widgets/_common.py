"""Helpers shared by the widgets: error areas, figure state sync, static records, conclusions."""

from __future__ import annotations

import copy
import html
import json
from typing import Any

import ipywidgets as w
import plotly.graph_objects as go
from IPython.display import HTML, display

from ..errors import CageprintError

#: mimetype of a notebook's machine-readable conclusion (read by run-notebooks and the tests)
CONCLUSION_MIME = "application/vnd.cageprint.conclusion+json"


def sync_figure(fig: go.FigureWidget) -> None:
    """Make a FigureWidget's synced state match its current content.

    plotly sends in-place edits as one-shot messages and refreshes the synced
    state only when the figure itself is displayed; a figure inside a box would
    otherwise come back stale (saved state, Voila, a reconnecting page).  This
    touches private attributes, so it lives here only; plotly is pinned to a
    major version in pyproject.
    """
    fig._widget_data = copy.deepcopy(fig._data)
    fig._widget_layout = copy.deepcopy(fig._layout_obj._props)


def figure_widget(fig: go.Figure, cls: str) -> go.FigureWidget:
    """A FigureWidget of ``fig``; ``cls`` goes on the box :func:`boxed` puts around it.

    (plotly's front end does not apply CSS classes to the figure's own node.)
    """
    fw = go.FigureWidget(fig)
    fw._cp_class = cls
    return fw


def boxed(fig: go.FigureWidget) -> w.Box:
    """The figure inside a box that carries its stable CSS class."""
    box = w.Box([fig])
    box.add_class(getattr(fig, "_cp_class", "cp-figure"))
    return box


class Problem:
    """An HTML area that states errors in plain words (never swallowed, never a traceback)."""

    def __init__(self, cls: str):
        self.widget = w.HTML(value="")
        self.widget.add_class("cp-error")
        self.widget.add_class(cls)
        self.message = ""

    def show(self, exc_or_text: Any) -> None:
        text = str(exc_or_text)
        if isinstance(exc_or_text, Exception) and not isinstance(exc_or_text, CageprintError):
            text = f"{type(exc_or_text).__name__}: {text}"
        self.message = text
        self.widget.value = (f'<div class="cp-problem" role="alert" style="color:#9b1c1c">'
                             f"{html.escape(text)}</div>")

    def clear(self) -> None:
        self.message = ""
        self.widget.value = ""


def record(fig: go.Figure | None = None, table_html: str | None = None,
           title: str | None = None) -> None:
    """Show a static record: an HTML table and a plain figure that survive without a kernel."""
    if title:
        display(HTML(f"<h4>{html.escape(title)}</h4>"))
    if table_html:
        display(HTML(table_html))
    if fig is not None:
        plain = go.Figure(fig) if isinstance(fig, go.FigureWidget) else fig
        plain.show()


def conclude(summary: str, **facts: Any) -> None:
    """Print what a notebook concluded, plus a machine-readable copy for headless checks.

    The copy travels under :data:`CONCLUSION_MIME`; people see only the sentence.
    """
    payload = {"summary": summary, **facts}
    display({CONCLUSION_MIME: json.loads(json.dumps(payload, default=str)),
             "text/plain": "Conclusion: " + summary}, raw=True)
