"""``cageprint assign``: ranked table, CSV, record and report from plain files."""

from __future__ import annotations

import csv
import io
import json

import numpy as np
import pytest

from cageprint.cli import main

# Diederich et al., Science 1991: major C2v C78 isomer, 21 lines, 3 of half intensity
C78_C2V = [4] * 18 + [2] * 3


@pytest.fixture(scope="module")
def c78_peaks(tmp_path_factory) -> str:
    """An invented peak list with the published C2v pattern (positions and noise invented)."""
    rng = np.random.default_rng(78)
    sizes = list(C78_C2V)
    rng.shuffle(sizes)
    pos = np.sort(rng.uniform(130, 150, len(sizes)))[::-1]
    lines = ["# shift/ppm  intensity"]
    lines += [f"{p:.2f}  {s * (1 + rng.normal(0, 0.1)):.3f}"
              for p, s in zip(pos, sizes, strict=True)]
    p = tmp_path_factory.mktemp("assign") / "fraction-c.txt"
    p.write_text("\n".join(lines) + "\n")
    return str(p)


def test_csv_columns_and_first_row(c78_peaks, capsys):
    assert main(["assign", "C78", "--ipr", "--nmr", c78_peaks, "--csv"]) == 0
    out = capsys.readouterr().out
    rows = list(csv.reader(io.StringIO(out)))
    assert rows[0][:5] == ["rank", "formula", "isomer", "point_group", "score"]
    assert len(rows) == 1 + 5          # Fowler & Manolopoulos 1995: 5 IPR isomers of C78
    first = dict(zip(rows[0], rows[1], strict=True))
    assert (first["rank"], first["point_group"], first["nmr_pattern"]) == ("1", "C2v",
                                                                           "18x4+3x2")
    assert first["ir_verdict"] == "no data"
    assert rows[2][0] == "2"           # the first rank is not shared


def test_readable_table_record_and_report(c78_peaks, tmp_path, capsys):
    rec, rep = tmp_path / "out.json", tmp_path / "out.html"
    code = main(["assign", "78", "--ipr", "--nmr", c78_peaks, "--sample", "<b>frac C</b>",
                 "--record", str(rec), "--report", str(rep), "--weight", "uvvis=0",
                 "--set", "nmr.snr=4"])
    assert code == 0
    out = capsys.readouterr().out
    assert out.splitlines()[0].split()[:6] == ["rank", "formula", "isomer", "pg", "score",
                                              "verdict"]
    assert "first: C78 isomer" in out and "(C2v)" in out
    assert "NMR: 21 lines observed, 21 predicted (18x4+3x2)." in out
    assert "no data: MS, IR, Raman, UV" in out
    d = json.loads(rec.read_text())
    assert d["weights"]["uvvis"] == 0.0
    assert d["thresholds"]["nmr"] == {"snr": 4}
    assert d["inputs"]["nmr"]["source"] == "fraction-c.txt"
    html = rep.read_text()
    assert "&lt;b&gt;frac C&lt;/b&gt;" in html and "<b>frac C" not in html


def test_bad_options_exit_2_with_a_message(c78_peaks, capsys):
    assert main(["assign", "C78", "--ipr", "--nmr", c78_peaks, "--weight", "uv"]) == 2
    err = capsys.readouterr().err
    assert "cageprint assign: error: --weight 'uv': expected TECH=W such as uvvis=0.5" in err
    assert main(["assign", "C78", "--ipr", "--nmr", c78_peaks, "--set", "nmr.colour=1"]) == 2
    assert "set_threshold('nmr', 'colour'): unknown name" in capsys.readouterr().err
    assert main(["assign", "C77", "--nmr", c78_peaks]) == 2
    assert "a fullerene cage has an even number of carbons" in capsys.readouterr().err


def test_cli_and_record_show_the_settings_used(c78_peaks, tmp_path, capsys):
    # regression (issue 13): what is shown must be what the session used (S/N 8, not 10)
    rec = tmp_path / "snr8.json"
    assert main(["assign", "C78", "--ipr", "--nmr", c78_peaks, "--set", "nmr.snr=8",
                 "--set", "nmr.region=126,158", "--record", str(rec)]) == 0
    out = capsys.readouterr().out
    assert "settings used, NMR: region=126-158 ppm, solvent=none, snr=8, prominence=none" in out
    d = json.loads(rec.read_text())
    assert d["settings"]["nmr"]["snr"] == 8 and d["settings"]["nmr"]["region"] == [126, 158]
    assert d["observations"]["nmr"]["thresholds"]["snr"] == 8
    assert d["thresholds"]["nmr"] == {"snr": 8, "region": [126, 158]}


def test_bad_settings_exit_2_with_one_line(c78_peaks, capsys):
    assert main(["assign", "C78", "--nmr", c78_peaks, "--set", "nmr.snr=-1"]) == 2
    err = capsys.readouterr().err.strip()
    assert err == ("cageprint assign: error: nmr.snr = -1.0: expected a number from 0.1 to "
                   "10000 (minimum signal-to-noise of a line)")
    assert main(["assign", "C78", "--nmr", c78_peaks, "--set", "nmr.region=lots"]) == 2
    assert "nmr.region = 'lots': expected two numbers low,high" in capsys.readouterr().err
    assert main(["assign", "C78", "--nmr", c78_peaks, "--set", "xrd.snr=1"]) == 2
    assert "technique 'xrd' is not one of mass, nmr" in capsys.readouterr().err

