"""The session calls the widgets time or replace in tests: loading, settings, results, export.

Widgets read labels, settings and predicted counts from the technique
registry and simple state (candidates, spectra, weights) from the session
itself; the calls that recompute something pass through here, so a
benchmark can time the session's share of a widget update.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..evidence import Ranking
from ..report import write_report
from ..session import Session
from ..spectra import Spectrum


def load(session: Session, source: Any, technique: str | None = None,
         name: str | None = None, format: str | None = None, **options: Any) -> Spectrum:
    """Read a spectrum (path or bytes) into the session; with no technique the file says.

    Nothing in the session changes when reading fails (the reader raises first).
    ``options`` go to the reader (e.g. ``processing=`` for a raw NMR folder).
    """
    return session.load(technique, source, format=format, name=name, **options)


def set_thresholds(session: Session, technique: str, **values: Any) -> None:
    for name, value in values.items():
        session.set_threshold(technique, name, value)


def observation(session: Session, technique: str) -> Any:
    return session.observation(technique)


def ranking(session: Session) -> Ranking:
    return session.ranking


def set_weights(session: Session, weights: Mapping[str, float]) -> None:
    for t, v in weights.items():
        session.set_weight(t, v)


def export(session: Session, record_path: str | Path, report_path: str | Path) -> None:
    """Write the assignment record (JSON with checksums, settings, table) and the HTML report."""
    write_report(session, report_path, record_path=record_path)
