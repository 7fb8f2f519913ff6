"""Session: recomputes only what a change affects; save/load round trip; errors."""

from __future__ import annotations

import functools
import json
from collections import Counter

import numpy as np
import pytest

from cageprint.errors import FormulaError, SessionError
from cageprint.evidence import Candidate
from cageprint.formula import parse_cage_formula
from cageprint.session import Session
from cageprint.spectra import Spectrum

# hand-made candidates (invented counts) keep these tests independent of cage generation
CANDS = (
    Candidate("C78", 78, 1, "D3", (6,) * 13, 30, 40, 0.25),
    Candidate("C78", 78, 2, "C2v", (4,) * 18 + (2,) * 3, 60, 80, 0.35),
    Candidate("C78", 78, 3, "C2v", (4,) * 17 + (2,) * 5, 61, 80, 0.18),
    Candidate("C78", 78, 4, "D3h", (12,) * 5 + (6,) * 3, 20, 30, 0.63),
    Candidate("C78", 78, 5, "D3h", (12,) * 5 + (6,) * 3, 20, 30, 0.07),
)


def nmr_peaks(sizes=(6,) * 13, seed=0):
    rng = np.random.default_rng(seed)
    pos = np.sort(rng.uniform(130, 150, len(sizes)))
    return Spectrum(pos, np.array(sizes) * (1 + rng.normal(0, 0.08, len(sizes))),
                    technique="nmr", kind="peaks")


def ir_peaks(k=25):
    return Spectrum(np.linspace(450, 1600, k), np.ones(k), technique="ir", kind="peaks")


def uv_peaks():
    return Spectrum([330.0, 620.0], [1.0, 0.1], technique="uvvis", kind="peaks")


@pytest.fixture
def session():
    s = Session("C78")
    s.set_candidates(CANDS)
    s.load("nmr", nmr_peaks(), name="fraction-b.txt")
    s.load("ir", ir_peaks())
    s.load("uvvis", uv_peaks())
    return s


def test_first_ranking_computes_once_per_signature(session):
    r = session.ranking
    assert r.rows[0].candidate.point_group == "D3"
    st = session.stats
    assert st["observe:nmr"] == st["observe:ir"] == st["observe:uvvis"] == 1
    assert st["compare:nmr"] == 4            # the two D3h isomers share one pattern
    assert st["compare:ir"] == 4             # ... and one IR-active count
    assert st["rank"] == 1
    _ = session.ranking                      # cached: nothing recomputed
    assert st["rank"] == 1


def test_observation_threshold_recomputes_only_that_technique(session):
    _ = session.ranking
    before = dict(session.stats)
    session.set_threshold("ir", "region", (400, 1500))
    _ = session.ranking
    after = session.stats
    assert after["observe:ir"] == before["observe:ir"] + 1
    assert after["compare:ir"] == before["compare:ir"] + 4
    for key in ("observe:nmr", "compare:nmr", "observe:uvvis", "compare:uvvis"):
        assert after[key] == before[key], key
    assert after["rank"] == before["rank"] + 1


def test_comparison_option_recomputes_comparisons_not_observation(session):
    _ = session.ranking
    before = dict(session.stats)
    session.set_threshold("nmr", "impurity_cost", 6.0)
    _ = session.ranking
    assert session.stats["observe:nmr"] == before["observe:nmr"]
    assert session.stats["compare:nmr"] == before["compare:nmr"] + 4
    assert session.stats["compare:ir"] == before["compare:ir"]


def test_weight_and_unchanged_threshold_are_cheap(session):
    _ = session.ranking
    before = dict(session.stats)
    session.set_weight("uvvis", 0.0)
    session.set_threshold("ir", "snr", 5.0)
    session.set_threshold("ir", "snr", 5.0)      # same value again: nothing dropped
    _ = session.ranking
    assert session.stats["rank"] == before["rank"] + 1
    # 5.0 is the S/N in use already (the default): setting it recomputes nothing
    assert session.stats["observe:ir"] == before["observe:ir"]
    assert session.stats["compare:nmr"] == before["compare:nmr"]
    assert session.weights["uvvis"] == 0.0


def test_new_spectrum_and_unload(session):
    _ = session.ranking
    session.load("nmr", nmr_peaks((4,) * 18 + (2,) * 3, seed=4))
    assert session.ranking.rows[0].candidate.isomer == 2
    session.unload("nmr")
    assert "nmr" not in session.ranking.with_data
    assert session.observation("nmr") is None
    assert session.comparison("nmr", 2).verdict == "no data"


def test_comparison_by_isomer_and_observation(session):
    v = session.comparison("nmr", 1)
    assert v.verdict == "consistent"
    assert session.observation("nmr").n_lines == 13
    with pytest.raises(SessionError, match="comparison: isomer 99 is not among the 5 "
                                           "candidates"):
        session.comparison("nmr", 99)


def test_save_load_round_trip(session, tmp_path):
    session.sample = "fraction B"
    session.set_threshold("nmr", "region", (128, 152))
    session.set_weight("raman", 0.5)
    r1 = session.ranking
    p = session.save(tmp_path / "s.json")
    s2 = Session.restore(p)
    assert isinstance(s2, Session)
    assert s2.ranking == r1
    assert s2.thresholds("nmr")["region"] == (128, 152)
    assert s2.settings("nmr").changed() == {"region": (128, 152)}
    assert s2.weights == session.weights
    assert s2.sample == "fraction B"
    assert s2.sources["nmr"] == "fraction-b.txt"
    np.testing.assert_array_equal(s2.spectra["nmr"].x, session.spectra["nmr"].x)
    assert s2.to_dict() == json.loads(json.dumps(session.to_dict()))


