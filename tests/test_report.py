"""Assignment record and HTML report: round trip, escaping, offline, atomic save."""

from __future__ import annotations

import json
import os
import re

import numpy as np
import pytest

from cageprint import report
from cageprint.errors import SessionError
from cageprint.evidence import Candidate
from cageprint.report import (
    atomic_write_text,
    load_record,
    make_record,
    record_ranking,
    render_html,
    save_record,
    save_report,
)
from cageprint.session import Session
from cageprint.spectra import Spectrum

EVIL = '<script>alert("x")</script> & <img src=x onerror=1>'


@pytest.fixture
def session():
    s = Session("C78")
    s.set_candidates([
        Candidate("C78", 78, 1, "D3", (6,) * 13, 30, 40, 0.25),
        Candidate("C78", 78, 4, "D3h", (12,) * 5 + (6,) * 3, 20, 30, 0.63),
        Candidate("C78", 78, 5, "D3h", (12,) * 5 + (6,) * 3, 20, 30, 0.07),
    ])
    x = np.linspace(125, 160, 3501)
    y = sum(6 / (1 + ((x - p) / 0.02) ** 2) for p in np.linspace(131, 149, 13))
    s.load("nmr", Spectrum(x, y + 0.01 * np.random.default_rng(0).random(x.size),
                                   technique="nmr", meta={"sha256": "ab" * 32}),
                   name=EVIL)
    s.load("ir", Spectrum(np.linspace(450, 1600, 25), np.ones(25), technique="ir",
                                  kind="peaks"))
    s.sample = EVIL
    return s


def test_record_round_trip(session, tmp_path):
    rec = make_record(session)
    p = save_record(rec, tmp_path / "rec.json")
    back = load_record(p)
    assert record_ranking(back) == session.ranking
    assert back["inputs"]["nmr"]["sha256"] == "ab" * 32
    assert back["inputs"]["nmr"]["sha256_of"] == "file bytes"
    assert len(back["inputs"]["ir"]["sha256"]) == 64          # computed from the arrays
    assert set(back["versions"]) >= {"cageprint", "numpy", "scipy", "python"}
    assert back["weights"]["uvvis"] == session.weights["uvvis"]
    assert back["observations"]["nmr"]["positions"]
    assert back["sample"] == EVIL


def test_html_escapes_every_user_string(session, tmp_path):
    rec = make_record(session)
    page = render_html(rec, session=session)
    assert "<script" not in page
    assert "<img" not in page
    assert "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &lt;img" in page
    p = save_report(tmp_path / "r.html", rec, session=session, nmr_sticks=[(140.0, 6)])
    assert p.read_text(encoding="utf-8") .count("&lt;script&gt;") >= 2


def test_html_is_offline(session):
    session.sample = "fraction B"
    session.sources["nmr"] = "fraction-b.jdx"
    page = render_html(make_record(session), session=session)
    # no network fetches: no scripts, no external sources, no stylesheet links or imports
    assert not re.search(r"<script|<link|@import|url\(|src=|href=", page)
    urls = set(re.findall(r"https?://[^\s\"'<>]+", page))
    assert urls <= {"http://www.w3.org/2000/svg"}              # the SVG namespace, not a fetch
    assert page.count("<svg") == 2


def test_html_names_ties_and_ruled_out(session):
    session.load("nmr", Spectrum(np.linspace(130, 150, 8), [12] * 5 + [6] * 3,
                                         technique="nmr", kind="peaks"))
    page = render_html(make_record(session))
    assert "tied with isomer 5: same NMR pattern (5x12+3x6)" in page
    assert "<tr class='out'>" in page


def test_atomic_save_keeps_previous_record_on_crash(session, tmp_path, monkeypatch):
    # common practice, no source: write-temp, fsync, rename; a failure leaves the old file
    p = tmp_path / "rec.json"
    save_record({"format": report.RECORD_FORMAT, "first": True}, p)
    old = p.read_text()

    real_fsync = os.fsync

    def crash(fd):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(report.os, "fsync", crash)
    with pytest.raises(OSError, match="No space left on device"):
        save_record(make_record(session), p)
    assert p.read_text() == old
    assert sorted(f.name for f in tmp_path.iterdir()) == ["rec.json"]   # no temp left behind

    # a crash after the text is written but before the rename
    monkeypatch.setattr(report.os, "fsync", real_fsync)

    class Boom(RuntimeError):
        pass

    real_replace = os.replace

    def no_replace(*a):
        raise Boom("power cut before rename")

    monkeypatch.setattr(report.os, "replace", no_replace)
    with pytest.raises(Boom, match="power cut before rename"):
        save_record(make_record(session), p)
    assert p.read_text() == old
    assert sorted(f.name for f in tmp_path.iterdir()) == ["rec.json"]
    monkeypatch.setattr(report.os, "replace", real_replace)
    save_record(make_record(session), p)
    assert json.loads(p.read_text())["formula"] == "C78"


def test_session_save_is_atomic_too(session, tmp_path, monkeypatch):
    p = session.save(tmp_path / "s.json")
    old = p.read_text()

    def crash(*a):
        raise OSError(5, "I/O error")

    monkeypatch.setattr(report.os, "replace", crash)
    session.sample = "changed"
    with pytest.raises(OSError, match="I/O error"):
        session.save(p)
    assert p.read_text() == old


def test_load_record_errors(tmp_path):
    p = tmp_path / "x.json"
    with pytest.raises(SessionError, match="x.json: cannot read the record"):
        load_record(p)
    p.write_text("[1, 2")
    with pytest.raises(SessionError, match=r"x.json, line 1: not a JSON record"):
        load_record(p)
    p.write_text('{"format": "something"}')
    with pytest.raises(SessionError, match="expected a record of format 'cageprint-record/1'; "
                                           "found 'something'"):
        load_record(p)
    with pytest.raises(SessionError, match="the folder .* does not exist"):
        atomic_write_text(tmp_path / "nope" / "a.json", "{}")


def test_crash_half_way_through_the_write(session, tmp_path, monkeypatch):
    # the brief's case: the process dies while the new text is being written
    p = tmp_path / "rec.json"
    save_record({"format": report.RECORD_FORMAT, "first": True}, p)
    old = p.read_text()
    real_fdopen = os.fdopen

    class HalfFile:
        def __init__(self, fh):
            self.fh = fh

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.fh.close()
            return False

        def write(self, text):
            self.fh.write(text[: len(text) // 2])
            self.fh.flush()
            raise KeyboardInterrupt("killed mid-write")

    monkeypatch.setattr(report.os, "fdopen", lambda *a, **k: HalfFile(real_fdopen(*a, **k)))
    with pytest.raises(KeyboardInterrupt, match="killed mid-write"):
        save_record(make_record(session), p)
    assert p.read_text() == old
    assert sorted(f.name for f in tmp_path.iterdir()) == ["rec.json"]


def test_write_report_from_a_session(session, tmp_path):
    rec = report.write_report(session, tmp_path / "r.html", record_path=tmp_path / "r.json",
                              figures_html={"<i>extra</i>": "<div>pre-rendered</div>"})
    assert load_record(tmp_path / "r.json")["ranking"] == rec["ranking"]
    page = (tmp_path / "r.html").read_text()
    assert "<h3>&lt;i&gt;extra&lt;/i&gt;</h3><div>pre-rendered</div>" in page
