"""JupyterLab widgets (ipywidgets + plotly FigureWidget), thin over the headless Session.

Each widget keeps its controls as attributes (set ``.value`` from Python or
move them in the page) and its layout in ``.ui`` (``display(widget.ui)``).
Errors are shown inside the widget in plain words.  Stable CSS classes
(``cp-*``) and data attributes mark the parts a browser test looks for.

Live widgets do not survive sharing; :func:`record` shows the static copy (an
HTML table and a plain figure) that an executed notebook keeps.
"""

from __future__ import annotations

from ._common import CONCLUSION_MIME, Problem, conclude, record, sync_figure
from ._setup import setup, show
from .board import AssignmentBoard, ranking_html, ranking_rows
from .cageview import CageView, cage_figures
from .chooser import CandidateChooser
from .compare import ComparisonPanel, predicted_count
from .loader import SpectrumLoader
from .species import SpeciesTable, species_html

__all__ = [
    "setup",
    "show",
    "SpectrumLoader",
    "CandidateChooser",
    "ComparisonPanel",
    "CageView",
    "SpeciesTable",
    "species_html",
    "AssignmentBoard",
    "cage_figures",
    "ranking_html",
    "ranking_rows",
    "predicted_count",
    "record",
    "conclude",
    "sync_figure",
    "Problem",
    "CONCLUSION_MIME",
]
