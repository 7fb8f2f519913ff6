"""The mass-spectrum step: observe, compare, synthetic spectra, command line.

All spectra here are invented, made by the seeded generator in
``cageprint.techniques.mass_synthetic``; the truth is what went in.
"""

from __future__ import annotations

import numpy as np
import pytest

from cageprint.cli import main
from cageprint.errors import FormulaError, SpectrumError
from cageprint.isotopes import ELECTRON_MASS, monoisotopic_mass
from cageprint.spectra.model import Spectrum
from cageprint.techniques.mass import (
    CLUSTER_CHARGES,
    PEAK_SNR,
    cage_charge,
    compare_mass,
    observe_mass,
    predict_mass,
)
from cageprint.techniques.mass_synthetic import synthetic_mass_spectrum

# the mixture of issue 5: C60+, C70+, C60 2+, C76+, C84+, a 5 % C58 fragment, a C60O
# impurity and an endohedral cage (abundances: envelope totals, invented)
MIXTURE = [
    ("C60", 1, 1.0),
    ("C70", 1, 0.5),
    ("C60", 2, 0.15),
    ("C76", 1, 0.2),
    ("C84", 1, 0.25),
    ("C58", 1, 0.05),
    ("C60O", 1, 0.1),
    ("Sc3N@C80", 1, 0.3),
]
KINDS = {"C60": "cage", "C70": "cage", "C76": "cage", "C84": "cage", "C58": "fragment",
         "C60O": "oxide", "Sc3N@C80": "endohedral"}


def _truth_mz(formula, z):
    return (monoisotopic_mass(formula) - z * ELECTRON_MASS) / abs(z)


@pytest.mark.parametrize("seed, offset, resolving_power", [
    (1, 0.0, 10000), (2, 0.3, 10000), (3, -0.3, 10000), (4, 0.3, 10000),
    (5, 0.3, 3000), (6, -0.3, 30000),
])
def test_mixture_found_exactly(seed, offset, resolving_power):
    # invented truth (issue 5): every species with the right charge and formula, no extra
    # species above the stated S/N (PEAK_SNR); a 0.3 m/z offset is found and corrected
    s = synthetic_mass_spectrum(MIXTURE, resolving_power=resolving_power, noise=0.002,
                                offset=offset, seed=seed)
    obs = observe_mass(s)
    got = sorted((sp.formula, sp.charge) for sp in obs.species)
    assert got == sorted((f, z) for f, z, _ in MIXTURE)
    assert obs.diagnostics["snr"] == PEAK_SNR
    assert obs.diagnostics["calibration_offset"] == pytest.approx(offset, abs=0.002)
    assert len(obs.diagnostics["calibrants"]) >= 3
    assert obs.diagnostics["unexplained_envelopes"] == ()
    truth = {(f, z): a for f, z, a in MIXTURE}
    for sp in obs.species:
        assert sp.kind == KINDS[sp.formula]
        # corrected m/z within 3 ppm of the true monoisotopic m/z at R = 10000, scaled with the
        # peak width at other resolving powers (common practice, no source)
        limit = 3 * max(1.0, 10000 / resolving_power)
        assert abs(sp.mz - _truth_mz(sp.formula, sp.charge)) / sp.mz * 1e6 < limit
        assert abs(sp.error_ppm) < limit
        assert sp.envelope_score > 0.98
        assert sp.relative_abundance == pytest.approx(truth[(sp.formula, sp.charge)], rel=0.15)
    sc = next(sp for sp in obs.species if sp.formula == "Sc3N@C80")
    # from memory: Sc3N@C80 is (Sc3+)3 N3- in a C80 6- cage
    assert (sc.cage_n, sc.cage_charge) == (80, -6)
    frag = next(sp for sp in obs.species if sp.formula == "C58")
    assert any("C2 loss from C60" in r for r in frag.reasons)
    assert obs.cage_sizes == [60, 70, 76, 80, 84]


