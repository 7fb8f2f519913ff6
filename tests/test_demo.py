"""The demo scenario: reproducible synthetic files that independent readers accept."""

from __future__ import annotations

import contextlib
import hashlib
import io
import json

import numpy as np
import pytest

from cageprint.cli import main
from cageprint.demo import FRACTIONS, SYNTHETIC_NOTE, ensure_demo, generate, is_current, synth


@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    generate(out)
    return out


def _digests(folder):
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(folder.iterdir())}


def test_regenerating_reproduces_every_byte(demo_dir, tmp_path):
    generate(tmp_path)
    assert _digests(tmp_path) == _digests(demo_dir)


def test_ensure_keeps_current_files_and_rewrites_stale_ones(demo_dir, tmp_path):
    generate(tmp_path)
    nmr = tmp_path / "fraction-B-nmr.jdx"
    stamp = nmr.stat().st_mtime_ns
    ensure_demo(tmp_path)
    assert nmr.stat().st_mtime_ns == stamp
    nmr.write_text("##TITLE=damaged\n")
    assert not is_current(tmp_path)
    ensure_demo(tmp_path)
    assert nmr.read_bytes() == (demo_dir / "fraction-B-nmr.jdx").read_bytes()


def test_cli_demo_ensure(tmp_path, capsys):
    assert main(["demo", "--out", str(tmp_path)]) == 0
    assert "fractions" in capsys.readouterr().out
    assert main(["demo", "--ensure", "--out", str(tmp_path)]) == 0
    assert "up to date" in capsys.readouterr().out


def test_every_file_says_it_is_synthetic(demo_dir):
    for p in demo_dir.iterdir():
        if p.suffix in (".jdx", ".csv"):
            assert SYNTHETIC_NOTE in p.read_text()[:2000], p.name
    truth = json.loads((demo_dir / "truth.json").read_text())
    assert truth["note"] == SYNTHETIC_NOTE
    assert set(truth["fractions"]) == {f.code for f in FRACTIONS}


def test_jcamp_files_read_by_an_independent_reader(demo_dir):
    jcamp = pytest.importorskip("jcamp")
    for p in sorted(demo_dir.glob("*.jdx")):
        with contextlib.redirect_stdout(io.StringIO()) as said:
            d = jcamp.jcamp_readfile(str(p)) if hasattr(jcamp, "jcamp_readfile") else \
                jcamp.readfile(str(p))
        assert said.getvalue() == "", p.name  # jcamp prints on X-check or length trouble
        assert len(d["x"]) == len(d["y"]) == int(d["npoints"]), p.name
        assert np.all(np.diff(d["x"]) > 0)


def test_nmr_lines_sit_where_the_truth_says(demo_dir):
    jcamp = pytest.importorskip("jcamp")
    truth = json.loads((demo_dir / "truth.json").read_text())
    for code, frac in truth["fractions"].items():
        if "nmr" not in frac["files"]:
            continue
        d = jcamp.readfile(str(demo_dir / frac["files"]["nmr"]))
        x, y = np.asarray(d["x"]), np.asarray(d["y"])
        major = frac["details"]["nmr"]["orbits"][0]
        for s in major["shifts_ppm"]:
            win = np.abs(x - s) < 0.2
            base = np.median(y[(x > 150.5) & (x < 155)])
            # common practice, no source: a line of 2+ carbons stands clear of 0.01 noise
            assert y[win].max() - base > 0.2, (code, s)
        assert sum(major["sizes"]) == frac["cages"][0]["n"]


def test_isotope_envelope_matches_an_independent_calculator():
    molmass = pytest.importorskip("molmass")
    # oracle: molmass (NIST isotopic compositions, 13C = 0.0107, the same p as the demo)
    for formula, nc, nn in (("C60", 60, 0), ("C76", 76, 0), ("Sc3NC80", 80, 1)):
        spec = molmass.Formula(formula).spectrum()
        ref = np.array([item.fraction for item in list(spec.values())[:4]])
        env = synth.cage_envelope(nc, nn)[:4]
        np.testing.assert_allclose(env / env.sum(), ref / ref.sum(), rtol=2e-3)


def test_mass_spectrum_base_peak_is_the_cage_ion(demo_dir):
    molmass = pytest.importorskip("molmass")
    data = np.loadtxt(demo_dir / "fraction-D-mass.csv", delimiter=",", comments="#",
                      skiprows=5)
    mz = data[np.argmax(data[:, 1]), 0]
    # oracle: molmass monoisotopic m/z of the radical cation, electron mass removed
    ref = molmass.Formula("[Sc3NC80]+").monoisotopic_mass
    assert abs(mz - ref) < 0.03  # grid step 0.02
