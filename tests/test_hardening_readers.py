"""Regression tests of issue 14, one per reported reader case (each names its case).

Source for all: common practice, no source (defensive input validation), except where a
standard is named beside the test (JCAMP-DX: McDonald & Wilks, Appl. Spectrosc. 42, 151
(1988); JCAMP-DX NMR: Davies & Lampen, Appl. Spectrosc. 47, 1093 (1993); XML 1.0
Appendix F (W3C 2008) for encoding detection).
"""

from __future__ import annotations

import subprocess
import sys
import tracemalloc
import zlib
from pathlib import Path

import numpy as np
import pytest

from cageprint.errors import ReaderWarning, ReadLimitError, SpectrumFormatError
from cageprint.spectra import Spectrum, list_blocks, load_spectrum, write_jcamp, write_jcamp_link
from cageprint.spectra.readers import ReadLimits
from fuzzkit import mzml_document

KIT = str(Path(__file__).resolve().parents[1] / "kit")
HEAD = (b"##TITLE=t\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED SPECTRUM\n##XUNITS=1/CM\n"
        b"##YUNITS=ABSORBANCE\n##XFACTOR=1\n##YFACTOR=1\n")
NMR_HEAD = (b"##TITLE=t\n##JCAMP-DX=4.24\n##DATA TYPE=NMR SPECTRUM\n##XUNITS=PPM\n"
            b"##YUNITS=ARBITRARY UNITS\n##.OBSERVE FREQUENCY=100\n")


def _ir_file(form="AFFN", n=601, yfactor=1e-3):
    x = np.arange(n) * 2.0 + 400.0
    y = np.random.default_rng(0).integers(1, 999, n) * 1e-3
    return write_jcamp(Spectrum(x, y, technique="ir", y_unit="absorbance"), form=form,
                       yfactor=yfactor)


def _peak_memory(fn) -> int:
    tracemalloc.start()
    try:
        fn()
    except SpectrumFormatError:
        pass
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak


# ---------------------------------------------------------------- crashes with library errors

def test_decimal_point_in_a_dup_count():
    # issue 14: "JCAMP-DX compressed data with a decimal point in a DUP count"
    data = HEAD + b"##FIRSTX=400\n##LASTX=410\n##NPOINTS=6\n##XYDATA=(X++(Y..Y))\n" \
                  b"400 A00J00%S.5\n##END=\n"
    with pytest.raises(SpectrumFormatError, match=r"line 12: DUP count S.5 is not a whole "
                       r"number"):
        load_spectrum(data)


@pytest.mark.parametrize("digits", [400, 5000])
def test_integers_of_hundreds_or_thousands_of_digits_in_jcamp_xy(digits):
    # issue 14: "integers of hundreds or thousands of digits in X/Y"
    data = HEAD + b"##FIRSTX=400\n##LASTX=402\n##NPOINTS=2\n##XYDATA=(X++(Y..Y))\n400 " + \
        b"9" * digits + b" 1\n##END=\n"
    with pytest.raises(ReadLimitError, match=rf"line 12: a number with {digits} digits is "
                       r"more than max_digits=40; to read it anyway pass "
                       r"limits=ReadLimits\(max_digits=...\)"):
        load_spectrum(data)
    # the budget is settable for whoever really has such numbers: then it is only too large
    with pytest.raises(SpectrumFormatError, match=r"line 1[12]: (an ordinate is too large for "
                       r"a float|unreadable number of 5000 characters)"):
        load_spectrum(data, limits=ReadLimits(max_digits=10_000))


def test_integers_of_thousands_of_digits_in_a_peak_list():
    # issue 14: "integers of hundreds or thousands of digits ... in a peak list"
    data = b"ppm intensity\n143.1 5\n" + b"1" * 3000 + b" 2\n"
    with pytest.raises(ReadLimitError, match=r"line 3: a number with 3000 digits"):
        load_spectrum(data, format="peaklist", technique="nmr")


@pytest.mark.parametrize("value", [b"inf", b"nan", b"-inf"])
def test_shift_reference_of_inf_or_nan_names_the_file(tmp_path, value):
    # issue 14: "a shift reference of inf/nan (one of them raises the kit's error without the
    # file name)"
    p = tmp_path / "ref.jdx"
    p.write_bytes(NMR_HEAD + b"##.SHIFT REFERENCE=(INTERNAL, CDCl3, 1, " + value + b")\n"
                  b"##FIRSTX=0\n##LASTX=10\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n0 1 2 3\n##END=\n")
    with pytest.raises(SpectrumFormatError, match=r"ref.jdx, line 7: ##.SHIFT REFERENCE= gives "
                       r"the shift '-?(inf|nan)', not a finite number"):
        load_spectrum(p)


