"""JCAMP-DX: every form written by the kit reads back exactly; independent readers agree.

Oracles (test dependencies only): the ``jcamp`` package and nmrglue's ``jcampdx``
reader (NMR blocks).  Known quirks, see libraries.md section C: ``jcamp`` prints
instead of raising and expands only single-digit DUP counts after a DIF token,
so the data given to it have no run of ten or more equal differences; nmrglue
returns NMR ordinates only, without an x axis.
"""

from __future__ import annotations

import contextlib
import io
import warnings

import numpy as np
import pytest

from cageprint.errors import SpectrumFormatError
from cageprint.spectra import (
    Spectrum,
    jcamp_blocks,
    list_blocks,
    load_spectrum,
    parse_jcamp,
    write_jcamp,
    write_jcamp_link,
)

FORMS = ["AFFN", "PAC", "SQZ", "DIF", "DUP"]
YF = 1e-5

# C60 IR-active T1u bands, 527, 577, 1183, 1429 cm-1 (W. Kraetschmer, L. D. Lamb,
# K. Fostiropoulos, D. R. Huffman, Nature 347, 354 (1990); from memory) used as invented
# demo band positions
C60_IR = (527.0, 577.0, 1183.0, 1429.0)
# C70 13C lines 150.07, 147.52, 146.82, 144.77, 130.28 ppm (R. Taylor, J. P. Hare,
# A. K. Abdul-Sada, H. W. Kroto, J. Chem. Soc., Chem. Commun. 1990, 1423; from memory)
C70_NMR = (150.07, 147.52, 146.82, 144.77, 130.28)


def _ir(seed=0, runs=True) -> Spectrum:
    """Invented IR absorbance on an integer grid of YFACTOR (exactly representable)."""
    x = np.arange(400.0, 1602.0, 2.0)
    rng = np.random.default_rng(seed)
    Y = rng.integers(-300, 300, x.size)
    for c in C60_IR:
        Y = Y + np.rint(40000 / (1 + ((x - c) / 3.0) ** 2)).astype(int)
    if runs:
        Y[200:230] = 1234  # a run of 30 equal values: long DUP counts
        Y[300:315] = np.arange(15) * 7  # constant differences: DUP of a DIF
    return Spectrum(x, Y * YF, technique="ir", y_unit="absorbance", meta={"title": "demo IR"})


def _nmr() -> Spectrum:
    x = np.linspace(125.0, 155.0, 3001)
    Y = np.zeros(x.size, dtype=int) + np.random.default_rng(3).integers(0, 40, x.size)
    for c, h in zip(C70_NMR, (1, 2, 1, 2, 1), strict=True):
        Y = Y + np.rint(10000 * h / (1 + ((x - c) / 0.02) ** 2)).astype(int)
    return Spectrum(x, Y * 1.0, technique="nmr",
                    meta={"observe_mhz": 125.7, "solvent": "CS2 + C6D6"})


def _jcamp_oracle(tmp_path, data: bytes, name="o.jdx"):
    jcamp = pytest.importorskip("jcamp")
    p = tmp_path / name
    p.write_bytes(data)
    with contextlib.redirect_stdout(io.StringIO()) as out:
        r = jcamp.readfile(str(p))
    return r, out.getvalue()


@pytest.mark.parametrize("form", FORMS)
def test_xydata_forms_round_trip_exactly(form):
    # JCAMP-DX 4.24 forms (McDonald and Wilks 1988); 5.01 header; 80-character lines
    s = _ir()
    data = write_jcamp(s, form=form, yfactor=YF)
    r = parse_jcamp(data)
    assert r.technique == "ir" and r.y_unit == "absorbance"
    assert np.array_equal(r.y, s.y)
    assert np.allclose(r.x, s.x, rtol=0, atol=1e-9)
    assert r.meta["table"] == "XYDATA" and r.meta["title"] == "demo IR"
    assert max(len(line) for line in data.decode().splitlines()) <= 80