def test_without_calibration_the_offset_spectrum_is_not_explained():
    # invented truth: with a 0.3 m/z error and no correction nothing matches at 10 ppm
    s = synthetic_mass_spectrum(MIXTURE, offset=0.3, seed=5)
    obs = observe_mass(s, calibrate=False)
    assert obs.species == ()
    assert len(obs.diagnostics["unexplained_envelopes"]) == 8
    fixed = observe_mass(s, calibrate=0.3)
    assert len(fixed.species) == 8
    assert fixed.diagnostics["calibration"] == "given"


def test_centroided_peak_list():
    # invented truth: a peak list (kind="peaks") is used as given
    s = synthetic_mass_spectrum(MIXTURE, kind="peaks")
    obs = observe_mass(s)
    assert sorted((sp.formula, sp.charge) for sp in obs.species) == sorted(
        (f, z) for f, z, _ in MIXTURE)
    for sp in obs.species:
        assert abs(sp.error_ppm) < 1e-3  # exact lines


def test_metallofullerenes_and_isobars():
    # invented truth: La@C82, Gd@C82 (seven Gd isotopes), Lu3N@C80; Y2C2@C82 has the same
    # elemental formula as Y2@C84 (common practice, no source: MS cannot tell them apart),
    # so the ambiguity must be reported
    mix = [("La@C82", 1, 1.0), ("Gd@C82", 1, 0.6), ("Lu3N@C80", 1, 0.4), ("Y2C2@C82", 1, 0.5)]
    obs = observe_mass(synthetic_mass_spectrum(mix, resolving_power=20000, seed=11))
    got = {sp.formula: sp for sp in obs.species}
    assert set(got) == {"La@C82", "Gd@C82", "Lu3N@C80", "Y2@C84"}
    assert "Y2C2@C82" in got["Y2@C84"].alternatives
    assert any("ambiguous" in r for r in got["Y2@C84"].reasons)
    assert got["La@C82"].cage_charge == -3
    assert got["Gd@C82"].envelope_score > 0.98


def test_overlapping_hydride_series_is_separated():
    # invented truth: C60, C60H2 and C60H4 envelopes overlap (2 u apart); peeling from the
    # low-m/z side recovers each with its amount (common practice, no source)
    mix = [("C60", 1, 1.0), ("C60H2", 1, 0.4), ("C60H4", 1, 0.3)]
    obs = observe_mass(synthetic_mass_spectrum(mix, resolving_power=20000, seed=3))
    got = {sp.formula: sp for sp in obs.species}
    assert set(got) == {"C60", "C60H2", "C60H4"}
    for f, _, a in mix:
        assert got[f].relative_abundance == pytest.approx(a, rel=0.1)
    assert got["C60H2"].kind == "hydride" and got["C60H2"].cage_n == 60


def test_heterofullerene_cage_size():
    # invented truth: C59N+ next to C70+; the aza cage has 60 atoms
    obs = observe_mass(synthetic_mass_spectrum([("C59N", 1, 1.0), ("C70", 1, 0.5)], seed=4,
                                               resolving_power=20000))
    got = {sp.formula: sp for sp in obs.species}
    assert set(got) == {"C59N", "C70"}
    assert got["C59N"].kind == "heterofullerene" and got["C59N"].cage_n == 60


def test_negative_ions():
    # invented truth: negative-ion spectra give negative charges; m/z includes the added electron
    s = synthetic_mass_spectrum([("C60", 1, 1.0), ("C70", 2, 0.3)], polarity="negative",
                                seed=6)
    assert s.meta["polarity"] == "negative"
    obs = observe_mass(s)
    assert sorted((sp.formula, sp.charge) for sp in obs.species) == [("C60", -1), ("C70", -2)]
    c60 = next(sp for sp in obs.species if sp.formula == "C60")
    assert c60.mz == pytest.approx(720.0 + ELECTRON_MASS, abs=2e-3)


def test_c13_enrichment_fitted_back():
    # issue 5: an envelope made with 5 % 13C is fitted back within +-0.3 %
    s = synthetic_mass_spectrum([("C60", 1, 1.0), ("C70", 1, 0.6)], c13=0.05, seed=8,
                                resolving_power=15000)
    natural = observe_mass(s)
    fitted = observe_mass(s, c13="fit")
    assert sorted(sp.formula for sp in fitted.species) == ["C60", "C70"]
    for sp in fitted.species:
        assert abs(sp.c13 - 0.05) < 0.003
        assert sp.envelope_score > 0.99
    # with the natural fraction the shape fits badly (or not at all)
    assert all(sp.envelope_score < 0.95 for sp in natural.species)
    fixed = observe_mass(s, c13=0.05)
    assert sorted(sp.formula for sp in fixed.species) == ["C60", "C70"]


