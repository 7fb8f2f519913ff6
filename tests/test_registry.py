"""The technique registry: a toy technique added through it alone reaches every layer."""

from __future__ import annotations

import json
import re

import pytest

from cageprint.candidate import Candidate
from cageprint.cli import main
from cageprint.errors import EvidenceError, SettingsError
from cageprint.report import make_record, render_html
from cageprint.session import Session
from cageprint.spectra import Spectrum
from cageprint.techniques import registry
from cageprint.techniques.thresholds import NmrSettings

toytech = pytest.importorskip("toytech")

# invented candidates: 1, 3 and 3 distinct orbit sizes (the toy technique's prediction)
CANDS = (
    Candidate("C76", 76, 1, "D2", (4,) * 19, 165, 192, 0.1),
    Candidate("C76", 76, 2, "Td", (24, 24, 12, 12, 4), 29, 49, 0.0),
    Candidate("C76", 76, 3, "C2v", (2,) * 2 + (4,) * 17 + (1,) * 2, 100, 120, 0.2),
)


@pytest.fixture
def toy():
    registry.register(toytech.TOY)
    yield toytech.TOY
    registry.unregister("toy")


@pytest.fixture
def session(toy):
    s = Session()
    s.set_candidates(CANDS)
    bands = Spectrum([10.0, 20.0, 30.0, 40.0, 150.0], [9.0, 8.0, 7.0, 1.0, 9.0],
                     technique="toy", kind="peaks")
    s.load("toy", bands, name="toy-bands.txt")
    return s


def test_the_built_in_techniques_are_spelled_one_way():
    assert registry.keys() == ("mass", "nmr", "ir", "raman", "uvvis", "stability")
    assert [t.label for t in registry.techniques()] == ["Mass spectrum", "13C NMR", "IR",
                                                        "Raman", "UV-vis", "Cage stability"]
    assert [t.cli_flag for t in registry.techniques()] == ["--ms", "--nmr", "--ir", "--raman",
                                                           "--uv", "--stability"]
    with pytest.raises(EvidenceError, match="technique 'xrd' is not one of mass, nmr"):
        registry.get("xrd")


def test_toy_technique_in_the_session_and_the_ranking(session):
    assert session.techniques_with_data() == ("toy",)
    obs = session.observation("toy")
    assert obs.positions == (10.0, 20.0, 30.0)        # 40 is too weak, 150 outside the window
    r = session.ranking
    assert "toy" in r.techniques and r.with_data == ("toy",)
    assert [(row.rank, row.candidate.isomer) for row in r] == [(1, 2), (1, 3), (3, 1)]
    assert r.rows[0].tie_reason == "tied with isomer 3: same toy count (3)"
    assert r.rows[0].reasons == ("Toy: 3 toy bands observed, 3 predicted.",)
    assert session.stats["compare:toy"] == 2            # two distinct signatures
    session.set_threshold("toy", "tolerance", 2)         # compare stage: no new observation
    assert session.ranking.rows[-1].verdicts["toy"].verdict == "consistent"
    assert session.stats["observe:toy"] == 1
    session.set_threshold("toy", "snr", 0.5)             # observe stage
    assert session.observation("toy").positions == (10.0, 20.0, 30.0, 40.0)
    assert session.stats["observe:toy"] == 2
    with pytest.raises(SettingsError, match=r"toy.snr = -3: expected a number from 0.1 to "):
        session.set_threshold("toy", "snr", -3)
    again = Session.from_dict(json.loads(json.dumps(session.to_dict())))
    assert again.ranking == session.ranking


def test_toy_technique_in_the_report(session):
    record = make_record(session)
    assert record["settings"]["toy"] == {"region": [0.0, 100.0], "snr": 5.0, "tolerance": 0}
    assert record["inputs"]["toy"]["source"] == "toy-bands.txt"
    page = render_html(record, session=session)
    assert "<th>Toy band count</th>" in page
    assert "Toy band count: toy-bands.txt" in page      # its spectrum is drawn


def test_toy_technique_in_the_comparison_panel(session):
    pytest.importorskip("ipywidgets")
    pytest.importorskip("anywidget")
    from cageprint.widgets import AssignmentBoard, ComparisonPanel

    panel = ComparisonPanel(session, "toy", chosen=[1, 2])
    assert set(panel.controls) == {"region", "snr"}
    predicted = re.findall(r'<tr data-key="(\d)"[^>]*>(?:<td>[^<]*</td>){3}<td>([^<]*)</td>',
                           panel.table.value)
    assert sorted(predicted) == [("1", "1"), ("2", "3")]
    assert 'data-observed="3"' in panel.table.value
    assert "3 toy bands observed" in panel.fig.layout.title.text
    panel.snr.value = 3.0
    assert session.settings("toy").snr == 3.0
    board = AssignmentBoard(session)
    assert board.weights["toy"].description == "Toy band count"


def test_toy_technique_in_the_command_line(toy, tmp_path, capsys):
    with pytest.raises(SystemExit):
        main(["assign", "--help"])
    out = capsys.readouterr().out
    assert re.search(r"--toy FILE\s+Toy band count spectrum or peak list", out)
    peaks = tmp_path / "toy.txt"
    peaks.write_text("# toy peak list\n10 9\n20 8\n30 7\n")
    assert main(["assign", "C60", "--ipr", "--toy", str(peaks), "--set", "toy.snr=8"]) == 0
    out = capsys.readouterr().out
    assert "Toy: 2 toy bands observed, 1 predicted." in out  # C60 Ih: one orbit size
    assert "settings used, Toy: region=0-100 a.u., snr=8" in out


def test_settings_split_and_validation():
    s = NmrSettings(snr=8)
    assert s.snr == 8.0 and s.changed() == {"snr": 8.0}
    assert set(s.values("observe")) >= {"snr", "region", "solvent", "prominence"}
    assert "integral_tol" in s.values("compare")
    assert NmrSettings.parse("region", "128,152") == (128.0, 152.0)
    assert NmrSettings.parse("solvent", "CDCl3") == "CDCl3"
    with pytest.raises(SettingsError, match=r"nmr.snr = 'lots': expected a number from 0.1 "
                                            r"to 10000 \(minimum signal-to-noise of a line\)"):
        NmrSettings.parse("snr", "lots")
    with pytest.raises(SettingsError, match=r"nmr.region = \(150.0, 150.0\): expected two "
                                            "numbers low,high with low < high"):
        NmrSettings(region=(150.0, 150.0))
    with pytest.raises(SettingsError, match="nmr.solvent = 'brine': .*unknown solvent 'brine'"):
        NmrSettings(solvent="brine")
    with pytest.raises(SettingsError, match="nmr: unknown setting 'colour'; expected one of "
                                            "region, solvent"):
        NmrSettings().replace(colour=1)