@pytest.mark.parametrize("form", FORMS)
def test_descending_x_files(form):
    # FIRSTX > LASTX is allowed (McDonald and Wilks 1988); IR files are often written so
    s = _ir(seed=1)
    r = parse_jcamp(write_jcamp(s, form=form, yfactor=YF, descending=True))
    assert np.array_equal(r.y, s.y)
    assert np.allclose(r.x, s.x, atol=1e-9)


def test_affn_without_yfactor_is_exact_for_any_floats():
    x = np.linspace(200.0, 800.0, 301)
    y = np.random.default_rng(5).random(x.size) * 1.2345e-3
    s = Spectrum(x, y, technique="uvvis", y_unit="absorbance")
    r = parse_jcamp(write_jcamp(s, form="AFFN"))
    assert r.technique == "uvvis" and np.array_equal(r.y, s.y)


def test_xypoints_and_peak_table_round_trip():
    # (XY..XY) and (XYW..XYW) tables (McDonald and Wilks 1988)
    x = np.sort(np.random.default_rng(2).uniform(400, 1600, 50))
    s = Spectrum(x, np.arange(50) * 0.5, technique="raman")
    r = parse_jcamp(write_jcamp(s, form="XYPOINTS"))
    assert r.kind == "profile" and np.array_equal(r.x, s.x) and np.array_equal(r.y, s.y)
    assert r.technique == "raman"
    p = Spectrum(list(C60_IR), [1.0, 0.45, 0.3, 0.35], technique="ir", kind="peaks",
                 widths=[6.0, 6.0, 7.0, 8.0])
    r = parse_jcamp(write_jcamp(p))
    assert r.kind == "peaks" and r.x.tolist() == list(C60_IR)
    assert r.y.tolist() == [1.0, 0.45, 0.3, 0.35] and r.widths.tolist() == [6.0, 6.0, 7.0, 8.0]


@pytest.mark.parametrize("form", ["AFFN", "PAC", "SQZ", "DIF", "DUP", "XYPOINTS"])
def test_independent_jcamp_reader_agrees(tmp_path, form):
    s = _ir(seed=4, runs=False)  # no long runs: the oracle expands single-digit DUP only
    data = write_jcamp(s, form=form, yfactor=YF)
    r, printed = _jcamp_oracle(tmp_path, data)
    ours = parse_jcamp(data)
    assert printed == ""  # the oracle prints when it meets a problem (X- or Y-check)
    assert len(r["x"]) == len(r["y"]) == len(ours)
    assert np.allclose(r["y"], ours.y, rtol=1e-12, atol=0)
    assert np.allclose(r["x"], ours.x, rtol=1e-12, atol=0)


def test_independent_reader_peak_table(tmp_path):
    p = Spectrum(list(C60_IR), [1.0, 0.45, 0.3, 0.35], technique="ir", kind="peaks")
    data = write_jcamp(p)
    r, _ = _jcamp_oracle(tmp_path, data)
    assert r["x"].tolist() == parse_jcamp(data).x.tolist()
    assert r["y"].tolist() == [1.0, 0.45, 0.3, 0.35]


@pytest.mark.parametrize("form", FORMS)
def test_nmr_in_hz_with_observe_frequency_and_nmrglue_oracle(tmp_path, form):
    s = _nmr()
    data = write_jcamp(s, form=form, yfactor=1.0, x_unit="Hz")
    assert b"##XUNITS=HZ" in data and b"##.OBSERVE FREQUENCY=125.7" in data
    r = parse_jcamp(data)
    # ppm = Hz / MHz (definition of the delta scale; common practice, no source)
    assert r.technique == "nmr" and r.x_unit == "ppm"
    assert np.allclose(r.x, s.x, atol=1e-9) and np.array_equal(r.y, s.y)
    assert r.meta["observe_mhz"] == 125.7 and r.meta["x_unit_in_file"] == "Hz"
    assert r.meta["nucleus"] == "^13C" and r.meta["solvent"] == "CS2 + C6D6"
    ng = pytest.importorskip("nmrglue")
    p = tmp_path / "c70.jdx"
    p.write_bytes(data)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        dic, arr = ng.jcampdx.read(str(p))
    assert np.array_equal(np.asarray(arr, dtype=float), s.y)  # file order = increasing Hz
    assert dic[".OBSERVEFREQUENCY"] == ["125.7"]


