"""Reference tables (13C solvent lines, IR artefact regions), units, the Spectrum model, writers."""

from __future__ import annotations

import json

import numpy as np
import pytest

from cageprint.errors import SpectrumError, SpectrumFormatError
from cageprint.spectra import (
    IR_ARTEFACTS,
    SOLVENT_LINES,
    Spectrum,
    load_spectrum,
    mark_ir_artefacts,
    mark_reference_peaks,
    parse_delimited,
    parse_peaklist,
    pick_peaks,
    reference_lines,
    rereference,
    write_csv,
    write_jcamp,
)
from cageprint.spectra import units as U

# ----------------------------------------------------------------------------- solvent table


@pytest.mark.parametrize(
    "solvent, lines",
    [
        # G. R. Fulmer et al., Organometallics 29, 2176 (2010), Table 2; and H. E. Gottlieb,
        # V. Kotlyar, A. Nudelman, J. Org. Chem. 62, 7512 (1997)
        ("CDCl3", [77.16]),
        ("C6D6", [128.06]),
        # Fulmer et al. 2010, Table 2
        ("toluene-d8", [137.48, 128.87, 127.96, 125.13, 20.43]),
        ("CD2Cl2", [53.84]),
        ("acetone-d6", [206.26, 29.84]),
        # from memory (commonly tabulated; not in the two tables above)
        ("1,2-dichlorobenzene-d4", [132.39, 130.05, 127.19]),
        ("CS2", [192.8]),
        # 0 ppm by definition: R. K. Harris et al., Pure Appl. Chem. 73, 1795 (2001)
        ("TMS", [0.0]),
    ],
)
def test_solvent_table(solvent, lines):
    assert [p for p, _, _ in reference_lines(solvent)] == lines
    assert SOLVENT_LINES[solvent].source


def test_table_is_sane():
    for entry in SOLVENT_LINES.values():
        assert entry.lines and all(-1.0 <= p <= 230.0 for p, _ in entry.lines)
        assert entry.source.strip()


def test_aliases_and_mixtures():
    assert reference_lines("chloroform-d") == reference_lines("CDCl3")
    assert [p for p, _, _ in reference_lines("CS2 + acetone-d6")] == [192.8, 206.26, 29.84]
    assert [s for _, _, s in reference_lines("cs2/c6d6")] == ["CS2", "C6D6"]
    with pytest.raises(SpectrumError, match=r"unknown solvent 'heavy water'; known: CDCl3"):
        reference_lines("CS2 + heavy water")


def test_mark_reference_peaks_keeps_cage_lines():
    # C60 in toluene-d8: one cage line, 143.2 ppm region (C60 about 142.7-143.2 depending on
    # solvent; from memory), plus the five solvent lines
    found = np.array([20.43, 125.12, 127.97, 128.88, 137.49, 143.2])
    m = mark_reference_peaks(found, "toluene-d8")
    assert m.is_reference.tolist() == [True] * 5 + [False]
    assert m.kept.tolist() == [False] * 5 + [True]
    assert m.labels[0] == "toluene-d8 CD3 (20.43 ppm)"
    tight = mark_reference_peaks(found + 0.05, "toluene-d8", tol=0.01)
    assert not tight.is_reference.any()
    with pytest.raises(SpectrumError, match=r"tol must be > 0 ppm, got 0"):
        mark_reference_peaks(found, "C6D6", tol=0)


