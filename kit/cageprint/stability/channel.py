"""The stability channel of the ranking: a technique with no spectrum.

Its input (``session.load("stability", ...)``, ``cageprint assign --stability``)
says what to judge stability by:

``"indices"``
    the index estimate (fused pentagon pairs, Hückel π energy at the formal
    charge; :func:`~cageprint.stability.prior.index_estimates`);
``"xtb"``
    GFN2-xTB energies of every candidate, relaxed here (at most
    ``max_relax`` candidates; larger sets: run a library cascade first);
a mapping ``{isomer: kJ/mol}`` or a CSV/JSON file of them
    energies computed elsewhere (any method; ``method`` names it).

Its verdicts are relative to the candidate set (the whole set is one
Boltzmann-type prior, :mod:`.prior`); candidates that share a 13C pattern
with others are told how stability separates them, so a tie the spectra
leave is visibly broken by this channel.  The registry entry is made in
:mod:`cageprint.techniques.registry`.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from ..cage import Cage
from ..errors import StabilityError
from ..settings import Settings, setting
from ..verdict import TechniqueVerdict
from .energy import KJMOL_PER_HARTREE, relax_cage
from .indices import stability_indices
from .prior import SCORE_FLOOR, TEMPERATURE, WEIGHT, stability_verdicts

__all__ = ["CHANNEL_WEIGHT", "StabilitySettings", "StabilityInput", "accept_stability",
           "observe_stability", "stability_all", "stability_signature"]

MODES = ("indices", "xtb", "energies")
#: default weight of the channel in the overall score (see :data:`.prior.WEIGHT`)
CHANNEL_WEIGHT = WEIGHT


@dataclass(frozen=True)
class StabilitySettings(Settings):
    """Settings of the stability channel (all act on the comparison)."""

    technique = "stability"
    temperature: float = setting(TEMPERATURE, help="effective temperature of the "
                                 "Boltzmann-type prior", unit="K", low=50.0, high=1e6,
                                 stage="compare")
    score_floor: float = setting(SCORE_FLOOR, help="largest penalty stability alone can give "
                                 "(nats)", low=0.0, high=50.0, stage="compare")
    max_relax: int = setting(12, help="most candidates relaxed with GFN2-xTB in 'xtb' mode",
                             kind="int", low=1, high=10000, stage="compare")


@dataclass(frozen=True)
class StabilityInput:
    """What the channel judges by: a mode and, for ``"energies"``, the energies given."""

    mode: str = "indices"
    energies: tuple[tuple[int, float], ...] = ()
    method: str = "given energies"

    def to_dict(self) -> dict[str, Any]:
        return {"mode": self.mode, "energies": [list(e) for e in self.energies],
                "method": self.method}


def _from_table(text: str, source: str) -> dict[int, float]:
    text = text.strip()
    if text.startswith("{"):
        data = json.loads(text)
        return {int(k): float(v) for k, v in data.items()}
    rows = list(csv.DictReader(io.StringIO(text)))
    if not rows or "isomer" not in rows[0] or "energy_kjmol" not in rows[0]:
        raise StabilityError(f"{source}: expected a CSV with columns isomer,energy_kjmol or a "
                             "JSON object {isomer: kJ/mol}")
    return {int(r["isomer"]): float(r["energy_kjmol"]) for r in rows}


def accept_stability(source: Any) -> StabilityInput:
    """Check and convert the channel's input (see the module notes).

    Examples
    --------
    >>> accept_stability("indices").mode, accept_stability({1: 0.0, 2: 12.5}).energies
    ('indices', ((1, 0.0), (2, 12.5)))
    """
    if isinstance(source, StabilityInput):
        return source
    if source is True or source is None:
        return StabilityInput("indices")
    if isinstance(source, str) and source.strip().lower() in ("indices", "xtb", "gfn2-xtb"):
        word = source.strip().lower()
        return StabilityInput("indices" if word == "indices" else "xtb", method="GFN2-xTB"
                              if word != "indices" else "indices")
    if isinstance(source, Mapping):
        try:
            energies = {int(k): float(v) for k, v in source.items()}
        except (TypeError, ValueError) as exc:
            raise StabilityError(f"stability energies: expected {{isomer: kJ/mol}}; {exc}"
                                 ) from exc
        return StabilityInput("energies", tuple(sorted(energies.items())))
    if isinstance(source, (str, Path)):
        p = Path(source)
        if not p.is_file():
            raise StabilityError(f"stability input {source!r}: expected 'indices', 'xtb', a "
                                 "mapping {isomer: kJ/mol} or a CSV/JSON file of them")
        try:
            energies = _from_table(p.read_text(encoding="utf-8"), str(p))
        except (ValueError, KeyError) as exc:
            raise StabilityError(f"{p}: {exc}") from exc
        return StabilityInput("energies", tuple(sorted(energies.items())), method=p.name)
    raise StabilityError(f"stability input: expected 'indices', 'xtb', a mapping or a file; "
                         f"got {type(source).__name__}")


def observe_stability(data: StabilityInput, settings: StabilitySettings) -> StabilityInput:
    """The observation is the input itself (nothing is measured)."""
    return accept_stability(data)


def stability_signature(candidate) -> tuple:
    """A candidate's stability depends on its cage and its charge."""
    return (candidate.n, tuple(candidate.spiral), candidate.cage_charge)


