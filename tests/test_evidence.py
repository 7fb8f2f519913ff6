"""Ranking: weights, shared ranks for ties, ruled-out candidates kept, no-data marking."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from cageprint.errors import EvidenceError
from cageprint.evidence import (
    VERDICTS,
    Candidate,
    Ranking,
    TechniqueVerdict,
    no_data,
    rank,
    verdicts_by_signature,
)
from cageprint.techniques.mass import MassObservation, MassSpecies, mass_verdict
from cageprint.techniques.registry import default_weights


def cand(isomer, sizes=(4,) * 19, pg="D2", ir=10, n=76, gap=0.3):
    return Candidate(f"C{n}", n, isomer, pg, sizes, ir, 2 * ir, gap)


def v(t, score, verdict="consistent", *reasons):
    return TechniqueVerdict(t, score, verdict, reasons or (f"{t} says {verdict}.",))


def test_shared_ranks_competition_style_and_tie_reason():
    # common practice, no source: equal evidence gives an equal rank ("1, 1, 3")
    a, b, c = cand(3), cand(5), cand(1, sizes=(6,) * 13, pg="D3")
    r = rank([c, b, a], {"nmr": [v("nmr", -9.0, "unlikely"), v("nmr", -1.0), v("nmr", -1.0)]})
    assert [(row.rank, row.candidate.isomer) for row in r] == [(1, 3), (1, 5), (3, 1)]
    assert r.rows[0].tie_reason == "tied with isomer 5: same NMR pattern (19x4)"
    assert r.rows[1].tie_reason == "tied with isomer 3: same NMR pattern (19x4)"
    assert r.rows[2].tie_reason == ""
    assert [row.candidate.isomer for row in r.top()] == [3, 5]


def test_ties_within_tolerance_but_different_fingerprints_say_so():
    a, b = cand(1), cand(2, sizes=(6,) * 13)
    r = rank([a, b], {"nmr": [v("nmr", -1.0), v("nmr", -1.0 + 1e-9)]})
    assert [row.rank for row in r] == [1, 1]
    assert r.rows[0].tie_reason == ("tied with isomer 2: not separable with this evidence "
                                    "(totals within 0.2)")
    # issue 10: a stated margin (TIE_TOL nats), not float equality, decides separability
    r = rank([a, b], {"nmr": [v("nmr", -1.0), v("nmr", -1.15)]})
    assert [row.rank for row in r] == [1, 1]
    r = rank([a, b], {"nmr": [v("nmr", -1.0), v("nmr", -1.3)]})
    assert [row.rank for row in r] == [1, 2]


def test_tie_order_does_not_depend_on_input_order():
    # never broken arbitrarily: both orders give the same shared rank
    a, b = cand(7), cand(2)
    r1 = rank([a, b], {"ir": [v("ir", -0.5), v("ir", -0.5)]})
    r2 = rank([b, a], {"ir": [v("ir", -0.5), v("ir", -0.5)]})
    assert r1 == r2
    assert {row.rank for row in r1} == {1}


def test_ruled_out_shown_last_not_hidden():
    a, b, c = cand(1), cand(2), cand(3)
    r = rank([a, b, c], {"ir": [v("ir", -60.0, "ruled out"), v("ir", -2.0, "possible"),
                                v("ir", -3.0, "possible")],
                         "nmr": [v("nmr", 0.0), v("nmr", -5.0), v("nmr", -5.0)]})
    assert [row.candidate.isomer for row in r] == [2, 3, 1]
    assert r.rows[-1].verdict == "ruled out" and r.rows[-1].rank == 3
    assert len(r) == 3


def test_no_data_techniques_are_marked_and_weights_visible():
    a = cand(1)
    r = rank([a], {"nmr": [v("nmr", -1.0)]})
    assert r.with_data == ("nmr",)
    assert r.rows[0].verdicts["raman"].verdict == "no data"
    assert dict(r.weights) == default_weights()
    row = r.table()[0]
    assert row["raman_verdict"] == "no data"
    assert list(row)[:5] == ["rank", "formula", "isomer", "point_group", "score"]


def test_weights_change_the_order_and_zero_removes_a_technique():
    a, b = cand(1), cand(2)
    vs = {"nmr": [v("nmr", 0.0), v("nmr", -1.0)], "ir": [v("ir", -3.0), v("ir", 0.0)]}
    assert rank([a, b], vs).rows[0].candidate.isomer == 2
    assert rank([a, b], vs, {"ir": 0.1}).rows[0].candidate.isomer == 1
    # weight 0: IR cannot rule out
    vs["ir"] = [v("ir", -60.0, "ruled out"), v("ir", 0.0)]
    r = rank([a, b], vs, {"ir": 0.0})
    assert r.rows[0].candidate.isomer == 1 and r.rows[0].verdict == "consistent"


def test_errors_are_pinned():
    a = cand(1)
    with pytest.raises(EvidenceError, match="weights: unknown technique 'xrd'"):
        rank([a], {}, {"xrd": 1})
    with pytest.raises(EvidenceError, match=r"weights\['ir'\] must be a finite number >= 0"):
        rank([a], {}, {"ir": -1})
    with pytest.raises(EvidenceError, match=r"verdicts\['ir'\] has 2 entries for 1 candidates"):
        rank([a], {"ir": [v("ir", 0), v("ir", 0)]})
    with pytest.raises(EvidenceError, match="verdict must be one of .* got 'maybe'"):
        TechniqueVerdict("ir", 0.0, "maybe")
    with pytest.raises(EvidenceError, match="candidate record lacks the key 'n'"):
        Candidate.from_dict({"formula": "C60"})
    r = rank([a], {})
    with pytest.raises(EvidenceError, match="isomer 9 is not among the 1 candidates"):
        r.row(9)


def test_round_trip_and_frame():
    a, b = cand(1), cand(2, sizes=(6,) * 13, pg="D3")
    r = rank([a, b], {"nmr": [v("nmr", -1.0, "consistent", "one", "two"),
                              v("nmr", -4.0, "possible")]})
    again = Ranking.from_dict(r.to_dict())
    assert again == r
    df = r.to_frame()
    assert list(df.columns[:5]) == ["rank", "formula", "isomer", "point_group", "score"]
    assert df["isomer"].tolist() == [1, 2]
    assert df.loc[0, "reasons"] == "NMR: One NMR: Two"


def _mass_obs(*species):
    """A mass observation holding the given (formula, cage_n, cage_charge, kind, abundance)."""
    return MassObservation(tuple(MassSpecies(f, 1, 12.0 * n, a, 0.0, 1.0, n, q, kind)
                                 for f, n, q, kind, a in species), (), np.zeros(0), np.zeros(0))


def test_mass_fixes_n_and_cage_charge():
    # common practice, no source: the molecular ion fixes the cage size; an endohedral
    # cluster such as Sc3N transfers six electrons to the C80 cage, formal charge -6
    # (from memory)
    c78 = cand(1, n=78, sizes=(6,) * 13, pg="D3")
    obs = _mass_obs(("C78", 78, 0, "cage", 1.0), ("C76", 76, 0, "fragment", 0.3))
    assert mass_verdict(c78, obs).verdict == "consistent"
    assert mass_verdict(cand(1), obs).verdict == "unlikely"          # C76 only a fragment
    assert mass_verdict(cand(1, n=84), obs).verdict == "ruled out"
    minor = _mass_obs(("C78", 78, 0, "cage", 0.05))
    assert mass_verdict(c78, minor).verdict == "possible"
    endo = _mass_obs(("Sc3N@C80", 80, -6, "endohedral", 1.0))
    empty80 = Candidate("C80", 80, 7, "Ih", (60, 20))
    charged80 = Candidate("Sc3N@C80", 80, 7, "Ih", (60, 20), cage_charge=-6)
    assert mass_verdict(empty80, endo).verdict == "unlikely"
    assert mass_verdict(charged80, endo).verdict == "consistent"
    assert mass_verdict(c78, _mass_obs()).verdict == "no data"


def test_verdicts_by_signature_computes_once_per_pattern():
    cands = [cand(i) for i in range(1, 6)] + [cand(9, sizes=(6,) * 13)]
    calls = []

    def compare(c):
        calls.append(c.isomer)
        return v("nmr", -float(len(c.nmr_sizes)))

    out = verdicts_by_signature("nmr", cands, compare)
    assert calls == [1, 9]
    assert out[0] is out[4]


def test_candidate_from_fingerprint_shape():
    fp = SimpleNamespace(
        point_group="Ih", nmr=SimpleNamespace(sizes=(60,)),
        vib=SimpleNamespace(ir_count=4, raman_count=10),
        elec=SimpleNamespace(gap_beta=0.757, allowed_transitions=(("hu", "t1g", 1.0),
                                                                  ("hg", "t1u", 0.9))))
    c = Candidate.from_fingerprint(fp, n=60, isomer=1, formula="C60")
    assert (c.pattern, c.ir_count, c.raman_count) == ("1x60", 4, 10)
    assert c.transitions_beta == (0.9, 1.0)
    assert c.label == "C60 isomer 1 (Ih)"
    assert no_data("ir").reasons == ("no ir data.",)


def test_rank_score_share_and_word_tell_one_story():
    # issue 10: over many random verdict sets, rows in rank order never improve in score,
    # share or verdict word, shares of kept rows sum to 1, and no ruled-out row outranks
    # or outscores a kept one (common practice, no source: a posterior over the candidates)
    rng = np.random.default_rng(10)
    order = {w: i for i, w in enumerate(VERDICTS)}
    for trial in range(300):
        k = int(rng.integers(1, 9))
        cands = [cand(i + 1, sizes=(60 // (1 + i % 3),) * (1 + i % 3)) for i in range(k)]
        vs = {}
        for t in ("nmr", "ir", "mass"):
            scores = -np.abs(rng.normal(0, 3, k)).round(int(rng.integers(0, 3)))
            words = rng.choice(["consistent", "possible", "unlikely", "ruled out"], k,
                               p=[0.4, 0.3, 0.2, 0.1])
            vs[t] = [v(t, float(s), str(w)) for s, w in zip(scores, words, strict=True)]
        r = rank(cands, vs)
        rows = r.rows
        for a, b in zip(rows, rows[1:], strict=False):
            assert a.rank <= b.rank
            assert a.score >= b.score - 1e-6, trial
            assert a.share >= b.share - 1e-12 or a.rank == b.rank, trial
            assert order[a.verdict] <= order[b.verdict], trial
            if a.rank == b.rank:
                assert a.verdict == b.verdict
        kept = [x for x in rows if not x.ruled_out]
        out = [x for x in rows if x.ruled_out]
        if kept:
            assert abs(sum(x.share for x in kept) - 1.0) < 1e-9
        for o in out:
            assert o.share == 0.0
            assert all(o.rank > x.rank and o.score <= x.score for x in kept)
