"""Combine the verdicts of each technique into one ranked table of candidate cages.

Every technique module returns, for one candidate and one observation, a
:class:`TechniqueVerdict`: a log-likelihood-like ``score`` (0 is a perfect
fit, more negative is worse), a ``verdict`` word, and the reasons in plain
sentences.  :func:`rank` adds the scores with visible, settable weights and
orders the candidates.

Every figure shown for a row follows from the weighted total ``S`` (a log-likelihood, in
nats) so that rank, score, posterior share and verdict word never tell different stories:

- **share**: the posterior share ``exp(S_i) / sum_j exp(S_j)`` over the candidates no
  weighted technique rules out (flat prior over the listed candidates); ruled-out rows
  have share 0;
- **rank**: by ``S``; candidates within :data:`TIE_TOL` nats of the best of their group
  share a rank and are called "not separable with this evidence" (a likelihood ratio
  below ``exp(TIE_TOL)``); ties are never broken by list order or isomer number;
- **verdict word**: from the likelihood ratio to the best row (:data:`WORD_LIMITS`),
  never better than the row's own worst weighted technique word, nor than the word of
  any row above it (so a poor fit is never called "consistent", and reading down the
  table the words only get worse);
- candidates a technique rules out stay in the table, marked "ruled out", after every
  kept candidate, and their shown score is never above a kept one's.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, fields
from types import MappingProxyType
from typing import Any

from .candidate import Candidate
from .errors import EvidenceError
from .plain import plain
from .techniques import registry
from .techniques.registry import map_by_signature
from .verdict import RULED_OUT_SCORE, VERDICTS, TechniqueVerdict, no_data

__all__ = [
    "VERDICTS",
    "TIE_TOL",
    "WORD_LIMITS",
    "RULED_OUT_SCORE",
    "TechniqueVerdict",
    "Candidate",
    "RankedRow",
    "Ranking",
    "no_data",
    "rank",
    "verdicts_by_signature",
]

#: candidates whose weighted totals differ by less than this (nats; a likelihood ratio
#: below e**0.2 = 1.22) share a rank: "not separable with this evidence"
TIE_TOL = 0.2
#: how every table that shows scores explains them
SCORE_NOTE = ("Score: log-likelihood-like, 0 = fits as predicted, more negative = worse; "
              "the ranking adds each technique's score times its weight")

#: verdict word from the log-likelihood ratio to the best kept row: within 1.1 nats
#: (ratio 3) "consistent", within 3.4 nats (ratio 30) "possible", else "unlikely"
#: (common practice, no source: Jeffreys' evidence bands, ratios 3 and 30)
WORD_LIMITS: tuple[tuple[float, str], ...] = ((math.log(3.0), "consistent"),
                                              (math.log(30.0), "possible"))

_ORDER = {v: i for i, v in enumerate(VERDICTS)}  # verdict word -> badness


@dataclass(frozen=True)
class RankedRow:
    """One line of the ranked table.

    Attributes
    ----------
    rank : int
        Shared by candidates the evidence cannot tell apart ("1, 1, 3").
    candidate : Candidate
    score : float
        Weighted sum of the technique scores (for a ruled-out row, never above the
        lowest kept row's).
    verdict : str
        From the likelihood ratio to the best row (:data:`WORD_LIMITS`), "ruled out"
        if a weighted technique rules it out.
    verdicts : mapping technique -> TechniqueVerdict
        Every registered technique's verdict ("no data" where none).
    tied_with : tuple of int
        Isomer numbers sharing the rank.
    tie_reason : str
    reasons : tuple of str
        The first reasons of each weighted technique, prefixed by its short label.

    New per-row figures (e.g. a posterior share) are added as fields with a
    default; :meth:`to_dict` and :meth:`from_dict` follow the fields.
    """

    rank: int
    candidate: Candidate
    score: float
    verdict: str
    verdicts: Mapping[str, TechniqueVerdict]
    tied_with: tuple[int, ...] = ()
    tie_reason: str = ""
    reasons: tuple[str, ...] = ()
    share: float = 0.0

    @property
    def ruled_out(self) -> bool:
        return self.verdict == "ruled out"

    def to_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {f.name: plain(getattr(self, f.name)) for f in fields(self)}
        d["candidate"] = self.candidate.to_dict()
        d["verdicts"] = {t: v.to_dict() for t, v in self.verdicts.items()}
        return d

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> RankedRow:
        known = {f.name for f in fields(cls)}
        kw = {k: v for k, v in d.items() if k in known}
        kw["rank"], kw["score"] = int(d["rank"]), float(d["score"])
        kw["share"] = float(d.get("share", 0.0))
        kw["candidate"] = Candidate.from_dict(d["candidate"])
        kw["verdicts"] = MappingProxyType(
            {t: TechniqueVerdict.from_dict(v) for t, v in d["verdicts"].items()})
        kw["tied_with"] = tuple(int(i) for i in d.get("tied_with", ()))
        kw["reasons"] = tuple(d.get("reasons", ()))
        return cls(**kw)


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

    def __iter__(self) -> Iterator[RankedRow]:
        return iter(self.rows)

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Ranking):
            return NotImplemented
        return self.to_dict() == other.to_dict()

    __hash__ = None  # type: ignore[assignment]

    def top(self) -> tuple[RankedRow, ...]:
        """The rows sharing rank 1 (empty when every candidate is ruled out)."""
        return tuple(r for r in self.rows if r.rank == 1 and not r.ruled_out)

    def shown_verdict(self, row: RankedRow, technique: str) -> str:
        """A technique's word for a row as tables show it: a technique at weight 0 counts
        for nothing in the ranking, and its column says so beside its own word."""
        word = row.verdicts[technique].verdict
        if word != "no data" and not self.weights.get(technique, 1.0):
            return f"{word} (weight 0, not counted)"
        return word

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
                "share": round(r.share, 4), "verdict": r.verdict, "nmr_pattern": c.pattern,
            }
            for t in self.techniques:
                v = r.verdicts[t]
                d[f"{t}_verdict"] = v.verdict
                d[f"{t}_score"] = round(v.score, 4)
            d["tie"] = r.tie_reason
            d["reasons"] = " ".join(r.reasons)
            out.append(d)
        return out

    def to_frame(self) -> Any:
        """The table as a pandas DataFrame (one row per candidate, in rank order)."""
        import pandas as pd  # lazy: pandas takes ~0.5 s to import; only this table needs it

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


def short_label(technique: str) -> str:
    """A technique's short label (its key when it is not registered here)."""
    return registry.get(technique).short if technique in registry.keys() else technique


def label(technique: str) -> str:
    """A technique's display label (its key when it is not registered here)."""
    return registry.get(technique).label if technique in registry.keys() else technique


def _weights(weights: Mapping[str, float] | None, order: tuple[str, ...]) -> dict[str, float]:
    w = registry.default_weights()
    for k, v in (weights or {}).items():
        if k not in order:
            raise EvidenceError(f"weights: unknown technique {k!r}; expected one of "
                                f"{', '.join(order)}")
        v = float(v)
        if not math.isfinite(v) or v < 0:
            raise EvidenceError(f"weights[{k!r}] must be a finite number >= 0; got {v}")
        w[k] = v
    return w


@dataclass(slots=True)
class _Scored:
    """One candidate's overall score before ranking (internal; slots: made 450 times a rank)."""

    index: int
    total: float
    out: bool
    worst: str
    reasons: tuple[str, ...]


def _sentence(text: str) -> str:
    """A reason as a sentence: first letter capitalised, unless the first word is a unit
    or symbol that keeps its case (m/z, ppm, cm-1, eV).

    Examples
    --------
    >>> _sentence("mass spectrum shows C60"), _sentence("m/z 720 found"), _sentence("13C")
    ('Mass spectrum shows C60', 'm/z 720 found', '13C')
    """
    first = text.split(" ", 1)[0]
    if not text[:1].islower() or first in ("ppm", "eV") or "/" in first or "-1" in first:
        return text
    return text[0].upper() + text[1:]


def _score(i: int, per: Mapping[str, Sequence[TechniqueVerdict]], w: Mapping[str, float],
           labels: Mapping[str, str]) -> _Scored:
    """Weighted total, ruled-out flag, worst verdict and reasons of candidate ``i``.

    ``labels`` maps each technique with data to its short label.
    """
    total, out, worst = 0.0, False, "consistent"
    reasons: list[str] = []
    for t, short in labels.items():
        v = per[t][i]
        if v.verdict == "no data" or w[t] == 0:
            continue
        total += w[t] * v.score
        out = out or v.verdict == "ruled out"
        if _ORDER[v.verdict] > _ORDER[worst]:
            worst = v.verdict
        reasons.extend(f"{short}: {_sentence(s)}" for s in v.reasons[:2])
        # a mixture finding is always shown, wherever the row's reasons go (CSV, report, board)
        reasons.extend(f"{short}: {_sentence(s)}" for s in v.reasons[2:]
                       if "second component" in s and isinstance(v.details, Mapping)
                       and v.details.get("second_component"))
    return _Scored(i, total, out, worst if labels else "no data", tuple(reasons))


def _tie_reason(group: list[_Scored], cands: Sequence[Candidate], weighted: list[str],
                tie_tol: float) -> str:
    """Why the candidates of one group share a rank."""
    if len(group) < 2:
        return ""
    if not weighted:
        return "no weighted evidence"
    techs = [registry.get(t) for t in weighted]
    same = [t for t in techs if len({t.signature_of(cands[s.index]) for s in group}) == 1]
    if len(same) == len(techs):
        return ", ".join(t.tie_note(cands[group[0].index]) for t in same)
    return f"not separable with this evidence (totals within {tie_tol:g})"


def _word(gap: float, floor: str) -> str:
    """The word of a kept row ``gap`` nats below the best, never better than ``floor``."""
    word = "unlikely"
    for limit, w in WORD_LIMITS:
        if gap <= limit:
            word = w
            break
    return word if _ORDER[word] >= _ORDER[floor] else floor


def _groups(scored: list[_Scored], tie_tol: float) -> list[list[_Scored]]:
    """Consecutive rows (sorted best first) within ``tie_tol`` of their group's best."""
    groups: list[list[_Scored]] = []
    for s in scored:
        head = groups[-1][0] if groups else None
        if head is not None and head.out == s.out and (
                head.total - s.total < tie_tol or head.total == s.total):
            groups[-1].append(s)
        else:
            groups.append([s])
    return groups


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
        One verdict per candidate, in candidate order.  A registered
        technique left out (or whose verdicts are all "no data") is shown as
        "no data".
    weights : mapping technique -> float, optional
        Defaults to each technique's registry weight; missing keys take the
        default.  A weight of 0 keeps a technique visible but out of the
        score and out of the "ruled out" decision.
    tie_tol : float
        Candidates less than this (nats) below the best of their group share a rank.

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
    order = registry.keys()
    w = _weights(weights, order)
    for t in verdicts:
        if t not in order:
            raise EvidenceError(f"verdicts: unknown technique {t!r}; expected one of "
                                f"{', '.join(order)}")
    per: dict[str, list[TechniqueVerdict]] = {}
    for t in order:
        vs = verdicts.get(t)
        if vs is None:
            per[t] = [no_data(t)] * len(cands)
            continue
        per[t] = list(vs)
        if len(per[t]) != len(cands):
            raise EvidenceError(f"verdicts[{t!r}] has {len(per[t])} entries for "
                                f"{len(cands)} candidates; expected one per candidate")
    with_data = tuple(t for t in order if any(v.verdict != "no data" for v in per[t]))
    labels = {t: short_label(t) for t in with_data}
    scored = [_score(i, per, w, labels) for i in range(len(cands))]
    # order: not ruled out first, then by score (best first); identical keys keep
    # their relative order only for display - they share the rank
    scored.sort(key=lambda s: (s.out, -s.total))
    # shares from the totals as the display orders them (to 1e-6 nats), so that equal
    # shown totals get equal shares and a lower row never shows a larger one
    kept = [round(s.total, 6) for s in scored if not s.out]
    best = kept[0] if kept else 0.0
    norm = math.fsum(math.exp(t - best) for t in kept) if kept else 1.0
    floor = "consistent"  # the word of the row above: a lower row never sounds better
    lowest_kept = min((s.total for s in scored if not s.out), default=math.inf)
    groups = _groups(scored, tie_tol)
    rows: list[RankedRow] = []
    weighted = [t for t in with_data if w[t] > 0]
    for g in groups:
        if not labels:
            row_word = "no data"
        elif g[0].out:
            row_word = "ruled out"
        else:
            for s in g:
                floor = s.worst if _ORDER.get(s.worst, 0) > _ORDER[floor] else floor
            row_word = floor = _word(best - g[0].total, floor)
        # display order inside a shared rank: best total first, then formula and isomer
        g.sort(key=lambda s: (-round(s.total, 6), cands[s.index].formula,
                              cands[s.index].isomer))
        why = _tie_reason(g, cands, weighted, tie_tol)
        members = [cands[s.index].isomer for s in g]
        position = len(rows) + 1
        for k, s in enumerate(g):
            others = tuple(members[:k] + members[k + 1:])
            tie_reason = ""
            if others:
                shown = ", ".join(str(x) for x in others[:12])
                if len(others) > 12:
                    shown += f" and {len(others) - 12} more"
                word = "isomer" if len(others) == 1 else "isomers"
                tie_reason = f"tied with {word} {shown}: {why}"
            rows.append(RankedRow(
                rank=position, candidate=cands[s.index],
                score=min(s.total, lowest_kept) if s.out else s.total, verdict=row_word,
                verdicts={t: per[t][s.index] for t in order},
                tied_with=others, tie_reason=tie_reason, reasons=s.reasons,
                share=0.0 if s.out else math.exp(round(s.total, 6) - best) / norm,
            ))
    return Ranking(rows=tuple(rows), weights=MappingProxyType(w), techniques=order,
                   with_data=with_data, tie_tol=tie_tol)


def verdicts_by_signature(technique: str, candidates: Sequence[Candidate],
                          compare: Callable[[Candidate], TechniqueVerdict],
                          cache: dict | None = None) -> list[TechniqueVerdict]:
    """Compare every candidate, computing once per distinct signature of ``technique``.

    ``compare(candidate) -> TechniqueVerdict``; ``cache`` (signature ->
    verdict) is filled and reused when given.  Candidates with equal
    signatures get the very same verdict, so they tie exactly.
    """
    return map_by_signature(candidates, registry.get(technique).signature_of, compare, cache)