def test_npoints_of_1e400_in_the_block_lister():
    # issue 14: "an NPOINTS of 1e400 in the block lister"
    data = HEAD + b"##NPOINTS=1e400\n##FIRSTX=1\n##LASTX=2\n##XYDATA=(X++(Y..Y))\n1 1 2\n##END=\n"
    assert list_blocks(data)[0]["npoints"] is None
    with pytest.raises(SpectrumFormatError, match=r"line 8: ##NPOINTS= is not finite"):
        load_spectrum(data)


def test_mzml_binary_array_without_its_binary_element():
    # issue 14: "an mzML binary array without its <binary> element"
    good = mzml_document([("scan=1", np.array([720.0, 721.0]), np.array([1.0, 2.0]), True)])
    start = good.index(b"<binary>")
    bad = good[:start] + good[good.index(b"</binary>", start) + len(b"</binary>"):]
    with pytest.raises(SpectrumFormatError, match=r"spectrum 'scan=1': a <binaryDataArray> "
                       r"has no <binary> element"):
        load_spectrum(bad)


# ---------------------------------------------------------------- memory bombs from tiny files

def test_181_byte_jcamp_line_with_a_huge_dup_count():
    # issue 14: "a 181-byte JCAMP-DX line with a huge DUP count runs for a minute and takes
    # gigabytes before a raw MemoryError"
    line = b"400 A" + b"S99999999" + b" " * 160 + b"\n"
    for extra in (b"", b"##NPOINTS=6\n"):
        data = HEAD + extra + b"##FIRSTX=400\n##LASTX=410\n##XYDATA=(X++(Y..Y))\n" + line + \
            b"##END=\n"
        peak = _peak_memory(lambda d=data: load_spectrum(d))
        assert peak < 20e6
        with pytest.raises(ReadLimitError, match=r"DUP count S99999999 repeats a value "
                           r"199999999 times, past"):
            load_spectrum(data)


def test_one_inserted_byte_in_a_real_file_is_not_a_gigabyte():
    # issue 14: "one inserted byte in a real file costs a gigabyte": a DUP character inserted
    # inside an ordinate turns its digits into a repeat count
    x = np.arange(201) * 2.0 + 400.0
    good = write_jcamp(Spectrum(x, 123456789.0 + x, technique="ir"), form="AFFN", yfactor=1.0)
    k = good.index(b"\n", good.index(b"##XYDATA")) + 1
    k = good.index(b" 1234", k) + 2
    bad = good[:k] + b"S" + good[k:]
    assert len(bad) == len(good) + 1
    assert _peak_memory(lambda: load_spectrum(bad)) < 20e6
    with pytest.raises(ReadLimitError, match=r"DUP count S\d+ repeats a value"):
        load_spectrum(bad)


def test_small_zlib_mzml_array_cannot_inflate_to_hundreds_of_mb():
    # issue 14: "a small zlib-compressed mzML array inflates to hundreds of MB before the point
    # limit refuses it"
    doc = mzml_document([("scan=1", np.array([720.0, 721.0]), np.array([1.0, 2.0]), False)])
    bomb = __import__("base64").b64encode(zlib.compress(b"\0" * 200_000_000, 9))
    start = doc.index(b"<binary>") + len(b"<binary>")
    doc = doc[:start] + bomb + doc[doc.index(b"</binary>", start):]
    doc = doc.replace(b'encodedLength="', b'encodedLength="x', 1).replace(
        b'encodedLength="x', b'ignored="', 1)
    assert len(doc) < 300_000
    assert _peak_memory(lambda: load_spectrum(doc)) < 20e6
    with pytest.raises(SpectrumFormatError, match=r"m/z array inflates past the 16 bytes its "
                       r"stated length needs"):
        load_spectrum(doc)


# ---------------------------------------------------------------- silently wrong spectra

@pytest.mark.parametrize("damage", [(b"##YFACTOR=0.001", b"##YFACTQR=0.001"),
                                    (b"##YFACTOR=0.001", b"##YFACTOR=1000")])
def test_damaged_yfactor_disagrees_with_firsty(damage):
    # issue 14: "a damaged ##YFACTOR label -> y off by a factor of 10^3-10^7 though ##FIRSTY
    # disagrees"
    good = _ir_file("DIF")
    assert np.isclose(load_spectrum(good).y[0], float(good.split(b"##FIRSTY=")[1].split()[0]))
    bad = good.replace(*damage)
    with pytest.raises(SpectrumFormatError, match=r"##FIRSTY=0.\d+ but the first decoded Y is "
                       r"\d+ .*a damaged ##YFACTOR= or data line\?"):
        load_spectrum(bad)