def test_enriched_mixture_with_offset():
    # invented truth: a 2 % 13C sample with a 0.3 m/z offset; with c13="fit" the C_n ladder
    # still calibrates and every species is found with its fraction (+-0.3 %)
    s = synthetic_mass_spectrum(MIXTURE, c13=0.02, offset=0.3, seed=13)
    obs = observe_mass(s, c13="fit")
    assert sorted((sp.formula, sp.charge) for sp in obs.species) == sorted(
        (f, z) for f, z, _ in MIXTURE)
    assert obs.diagnostics["calibration_offset"] == pytest.approx(0.3, abs=0.002)
    for sp in obs.species:
        assert abs(sp.c13 - 0.02) < 0.003


def test_noise_only_gives_no_species():
    # invented truth: seeded noise with no signal has no peak above PEAK_SNR; a few isolated
    # spikes are peaks but form no isotope envelope, so no species either
    rng = np.random.default_rng(3)
    x = np.linspace(300, 1500, 100_000)
    y = np.maximum(10 + rng.normal(0, 1, x.size), 0)
    with pytest.raises(SpectrumError, match=r"no peaks in the mass spectrum above the threshold"):
        observe_mass(Spectrum(x, y, technique="mass"))
    y[[20_000, 50_000, 70_000]] += 50
    obs = observe_mass(Spectrum(x, y, technique="mass"))
    assert obs.species == ()
    assert len(obs.diagnostics["unassigned_peaks"]) == 3


def test_sloping_baseline():
    # invented truth: a decaying baseline under the peaks does not create species
    s = synthetic_mass_spectrum([("C60", 1, 1.0), ("C70", 1, 0.5)], seed=9, noise=0.001)
    y = s.y + 0.05 * s.y.max() * np.exp(-(s.x - s.x[0]) / 100.0)
    obs = observe_mass(s.replace(y=y))
    assert sorted(sp.formula for sp in obs.species) == ["C60", "C70"]


def test_picked_peaks_sit_on_the_spectrum():
    # invented truth: peaks_mz / peaks_intensity are on the spectrum's own axes (for plots):
    # the tallest picked peak is within 2 % of the tallest point, at its m/z before calibration
    s = synthetic_mass_spectrum([("C60", 1, 1.0)], seed=1, offset=0.3, noise=0.001)
    obs = observe_mass(s)
    i = int(np.argmax(obs.peaks_intensity))
    assert obs.peaks_intensity[i] == pytest.approx(s.y.max(), rel=0.02)
    assert obs.peaks_mz[i] == pytest.approx(s.x[int(np.argmax(s.y))], abs=0.01)
    assert obs.peaks_area[i] < obs.peaks_intensity[i]


def test_observation_frame_and_round_trip():
    obs = observe_mass(synthetic_mass_spectrum(MIXTURE, seed=1))
    df = obs.to_frame()
    for col in ("formula", "charge", "mz", "relative_abundance", "error_ppm", "envelope_score",
                "cage_n", "cage_charge", "kind", "reasons"):
        assert col in df.columns
    assert df.relative_abundance.max() == 1.0
    sp = obs.species[0]
    assert type(sp).from_dict(sp.to_dict()) == sp


def test_compare_and_predict():
    obs = observe_mass(synthetic_mass_spectrum(MIXTURE, seed=1))
    c60, c70, c62, la = compare_mass(["C60", "C70", "C62", "La@C82"], obs)
    assert c60.charge in (1, 2) and c60.envelope_score > 0.99
    assert c70.formula == "C70" and abs(c70.error_ppm) < 3
    assert c62 is None and la is None
    # a formula given alone (not in a list) is scored too
    (alone,) = compare_mass("C76", obs)
    assert alone is not None and alone.formula == "C76"

    class Cage:  # anything with a .formula, like the kit's Cage
        formula = "C84"

    (m,) = compare_mass([Cage()], obs)
    assert m.formula == "C84"
    env = predict_mass("C60", 2)
    assert env.mz[0] == pytest.approx((720.0 - 2 * ELECTRON_MASS) / 2)


