"""The few session calls the widgets make, in one place.

The widgets stay thin: everything they show comes from the headless
:class:`cageprint.session.Session`.  Keeping the calls here means a change of
the session's API touches one file.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any


def load(session, source, technique: str | None = None, name: str | None = None,
         format: str | None = None):
    """Read a spectrum (path or bytes) and give it to the session; returns the Spectrum.

    With no ``technique`` the file says what it is.  Nothing in the session
    changes when reading fails (the reader raises first).
    """
    from ..spectra import load_spectrum

    spec = load_spectrum(source, format=format, technique=technique)
    session.set_spectrum(spec.technique, spec, name=name)
    return spec


def spectrum(session, technique: str):
    return (getattr(session, "spectra", {}) or {}).get(technique)


def set_formula(session, formula: str, ipr: bool, cage_charge: int | None = None) -> None:
    session.set_formula(formula, cage_charge=cage_charge)
    session.set_candidates(ipr=ipr)


def candidates(session) -> tuple:
    return tuple(session.candidates)


def set_thresholds(session, technique: str, **values) -> None:
    for name, value in values.items():
        session.set_threshold(technique, name, value)


def thresholds(session, technique: str) -> Mapping[str, Any]:
    return dict(session.thresholds(technique))


def observation(session, technique: str):
    return session.observation(technique)


def ranking(session):
    return session.ranking


def set_weights(session, weights: Mapping[str, float]) -> None:
    for t, v in weights.items():
        session.set_weight(t, v)


def weights(session) -> dict[str, float]:
    return dict(session.weights)


def export(session, record_path, report_path) -> None:
    """Write the assignment record (JSON with checksums, thresholds, table) and the HTML report."""
    from ..report import write_report

    write_report(session, report_path, record_path=record_path)
