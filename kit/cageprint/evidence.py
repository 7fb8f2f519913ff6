"""Combine the verdicts of each technique into one ranked table of candidate cages.

Every technique module returns, for one candidate and one observation, a
:class:`TechniqueVerdict`: a log-likelihood-like ``score`` (0 is a perfect
fit, more negative is worse), a ``verdict`` word, and the reasons in plain
sentences.  :func:`rank` adds the scores with visible, settable weights and
orders the candidates.  Candidates the evidence cannot tell apart (their
scores agree within :data:`TIE_TOL`) share a rank; ties are never broken by
list order or isomer number, and the table says why two candidates tie.
Candidates a technique rules out stay in the table, marked as ruled out,
after every candidate that is not.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from .candidates import TECHNIQUE_ORDER, Candidate, _transition_energies  # noqa: F401
from .errors import EvidenceError

__all__ = [
    "TECHNIQUE_ORDER",
    "VERDICTS",
    "DEFAULT_WEIGHTS",
    "TIE_TOL",
    "TechniqueVerdict",
    "Candidate",
    "RankedRow",
    "Ranking",
    "no_data",
    "mass_verdict",
    "rank",
    "verdicts_by_signature",
]


#: verdict words, best first
VERDICTS: tuple[str, ...] = ("consistent", "possible", "unlikely", "ruled out", "no data")

#: default weight of each technique's score in the overall score.  UV-vis is
#: a weak, qualitative criterion (Hückel gaps map to eV only roughly).
DEFAULT_WEIGHTS: Mapping[str, float] = MappingProxyType(
    {"mass": 1.0, "nmr": 1.0, "ir": 1.0, "raman": 1.0, "uvvis": 0.3}
)

#: two overall scores closer than this (absolute, in score units) are a tie
TIE_TOL = 1e-6

#: score given to a "ruled out" verdict that carries no finite score of its own
RULED_OUT_SCORE = -50.0


def _freeze(d: Mapping[str, Any] | None) -> Mapping[str, Any]:
    return MappingProxyType(dict(d or {}))


def _plain(value: Any) -> Any:
    """Turn tuples, numpy scalars and mapping proxies into JSON-ready values."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if hasattr(value, "item") and callable(value.item):  # numpy scalar
        return value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


