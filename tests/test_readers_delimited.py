"""Delimited-text and peak-list readers: dialects, units, technique guessing."""

from __future__ import annotations

import numpy as np
import pytest

from cageprint.errors import SpectrumFormatError
from cageprint.spectra import list_blocks, load_spectrum, parse_delimited, parse_peaklist


@pytest.mark.parametrize(
    "data, delimiter, decimal",
    [
        (b"1.5,2.5\n3,4\n", ",", "."),
        (b"1.5;2.5\n3;4\n", ";", "."),
        (b"1,5;2,5\n3;4\n", ";", ","),
        (b"1.5\t2.5\n3\t4\n", "tab", "."),
        (b"1,5\t2,5\n3\t4\n", "tab", ","),
        (b"  1.5   2.5\n 3 4\n", "whitespace", "."),
        (b"1,5 2,5\n3 4\n", "whitespace", ","),
        (b'"1.5","2.5"\n"3","4"\n', ",", "."),
        (b"1.5,2.5,\n3,4,\n", ",", "."),  # a trailing delimiter on every line
        (b"1.5,2.5\r\n3,4\r\n", ",", "."),
        (b"1.5,2.5\r3,4\r", ",", "."),
        (b"\xef\xbb\xbf1.5,2.5\n3,4\n", ",", "."),  # UTF-8 BOM
    ],
)
def test_dialects(data, delimiter, decimal):
    # common practice, no source: the dialects instrument exports use
    s = parse_delimited(data, technique="ir")
    assert s.x.tolist() == [1.5, 3.0]
    assert s.y.tolist() == [2.5, 4.0]
    assert s.meta["delimiter"] == delimiter
    assert s.meta["decimal"] == decimal


def test_header_comments_and_named_columns():
    data = (
        b"# exported by an invented instrument\n"
        b"% another comment\n"
        b"title: demo\n"
        b"index,Wavenumber (cm-1),Absorbance,Note\n"
        b"0,400,0.1,a\n"
        b"\n"
        b"1,402,0.2,b\n"
        b"// mid-data comment\n"
        b"2,404,0.15,c\n"
    )
    s = parse_delimited(data, x_column="Wavenumber", y_column="absorbance")
    assert s.technique == "ir"  # absorbance in the header settles IR over Raman
    assert s.x.tolist() == [400.0, 402.0, 404.0]
    assert s.y.tolist() == [0.1, 0.2, 0.15]
    assert s.y_unit == "absorbance"
    assert s.meta["columns"] == ["index", "Wavenumber (cm-1)", "Absorbance", "Note"]
    assert "title: demo" in s.meta["header_lines"]
    assert len(s.meta["sha256"]) == 64


def test_column_by_index_and_descending_x():
    s = parse_delimited(b"5 9 1\n4 8 2\n3 7 3\n", technique="raman", x_column=0, y_column=2)
    assert s.x.tolist() == [3.0, 4.0, 5.0]  # stored increasing
    assert s.y.tolist() == [3.0, 2.0, 1.0]


def test_units_convert_to_kit_units():
    # Hz -> ppm given the spectrometer frequency (definition of the ppm scale; common practice)
    s = parse_delimited(b"Hz,I\n12500,1\n18750,2\n", observe_mhz=125.0)
    assert s.technique == "nmr" and s.x.tolist() == [100.0, 150.0]
    assert s.meta["x_unit_in_file"] == "Hz"
    # eV -> nm through h*c/e (CODATA 2018 constants)
    s = parse_delimited(b"energy (eV),A\n2.0,0.1\n3.0,0.2\n")
    assert s.technique == "uvvis"
    assert np.allclose(s.x, [1239.841984 / 3, 1239.841984 / 2])
    # micrometres -> cm-1 (1e4 / um)
    s = parse_delimited(b"x (um),T\n10,0.5\n20,0.6\n", technique="ir")
    assert s.x.tolist() == [500.0, 1000.0]


def test_technique_guessing():
    # common practice, no source: the axis unit names the technique (m/z, ppm, nm, Raman shift)
    assert load_spectrum(b"m/z,intensity\n1,2\n2,3\n").technique == "mass"
    assert load_spectrum(b"ppm,intensity\n1,2\n2,3\n").technique == "nmr"
    assert load_spectrum(b"wavelength,abs\n300,2\n400,3\n").technique == "uvvis"
    assert load_spectrum(b"# Raman export\nraman shift,counts\n300,2\n400,3\n").technique == (
        "raman"
    )


def test_technique_cannot_be_guessed():
    with pytest.raises(SpectrumFormatError, match=r"<bytes>: cannot tell the technique .*"
                       r"no x unit in a header line.*pass technique="):
        load_spectrum(b"1,2\n2,3\n")
    with pytest.raises(SpectrumFormatError, match="x in cm-1 fits both IR and Raman"):
        load_spectrum(b"wavenumber,y\n1,2\n2,3\n")


def test_unknown_column_name():
    with pytest.raises(SpectrumFormatError, match=r"y_column='height' names no column; the "
                       r"columns are 'm/z', 'intensity'"):
        parse_delimited(b"m/z,intensity\n1,2\n2,3\n", y_column="height")
    with pytest.raises(SpectrumFormatError, match=r"x_column=5 is out of range: the data have 2"):
        parse_delimited(b"1,2\n2,3\n", technique="ir", x_column=5)


