"""Registry entries without a spectrum: a prior taken as data, and a channel judged from the
candidates alone (the shape of the stability channel), plus the ``predict`` hook."""

from __future__ import annotations

import dataclasses
from collections.abc import Hashable, Mapping, MutableMapping
from typing import Any

import pytest

from cageprint.candidate import Candidate
from cageprint.errors import SessionError
from cageprint.session import Session
from cageprint.settings import Settings, setting
from cageprint.techniques import registry
from cageprint.techniques.registry import CompareContext, Technique
from cageprint.verdict import TechniqueVerdict

# invented candidates (made-up counts): the plumbing is tested, not the science
CANDS = (
    Candidate("C76", 76, 1, "D2", (4,) * 19, 165, 192, 0.1),
    Candidate("C76", 76, 2, "Td", (24, 24, 12, 12, 4), 29, 49, 0.0),
    Candidate("C76", 76, 3, "C2v", (2,) * 2 + (4,) * 17 + (1,) * 2, 100, 120, 0.2),
)


@dataclasses.dataclass(frozen=True)
class PriorSettings(Settings):
    technique = "prior"
    floor: float = setting(1e-3, stage="compare", low=1e-9, high=1.0,
                           help="probability given to an isomer the prior leaves out")


def _accept(source: Any) -> dict[int, float]:
    if not isinstance(source, Mapping):
        raise SessionError("prior: expected a mapping isomer -> probability")
    return {int(k): float(v) for k, v in source.items()}


def _prior_compare(c: Candidate, ctx: CompareContext) -> TechniqueVerdict:
    import math

    p = ctx.observation.get(c.isomer, ctx.settings.floor)
    return TechniqueVerdict("prior", math.log(p), "possible" if p < 0.5 else "consistent",
                            (f"prior {p:g}.",))


PRIOR = Technique("prior", "Prior", "Prior", "", PriorSettings,
                  observe=lambda data, settings: data, signature=lambda c: c.isomer,
                  compare=_prior_compare, needs_spectrum=False, accept=_accept,
                  cli_flag=None)


@dataclasses.dataclass(frozen=True)
class GapSettings(Settings):
    technique = "gaprank"


def _gap_all(ctx: CompareContext,
             cache: MutableMapping[Hashable, TechniqueVerdict]) -> list[TechniqueVerdict]:
    """Relative to the others: the widest Hückel gap among the candidates is preferred."""
    widest = max(c.gap_beta for c in ctx.candidates)
    n = len(ctx.candidates)
    out = []
    for c in ctx.candidates:
        if c.gap_beta not in cache:
            best = c.gap_beta == widest
            cache[c.gap_beta] = TechniqueVerdict(
                "gaprank", 0.0 if best else -1.0, "consistent" if best else "possible",
                (f"gap {c.gap_beta:g} |β|, {'the widest' if best else 'not the widest'} of "
                 f"{n}.",))
        out.append(cache[c.gap_beta])
    return out


GAPRANK = Technique("gaprank", "Gap rank", "Gap", "", GapSettings,
                    observe=lambda data, settings: None, signature=lambda c: c.gap_beta,
                    compare_all=_gap_all, needs_spectrum=False,
                    predict=lambda cage, fp: {"fused": int(cage.fused_pentagon_pairs)})


@pytest.fixture
def channels():
    registry.register(PRIOR)
    registry.register(GAPRANK)
    yield
    registry.unregister("prior")
    registry.unregister("gaprank")


def test_a_prior_enters_as_data(channels):
    s = Session()
    s.set_candidates(CANDS)
    assert "prior" not in s.techniques_with_data()
    s.load("prior", {3: 0.9, 1: 0.1}, name="my prior")
    r = s.ranking
    assert r.rows[0].candidate.isomer == 3
    assert r.row(2).verdicts["prior"].reasons == ("prior 0.001.",)
    s.set_threshold("prior", "floor", 0.05)           # compare stage
    assert s.ranking.row(2).verdicts["prior"].reasons == ("prior 0.05.",)
    assert s.stats["observe:prior"] == 1
    with pytest.raises(SessionError, match="prior: expected a mapping"):
        s.load("prior", [0.9])
    again = Session.from_dict(s.to_dict())
    assert again.ranking == s.ranking and again.sources["prior"] == "my prior"


def test_a_channel_judged_from_the_candidates_alone(channels):
    s = Session()
    s.set_candidates(CANDS)
    assert s.techniques_with_data() == ("gaprank",)   # always on: it needs no input
    r = s.ranking
    assert [row.candidate.isomer for row in r.top()] == [3]
    assert r.rows[0].reasons == ("Gap: Gap 0.2 |β|, the widest of 3.",)
    s.set_candidates(CANDS[:2])                          # relative verdicts follow the set
    assert [row.candidate.isomer for row in s.ranking.top()] == [1]
    with pytest.raises(SessionError, match="takes no input"):
        s.load("gaprank", {})


def test_predict_hook_fills_candidate_extra(channels):
    s = Session("C28")
    s.set_candidates(ipr=False)
    # C28 (2 isomers, both with fused pentagons; from memory, see test_widgets)
    assert all(c.extra["gaprank"]["fused"] > 0 for c in s.candidates)
    again = Candidate.from_dict(s.candidates[0].to_dict())
    assert again.extra == s.candidates[0].extra