@lru_cache(maxsize=20000)
def _indices(n: int, spiral: tuple[int, ...], charge: int):
    return stability_indices(Cage.from_spiral(n, spiral), charge)


@lru_cache(maxsize=512)
def _xtb_kjmol(n: int, spiral: tuple[int, ...], charge: int) -> float:
    return relax_cage(Cage.from_spiral(n, spiral), charge=charge).energy * KJMOL_PER_HARTREE


def _energies(obs: StabilityInput, cands, settings) -> list[float | None] | None:
    if obs.mode == "energies":
        given = dict(obs.energies)
        return [given.get(int(c.isomer)) for c in cands]
    if obs.mode == "xtb":
        if len(cands) > settings.max_relax:
            raise StabilityError(
                f"stability 'xtb': {len(cands)} candidates, more than max_relax = "
                f"{settings.max_relax}; narrow the candidates, raise max_relax, or screen "
                "with `cageprint library` (cascade) and load its energies")
        return [_xtb_kjmol(c.n, tuple(c.spiral), c.cage_charge) for c in cands]
    return None


def _group_reason(k: int, cands, verdicts) -> str | None:
    sizes = cands[k].nmr_sizes
    if not sizes:
        return None
    group = [i for i, c in enumerate(cands) if c.nmr_sizes == sizes]
    if len(group) < 2:
        return None
    best = max(verdicts[i].score for i in group)
    tops = [i for i in group if verdicts[i].score == best]
    if k in tops and len(tops) == 1:
        return (f"breaks the tie among the {len(group)} cages with 13C pattern "
                f"{cands[k].pattern}: lowest of them ({verdicts[k].basis})")
    gap = verdicts[k].delta_kjmol - min(verdicts[i].delta_kjmol for i in group)
    return (f"{gap:+.0f} kJ/mol above the best of the {len(group)} cages with 13C pattern "
            f"{cands[k].pattern} ({verdicts[k].basis})")


def stability_all(context, cache=None) -> list[TechniqueVerdict]:
    """Verdicts for every candidate of ``context``, relative to the whole set."""
    cands = list(context.candidates)
    if not cands:
        return []
    settings = context.settings
    obs = accept_stability(context.observation)
    kinds = {(c.n, c.cage_charge) for c in cands}
    if len(kinds) > 1:
        raise StabilityError(f"stability: candidates mix cage sizes or charges "
                             f"{sorted(kinds)}; the prior compares cages of one formula")
    for c in cands:
        if len(c.spiral) != 12:
            raise StabilityError(f"stability: candidate {c.label} has no face spiral; "
                                 "stability needs the cage itself")
    idx = [_indices(c.n, tuple(c.spiral), c.cage_charge) for c in cands]
    energies = _energies(obs, cands, settings)
    method = "GFN2-xTB" if obs.mode == "xtb" else obs.method
    vs = stability_verdicts(idx, energies, method=method, temperature=settings.temperature,
                            score_floor=settings.score_floor)
    out = []
    for k, v in enumerate(vs):
        reasons = list(v.reasons)
        extra = _group_reason(k, cands, vs)
        if extra:
            reasons.insert(0, extra)
        out.append(TechniqueVerdict("stability", v.score, v.verdict, tuple(reasons),
                                    {**v.details, "delta_kjmol": v.delta_kjmol,
                                     "basis": v.basis}))
    return out