def test_shift_reference_moves_the_axis():
    # JCAMP-DX NMR (Davies and Lampen 1993): .SHIFT REFERENCE=(kind, compound, point, ppm)
    x = np.linspace(70.0, 80.0, 1001)  # point 701 is at 77.00 ppm
    s = Spectrum(x, np.exp(-((x - 77.0) / 0.05) ** 2), technique="nmr",
                 meta={"observe_mhz": 100.0})
    data = write_jcamp(s, form="AFFN").replace(
        b"##XUNITS", b"##.SHIFT REFERENCE=(INTERNAL, CDCl3, 701, 77.16)\n##XUNITS"
    )
    r = parse_jcamp(data)
    assert np.allclose(r.x, x + 0.16, atol=1e-9)
    assert r.meta["shift_reference"]["compound"] == "CDCl3"
    assert r.meta["solvent"] == "CDCl3"
    r0 = parse_jcamp(data, apply_shift_reference=False)
    assert np.allclose(r0.x, x, atol=1e-9)


def test_hand_written_asdf_tokens():
    # JCAMP-DX 4.24 ASDF definitions (McDonald and Wilks 1988): SQZ @=0 A-I=1-9 a-i=-1..-9,
    # DIF %=0 J-R=1-9 j-r=-1..-9, DUP S-Z,s = 1-9 counting the first occurrence
    head = (b"##TITLE=hand\n##JCAMP-DX=4.24\n##DATA TYPE=RAMAN SPECTRUM\n##XUNITS=1/CM\n"
            b"##YUNITS=ARBITRARY UNITS\n##FIRSTX=0\n##LASTX=%d\n##NPOINTS=%d\n"
            b"##XYDATA=(X++(Y..Y))\n")
    cases = [
        (b"0 A0%S2\n12 A0\n", [10] * 13),  # DUP count 12 of a zero difference, Y-check line
        (b"0 A0T b2 @\n", [10, 10, -22, 0]),  # DUP of an absolute value, SQZ signs
        (b"0+5-3+12\n", [5, -3, 12]),  # PAC
        (b"0 1.5E+02 2e1 3\n", [150.0, 20.0, 3.0]),  # AFFN with exponents
        (b"0 A1J2k3\n2 @\n", [11, 23, 0]),  # DIF line ends in DIF -> check value dropped
    ]
    for body, want in cases:
        n = len(want)
        data = head % (n - 1, n) + body + b"##END=\n"
        s = parse_jcamp(data)
        assert s.y.tolist() == [float(v) for v in want], body


def test_link_file_blocks_and_choice(tmp_path):
    # LINK files: ##DATA TYPE=LINK, ##BLOCKS=, ##BLOCK_ID= (JCAMP-DX 5; from memory)
    a = _ir(seed=7)
    b = Spectrum(list(C60_IR), [1.0, 0.5, 0.3, 0.4], technique="ir", kind="peaks")
    data = write_jcamp_link([a, b], forms=["DIF", None], titles=["profile", "peaks"],
                            yfactor=YF)
    blocks = jcamp_blocks(data)
    assert [(k["index"], k["title"], k["table"]) for k in blocks] == [
        (0, "profile", "XYDATA"), (1, "peaks", "PEAKTABLE")]
    assert list_blocks(data) == blocks
    first = load_spectrum(data)
    assert first.meta["block"] == 0 and first.meta["blocks"] == 2
    assert np.array_equal(first.y, a.y)
    second = load_spectrum(data, block="peaks")
    assert second.kind == "peaks" and second.x.tolist() == list(C60_IR)
    assert load_spectrum(data, block=1).kind == "peaks"
    assert load_spectrum(data, block="2").kind == "peaks"  # by ##BLOCK_ID=
    r, _ = _jcamp_oracle(tmp_path, write_jcamp_link([_ir(seed=8, runs=False)] * 2,
                                                    forms=["DIF", "SQZ"], yfactor=YF))
    assert [len(c["y"]) for c in r["children"]] == [601, 601]
    with pytest.raises(SpectrumFormatError, match=r"block=5 is out of range: the file has 2"):
        load_spectrum(data, block=5)
    with pytest.raises(SpectrumFormatError, match=r"block='nope' matches no block title"):
        load_spectrum(data, block="nope")


