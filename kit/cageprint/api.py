"""The top-level functions: candidates of a formula, and a one-call assignment.

Both are thin over :class:`cageprint.session.Session`; use the session itself
to change settings step by step and see what each change recomputes.

Examples
--------
>>> [c.point_group for c in candidates("C76", ipr=True)]
['D2', 'Td']
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from .candidate import Candidate
from .errors import SessionError
from .evidence import Ranking
from .session import Session
from .settings import Settings
from .techniques import registry

__all__ = ["candidates", "assign"]


def candidates(formula: str, *, ipr: bool = True, cage_charge: int | None = None,
               progress: bool = False) -> list[Candidate]:
    """Every isomer of a cage formula as a :class:`~cageprint.candidate.Candidate`.

    Parameters
    ----------
    formula : str
        ``"C78"`` or ``"Sc3N@C80"``.
    ipr : bool
        Isolated-pentagon isomers only (default) or all isomers.
    cage_charge : int, optional
        Formal charge of the cage (default from the formula: -6 for Sc3N@C80).
    progress : bool
        Show a progress bar while the isomers are generated.
    """
    s = Session(formula, cage_charge=cage_charge)
    s.set_candidates(ipr=ipr, progress=progress)
    return list(s.candidates)


def assign(formula: str, *, nmr: Any = None, ms: Any = None, ir: Any = None,
           raman: Any = None, uv: Any = None, uvvis: Any = None,
           inputs: Mapping[str, Any] | None = None, solvent: str | None = None,
           ipr: bool = True, cage_charge: int | None = None,
           settings: Mapping[str, Settings | Mapping[str, Any]] | None = None,
           weights: Mapping[str, float] | None = None) -> Ranking:
    """Rank the candidate cages of a formula against the spectra given.

    Parameters
    ----------
    formula : str
        ``"C78"`` or ``"Sc3N@C80"``.
    nmr, ms, ir, raman, uv : path, bytes or Spectrum, optional
        13C NMR, mass, IR, Raman and UV-vis data (any format the readers take,
        including a plain peak list).  ``uvvis`` is the same as ``uv``.
    inputs : mapping technique -> input, optional
        Inputs of further registered techniques, by technique key.
    solvent : str, optional
        NMR solvent whose 13C lines are left out (``"CS2"``, ``"CDCl3"``...).
    ipr : bool
        Isolated-pentagon isomers only (default) or all isomers.
    cage_charge : int, optional
        Formal charge of the cage (default from the formula).
    settings : mapping technique -> Settings or {name: value}, optional
        Thresholds and options, e.g. ``{"nmr": {"snr": 8}}``.
    weights : mapping technique -> float, optional
        Weight of each technique in the overall score.

    Returns
    -------
    Ranking
        The ranked candidate table (shared ranks for ties).
    """
    if uv is not None and uvvis is not None:
        raise SessionError("assign: give the UV-vis data once, as uv= or uvvis=")
    given = {"nmr": nmr, "mass": ms, "ir": ir, "raman": raman,
             "uvvis": uvvis if uvvis is not None else uv, **dict(inputs or {})}
    s = Session(formula, cage_charge=cage_charge, weights=weights)
    if solvent is not None:
        s.set_threshold("nmr", "solvent", solvent)
    for technique, value in (settings or {}).items():
        if isinstance(value, Settings):
            s.set_settings(technique, value)
        else:
            s.set_settings(technique, s.settings(technique).replace(**dict(value)))
    for technique in registry.keys():
        if given.get(technique) is not None:
            s.load(technique, given[technique])
    unknown = sorted(set(given) - set(registry.keys()))
    if unknown:
        raise SessionError(f"assign: unknown technique {unknown[0]!r} in inputs; expected one "
                           f"of {', '.join(registry.keys())}")
    s.set_candidates(ipr=ipr)
    return s.ranking