def test_load_spectrum_from_bytes_and_path(tmp_path):
    # a plain peak list, the simplest format the readers take
    text = "# ppm intensity\n" + "\n".join(f"{130 + i:.2f} 6.0" for i in range(13)) + "\n"
    s = Session("C78")
    s.set_candidates(CANDS)
    spec = s.load("nmr", text.encode(), format="peaklist")
    assert spec.kind == "peaks" and len(spec) == 13
    assert s.ranking.rows[0].candidate.point_group == "D3"
    p = tmp_path / "lines.txt"
    p.write_text(text)
    s.load("nmr", p, format="peaklist")
    assert s.sources["nmr"] == "lines.txt"


def test_candidates_from_the_cage_generator():
    # Fowler & Manolopoulos, An Atlas of Fullerenes 1995: C78 has 5 IPR isomers
    s = Session("C78")
    s.set_candidates(ipr=True)
    assert len(s.candidates) == 5 and s.ipr is True
    assert s.stats["fingerprint"] == 5


def test_errors_are_pinned(session, tmp_path):
    with pytest.raises(SessionError, match="technique 'xrd' is not one of mass, nmr"):
        session.set_weight("xrd", 1)
    with pytest.raises(SessionError, match=r"set_threshold\('nmr', 'colour'\): unknown name; "
                                           "expected one of"):
        session.set_threshold("nmr", "colour", 1)
    with pytest.raises(SessionError, match="weight must be a finite number >= 0; got -1"):
        session.set_weight("ir", -1)
    with pytest.raises(SessionError, match=r"load\('ir'\): the spectrum is a 'nmr' "):
        session.load("ir", nmr_peaks())
    with pytest.raises(SessionError, match="ranking: no candidates; call set_formula"):
        _ = Session().ranking
    with pytest.raises(SessionError, match="set_candidates: no formula set"):
        Session().set_candidates(ipr=True)
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    with pytest.raises(SessionError, match="bad.json, line 1: not a JSON session file"):
        Session.restore(bad)
    bad.write_text('{"format": "other"}')
    with pytest.raises(SessionError, match="expected format 'cageprint-session/1'; got "
                                           "'other'"):
        Session.restore(bad)
    with pytest.raises(FormulaError, match="formula 'C61': a fullerene cage has an even "
                                           "number of carbons"):
        parse_cage_formula("C61")
    with pytest.raises(FormulaError, match="expected a cage such as 'C78'"):
        Session("benzene")


def test_formula_from_mass_species(monkeypatch):
    # the mass step fixes n when no formula was given (fragments ignored)
    import dataclasses

    from cageprint.techniques import registry
    from cageprint.techniques.mass import MassObservation, MassSpecies

    def species(formula, n, kind, abundance):
        return MassSpecies(formula, 1, 12.0 * n, abundance, 0.0, 1.0, n, 0, kind)

    obs = MassObservation((species("C76", 76, "fragment", 1.0), species("C78", 78, "cage", 0.8)),
                          (), np.zeros(0), np.zeros(0))
    fake = dataclasses.replace(registry.get("mass"), observe=lambda spectrum, settings: obs)
    monkeypatch.setitem(registry._REGISTRY, "mass", fake)
    s = Session()
    s.load("mass", Spectrum([936.0], [1.0], technique="mass", kind="peaks"))
    assert s.formula == "C78" and s.n == 78


def test_endohedral_cage_charge_from_formula():
    # from memory: the Sc3N cluster gives six electrons to the C80 cage (formal charge -6),
    # the convention of cageprint.techniques.mass.cage_charge
    s = Session("Sc3N@C80")
    assert s.cage_charge == -6
    assert Session("C80").cage_charge == 0
    assert Session("Sc3N@C80", cage_charge=-4).cage_charge == -4


def test_threshold_change_counted_by_wrapping_the_functions(session, monkeypatch):
    # count real calls (not only the session's own counters): wrap every registry entry's
    # observe and compare
    import dataclasses

    from cageprint.techniques import registry

    calls = Counter()

    def counted(fn, key):
        @functools.wraps(fn)
        def wrapped(*a, **k):
            calls[key] += 1
            return fn(*a, **k)
        return wrapped

    for tech in registry.techniques():
        changes = {"observe": counted(tech.observe, f"observe:{tech.key}")}
        if tech.compare is not None:
            changes["compare"] = counted(tech.compare, f"compare:{tech.key}")
        if tech.compare_all is not None:
            changes["compare_all"] = counted(tech.compare_all, f"compare_all:{tech.key}")
        monkeypatch.setitem(registry._REGISTRY, tech.key, dataclasses.replace(tech, **changes))
    _ = session.ranking
    calls.clear()
    session.set_threshold("uvvis", "onset_fraction", 0.02)
    _ = session.ranking
    assert dict(calls) == {"observe:uvvis": 1, "compare:uvvis": 5}
    calls.clear()
    session.set_weight("nmr", 2.0)
    _ = session.ranking
    assert dict(calls) == {}
    session.set_threshold("nmr", "integral_tol", 0.2)
    _ = session.ranking
    assert dict(calls) == {"compare_all:nmr": 1}
