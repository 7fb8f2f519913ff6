"""Mass spectra the kit never saw: low resolving power, enriched 13C, envelopes nobody explains.

Every spectrum here comes from ``mass_corpus.py`` beside this file, not from the kit's own
generator: isotope lines from IsoSpecPy (test-only oracle, its own element table with the
13C probability set per test), a line shape and noise of that module's own.  The truth is
what went in; all spectra are invented.
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest

import mass_corpus as mc
from cageprint.cli import main
from cageprint.isotopes import fit_c13, isotope_envelope
from cageprint.techniques.mass import MassSpecies, observe_mass
from cageprint.techniques.mass_observe import Unexplained
from cageprint.techniques.mass_peaks import _centroid_profile

pytest.importorskip("IsoSpecPy")

ENRICHED = [("C60", {"C": 60}, 1, 1.0), ("C70", {"C": 70}, 1, 0.5),
            ("La@C82", {"La": 1, "C": 82}, 1, 0.2)]


def _enriched(p, resolving_power, seed):
    return mc.render(ENRICHED, resolving_power=resolving_power, c13=p, noise=0.003, shot=0.01,
                     shape="gauss", offset=0.1, seed=seed, points_per_fwhm=10)


# ------------------------------------------------------------------ 13C fraction


@pytest.mark.parametrize("p", [0.0107, 0.05, 0.08, 0.10])
@pytest.mark.parametrize("resolving_power", [10000, 2000])
def test_fitted_c13_fraction_within_one_percent(p, resolving_power):
    # issue 10 (Done when): `--c13 fit` reports the fraction within +-0.01 on 5 % and 10 %
    # enriched samples; also 8 % and natural abundance (0.0107, IUPAC/CIAAW representative
    # value, Meija et al., Pure Appl. Chem. 2016).  Oracle: IsoSpecPy isotope patterns with
    # the 13C probability set to p, drawn as Gaussian lines at R = 10000 (resolved, peaks
    # route) and R = 2000 (blended, profile route), with noise
    case = _enriched(p, resolving_power, seed=3)
    obs = observe_mass(case.spectrum, c13="fit")
    got = {s.formula: s for s in obs.species}
    assert {"C60", "C70"} <= set(got)
    for s in obs.species:
        assert abs(s.c13_fraction - p) <= 0.01, (s.formula, s.c13_fraction)
        assert s.c13_fraction == s.c13
        assert s.c13_fraction_err is not None and 0 < s.c13_fraction_err < 0.01
    # measured here: C60 and C70 within 0.001 of the truth (common practice, no source)
    assert abs(got["C60"].c13_fraction - p) < 0.001
    assert abs(got["C70"].c13_fraction - p) < 0.002
    assert obs.unexplained == ()


def test_enriched_endohedral_is_not_taken_for_a_heavier_metal():
    # invented truth: at 10 % 13C the monoisotopic line of La@C82 (0.9^82 = 2e-4 of it) is
    # lost, and Pr@C82 (two mass units heavier) with less 13C draws nearly the same profile;
    # the C_n ladder's fraction decides (one sample, one enrichment)
    obs = observe_mass(_enriched(0.10, 3000, seed=2).spectrum, c13="fit")
    la = next(s for s in obs.species if s.cage_n == 82)
    assert la.formula == "La@C82"
    assert abs(la.c13_fraction - 0.10) < 0.01


def test_fit_c13_uncertainty_matches_the_scatter():
    # common practice, no source: the least-squares standard error (covariance scaled by the
    # residual variance) should describe the spread of fits over noise realisations
    env = isotope_envelope("C60", 1, c13=0.05, threshold=1e-4)
    rng = np.random.default_rng(11)
    fits = [fit_c13("C60", env.mz, env.abundance + rng.normal(0, 0.003, env.mz.size), 1)
            for _ in range(60)]
    spread = float(np.std([f.c13 for f in fits]))
    stated = float(np.mean([f.c13_err for f in fits]))
    assert 0.5 < stated / spread < 2.0
    assert np.isnan(fit_c13("C60", env.mz[:2], env.abundance[:2], 1).c13_err)


def test_species_record_and_frame_carry_the_fraction():
    obs = observe_mass(_enriched(0.08, 10000, seed=4).spectrum, c13="fit")
    frame = obs.to_frame()
    assert {"c13_fraction", "c13_fraction_err"} <= set(frame.columns)
    assert np.all(np.abs(frame["c13_fraction"] - 0.08) <= 0.01)
    s = obs.species[0]
    back = MassSpecies.from_dict(s.to_dict())
    assert back == s and back.c13_fraction_err == s.c13_fraction_err
    assert any("fitted" in r for r in s.reasons)


def test_cli_c13_fit_csv_and_table(tmp_path, capsys):
    # issue 10: an 8 % 13C-enriched sample; the CSV has c13_fraction (+ its uncertainty) per
    # species and the readable table shows the fitted fraction with its uncertainty
    case = _enriched(0.08, 10000, seed=5)
    path = tmp_path / "enriched.csv"
    np.savetxt(path, np.c_[case.spectrum.x, case.spectrum.y], delimiter=",",
               header="m/z,intensity", comments="")
    assert main(["mass", str(path), "--c13", "fit", "--csv"]) == 0
    rows = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert {r["formula"] for r in rows} >= {"C60", "C70", "La@C82"}
    for r in rows:
        assert abs(float(r["c13_fraction"]) - 0.08) <= 0.01
        assert 0 < float(r["c13_fraction_err"]) < 0.01
    assert main(["mass", str(path), "--c13", "fit"]) == 0
    out = capsys.readouterr().out
    assert out.splitlines()[0].split()[-2:] == ["c13_fraction", "c13_fraction_err"]
    assert "# 13C fraction fitted per species: C60 0.08" in out
    assert main(["mass", str(path), "--csv"]) == 0  # natural fraction: no uncertainty
    rows = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert all(r["c13_fraction"] == "0.0107" and r["c13_fraction_err"] == "" for r in rows)


# ------------------------------------------------------------------ low resolving power


def test_partly_resolved_isotope_peaks_keep_their_own_centroids():
    # the cause of issue 10's lost C84: at R = 1500 near m/z 1008 the valley between C84's
    # first two isotope peaks (100 : 91) lies above half height; one half-height window then
    # spanned both and put a centroid at 1008.5 (read as charge 2).  Invented two-line
    # profile; the top part of each peak must give its own position and width
    x = np.linspace(1000, 1020, 8001)
    fw = 1008.0 / 1500
    y = sum(a * mc.line_shape(x, c, fw, shape="gauss") for c, a in ((1008.0, 1.0),
                                                                    (1009.003, 0.91)))
    peaks = _centroid_profile(x, y + 1e-4, 5.0)
    big = peaks.area > 0.1 * peaks.area.max()
    assert peaks.mz[big] == pytest.approx([1008.0, 1009.003], abs=0.03)
    # the width (smoothing taken out) is a starting value, refined later by the profile fit:
    # measured 1.2x here (the neighbour's flank), where one merged window gave about 3x
    assert peaks.fwhm[big] / peaks.smoothing == pytest.approx(fw, rel=0.3)


@pytest.mark.parametrize("polarity", ["negative", "positive"])
def test_issue_ladder_at_r1500_keeps_c84(polarity):
    # issue 10: a low-resolution (R ~ 1500) negative-ion run of a C60...C84 ladder lost its
    # C84 member although weaker members were found.  Invented ladder, C84 at 20 % of C60
    spec = [("C60", {"C": 60}, 1, 1.0), ("C70", {"C": 70}, 1, 0.6), ("C76", {"C": 76}, 1, 0.1),
            ("C78", {"C": 78}, 1, 0.12), ("C84", {"C": 84}, 1, 0.2)]
    case = mc.render(spec, resolving_power=1500, polarity=polarity, noise=0.003, offset=0.2,
                     seed=1)
    obs = observe_mass(case.spectrum)
    sign = -1 if polarity == "negative" else 1
    assert sorted((s.formula, s.charge) for s in obs.species) == sorted(
        (n, sign) for n, *_ in spec)
    assert obs.diagnostics["route"] == "profile"
    assert obs.diagnostics["calibration_offset"] == pytest.approx(0.2, abs=0.06)
    assert obs.diagnostics["resolving_power"] == pytest.approx(1500, rel=0.25)
    assert obs.unexplained == ()


# a seeded slice of the benchmark corpus (tests/benchmarks/bench_mass_accuracy.py uses other
# seeds): R 1000-3000, both polarities, noise, calibration offsets, tailing line shape
SLICE = [(seed, r, pol) for seed, r in ((1, 1000), (2, 1500), (3, 2000), (4, 3000))
         for pol in ("positive", "negative")]


@pytest.mark.parametrize("seed, resolving_power, polarity", SLICE)
def test_every_envelope_found_or_listed(seed, resolving_power, polarity):
    # issue 10 (Build 4): every envelope above the noise threshold in low-resolution data is
    # found or listed as unexplained with its m/z; no species that is not there
    case = mc.ladder_case(seed, resolving_power, polarity)
    obs = observe_mass(case.spectrum)
    score = mc.score(case, obs)
    assert score.found + score.listed == score.present, score.missed
    assert score.false == 0, score.false_names
    assert score.found >= score.present - 1  # measured: all found in this slice but one
    assert score.spurious == 0


def test_unexplained_envelope_is_listed_with_mz_and_height(capsys, tmp_path):
    # invented truth: C60, C70 and a contaminant that is no cage (C44H90O23Na+, a polyether
    # sodium adduct near m/z 1025); it must be listed, with its m/z and relative height, in the
    # observation and by the command line, and not be passed off as a cage
    spec = [("C60", {"C": 60}, 1, 1.0), ("C70", {"C": 70}, 1, 0.5),
            ("PEG", {"C": 44, "H": 90, "O": 23, "Na": 1}, 1, 0.3)]
    for r in (1500, 10000):
        case = mc.render(spec, resolving_power=r, noise=0.002, seed=7)
        obs = observe_mass(case.spectrum)
        assert sorted(s.formula for s in obs.species) == ["C60", "C70"]
        peg = case.species[2]
        assert len(obs.unexplained) == 1
        u = obs.unexplained[0]
        assert isinstance(u, Unexplained)
        assert peg.mz_range[0] - 1 <= u.mz <= peg.mz_range[1] + 1
        truth = peg.apex / max(s.apex for s in case.species)
        assert u.relative_height == pytest.approx(truth, rel=0.3)
        assert obs.diagnostics["unexplained_envelopes"][0]["mz"] == u.mz
        assert Unexplained.from_dict(u.to_dict()) == u
    path = tmp_path / "contaminated.csv"
    np.savetxt(path, np.c_[case.spectrum.x, case.spectrum.y], delimiter=",",
               header="m/z,intensity", comments="")
    assert main(["mass", str(path)]) == 0
    out = capsys.readouterr().out
    assert f"# unexplained envelope at m/z {u.mz:.3f}" in out
    assert "1 unexplained envelopes" in out
    assert main(["mass", str(path), "--csv"]) == 0
    captured = capsys.readouterr()
    assert "unexplained envelope at m/z" in captured.err
    assert "unexplained" not in captured.out