def test_compare_free_c13():
    s = synthetic_mass_spectrum([("C84", 1, 1.0)], c13=0.03, seed=12)
    obs = observe_mass(s, c13="fit")
    (m,) = compare_mass("C84", obs, c13="fit")
    assert abs(m.c13 - 0.03) < 0.003


def test_cage_charges():
    # from memory / common practice: formal cluster charges (CLUSTER_CHARGES)
    assert cage_charge("Sc3N@C80") == -6
    assert cage_charge("La@C82") == -3
    assert cage_charge("Sc2C2@C82") == -4
    assert cage_charge("Ca@C72") == -2
    assert cage_charge("C60") == 0
    assert CLUSTER_CHARGES["N"] == -3


# ----------------------------------------------------------------- bad input


def test_no_peaks():
    flat = Spectrum(np.linspace(500, 900, 1000), np.zeros(1000), technique="mass")
    with pytest.raises(SpectrumError, match=r"no peaks in the mass spectrum above the threshold"):
        observe_mass(flat)


def test_negative_intensities():
    s = synthetic_mass_spectrum([("C60", 1, 1.0)], seed=1)
    y = s.y.copy()
    y[10] = -3.0
    with pytest.raises(SpectrumError, match=r"1 negative intensities \(first at point 10, "
                       r"m/z .*pass clip_negative=True"):
        observe_mass(s.replace(y=y))
    assert observe_mass(s.replace(y=y), clip_negative=True).formulas == ["C60"]


def test_wrong_technique_and_type():
    s = Spectrum([1, 2, 3], [0, 1, 0], technique="ir")
    with pytest.raises(SpectrumError, match=r"technique 'mass', got 'ir'"):
        observe_mass(s)
    with pytest.raises(SpectrumError, match=r"spectrum must be a Spectrum, got list"):
        observe_mass([1, 2, 3])


def test_bad_options():
    s = synthetic_mass_spectrum([("C60", 1, 1.0)], seed=1)
    with pytest.raises(FormulaError, match=r"c13 must be None, 'fit' or a fraction"):
        observe_mass(s, c13=2.0)
    with pytest.raises(SpectrumError, match=r"polarity must be 'positive' or 'negative'"):
        observe_mass(s, polarity="sideways")


def test_unknown_element_and_charge_zero_in_compare_and_predict():
    obs = observe_mass(synthetic_mass_spectrum([("C60", 1, 1.0)], seed=1))
    with pytest.raises(FormulaError, match=r"unknown element 'Qq'"):
        compare_mass(["Qq@C82"], obs)
    with pytest.raises(FormulaError, match=r"charge 0: a neutral species has no m/z"):
        predict_mass("C60", 0)
    with pytest.raises(FormulaError, match=r"cannot take a formula from int"):
        compare_mass([5], obs)


def test_synthetic_generator_is_seeded_and_validated():
    a = synthetic_mass_spectrum(MIXTURE, seed=4)
    b = synthetic_mass_spectrum(MIXTURE, seed=4)
    c = synthetic_mass_spectrum(MIXTURE, seed=5)
    assert np.array_equal(a.y, b.y) and not np.array_equal(a.y, c.y)
    assert a.y.min() >= 0
    assert a.meta["species"][0] == ("C60", 1, 1.0)
    with pytest.raises(FormulaError, match=r"species is empty"):
        synthetic_mass_spectrum([])
    with pytest.raises(FormulaError, match=r"species\[0\] 'C60': abundance must be > 0"):
        synthetic_mass_spectrum([("C60", 1, 0.0)])
    with pytest.raises(FormulaError, match=r"species\[0\] must be \(formula, charge, abundance\)"):
        synthetic_mass_spectrum([("C60", 1, 1.0, 5)])


# ----------------------------------------------------------------- command line


