"""Saved sessions are checked against a versioned schema on load (issue 14).

Source for all: common practice, no source (validate data where it enters).
"""

from __future__ import annotations

import json
import tracemalloc

import numpy as np
import pytest

from cageprint.errors import SessionError
from cageprint.evidence import Candidate
from cageprint.report import make_record, save_report
from cageprint.session import Session
from cageprint.session_schema import MAX_CAGE_ATOMS, validate_session
from cageprint.spectra import Spectrum

CANDS = (Candidate("C60", 60, 1, "Ih", (60,), 4, 10, 0.76),
         Candidate("C60", 60, 2, "D5d", (10,) * 6, 9, 20, 0.4))


@pytest.fixture
def saved(tmp_path):
    s = Session("C60")
    s.set_candidates(CANDS)
    s.load("nmr", Spectrum([143.1, 145.0], [1.0, 0.2], technique="nmr", kind="peaks"))
    s.load("ir", Spectrum([527.0, 577.0, 1183.0, 1429.0], np.ones(4), technique="ir",
                          kind="peaks"))
    p = s.save(tmp_path / "s.json")
    return p, json.loads(p.read_text())


def _write(tmp_path, d) -> str:
    p = tmp_path / "crafted.json"
    p.write_text(json.dumps(d) if not isinstance(d, str) else d)
    return p


def test_round_trip_still_loads(saved):
    p, d = saved
    validate_session(d, "s.json")
    assert len(Session.restore(p).candidates) == 2


def test_malformed_json(tmp_path):
    # issue 14: "Malformed session files raise raw KeyError/TypeError/RecursionError"
    for text in ("{not json", "\xff\xfe{", "[1, 2]", "null"):
        p = tmp_path / "m.json"
        p.write_bytes(text.encode("latin-1"))
        with pytest.raises(SessionError, match=r"m.json"):
            Session.restore(p)


def test_deep_recursion(tmp_path):
    # issue 14: "... RecursionError"
    p = _write(tmp_path, "[" * 200_000 + "]" * 200_000)
    with pytest.raises(SessionError, match=r"crafted.json: not a session file: nested too "
                       r"deeply|crafted.json: the file: expected a mapping"):
        Session.restore(p)
    deep: dict = {}
    node = deep
    for _ in range(100):
        node["extra"] = {}
        node = node["extra"]
    d = {"format": "cageprint-session/1", "candidates": [], "spectra": {},
         "thresholds": {"nmr": deep}}
    with pytest.raises(SessionError, match=r"nested more than 32 levels deep"):
        Session.restore(_write(tmp_path, d))


@pytest.mark.parametrize("field, value, message", [
    ("candidates", "x", r"candidates: expected a list; found 'x'"),
    ("candidates", [{"formula": "C60"}], r"candidates\[0\].n: expected a whole number"),
    ("candidates", [{"n": "60"}], r"candidates\[0\].n: expected a whole number"),
    ("spectra", {"nmr": {"technique": "nmr", "x": [1, "a"], "y": [1, 2]}},
     r"spectra.nmr.x\[1\]: expected a finite number; found 'a'"),
    ("spectra", {"nmr": [1, 2]}, r"spectra.nmr: expected a mapping; found list"),
    ("weights", {"nmr": -1}, r"weights.nmr: expected a number >= 0"),
    ("sample", 7, r"sample: expected text"),
    ("ipr", "yes", r"ipr: expected true, false or null"),
    ("bogus", 1, r"unknown field 'bogus'"),
])
def test_wrong_types_are_named_not_raw_key_or_type_errors(saved, tmp_path, field, value,
                                                          message):
    # issue 14: "Malformed session files raise raw KeyError/TypeError"
    _, d = saved
    d[field] = value
    with pytest.raises(SessionError, match=r"crafted.json: " + message):
        Session.restore(_write(tmp_path, d))


def test_huge_n_is_refused_before_the_report_allocates(saved, tmp_path):
    # issue 14: "a session with a huge n makes the report writer allocate gigabytes"
    _, d = saved
    d["candidates"][0]["n"] = 10**9
    tracemalloc.start()
    with pytest.raises(SessionError, match=rf"candidates\[0\].n: expected a whole number from "
                       rf"20 to {MAX_CAGE_ATOMS}; found 1000000000"):
        Session.restore(_write(tmp_path, d))
    assert tracemalloc.get_traced_memory()[1] < 50e6
    tracemalloc.stop()


def test_nmr_spectrum_in_the_ir_slot(saved, tmp_path):
    # issue 14: "a session can load an NMR spectrum into the IR slot"
    _, d = saved
    d["spectra"]["ir"] = d["spectra"]["nmr"]
    with pytest.raises(SessionError, match=r"spectra.ir: a 'nmr' spectrum in the 'ir' slot"):
        Session.restore(_write(tmp_path, d))


def test_a_valid_session_still_makes_a_report(saved, tmp_path):
    p, _ = saved
    s = Session.restore(p)
    out = save_report(tmp_path / "r.html", make_record(s), session=s)
    assert out.read_text().startswith("<!DOCTYPE html>")
