"""What one technique says about one candidate: :class:`TechniqueVerdict`.

Every technique's comparison returns one; :mod:`cageprint.evidence` ranks
candidates by them.  The verdict words are ordered best first
(:data:`VERDICTS`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from .errors import EvidenceError
from .plain import plain

__all__ = ["VERDICTS", "RULED_OUT_SCORE", "TechniqueVerdict", "no_data"]

#: verdict words, best first
VERDICTS: tuple[str, ...] = ("consistent", "possible", "unlikely", "ruled out", "no data")

#: score given to a "ruled out" verdict that carries no finite score of its own
RULED_OUT_SCORE = -50.0


@dataclass(frozen=True)
class TechniqueVerdict:
    """What one technique says about one candidate.

    Parameters
    ----------
    technique : str
        A registered technique key (:mod:`cageprint.techniques.registry`).
    score : float
        Log-likelihood-like: 0 for a perfect fit, negative otherwise.
    verdict : str
        One of :data:`VERDICTS`.
    reasons : tuple of str
        Plain sentences.
    details : mapping
        Numbers behind the verdict (counts, costs, tolerances used).

    Examples
    --------
    >>> v = TechniqueVerdict("ir", -0.5, "consistent", ("4 bands observed, 4 allowed.",))
    >>> TechniqueVerdict.from_dict(v.to_dict()) == v
    True
    """

    technique: str
    score: float
    verdict: str
    reasons: tuple[str, ...] = ()
    details: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if self.verdict not in VERDICTS:
            raise EvidenceError(
                f"verdict must be one of {', '.join(VERDICTS)}; got {self.verdict!r}"
            )
        object.__setattr__(self, "score", float(self.score))
        object.__setattr__(self, "reasons", tuple(str(r) for r in self.reasons))
        object.__setattr__(self, "details", MappingProxyType(dict(self.details or {})))

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, TechniqueVerdict):
            return NotImplemented
        return self.to_dict() == other.to_dict()

    def __hash__(self) -> int:
        return hash((self.technique, self.score, self.verdict, self.reasons))

    @property
    def ruled_out(self) -> bool:
        return self.verdict == "ruled out"

    def to_dict(self) -> dict[str, Any]:
        return {
            "technique": self.technique,
            "score": self.score,
            "verdict": self.verdict,
            "reasons": list(self.reasons),
            "details": plain(self.details),
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> TechniqueVerdict:
        try:
            return cls(
                technique=d["technique"],
                score=d["score"],
                verdict=d["verdict"],
                reasons=tuple(d.get("reasons", ())),
                details=d.get("details", {}),
            )
        except KeyError as exc:
            raise EvidenceError(f"verdict record lacks the key {exc.args[0]!r}") from None


def no_data(technique: str, reason: str = "") -> TechniqueVerdict:
    """The verdict of a technique with nothing to judge by.

    Examples
    --------
    >>> no_data("raman").verdict
    'no data'
    """
    return TechniqueVerdict(technique, 0.0, "no data", (reason or f"no {technique} data.",))