def test_lost_value_plus_mangled_npoints_is_not_a_stretched_x():
    # issue 14: "a lost value plus a mangled NPOINTS -> x stretched, accepted since the X-check
    # allows a full step"; the value is lost late in the table, where the old whole-step
    # X-check could not see it
    lines = _ir_file("AFFN").split(b"\n")
    data_rows = [i for i, ln in enumerate(lines) if ln[:1].isdigit()]
    k = data_rows[int(len(data_rows) * 0.75)]
    parts = lines[k].split(b" ")
    lines[k] = b" ".join(parts[:2] + parts[3:])
    bad = b"\n".join(lines).replace(b"##NPOINTS=601", b"##NPOINTS=600")
    with pytest.raises(SpectrumFormatError, match=rf"line ({k + 1}|{k + 2}): X-check failed: the "
                       r"line's X=\d+ but point \d+ should be at [\d.]+"):
        load_spectrum(bad)


def test_one_at_sign_does_not_switch_a_plain_table_to_compressed():
    # issue 14: "one @ anywhere switches a plain table to compressed decoding (so 1.5E-3
    # becomes three numbers)"; JCAMP-DX 4.24 (McDonald & Wilks 1988): the form is a property of
    # each line
    data = HEAD + b"##FIRSTX=400\n##LASTX=410\n##NPOINTS=6\n##XYDATA=(X++(Y..Y))\n" \
                  b"400 1.5E-3 2.5E-3 3.5E-3\n406 A0 B0 C0\n##END=\n"
    s = load_spectrum(data)
    assert s.y.tolist() == [1.5e-3, 2.5e-3, 3.5e-3, 10.0, 20.0, 30.0]


def test_shift_reference_of_1e308_does_not_move_x_there():
    # issue 14: "a shift reference of 1e308 moves every x there"
    data = NMR_HEAD + b"##.SHIFT REFERENCE=(INTERNAL, CDCl3, 1, 1e308)\n##FIRSTX=0\n##LASTX=10\n" \
                      b"##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n0 1 2 3\n##END=\n"
    with pytest.raises(SpectrumFormatError, match=r"line 7: ##.SHIFT REFERENCE= gives the shift "
                       r"'1e308', not a finite number within -1000 to 1000 ppm"):
        load_spectrum(data)


def test_hz_values_are_not_read_as_ppm_when_xunits_is_missing():
    # issue 14: "Hz values read as ppm when XUNITS is missing"; JCAMP-DX NMR tables are commonly
    # in Hz (Davies & Lampen 1993), so an NMR block needs its unit stated
    data = (b"##TITLE=t\n##JCAMP-DX=4.24\n##DATA TYPE=NMR SPECTRUM\n##.OBSERVE FREQUENCY=100\n"
            b"##FIRSTX=14300\n##LASTX=14310\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n"
            b"14300 1 2 3\n##END=\n")
    with pytest.raises(SpectrumFormatError, match=r"the NMR block has no ##XUNITS=: its x may be "
                       r"Hz or ppm; pass x_unit='Hz' or x_unit='ppm'"):
        load_spectrum(data)
    assert load_spectrum(data, x_unit="Hz").x.tolist() == [143.0, 143.05, 143.1]
    # other techniques: inferred only with a stated warning (kept in meta for the UI)
    ir = _ir_file().replace(b"##XUNITS=1/CM\n", b"")
    with pytest.warns(ReaderWarning, match=r"no ##XUNITS=: x read as cm-1"):
        s = load_spectrum(ir)
    assert "no ##XUNITS=" in s.meta["warnings"][0]


@pytest.mark.parametrize("label", [b"##XYDAT@=", b"##QQ="])
def test_damaged_xydata_label_in_a_link_file_does_not_return_another_block(label):
    # issue 14: "a damaged XYDATA label in a LINK file returns another block's peak table"
    s = Spectrum(np.arange(301) * 2.0 + 400, np.linspace(0, 1, 301), technique="ir")
    p = Spectrum([527.0, 577.0], [1.0, 0.5], technique="ir", kind="peaks")
    link = write_jcamp_link([s, p], forms=["DIF", None], yfactor=1e-3)
    assert load_spectrum(link).kind == "profile"
    bad = link.replace(b"##XYDATA=", label)
    with pytest.raises(SpectrumFormatError, match=r"block 'cageprint spectrum' has data lines "
                       r"\(from line \d+\) after ##.*= \(line \d+\) but no data-table label"):
        load_spectrum(bad)


def _two_scans():
    a = np.linspace(715.0, 730.0, 51)
    return mzml_document([("scan=1", a, np.exp(-(a - 720) ** 2), False),
                          ("scan=2", a + 120, np.exp(-(a - 720) ** 2), False)])


