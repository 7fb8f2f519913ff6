"""IR and Raman: band counts against allowed fundamentals; C60 among all 1,812 isomers."""

from __future__ import annotations

import numpy as np
import pytest

from cageprint.errors import EvidenceError, SpectrumError
from cageprint.evidence import Candidate
from cageprint.session import Session
from cageprint.spectra import Spectrum
from cageprint.techniques.vibrational import (
    VibrationalObservation,
    compare_ir,
    compare_raman,
    compare_vibrational,
    observe_ir,
    observe_raman,
    observe_vibrational,
)

# Krätschmer, Lamb, Fostiropoulos, Huffman, Nature 1990: the four IR bands of solid C60
C60_IR = [527.0, 577.0, 1183.0, 1429.0]
# Taylor, Hare, Abdul-Sada, Kroto, Chem. Commun. 1990: one 13C line (142.68 ppm, from memory)
C60_NMR = 142.68


def test_counts_decide_the_verdict():
    # Dresselhaus, Dresselhaus & Eklund, Science of Fullerenes and Carbon Nanotubes 1996:
    # Ih C60 has 4 IR-active (T1u) fundamentals
    obs = VibrationalObservation("ir", C60_IR)
    v = compare_vibrational(4, obs)
    assert (v.verdict, v.score) == ("consistent", 0.0)
    assert v.reasons == ("4 bands observed, 4 IR-active fundamentals allowed: all seen.",)
    # more than allowed plus the allowance of 2: ruled out
    v = compare_vibrational(1, obs)
    assert v.verdict == "ruled out"
    assert "3 more than allowed, beyond the allowance of 2 for overtones and impurities" \
        in v.reasons[0]
    # within the allowance: possible
    assert compare_vibrational(3, obs).verdict == "possible"
    assert compare_vibrational(2, obs, allowance=1).verdict == "ruled out"
    # fewer than allowed: weak evidence only (log of the ratio)
    v = compare_vibrational(40, obs)
    assert v.verdict == "possible" and v.score == pytest.approx(-np.log(10))
    assert compare_vibrational(6, obs).verdict == "consistent"


def test_candidate_and_fingerprint_predictions():
    # Dresselhaus et al. 1996: Ih C60 has 4 IR- and 10 Raman-active fundamentals
    c = Candidate("C60", 60, 1, "Ih", (60,), 4, 10, 0.757)
    assert compare_ir(c, VibrationalObservation("ir", C60_IR)).verdict == "consistent"
    raman = VibrationalObservation("raman", np.linspace(270, 1580, 10))
    assert compare_raman(c, raman).verdict == "consistent"
    with pytest.raises(EvidenceError, match="compare_ir needs an IR observation; got 'raman'"):
        compare_ir(c, raman)
    with pytest.raises(EvidenceError, match="compare_raman needs a Raman observation"):
        compare_raman(c, VibrationalObservation("ir", C60_IR))
    no_counts = Candidate("C60", 60, 1, "Ih", (60,))
    with pytest.raises(EvidenceError, match="compare_ir: the prediction has no ir_count"):
        compare_vibrational(no_counts, VibrationalObservation("ir", C60_IR))


def test_fingerprint_counts_of_c60_and_c70():
    # Dresselhaus et al. 1996: C60 4 IR / 10 Raman; C70 (D5h) 31 IR / 53 Raman
    from cageprint.cage import Cage, iter_isomers

    c60 = Candidate.from_cage(Cage.from_spiral(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32]))
    assert (c60.ir_count, c60.raman_count) == (4, 10)
    c70 = Candidate.from_cage(next(iter(iter_isomers(70, ipr=True))))
    assert (c70.ir_count, c70.raman_count) == (31, 53)


def _ir_profile(bands, seed=0, transmittance=False):
    x = np.arange(400.0, 4000.0, 1.0)
    y = 0.02 + 1e-5 * (x - 400)   # a sloping baseline
    for p, h in bands:
        y = y + h / (1 + ((x - p) / 3.0) ** 2)
    y = y + np.random.default_rng(seed).normal(0, 0.002, x.size)
    if transmittance:
        return Spectrum(x, 100 * 10 ** (-y), technique="ir", y_unit="transmittance")
    return Spectrum(x, y, technique="ir", y_unit="absorbance")