@dataclass(frozen=True)
class TechniqueVerdict:
    """What one technique says about one candidate.

    Parameters
    ----------
    technique : str
        One of :data:`TECHNIQUE_ORDER`.
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
        object.__setattr__(self, "details", _freeze(self.details))

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
            "details": _plain(self.details),
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


def no_data(technique: str) -> TechniqueVerdict:
    """The verdict of a technique with no spectrum loaded.

    Examples
    --------
    >>> no_data("raman").verdict
    'no data'
    """
    return TechniqueVerdict(technique, 0.0, "no data", (f"no {technique} data.",))




#: a species below this relative abundance is "minor" (its cage only "possible")
MASS_MINOR_ABUNDANCE = 0.1


def mass_verdict(candidate: Candidate, observation: Any, *,
                 minor_abundance: float = MASS_MINOR_ABUNDANCE) -> TechniqueVerdict:
    """Mass evidence: the cage sizes (and cage charges) found fix ``n``.

    ``observation`` is a mass observation with ``.species`` (items with
    ``cage_n`` and optionally ``cage_charge``, ``formula``, ``kind``,
    ``relative_abundance``), or a plain iterable of cage sizes.  Fragment
    ions do not vouch for a cage; a species weaker than ``minor_abundance``
    (relative to the strongest) makes its cage only "possible".

    Examples
    --------
    >>> c = Candidate("C78", 78, 1, "D3", (6,) * 13)
    >>> mass_verdict(c, [78]).verdict, mass_verdict(c, [76, 84]).verdict
    ('consistent', 'ruled out')
    """
    species = getattr(observation, "species", observation)
    found: list[tuple[int, int | None, str, str, float]] = []
    for sp in species or ():
        if isinstance(sp, (int, float)):
            found.append((int(sp), None, f"C{int(sp)}", "cage", 1.0))
            continue
        cn = getattr(sp, "cage_n", None)
        if cn is None:
            continue
        found.append((int(cn), getattr(sp, "cage_charge", None),
                      str(getattr(sp, "formula", f"C{int(cn)}")),
                      str(getattr(sp, "kind", "cage")),
                      float(getattr(sp, "relative_abundance", 1.0))))
    if not found:
        return TechniqueVerdict("mass", 0.0, "no data",
                                ("the mass spectrum shows no cage species.",))
    intact = [f for f in found if f[3] != "fragment"]
    sizes = sorted({f[0] for f in intact})
    names = ", ".join(sorted({f[2] for f in intact})) or "fragments only"
    details = {"cage_sizes": sizes, "fragments": sorted({f[2] for f in found} -
                                                        {f[2] for f in intact})}
    mine = [f for f in intact if f[0] == candidate.n]
    if not mine:
        frag = [f for f in found if f[0] == candidate.n]
        if frag:
            return TechniqueVerdict(
                "mass", -6.0, "unlikely",
                (f"mass spectrum shows {names}; a {candidate.n}-carbon cage appears only as "
                 "a fragment ion.",), details)
        return TechniqueVerdict(
            "mass", RULED_OUT_SCORE, "ruled out",
            (f"mass spectrum shows {names}; none has a {candidate.n}-carbon cage.",), details)
    charges = {f[1] for f in mine if f[1] is not None}
    if charges and candidate.cage_charge not in charges:
        return TechniqueVerdict(
            "mass", -6.0, "unlikely",
            (f"mass spectrum shows a C{candidate.n} cage carrying charge "
             f"{', '.join(str(c) for c in sorted(charges))}, the candidate is built "
             f"for {candidate.cage_charge}.",),
            {**details, "cage_charges": sorted(charges)})
    strongest = max(f[4] for f in mine)
    if strongest < minor_abundance:
        return TechniqueVerdict(
            "mass", -2.0, "possible",
            (f"mass spectrum shows {names}; the {candidate.n}-carbon cage is a minor species "
             f"({100 * strongest:.0f} % of the strongest).",), details)
    return TechniqueVerdict(
        "mass", 0.0, "consistent",
        (f"mass spectrum shows {names}: a {candidate.n}-carbon cage is present.",), details)


@dataclass(frozen=True)
class RankedRow:
    """One line of the ranked table."""

    rank: int
    candidate: Candidate
    score: float
    verdict: str
    verdicts: Mapping[str, TechniqueVerdict]
    tied_with: tuple[int, ...] = ()
    tie_reason: str = ""
    reasons: tuple[str, ...] = ()

    @property
    def ruled_out(self) -> bool:
        return self.verdict == "ruled out"

    def to_dict(self) -> dict[str, Any]:
        return {
            "rank": self.rank, "candidate": self.candidate.to_dict(), "score": self.score,
            "verdict": self.verdict,
            "verdicts": {t: v.to_dict() for t, v in self.verdicts.items()},
            "tied_with": list(self.tied_with), "tie_reason": self.tie_reason,
            "reasons": list(self.reasons),
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> RankedRow:
        return cls(
            rank=int(d["rank"]), candidate=Candidate.from_dict(d["candidate"]),
            score=float(d["score"]), verdict=d["verdict"],
            verdicts=MappingProxyType(
                {t: TechniqueVerdict.from_dict(v) for t, v in d["verdicts"].items()}
            ),
            tied_with=tuple(int(i) for i in d.get("tied_with", ())),
            tie_reason=d.get("tie_reason", ""), reasons=tuple(d.get("reasons", ())),
        )


@dataclass(frozen=True)
class Ranking:
    """The ranked candidate table with the weights and techniques behind it."""

    rows: tuple[RankedRow, ...]
    weights: Mapping[str, float]
    techniques: tuple[str, ...]
    with_data: tuple[str, ...]
    tie_tol: float = TIE_TOL

    def __len__(self) -> int:
        return len(self.rows)

    def __iter__(self):
        return iter(self.rows)

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Ranking):
            return NotImplemented
        return self.to_dict() == other.to_dict()

    __hash__ = None  # type: ignore[assignment]

    def top(self) -> tuple[RankedRow, ...]:
        """The rows sharing rank 1 (empty when every candidate is ruled out)."""
        return tuple(r for r in self.rows if r.rank == 1 and not r.ruled_out)

    def row(self, isomer: int) -> RankedRow:
        for r in self.rows:
            if r.candidate.isomer == isomer:
                return r
        raise EvidenceError(f"isomer {isomer} is not among the {len(self.rows)} candidates")

    def table(self) -> list[dict[str, Any]]:
        """Flat rows: rank, formula, isomer, point_group, score, verdict, per-technique
        verdict and score, tie note and reasons (CSV- and DataFrame-ready)."""
        out = []
        for r in self.rows:
            c = r.candidate
            d: dict[str, Any] = {
                "rank": r.rank, "formula": c.formula, "isomer": c.isomer,
                "point_group": c.point_group, "score": round(r.score, 4),
                "verdict": r.verdict, "nmr_pattern": c.pattern,
            }
            for t in self.techniques:
                v = r.verdicts[t]
                d[f"{t}_verdict"] = v.verdict
                d[f"{t}_score"] = round(v.score, 4)
            d["tie"] = r.tie_reason
            d["reasons"] = " ".join(r.reasons)
            out.append(d)
        return out

    def to_frame(self):
        """The table as a pandas DataFrame (one row per candidate, in rank order)."""
        import pandas as pd

        return pd.DataFrame(self.table())

    def to_dict(self) -> dict[str, Any]:
        return {
            "rows": [r.to_dict() for r in self.rows],
            "weights": dict(self.weights), "techniques": list(self.techniques),
            "with_data": list(self.with_data), "tie_tol": self.tie_tol,
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Ranking:
        try:
            return cls(
                rows=tuple(RankedRow.from_dict(r) for r in d["rows"]),
                weights=MappingProxyType({k: float(v) for k, v in d["weights"].items()}),
                techniques=tuple(d["techniques"]), with_data=tuple(d["with_data"]),
                tie_tol=float(d.get("tie_tol", TIE_TOL)),
            )
        except KeyError as exc:
            raise EvidenceError(f"ranking record lacks the key {exc.args[0]!r}") from None


_NAMES = {"mass": "mass", "nmr": "NMR", "ir": "IR", "raman": "Raman", "uvvis": "UV-vis"}


def _describe_signature(technique: str, c: Candidate) -> str:
    if technique == "nmr":
        return f"same NMR pattern ({c.pattern})"
    if technique == "ir":
        return f"same IR-active count ({c.ir_count})"
    if technique == "raman":
        return f"same Raman-active count ({c.raman_count})"
    if technique == "uvvis":
        return "same Hückel gap"
    return "same cage size"


def rank(
    candidates: Sequence[Candidate],
    verdicts: Mapping[str, Sequence[TechniqueVerdict]],
    weights: Mapping[str, float] | None = None,
    *,
    tie_tol: float = TIE_TOL,
) -> Ranking:
    """Rank candidates by the weighted sum of their technique scores.

    Parameters
    ----------
    candidates : sequence of Candidate
    verdicts : mapping technique -> sequence of TechniqueVerdict
        One verdict per candidate, in candidate order.  A technique left
        out (or whose verdicts are all "no data") is shown as "no data".
    weights : mapping technique -> float, optional
        Defaults to :data:`DEFAULT_WEIGHTS`; missing keys take the default.
        A weight of 0 keeps a technique visible but out of the score and out
        of the "ruled out" decision.
    tie_tol : float
        Overall scores within this distance of their neighbour share a rank.

    Returns
    -------
    Ranking
        Rows in rank order; candidates ruled out by any weighted technique
        come after all others.  Equal ranks are shared ("1, 1, 3" style).

    Examples
    --------
    >>> a = Candidate("C60", 60, 1, "Ih", (60,), 4, 10, 0.757)
    >>> b = Candidate("C60", 60, 2, "D5h", (20, 20, 10, 10), 7, 20, 0.1)
    >>> va = TechniqueVerdict("ir", 0.0, "consistent")
    >>> vb = TechniqueVerdict("ir", -1.0, "possible")
    >>> r = rank([b, a], {"ir": [vb, va]})
    >>> [(row.rank, row.candidate.isomer) for row in r]
    [(1, 1), (2, 2)]
    """
    cands = list(candidates)
    w = dict(DEFAULT_WEIGHTS)
    for k, v in (weights or {}).items():
        if k not in TECHNIQUE_ORDER:
            raise EvidenceError(f"weights: unknown technique {k!r}; expected one of "
                                f"{', '.join(TECHNIQUE_ORDER)}")
        v = float(v)
        if not math.isfinite(v) or v < 0:
            raise EvidenceError(f"weights[{k!r}] must be a finite number >= 0; got {v}")
        w[k] = v
    per: dict[str, list[TechniqueVerdict]] = {}
    for t in TECHNIQUE_ORDER:
        vs = verdicts.get(t)
        if vs is None:
            per[t] = [no_data(t)] * len(cands)
            continue
        vs = list(vs)
        if len(vs) != len(cands):
            raise EvidenceError(f"verdicts[{t!r}] has {len(vs)} entries for "
                                f"{len(cands)} candidates; expected one per candidate")
        per[t] = vs
    for t in verdicts:
        if t not in TECHNIQUE_ORDER:
            raise EvidenceError(f"verdicts: unknown technique {t!r}; expected one of "
                                f"{', '.join(TECHNIQUE_ORDER)}")
    with_data = tuple(t for t in TECHNIQUE_ORDER
                      if any(v.verdict != "no data" for v in per[t]))

    scored = []
    for i in range(len(cands)):
        total = 0.0
        out = False
        worst = "consistent"
        reasons: list[str] = []
        for t in with_data:
            v = per[t][i]
            if v.verdict == "no data" or w[t] == 0:
                continue
            total += w[t] * v.score
            if v.ruled_out:
                out = True
            if VERDICTS.index(v.verdict) > VERDICTS.index(worst):
                worst = v.verdict
            reasons.extend(f"{_NAMES[t]}: {s}" for s in v.reasons[:2])
        if not with_data:
            worst = "no data"
        scored.append((i, total, out, worst, reasons))

    # order: not ruled out first, then by score (best first); identical keys keep
    # their relative order only for display - they share the rank
    scored.sort(key=lambda s: (s[2], -s[1]))
    groups: list[list[tuple]] = []
    for s in scored:
        if groups and groups[-1][-1][2] == s[2] and abs(groups[-1][-1][1] - s[1]) <= tie_tol:
            groups[-1].append(s)
        else:
            groups.append([s])
    rows: list[RankedRow] = []
    position = 1
    weighted = [t for t in with_data if w[t] > 0]
    for g in groups:
        g.sort(key=lambda s: (cands[s[0]].formula, cands[s[0]].isomer))  # display only
        why = ""
        if len(g) > 1:
            same = [t for t in weighted
                    if len({cands[s[0]].signature(t) for s in g}) == 1]
            if not weighted:
                why = "no weighted evidence"
            elif len(same) == len(weighted):
                why = ", ".join(_describe_signature(t, cands[g[0][0]]) for t in same)
            else:
                why = f"overall scores equal within {tie_tol:g}"
        members = [cands[s[0]].isomer for s in g]
        for k, s in enumerate(g):
            i, total, out, worst, reasons = s
            c = cands[i]
            others = tuple(members[:k] + members[k + 1:])
            tie_reason = ""
            if others:
                shown = ", ".join(str(x) for x in others[:12])
                if len(others) > 12:
                    shown += f" and {len(others) - 12} more"
                word = "isomer" if len(others) == 1 else "isomers"
                tie_reason = f"tied with {word} {shown}: {why}"
            rows.append(RankedRow(
                rank=position, candidate=c, score=total,
                verdict="ruled out" if out else worst,
                verdicts={t: per[t][i] for t in TECHNIQUE_ORDER},
                tied_with=others, tie_reason=tie_reason, reasons=tuple(reasons),
            ))
        position += len(g)
    return Ranking(rows=tuple(rows), weights=MappingProxyType(w), techniques=TECHNIQUE_ORDER,
                   with_data=with_data, tie_tol=tie_tol)


def verdicts_by_signature(
    technique: str,
    candidates: Iterable[Candidate],
    compare,
    cache: dict | None = None,
) -> list[TechniqueVerdict]:
    """Compare every candidate, computing once per distinct signature.

    ``compare(candidate) -> TechniqueVerdict``; ``cache`` (signature ->
    verdict) is filled and reused when given.  Candidates with equal
    signatures get the very same verdict, so they tie exactly.
    """
    cache = {} if cache is None else cache
    out = []
    for c in candidates:
        key = c.signature(technique)
        v = cache.get(key)
        if v is None:
            v = compare(c)
            cache[key] = v
        out.append(v)
    return out