def test_mark_reference_on_picked_peaks_and_rereference():
    x = np.linspace(100.0, 160.0, 24001)
    lines = [(127.86, 5.0), (142.53, 1.0)]  # C6D6 observed 0.20 ppm low; one cage line
    y = sum(h / (1 + ((x - c) / 0.01) ** 2) for c, h in lines)
    s = Spectrum(x, y, technique="nmr")
    t, d = rereference(s, "CS2 + C6D6", observed_position=127.86)
    assert d["line"] == 128.06 and d["solvent"] == "C6D6" and d["offset"] == pytest.approx(0.2)
    assert t.meta["rereference"]["offset"] == pytest.approx(0.2)
    p = pick_peaks(t, baseline=None, noise=1e-3)
    assert np.allclose(p.positions, [128.06, 142.73], atol=1e-3)
    m = mark_reference_peaks(p, "CS2 + C6D6")
    assert m.is_reference.tolist() == [True, False]
    p2, _ = rereference(pick_peaks(s, baseline=None, noise=1e-3), "C6D6", 127.86)
    assert np.allclose(p2.positions, p.positions, atol=1e-6)
    with pytest.raises(SpectrumError, match=r"line=100.0 is not a line of 'C6D6'"):
        rereference(s, "C6D6", 127.86, line=100.0)
    with pytest.raises(SpectrumError, match=r"rereference works on 13C NMR \(ppm\) data, not ir"):
        rereference(Spectrum([1.0, 2.0], [1.0, 1.0], technique="ir"), "C6D6", 1.0)


def test_ir_artefact_regions():
    # CO2 nu3 ~2349 and nu2 ~667 cm-1, water bands ~1595 and ~3657/3756 cm-1 (from memory);
    # region widths common practice, no source
    for centre in (2349.0, 667.0, 1595.0, 3657.0, 3756.0):
        assert any(lo <= centre <= hi for lo, hi, _ in IR_ARTEFACTS)
    # C60 T1u bands 527, 577, 1183, 1429 cm-1 (Kraetschmer et al., Nature 347, 354 (1990);
    # from memory): 1429 lies in the water-bending region and is flagged, not removed
    m = mark_ir_artefacts([527.0, 577.0, 1183.0, 1429.0])
    assert m.is_reference.tolist() == [False, False, False, True]
    assert m.labels[3].startswith("water vapour")


# ----------------------------------------------------------------------------- units


def test_unit_conversions():
    # CODATA 2018: h c / e = 1239.841984 eV nm
    assert U.HC_EV_NM == pytest.approx(1239.841984, abs=1e-6)
    assert float(U.nm_to_ev(1239.841984)) == pytest.approx(1.0)
    assert float(U.ev_to_nm(U.nm_to_ev(532.0))) == pytest.approx(532.0)
    # 1e7 / nm = cm-1 (definition)
    assert float(U.nm_to_wavenumber(1000.0)) == 10000.0
    assert float(U.wavenumber_to_nm(U.nm_to_wavenumber(633.0))) == pytest.approx(633.0)
    assert float(U.wavenumber_to_ev(U.ev_to_wavenumber(2.5))) == pytest.approx(2.5)
    # delta(ppm) = offset(Hz) / spectrometer frequency (MHz) (definition)
    assert float(U.hz_to_ppm(U.ppm_to_hz(142.7, 150.9), 150.9)) == pytest.approx(142.7)
    # A = -log10(T) (Beer-Lambert decadic absorbance; definition)
    assert U.transmittance_to_absorbance([0.5, 50.0], percent=False)[0] == pytest.approx(
        0.30103, abs=1e-5)
    assert float(U.transmittance_to_absorbance(50.0, percent=True)) == pytest.approx(0.30103,
                                                                                     abs=1e-5)
    assert float(U.absorbance_to_transmittance(U.transmittance_to_absorbance(0.2))) == (
        pytest.approx(0.2))
    with pytest.raises(SpectrumError, match=r"transmittance must be > 0 .* value #1 is 0.0"):
        U.transmittance_to_absorbance([0.5, 0.0])
    with pytest.raises(SpectrumError, match=r"observe_mhz must be the spectrometer frequency"):
        U.hz_to_ppm(1.0, 0)
    with pytest.raises(SpectrumError, match=r"cannot convert x from 'ppm' to 'nm'"):
        U.to_kit_x([1.0], "ppm", "nm")


def test_unit_names():
    assert U.normalise_x_unit("cm^-1") == "cm-1" and U.normalise_x_unit("µm") == "um"
    assert U.normalise_x_unit("M/Z") == "m/z" and U.normalise_x_unit("parsec") is None
    assert U.normalise_y_unit("Absorbance") == "absorbance"
    assert U.normalise_y_unit("Lux") == "lux"
    assert U.technique_for_x_unit("nm") == "uvvis" and U.technique_for_x_unit("m/z") == "mass"


