"""CLI bad input (issue 14): each case ends in one line on stderr and a non-zero exit.

Source for all: common practice, no source (command-line conventions: 0 done, 1 ran but
found nothing, 2 bad input).
"""

from __future__ import annotations

import numpy as np
import pytest

from cageprint.cli import main
from cageprint.spectra import Spectrum, write_csv, write_jcamp


def _run(capsys, *argv):
    rc = main([str(a) for a in argv])
    err = capsys.readouterr().err.strip()
    assert "\n" not in err, err
    return rc, err


@pytest.fixture
def files(tmp_path):
    x = np.linspace(120.0, 160.0, 2001)
    y = np.exp(-((x - 143.1) / 0.05) ** 2) + 0.001 * np.cos(7 * x)
    nmr = tmp_path / "c60.jdx"
    write_jcamp(Spectrum(x, y, technique="nmr", meta={"observe_mhz": 125.0}), nmr, form="AFFN")
    flat = tmp_path / "flat.csv"
    write_csv(Spectrum(x, np.ones_like(x), technique="nmr"), flat)
    wn = np.arange(400.0, 2001.0, 2.0)
    ir = tmp_path / "ir.jdx"
    write_jcamp(Spectrum(wn, np.exp(-((wn - 527) / 4) ** 2), technique="ir"), ir, form="AFFN")
    ms = tmp_path / "flat-ms.csv"
    ms.write_text("m/z,intensity\n101.3,5\n257.9,3\n433.1,4\n")  # peaks, no envelope
    return {"nmr": nmr, "flat": flat, "ir": ir, "ms": ms, "dir": tmp_path}


def test_mass_with_no_species_found(capsys, files):
    # issue 14: "`mass` whenever no species is found (TypeError)"; isotope envelopes that no
    # species explains are still listed (a finding, exit 0: tests/test_mass_lowres.py)
    rc, err = _run(capsys, "mass", files["ms"])
    assert rc == 1 and err.startswith("cageprint mass: nothing found: no cage species and no "
                                      "isotope envelope in")


def test_assign_set_snr_abc(capsys):
    # issue 14: "`assign --set nmr.snr=abc`"
    rc, err = _run(capsys, "assign", "C60", "--set", "nmr.snr=abc")
    assert rc == 2 and "nmr.snr = 'abc': expected a number" in err


def test_assign_set_snr_minus_one(capsys):
    # issue 14: "Accepted without a word: `--set nmr.snr=-1`"
    rc, err = _run(capsys, "assign", "C60", "--set", "nmr.snr=-1")
    assert rc == 2 and "nmr.snr = -1.0: expected a number from" in err


def test_assign_top_minus_one(capsys):
    # issue 14: "Accepted without a word: ... `--top -1`"
    rc, err = _run(capsys, "assign", "C60", "--top", "-1")
    assert rc == 2 and err == "cageprint assign: error: --top -1: expected a whole number >= 1"


def test_assign_report_pointing_at_a_folder(capsys, files):
    # issue 14: "`--report` pointing at a folder"; refused before anything is written
    rc, err = _run(capsys, "assign", "C60", "--nmr", files["nmr"], "--record",
                   files["dir"] / "r.json", "--report", files["dir"])
    assert rc == 2 and "--report" in err and "is a folder; give a file name" in err
    assert not (files["dir"] / "r.json").exists()


def test_assign_sample_name_with_invalid_utf8(capsys, files):
    # issue 14: "a sample ... name with invalid UTF-8 (the record is written, the report is not)"
    rec, rep = files["dir"] / "r.json", files["dir"] / "r.html"
    rc, err = _run(capsys, "assign", "C60", "--sample", "bad\udcff", "--record", rec,
                   "--report", rep)
    assert rc == 2 and err == ("cageprint assign: error: --sample 'bad\\xff': not valid UTF-8 "
                               "text; rename it (records and reports are UTF-8)")
    assert not rec.exists() and not rep.exists()


def test_assign_file_name_with_invalid_utf8(capsys, files):
    # issue 14: "a ... file name with invalid UTF-8"
    odd = files["dir"] / "f\udcffx.jdx"
    odd.write_bytes(files["nmr"].read_bytes())
    rc, err = _run(capsys, "assign", "C60", "--nmr", odd, "--report", files["dir"] / "r.html")
    assert rc == 2 and "f\\xffx.jdx': not valid UTF-8 text" in err
    assert not (files["dir"] / "r.html").exists()


def test_assign_weight_of_an_unknown_technique(capsys):
    # issue 14: "`--weight xx=1` blames the number instead of the unknown technique"
    rc, err = _run(capsys, "assign", "C60", "--weight", "xx=1")
    assert rc == 2 and "technique 'xx' is not one of" in err


def test_assign_ir_file_given_as_nmr(capsys, files):
    # issue 14: "an IR file given as `--nmr` (converted to 400-2000 "ppm")"
    rc, err = _run(capsys, "assign", "C60", "--nmr", files["ir"])
    assert rc == 2 and "the file declares a ir spectrum" in err and "technique='nmr'" in err


def test_assign_nmr_file_with_no_peaks(capsys, files):
    # issue 14: "an NMR file with no peaks (exit 0)": now exit 1, "ran but found nothing"
    rc, err = _run(capsys, "assign", "C60", "--nmr", files["flat"])
    assert rc == 1 and err.startswith("cageprint assign: nothing found: no lines observed in "
                                      "the 13C NMR spectrum")


def test_exit_statuses_are_stated_in_help(capsys):
    for command in ("assign", "mass"):
        with pytest.raises(SystemExit):
            main([command, "--help"])
        out = " ".join(capsys.readouterr().out.split())
        assert "1 ran but found nothing" in out and "2 bad input" in out


def test_a_good_assignment_still_exits_0(capsys, files):
    assert main(["assign", "C60", "--nmr", str(files["nmr"])]) == 0