def test_profile_bands_counted_and_artefacts_excluded():
    # Krätschmer et al., Nature 1990 (band positions); CO2 near 2349 cm-1 and the
    # region default are common practice, no source
    bands = [(527, 0.5), (577, 0.2), (1183, 0.15), (1429, 0.2), (2349, 0.3), (2920, 0.1)]
    obs = observe_ir(_ir_profile(bands), exclude=[(2300, 2400, "CO2")])
    np.testing.assert_allclose(obs.positions, C60_IR, atol=1.0)
    assert obs.excluded == ()   # bands are looked for only in (and near) the region
    obs = observe_ir(_ir_profile(bands), region=(400, 3000), exclude=[(2300, 2400, "CO2")])
    assert obs.n_bands == 5
    assert [e["reason"] for e in obs.excluded] == ["artefact region 2300-2400 cm-1 (CO2)"]


def test_transmittance_is_turned_upside_down():
    # common practice, no source: IR bands are dips in a transmittance trace
    bands = [(527, 0.5), (577, 0.2), (1183, 0.15), (1429, 0.2)]
    obs = observe_ir(_ir_profile(bands, transmittance=True))
    np.testing.assert_allclose(obs.positions, C60_IR, atol=1.0)
    assert "inverted" in obs.diagnostics


def test_raman_default_region_and_errors():
    s = Spectrum([100.0, 273.0, 497.0, 1469.0, 1575.0], [1, 1, 1, 1, 1], technique="raman",
                 kind="peaks")
    obs = observe_raman(s)
    assert obs.positions == (273.0, 497.0, 1469.0, 1575.0)
    assert VibrationalObservation.from_dict(obs.to_dict()) == obs
    with pytest.raises(SpectrumError, match="observe_vibrational needs an IR or Raman "
                                            "spectrum; got technique 'nmr'"):
        observe_vibrational(Spectrum([1.0], [1.0], technique="nmr"))
    with pytest.raises(SpectrumError, match="region must span a range of cm-1"):
        observe_ir(Spectrum([500.0], [1.0], technique="ir", kind="peaks"), region=(5, 5))
    with pytest.raises(EvidenceError, match="technique must be 'ir' or 'raman'; got 'uv'"):
        VibrationalObservation("uv", ())


def test_no_bands_is_no_data():
    obs = VibrationalObservation("ir", ())
    assert compare_vibrational(4, obs).verdict == "no data"


@pytest.mark.slow
def test_c60_ir_four_bands_and_one_nmr_line_put_ih_first_of_1812():
    # Krätschmer et al., Nature 1990 (4 IR bands); Taylor et al., Chem. Commun. 1990
    # (one 13C line); Fowler & Manolopoulos, An Atlas of Fullerenes 1995: 1,812 C60 isomers
    s = Session("C60")
    s.set_candidates(ipr=False)
    assert len(s.candidates) == 1812
    s.load("ir", Spectrum(C60_IR, [1.0, 0.4, 0.3, 0.35], technique="ir", kind="peaks"))
    s.load("nmr", Spectrum([C60_NMR], [1.0], technique="nmr", kind="peaks"))
    r = s.ranking
    top = r.top()
    assert len(top) == 1
    assert top[0].candidate.point_group == "Ih"
    assert top[0].verdicts["ir"].verdict == "consistent"
    assert top[0].verdicts["nmr"].verdict == "consistent"
    assert all(row.score < top[0].score for row in r.rows[1:])
    # IR alone also keeps Ih first: every other isomer allows more bands than it shows
    s.set_weight("nmr", 0.0)
    assert [row.candidate.point_group for row in s.ranking.top()] == ["Ih"]


def test_default_excludes_only_the_co2_q_branch():
    # Krätschmer et al., Nature 1990 (the four C60 bands); CO2 bend Q branch near
    # 667 cm-1 (from memory)
    s = Spectrum(C60_IR + [667.5], [1.0, 0.4, 0.3, 0.35, 0.2], technique="ir", kind="peaks")
    obs = observe_ir(s)
    assert obs.positions == tuple(C60_IR)
    assert obs.excluded[0]["reason"] == ("artefact region 664-671 cm-1 (atmospheric CO2 bend, "
                                         "Q branch)")
    assert observe_ir(s, exclude=[]).n_bands == 5


def test_atmospheric_windows_only_on_request():
    # the water-vapour window of the reference table covers the C60 band at 1429 cm-1
    # (Krätschmer et al., Nature 1990), so it is not applied by default
    s = Spectrum(C60_IR, [1.0, 0.4, 0.3, 0.35], technique="ir", kind="peaks")
    assert observe_ir(s).n_bands == 4
    obs = observe_ir(s, exclude="atmospheric")
    assert obs.positions == (527.0, 577.0, 1183.0)
    assert obs.excluded[0]["reason"].startswith("artefact region 1300-2000 cm-1 (water vapour")
    with pytest.raises(SpectrumError, match="exclude must be 'atmospheric' or a list"):
        observe_ir(s, exclude="air")