# ----------------------------------------------------------------------------- model


def test_model_is_immutable_sorted_and_validated():
    s = Spectrum([3.0, 1.0, 2.0], [30.0, 10.0, 20.0], technique="raman", widths=[0.3, 0.1, 0.2],
                 kind="peaks", meta={"title": "t"})
    assert s.x.tolist() == [1.0, 2.0, 3.0] and s.widths.tolist() == [0.1, 0.2, 0.3]
    with pytest.raises(ValueError, match="read-only"):
        s.y[0] = 1.0
    with pytest.raises(TypeError):
        s.meta["title"] = "u"
    back = Spectrum.from_dict(json.loads(json.dumps(s.to_dict())))
    assert back.to_dict() == s.to_dict()
    with pytest.raises(SpectrumError, match=r"technique 'xrd' is not one of"):
        Spectrum([1.0], [1.0], technique="xrd")
    with pytest.raises(SpectrumError, match=r"x has 2 points but y has 1"):
        Spectrum([1.0, 2.0], [1.0], technique="ir")
    with pytest.raises(SpectrumError, match=r"x and y must be finite"):
        Spectrum([1.0, np.nan], [1.0, 2.0], technique="ir")
    with pytest.raises(SpectrumError, match=r"spectrum dict lacks the key 'technique'"):
        Spectrum.from_dict({"x": [1.0], "y": [1.0]})


# ----------------------------------------------------------------------------- writers


@pytest.mark.parametrize("delimiter, decimal", [(",", "."), (";", ","), ("\t", "."),
                                                ("\t", ",")])
def test_write_csv_round_trip(delimiter, decimal):
    x = np.linspace(250.0, 800.0, 551)
    y = np.random.default_rng(0).random(x.size)
    s = Spectrum(x, y, technique="uvvis", y_unit="absorbance")
    data = write_csv(s, delimiter=delimiter, decimal=decimal, comments=["invented demo"])
    r = parse_delimited(data)
    assert r.technique == "uvvis" and r.y_unit == "absorbance"
    assert np.array_equal(r.x, s.x) and np.array_equal(r.y, s.y)


def test_write_csv_peaks_and_file(tmp_path):
    s = Spectrum([720.0, 840.0], [100.0, 30.0], technique="mass", kind="peaks",
                 widths=[0.1, 0.12])
    p = tmp_path / "peaks.peaks"
    write_csv(s, p)
    r = load_spectrum(p)
    assert r.kind == "peaks" and r.widths.tolist() == [0.1, 0.12]
    r = parse_peaklist(p.read_bytes())
    assert r.x.tolist() == [720.0, 840.0]
    with pytest.raises(SpectrumError, match=r"decimal=',' needs another delimiter"):
        write_csv(s, delimiter=",", decimal=",")


def test_write_jcamp_refusals(tmp_path):
    s = Spectrum([1.0, 2.0, 4.0], [1.0, 2.0, 3.0], technique="ir")
    with pytest.raises(SpectrumError, match=r"x is not evenly spaced .* use form='XYPOINTS'"):
        write_jcamp(s, form="DIF")
    with pytest.raises(SpectrumError, match=r"form='ZIP' is not one of AFFN"):
        write_jcamp(s, form="zip")
    with pytest.raises(SpectrumError, match=r"x_unit='Hz' needs meta\['observe_mhz'\]"):
        write_jcamp(Spectrum([1.0, 2.0], [1.0, 2.0], technique="nmr"), x_unit="Hz")
    p = tmp_path / "s.jdx"
    data = write_jcamp(s, p, form="XYPOINTS")
    assert p.read_bytes() == data
    with pytest.raises(SpectrumFormatError, match=r"s.jdx, line 12: x is not monotonic") as e:
        load_spectrum(p.read_bytes().replace(b"2,2 4,3", b"4,2 2,3"), source="s.jdx")
    assert e.value.source == "s.jdx" and e.value.line == 12