def test_technique_from_data_type_and_conflict():
    # ##DATA TYPE= names the technique (McDonald and Wilks 1988)
    data = write_jcamp(_ir(), form="SQZ", yfactor=YF)
    assert load_spectrum(data).technique == "ir"
    with pytest.raises(SpectrumFormatError, match=r"declares a ir spectrum .*##DATA TYPE="
                       r"INFRARED SPECTRUM.* but technique='raman' was given"):
        load_spectrum(data, technique="raman")


def test_sniffing_beats_extension(tmp_path):
    p = tmp_path / "looks_like.csv"
    p.write_bytes(write_jcamp(_ir(), form="DIF", yfactor=YF))
    assert load_spectrum(p).meta["format"] == "jcamp"


def test_latin1_title_is_tolerated():
    data = write_jcamp(_ir(), form="AFFN", yfactor=YF).replace(b"demo IR", b"demo \xb0C")
    assert parse_jcamp(data).meta["title"] == "demo \xb0C"


def test_xfactor_and_yfactor_hand_written():
    # JCAMP-DX 4.24 (McDonald and Wilks 1988): FIRSTX/LASTX are in real units; the X on each
    # XYDATA line and all XYPOINTS values are multiplied by XFACTOR, ordinates by YFACTOR
    head = (b"##TITLE=f\n##JCAMP-DX=4.24\n##DATA TYPE=UV/VIS SPECTRUM\n##XUNITS=NANOMETERS\n"
            b"##YUNITS=ABSORBANCE\n##XFACTOR=2\n##YFACTOR=0.5\n")
    s = parse_jcamp(head + b"##FIRSTX=400\n##LASTX=404\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n"
                    b"200 1 2 3\n##END=\n")
    assert s.technique == "uvvis" and s.x.tolist() == [400.0, 402.0, 404.0]
    assert s.y.tolist() == [0.5, 1.0, 1.5]
    s = parse_jcamp(head + b"##NPOINTS=2\n##XYPOINTS=(XY..XY)\n200,4; 250.5,6\n##END=\n")
    assert s.x.tolist() == [400.0, 501.0] and s.y.tolist() == [2.0, 3.0]
    with pytest.raises(SpectrumFormatError, match=r"line 13: X-check failed: the line's X=800"):
        parse_jcamp(head + b"##FIRSTX=400\n##LASTX=404\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n"
                    b"200 1 2\n400 3\n##END=\n")


@pytest.mark.parametrize("form", FORMS)
def test_abscissae_near_zero_are_written_without_exponents(form):
    # in compressed lines E/e are SQZ characters (McDonald and Wilks 1988), so an X written
    # as 1e-05 would be misread; ppm axes through 0 (TMS) produce such values
    x = np.arange(-500, 500) * 1e-6
    s = Spectrum(x, np.arange(1000) * 1.0, technique="nmr")
    r = parse_jcamp(write_jcamp(s, form=form, yfactor=1.0))
    assert np.array_equal(r.y, s.y) and np.allclose(r.x, x, atol=1e-12)
