"""One call at the top of a template notebook: display set-up, demo data, the session."""

from __future__ import annotations

import os
from collections.abc import Mapping
from typing import Any

import plotly.io as pio

from ..demo import ensure_demo
from ..session import Session

__all__ = ["setup", "show", "RENDERER"]

#: figures stay visible in the saved notebook and its HTML export (``run-notebooks`` moves
#: the embedded plotly.js into one shared file beside them)
RENDERER = "plotly_mimetype+notebook"


def setup(formula: str | None = None, *, sample: str = "", ipr: bool = True,
          files: Mapping[str, str | os.PathLike | None] | None = None,
          settings: Mapping[str, Mapping[str, Any]] | None = None,
          demo: str | os.PathLike | None = "demo-data") -> Session:
    """Make a notebook ready and return its session.

    Sets plotly's renderer (:data:`RENDERER`), writes the demo data into ``demo``
    if they are missing or stale (``None``: leave them), starts a session for
    ``formula`` (or one that takes the formula from its mass spectrum), loads
    ``files`` (technique -> path; empty paths skipped), generates the candidate
    cages (IPR only when ``ipr``) once a formula is known, and applies
    ``settings`` (technique -> {setting: value}).

    Examples
    --------
    >>> s = setup("C60", sample="A", settings={"nmr": {"snr": 6.0}}, demo=None)
    >>> s.formula, len(s.candidates), s.sample
    ('C60', 1, 'A')
    """
    pio.renderers.default = RENDERER
    if demo is not None:
        ensure_demo(demo)
    session = Session(formula) if formula else Session()
    session.sample = sample
    for technique, path in (files or {}).items():
        if path:
            session.load(technique, path)
    if session.formula is not None:
        session.set_candidates(ipr=ipr)
    for technique, values in (settings or {}).items():
        for name, value in values.items():
            session.set_threshold(technique, name, value)
    return session


def show(*widgets: Any) -> None:
    """Display widgets (their ``.ui``) one below the other."""
    from IPython.display import display  # lazy: only a notebook shows anything

    display(*(getattr(x, "ui", x) for x in widgets))