def test_cli_mass_csv(tmp_path, capsys):
    s = synthetic_mass_spectrum(MIXTURE, seed=2, offset=0.3)
    path = tmp_path / "run.csv"
    np.savetxt(path, np.c_[s.x, s.y], delimiter=",", header="m/z,intensity", comments="")
    assert main(["mass", str(path), "--csv"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert lines[0].startswith("formula,charge,mz,relative_abundance,error_ppm,envelope_score")
    rows = [ln.split(",") for ln in lines[1:]]
    assert sorted((r[0], int(r[1])) for r in rows) == sorted((f, z) for f, z, _ in MIXTURE)
    assert main(["mass", str(path)]) == 0
    out = capsys.readouterr().out
    assert "calibration offset +0.300" in out and "Sc3N@C80" in out


def test_cli_mass_stick_list(tmp_path, capsys):
    # invented truth: a centroided two-column file is read as a peak list (wide spacing)
    s = synthetic_mass_spectrum(MIXTURE[:3], kind="peaks")
    path = tmp_path / "sticks.csv"
    np.savetxt(path, np.c_[s.x, s.y], delimiter=",", header="m/z,intensity", comments="")
    assert main(["mass", str(path), "--csv"]) == 0
    rows = [ln.split(",") for ln in capsys.readouterr().out.strip().splitlines()[1:]]
    assert sorted((r[0], int(r[1])) for r in rows) == [("C60", 1), ("C60", 2), ("C70", 1)]


def test_cli_mass_errors(tmp_path, capsys):
    path = tmp_path / "flat.csv"
    np.savetxt(path, np.c_[np.linspace(500, 900, 200), np.zeros(200)], delimiter=",",
               header="m/z,intensity", comments="")
    assert main(["mass", str(path)]) == 2
    assert "no peaks in the mass spectrum" in capsys.readouterr().err
    assert main(["mass", str(path), "--c13", "lots"]) == 2
    assert "--c13 must be a number or 'fit'" in capsys.readouterr().err


def test_cli_envelope(capsys):
    # common practice, no source: C60 2+ monoisotopic m/z (720 - 2 m_e)/2 = 359.999451
    assert main(["envelope", "C60", "--charge", "2", "--csv"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert lines[0] == "mz,relative_abundance"
    mz, rel = lines[1].split(",")
    assert float(mz) == pytest.approx(359.999451, abs=1e-6) and float(rel) == 1.0
    assert main(["envelope", "Sc3N@C80", "--fine"]) == 0
    assert "fine structure" in capsys.readouterr().out
    assert main(["envelope", "C60", "--charge", "0"]) == 2
    assert "charge 0: a neutral species has no m/z" in capsys.readouterr().err
    assert main(["envelope", "C60Xy"]) == 2
    assert "unknown element 'Xy'" in capsys.readouterr().err


def test_cli_mass_reads_mzml(tmp_path, capsys):
    # invented truth: the same mixture written as a profile mzML (psims, test dependency)
    import warnings

    writer = pytest.importorskip("psims.mzml.writer")
    s = synthetic_mass_spectrum(MIXTURE, seed=21, offset=0.3)
    path = tmp_path / "run.mzML"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with writer.MzMLWriter(open(path, "wb"), close=True) as out:
            out.controlled_vocabularies()
            out.file_description(["MS1 spectrum"])
            out.software_list([{"id": "gen", "version": "1",
                                "params": ["custom unreleased software tool"]}])
            out.instrument_configuration_list([{"id": "IC1", "component_list": []}])
            out.data_processing_list([{"id": "DP1", "processing_methods": [
                {"order": 1, "software_reference": "gen", "params": ["conversion to mzML"]}]}])
            with out.run(id="r1", instrument_configuration="IC1"):
                with out.spectrum_list(count=1):
                    out.write_spectrum(s.x, s.y, id="scan=1", centroided=False,
                                       polarity="positive scan",
                                       params=["MS1 spectrum", {"ms level": 1}])
    assert main(["mass", str(path), "--csv"]) == 0
    rows = [ln.split(",") for ln in capsys.readouterr().out.strip().splitlines()[1:]]
    assert sorted((r[0], int(r[1])) for r in rows) == sorted((f, z) for f, z, _ in MIXTURE)
