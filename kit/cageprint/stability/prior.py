"""Stability as evidence: a Boltzmann-type prior over a set of candidate cages.

Each candidate gets a relative energy ΔE (kJ/mol) *within the candidate set*:

* computed energies (GFN2-xTB, :mod:`.energy`) when every candidate has one
  of the same method and charge; otherwise
* an index estimate ``ΔE = PAIR_KJMOL·(pairs − min) + BETA_KJMOL·(π_max − π)``
  from the fused-pentagon count and the Hückel π energy of the cage at its
  formal charge (:mod:`.indices`).  Both constants are rough, stated scales,
  not fitted values; the estimate orders candidates, it predicts no energies.

The prior weight is ``exp(−ΔE / R·T)`` at an effective temperature
:data:`TEMPERATURE`; its log is the channel's score, floored at
``−SCORE_FLOOR`` so that stability alone can never outweigh clear spectral
evidence (a "ruled out" spectral verdict scores −50).  The channel weight in
the overall ranking is :data:`WEIGHT` (settable).  The verdict says which
candidate is lowest and why, in words.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

from ..errors import StabilityError
from .indices import StabilityIndices

__all__ = [
    "R_KJMOL",
    "TEMPERATURE",
    "WEIGHT",
    "SCORE_FLOOR",
    "PAIR_KJMOL",
    "BETA_KJMOL",
    "StabilityVerdict",
    "index_estimates",
    "stability_verdicts",
]

#: gas constant, kJ/(mol K) (CODATA 2018)
R_KJMOL = 0.00831446261815324
#: effective temperature (K) of the Boltzmann-type prior: RT = 16.6 kJ/mol, broad enough
#: for the errors of a semi-empirical method (common practice, no source)
TEMPERATURE = 2000.0
#: default weight of the stability channel in the overall score (modest)
WEIGHT = 0.5
#: the channel's score never falls below -SCORE_FLOOR (nats)
SCORE_FLOOR = 3.0
#: kJ/mol per fused pentagon pair in the index estimate (the pentagon adjacency penalty
#: is of this size for neutral cages: Albertazzi et al., PCCP 1999; from memory)
PAIR_KJMOL = 80.0
#: kJ/mol per |β| of Hückel π energy in the index estimate (|β| of about 2.6 eV for
#: fullerene π systems; from memory)
BETA_KJMOL = 250.0


@dataclass(frozen=True)
class StabilityVerdict:
    """What stability says about one candidate, relative to the candidate set.

    Attributes
    ----------
    delta_kjmol : float
        Relative energy (kJ/mol) within the set, 0 for the lowest.
    basis : str
        ``"GFN2-xTB"`` (computed energies) or ``"indices"`` (index estimate).
    score : float
        ``max(−ΔE/RT, −SCORE_FLOOR)``: the log prior weight (0 for the lowest).
    verdict : str
        ``"consistent"`` (ΔE ≤ RT), ``"possible"`` (≤ 3 RT) or ``"unlikely"``.
    reasons : tuple of str
    details : dict
    """

    delta_kjmol: float
    basis: str
    score: float
    verdict: str
    reasons: tuple[str, ...] = ()
    details: dict = field(default_factory=dict, compare=False)

    def to_dict(self) -> dict:
        return {"delta_kjmol": self.delta_kjmol, "basis": self.basis, "score": self.score,
                "verdict": self.verdict, "reasons": list(self.reasons),
                "details": dict(self.details)}

    @classmethod
    def from_dict(cls, d: dict) -> StabilityVerdict:
        return cls(float(d["delta_kjmol"]), d["basis"], float(d["score"]), d["verdict"],
                   tuple(d.get("reasons", ())), dict(d.get("details", {})))


def index_estimates(indices: Sequence[StabilityIndices], *, pair_kjmol: float = PAIR_KJMOL,
                    beta_kjmol: float = BETA_KJMOL) -> list[float]:
    """Index-estimated relative energies (kJ/mol, lowest 0) of cages of one size and charge.

    Examples
    --------
    >>> from cageprint.cage import iter_isomers
    >>> from cageprint.stability import stability_indices
    >>> c76 = [stability_indices(c) for c in iter_isomers(76, ipr=True)]
    >>> [round(e) for e in index_estimates(c76)]
    [0, 131]
    """
    if not indices:
        return []
    _same_kind(indices)
    raw = [pair_kjmol * s.pentagon_pairs - beta_kjmol * s.anion_pi_energy for s in indices]
    low = min(raw)
    return [r - low for r in raw]


def _same_kind(indices: Sequence[StabilityIndices]) -> None:
    kinds = {(s.n, s.charge) for s in indices}
    if len(kinds) > 1:
        raise StabilityError(
            f"stability: candidates mix cage sizes or charges {sorted(kinds)}; the prior "
            "compares cages of one formula"
        )


def _ordinal(k: int) -> str:
    return {1: "", 2: "second ", 3: "third "}.get(k, f"{k}th ")


def _charge_word(q: int) -> str:
    names = {1: "mono", 2: "di", 3: "tri", 4: "tetra", 5: "penta", 6: "hexa"}
    if q == 0:
        return "neutral cage"
    return f"{names.get(-q, str(-q) + '-')}anion" if q < 0 else f"{q}+ cation"


def _reasons(s: StabilityIndices, all_s: Sequence[StabilityIndices], delta: float,
             basis: str, energies_used: bool) -> list[str]:
    m = len(all_s)
    out = []
    if energies_used:
        word = "lowest" if delta < 0.05 else "above the lowest"
        out.append(f"{delta:+.0f} kJ/mol, {word} of {m} by {basis} ({_charge_word(s.charge)})")
    pairs = [x.pentagon_pairs for x in all_s]
    fewest = min(pairs)
    if s.pentagon_pairs == 0 and fewest == max(pairs):
        out.append(f"no fused pentagons (like all {m} candidates)")
    elif s.pentagon_pairs == fewest:
        tied = pairs.count(fewest)
        also = f", shared by {tied}" if tied > 1 else ""
        out.append(f"{s.pentagon_pairs} fused pentagon pairs, the fewest among the {m} "
                   f"candidates{also}")
    else:
        out.append(f"{s.pentagon_pairs} fused pentagon pairs (fewest among the {m}: {fewest})")
    gaps = [x.anion_gap for x in all_s]
    what = "anion gap" if s.charge else "Hückel gap"
    if s.anion_shell == "open":
        out.append(f"{what} 0: open shell ({_charge_word(s.charge)})")
    else:
        best = max(gaps)
        rank = 1 + sum(g > s.anion_gap + 1e-9 for g in gaps)
        if rank == 1:
            out.append(f"{what} {s.anion_gap:.2f} |β|, widest of {m}")
        else:
            out.append(f"{what} {s.anion_gap:.2f} |β|, {_ordinal(rank)}widest of {m} "
                       f"(widest {best:.2f})")
    if not energies_used:
        out.append(f"index estimate {delta:+.0f} kJ/mol ({PAIR_KJMOL:g} kJ/mol per fused pair, "
                   f"{BETA_KJMOL:g} kJ/mol per |β| of π energy at charge {s.charge:+d})")
    return out


def stability_verdicts(indices: Sequence[StabilityIndices], energies=None, *,
                       method: str = "GFN2-xTB", temperature: float = TEMPERATURE,
                       score_floor: float = SCORE_FLOOR) -> list[StabilityVerdict]:
    """The stability verdict of every candidate, relative to the whole set.

    Parameters
    ----------
    indices : sequence of StabilityIndices
        One per candidate, all of one cage size and charge.
    energies : sequence of float or None, optional
        Relative or absolute energies in kJ/mol, one per candidate (``None``
        or ``nan`` where missing).  Used only when every candidate has one;
        otherwise the index estimate is used for all.
    method : str
        Name of the method behind ``energies`` (for the reasons).
    temperature : float
        Effective temperature (K) of the Boltzmann-type weight.
    score_floor : float
        Lowest score magnitude (nats).

    Examples
    --------
    >>> from cageprint.cage import iter_isomers
    >>> from cageprint.stability import stability_indices
    >>> c80 = [stability_indices(c, -6) for c in iter_isomers(80, ipr=True)]
    >>> v = stability_verdicts(c80)
    >>> max(range(7), key=lambda k: v[k].score) + 1      # isomer 7 (Ih)
    7
    >>> v[6].reasons[1]
    'anion gap 0.99 |β|, widest of 7'
    """
    indices = list(indices)
    if not indices:
        return []
    if temperature <= 0:
        raise StabilityError(f"temperature: expected > 0 K; got {temperature}")
    _same_kind(indices)
    have = energies is not None and len(energies) == len(indices) and all(
        e is not None and math.isfinite(float(e)) for e in energies)
    if have:
        low = min(float(e) for e in energies)
        deltas = [float(e) - low for e in energies]
        basis = method
    else:
        deltas = index_estimates(indices)
        basis = "indices"
    rt = R_KJMOL * temperature
    out = []
    for s, d in zip(indices, deltas, strict=True):
        score = max(-d / rt, -float(score_floor))
        verdict = "consistent" if d <= rt else "possible" if d <= 3 * rt else "unlikely"
        out.append(StabilityVerdict(
            delta_kjmol=round(d, 6), basis=basis, score=round(score, 9), verdict=verdict,
            reasons=tuple(_reasons(s, indices, d, basis, have)),
            details={"temperature_K": temperature, "rt_kjmol": round(rt, 4),
                     "score_floor": score_floor, "pentagon_pairs": s.pentagon_pairs,
                     "anion_gap": s.anion_gap, "anion_pi_energy": s.anion_pi_energy,
                     "charge": s.charge},
        ))
    return out