def test_mzml_with_a_missing_end_tag():
    # issue 14: "an mzML file with a missing end tag ... returns another scan"
    doc = _two_scans()
    assert load_spectrum(doc).meta["spectrum_id"] == "scan=1"
    with pytest.raises(SpectrumFormatError, match=r"not well-formed mzML XML"):
        load_spectrum(doc.replace(b"</mzML>", b""))
    with pytest.raises(SpectrumFormatError, match=r"not well-formed mzML XML|has index="):
        load_spectrum(doc.replace(b"</spectrum>", b"", 1), spectrum="scan=2")


def test_mzml_truncated_after_one_spectrum():
    # issue 14: "... or truncated after one spectrum returns another scan"
    doc = _two_scans()
    cut = doc[:doc.index(b"</spectrum>") + len(b"</spectrum>")]
    for choice in (None, 0, 1, "scan=2"):
        with pytest.raises(SpectrumFormatError, match=r"not well-formed mzML XML"):
            load_spectrum(cut, spectrum=choice)
    # a spectrum cut out whole keeps the XML well formed: the declared count and index catch it
    first = doc.index(b"<spectrum ")
    spliced = doc[:first] + doc[doc.index(b"</spectrum>") + len(b"</spectrum>\n"):]
    with pytest.raises(SpectrumFormatError, match=r"spectrum 'scan=2' has index='1' but is "
                       r"spectrum 0 of the list"):
        load_spectrum(spliced, spectrum="scan=2")


BOMB = ('<?xml version="1.0" encoding="{enc}"?>\n{pad}<!DOCTYPE mzML [<!ENTITY t "expanded">]>\n'
        '<mzML><run><spectrumList count="0"/></run><fileDescription>&t;</fileDescription>'
        '</mzML>\n')


def test_doctype_after_64_kb_is_refused():
    # issue 14: "the DOCTYPE/ENTITY refusal is bypassed by a DOCTYPE after 64 KB"
    data = BOMB.format(enc="utf-8", pad="<!--" + "x" * 70_000 + "-->\n").encode()
    with pytest.raises(SpectrumFormatError, match=r"line 3: mzML with a DOCTYPE or ENTITY "
                       r"declaration is refused"):
        load_spectrum(data, format="mzml")


@pytest.mark.parametrize("enc", ["utf-16", "utf-16-le", "utf-16-be"])
def test_doctype_in_utf16_is_refused(enc):
    # issue 14: "... or in UTF-16 (internal entities then expand into the title)"; encoding
    # detected with or without a byte-order mark (XML 1.0, Appendix F)
    data = BOMB.format(enc="UTF-16", pad="").encode(enc)
    with pytest.raises(SpectrumFormatError, match=r"line 2: mzML with a DOCTYPE or ENTITY "
                       r"declaration is refused"):
        load_spectrum(data, format="mzml")


@pytest.mark.parametrize("header, unit", [(b"energy (eV)", "eV"), (b"wavelength (um)", "um")])
def test_negative_ev_or_um_do_not_give_negative_nm_or_wavenumbers(header, unit):
    # issue 14: "negative eV or um in CSV give negative nm or cm-1"
    data = header + b",absorbance\n-1.0,2\n-2.0,3\n"
    with pytest.raises(SpectrumFormatError, match=rf"line 2: x value -1.0 {unit} is -[\d.]+ "
                       r"(nm|cm-1), outside the physical range 0 to 100000"):
        load_spectrum(data, technique=None if unit == "eV" else "ir")


def test_an_ir_file_given_as_nmr_is_refused():
    # issue 14: "an IR file given as --nmr (converted to 400-2000 "ppm")": the reader side
    x = np.arange(400.0, 2001.0, 2.0)
    jdx = write_jcamp(Spectrum(x, np.ones_like(x), technique="ir"), form="AFFN")
    with pytest.raises(SpectrumFormatError, match=r"the file declares a ir spectrum"):
        load_spectrum(jdx, technique="nmr")
    bare = b"".join(b"%g,1\n" % v for v in x)  # no header: nothing says it is IR
    with pytest.raises(SpectrumFormatError, match=r"x value 1002.0 ppm, outside the physical "
                       r"range -1000 to 1000 ppm of a nmr spectrum"):
        load_spectrum(bare, technique="nmr")


# ---------------------------------------------------------------- first mzML load

def test_reading_mzml_loads_no_controlled_vocabulary():
    # issue 14: "first mzML load in a process takes ~5 s (vocabulary load), every time"; the
    # reader needs no vocabulary library at all (timings: tests/benchmarks/bench_readers.py)
    code = ("import sys; from fuzzkit import mzml_seeds; from cageprint.spectra import "
            "load_spectrum; s = load_spectrum(mzml_seeds()[0]); "
            "print(len(s), 'pyteomics' in sys.modules, 'psims' in sys.modules)")
    env = {"PYTHONPATH": KIT + ":" + str(Path(__file__).parent), "PATH": "/usr/bin:/bin"}
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env,
                         check=True).stdout.split()
    assert out == ["151", "False", "False"]