def test_peaklist_any_order_with_widths():
    # common practice, no source: a peak table is position, intensity[, width]
    s = parse_peaklist(b"m/z intensity width\n840.0 30 0.1\n720.0 100 0.1\n")
    assert s.kind == "peaks" and s.technique == "mass"
    assert s.x.tolist() == [720.0, 840.0]
    assert s.y.tolist() == [100.0, 30.0]
    assert s.widths.tolist() == [0.1, 0.1]
    s = parse_peaklist(b"720.0,100\n", technique="mass")
    assert len(s) == 1 and s.widths is None


def test_peaklist_by_extension(tmp_path):
    p = tmp_path / "lines.peaks"
    p.write_bytes(b"ppm,height\n150.1,1\n143.2,2\n")
    s = load_spectrum(p)
    assert s.kind == "peaks" and s.meta["source"] == str(p)


def test_list_blocks_single():
    assert list_blocks(b"1 2\n2 3\n") == [{"index": 0, "title": "<bytes>"}]


def test_file_object_and_path(tmp_path):
    p = tmp_path / "run.csv"
    p.write_bytes(b"m/z,i\n1,2\n2,3\n")
    with open(p, "rb") as fh:
        s = load_spectrum(fh)
    assert s.meta["source"] == str(p)
    assert load_spectrum(str(p)).x.tolist() == [1.0, 2.0]


def test_encodings():
    # the remedy the undecodable-text message names works
    data = "x (cm-1),y\n400,1\n402,2 \u00b5\n".encode("latin-1").replace(b" \xb5", b"")
    data = b"# \xb5-sample\n" + data
    s = parse_delimited(data, technique="ir", encoding="latin-1")
    assert s.x.tolist() == [400.0, 402.0]
    # UTF-16 with a byte-order mark (spreadsheet exports)
    s = load_spectrum("m/z\tintensity\n720\t100\n721\t65\n".encode("utf-16"))
    assert s.technique == "mass" and s.y.tolist() == [100.0, 65.0]
    with pytest.raises(SpectrumFormatError, match=r"unknown text encoding 'klingon'"):
        parse_delimited(b"1,2\n3,4\n", technique="ir", encoding="klingon")


def test_jcamp_with_bom_is_sniffed():
    from cageprint.spectra import Spectrum, write_jcamp

    data = b"\xef\xbb\xbf" + write_jcamp(Spectrum([1.0, 2.0], [1.0, 2.0], technique="ir"))
    assert load_spectrum(data).meta["format"] == "jcamp"


def test_as_absorbance():
    # A = -log10(T) (decadic absorbance; definition)
    from cageprint.spectra import Spectrum, as_absorbance

    t = Spectrum([500.0, 600.0, 700.0], [1.0, 0.1, 0.01], technique="ir", y_unit="transmittance")
    a, d = as_absorbance(t)
    assert np.allclose(a.y, [0.0, 1.0, 2.0]) and a.y_unit == "absorbance" and d["converted"]
    assert as_absorbance(a)[0] is a
    with pytest.raises(Exception, match=r"as_absorbance needs transmittance .* not "
                       r"y_unit='intensity'"):
        as_absorbance(Spectrum([1.0, 2.0], [1.0, 2.0], technique="raman"))


def test_utf16_jcamp():
    from cageprint.spectra import Spectrum, write_jcamp

    text = write_jcamp(Spectrum([1.0, 2.0], [1.0, 2.0], technique="ir")).decode()
    assert load_spectrum(text.encode("utf-16")).meta["format"] == "jcamp"


def test_metadata_from_comment_and_header_lines():
    data = (b"# C60 fraction 3 (invented)\n"
            b"# Sample: fraction 3\n"
            b"# solvent = CS2 + C6D6\n"
            b"# Spectrometer frequency: 125,7 MHz\n"
            b"Hz\tintensity\n12500\t1\n18750\t2\n")
    s = load_spectrum(data)
    assert s.meta["title"] == "C60 fraction 3 (invented)"
    assert s.meta["sample"] == "fraction 3" and s.meta["solvent"] == "CS2 + C6D6"
    assert s.meta["observe_mhz"] == 125.7
    # Hz -> ppm with the frequency found in the file (definition of the ppm scale)
    assert s.technique == "nmr" and np.allclose(s.x, [12500 / 125.7, 18750 / 125.7])
    assert s.meta["comments"][0] == "C60 fraction 3 (invented)"
    assert load_spectrum(data, observe_mhz=100.0).x.tolist() == [125.0, 187.5]


@pytest.mark.parametrize(
    "header, meaning",
    [
        (b"nm,Absorbance (AU)", "absorbance"),
        (b"nm,Transmittance (%)", "percent transmittance"),
        (b"nm,%T", "percent transmittance"),
        (b"nm,Intensity (a.u.)", "intensity"),
        (b"nm,signal (counts)", "intensity"),
        (b"nm,Reflectance", "reflectance"),
        (b"nm,y", "y"),
    ],
)
def test_y_meaning_from_header(header, meaning):
    # common practice, no source: how instrument exports label the ordinate
    assert load_spectrum(header + b"\n300,1\n400,2\n").y_unit == meaning
