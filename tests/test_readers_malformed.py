"""Malformed inputs: each raises SpectrumFormatError naming the file, the line or record, and
the problem -- never a bare traceback, never a silently wrong spectrum.

Source for all: common practice, no source (defensive input validation).
"""

from __future__ import annotations

import pathlib
import re

import numpy as np
import pytest

from cageprint.errors import SpectrumFormatError
from cageprint.spectra import MAX_POINTS, Spectrum, load_spectrum, write_jcamp, write_jcamp_link

READERS_DIR = pathlib.Path(__file__).resolve().parents[1] / "kit" / "cageprint" / "spectra"


def _jdx(form="DIF", n=601) -> bytes:
    x = np.arange(n) * 2.0 + 400.0
    y = np.random.default_rng(0).integers(0, 999, n) * 1e-3
    return write_jcamp(Spectrum(x, y, technique="ir", y_unit="absorbance"), form=form,
                       yfactor=1e-3)


def _line_no(data: bytes, needle: bytes) -> int:
    return data[: data.index(needle)].count(b"\n") + 1


def _dif_lines(data: bytes) -> list[int]:
    lines = data.decode().splitlines()
    start = next(i for i, ln in enumerate(lines) if ln.startswith("##XYDATA"))
    return list(range(start + 1, len(lines) - 1))


# (name, data, options, pattern): data written to tmp_path/name, so messages name the file
CSV_CASES = [
    ("empty.csv", b"", {}, r"empty.csv: empty input: no data at all"),
    ("blank.csv", b"  \n\n \t\n", {}, r"blank.csv: empty input: no data at all"),
    ("garbage.csv", bytes(range(256)) * 4, {}, r"garbage.csv: binary data, not text \(NUL byte "
     r"at offset 0\)"),
    ("ctrl.csv", b"\x01\x02\x03\x04\x05\x06" * 50, {}, r"ctrl.csv: binary data, not text "
     r"\(300 control bytes"),
    ("latin.csv", b"x,y\n1,2\n2,3 \xb5A\n", {"technique": "ir"},
     r"latin.csv, line 3: undecodable text: byte b'\\xb5' at offset 12 is not utf-8-sig; "
     r"pass encoding='latin-1'"),
    ("text.csv", b"m/z,i\n1,2\n2,abc\n3,4\n", {}, r"text.csv, line 3: non-numeric cell 'abc' in "
     r"column 2; expected a number with decimal mark '.'"),
    ("nan.csv", b"m/z,i\n1,NaN\n2,3\n", {}, r"nan.csv, line 2: column 2 holds 'NaN', not a "
     r"finite number"),
    ("inf.csv", b"m/z,i\n1,1\n2,2\ninf,3\n", {}, r"inf.csv, line 4: x value inf is not a "
     r"finite number \(point 3\)"),
    ("rowtext.csv", b"m/z,i\n1,abc\n2,3\n", {}, r"rowtext.csv, line 2: non-numeric cell 'abc' "
     r"in column 2"),
    ("single.csv", b"m/z,i\n1,2\n", {}, r"single.csv, line 2: only 1 data point; a profile "
     r"spectrum needs at least 2"),
    ("zigzag.csv", b"m/z,i\n1,2\n2,3\n1.5,4\n", {}, r"zigzag.csv, line 4: x is not monotonic: "
     r"x was increasing but goes from 2.0 to 1.5 at point 3"),
    ("dup.csv", b"m/z,i\n1,2\n1,3\n", {}, r"dup.csv, line 3: duplicate x value 1.0 \(points 1 "
     r"and 2\)"),
    ("short.csv", b"m/z,i\n1,2\n2\n3,4\n", {}, r"short.csv, line 3: 1 fields where the data "
     r"have 2 \(mismatched column lengths\): '2'"),
    ("long.csv", b"m/z,i\n1,2\n2,3,4\n", {}, r"long.csv, line 3: 3 fields where the data have 2 "
     r"\(mismatched column lengths\)"),
    ("units.csv", b"x (furlongs),y\n1,2\n2,3\n", {}, r"units.csv, line 1: unknown x unit "
     r"'furlongs'; expected one of m/z, cm-1, ppm, Hz, nm, um, eV"),
    ("words.csv", b"just some words\nand more\n", {"format": "delimited"},
     r"words.csv, line 2: no line of at least two numeric columns found"),
    ("hz.csv", b"Hz,I\n1,2\n2,3\n", {}, r"hz.csv: x is in Hz; pass observe_mhz="),
    ("comments.csv", b"# only comments\n# here\n", {"format": "delimited"},
     r"comments.csv: no line of at least two numeric columns found"),
    ("dup.peaks", b"ppm,h\n143.1,1\n150.0,2\n143.1,3\n", {}, r"dup.peaks, line 4: duplicate peak "
     r"position 143.1; merge the rows first"),
    ("neg.peaks", b"ppm,h,w\n143.1,1,0.1\n150.0,2,-0.1\n", {}, r"neg.peaks, line 3: negative "
     r"peak width -0.1"),
    ("unknown.xyz", b"abc def\nghi\n", {}, r"unknown.xyz: could not recognise the format \(not "
     r"JCAMP-DX, mzML or columns of numbers\)"),
]


@pytest.mark.parametrize("name, data, options, pattern", CSV_CASES,
                         ids=[c[0] for c in CSV_CASES])
def test_malformed_text(tmp_path, name, data, options, pattern):
    p = tmp_path / name
    p.write_bytes(data)
    with pytest.raises(SpectrumFormatError, match=pattern):
        load_spectrum(p, **options)


def test_bytes_are_named():
    with pytest.raises(SpectrumFormatError, match=r"^<bytes>, line 3: non-numeric cell"):
        load_spectrum(b"m/z,i\n1,2\n2,x\n")


def test_ten_million_points_refused(tmp_path):
    # refused above MAX_POINTS (5e6) before parsing, from the line count alone
    p = tmp_path / "huge.csv"
    p.write_bytes(b"m/z,i\n" + b"1,2\n" * 10_000_000)
    with pytest.raises(SpectrumFormatError, match=rf"huge.csv: about 10000001 lines is more than "
                       rf"MAX_POINTS={MAX_POINTS}; crop or decimate the file, or pass max_points="):
        load_spectrum(p)


def test_max_points_option_is_honoured():
    data = b"m/z,i\n" + b"".join(b"%d,1\n" % i for i in range(50))
    with pytest.raises(SpectrumFormatError, match=r"50 points is more than MAX_POINTS=20"):
        load_spectrum(data, max_points=20)


def _jcamp_cases():
    good = _jdx("DIF")
    lines = good.split(b"\n")
    data_lines = _dif_lines(good)
    cases = []
    # truncated: cut in the middle of the data
    cut = b"\n".join(lines[: data_lines[3]]) + b"\n"
    cases.append(("trunc.jdx", cut, r"trunc.jdx, line 1: block 'cageprint spectrum' starting "
                  r"at line 1 has no ##END= \(truncated file\?\)"))
    # wrong declared point count
    bad = good.replace(b"##NPOINTS=601", b"##NPOINTS=700")
    cases.append(("npoints.jdx", bad, rf"npoints.jdx, line {_line_no(bad, b'##XYDATA')}: "
                  r"##NPOINTS=700 declared but the XYDATA hold 601 values"))
    # bad DIF Y-check: change the check value at the start of the 3rd data line
    k = data_lines[2]
    ln = lines[k].decode()
    m = re.match(r"([\d.]+)([@A-Ia-i]\d*)", ln)
    new = m.group(1) + ("A" if m.group(2)[0] != "A" else "B") + m.group(2)[1:] + ln[m.end():]
    bad = b"\n".join(lines[:k] + [new.encode()] + lines[k + 1:])
    cases.append(("ycheck.jdx", bad, rf"ycheck.jdx, line {k + 1}: DIF Y-check failed: the line "
                  r"starts with Y=\d+ but the previous line ended with Y=\d+"))
    # a lost data line (AFFN, so no Y-check): the X-check catches it
    affn = _jdx("AFFN")
    al = affn.split(b"\n")
    dl = _dif_lines(affn)
    bad = b"\n".join(al[: dl[4]] + al[dl[4] + 1:])
    cases.append(("lost.jdx", bad, rf"lost.jdx, line {dl[4] + 1}: X-check failed: the line's "
                  r"X=\d+ but point \d+ should be at \d+ \(a lost or extra data line\?; the "
                  r"block holds 582 values where ##NPOINTS=601"))
    bad = good.replace(lines[data_lines[1]], lines[data_lines[1]][:-2] + b"#!")
    cases.append(("char.jdx", bad, rf"char.jdx, line {data_lines[1] + 1}: unexpected character "
                  r"'#' in XYDATA"))
    bad = affn.replace(al[dl[2]], al[dl[2]] + b" ?")
    cases.append(("missing.jdx", bad, rf"missing.jdx, line {dl[2] + 1}: missing value '\?' in "
                  r"XYDATA"))
    bad = b"##JCAMP-DX=5.01\n" + good
    cases.append(("order.jdx", bad, r"order.jdx, line 1: ##JCAMP-DX= before any ##TITLE="))
    bad = good.replace(b"##XUNITS=1/CM", b"##XUNITS=FURLONGS")
    cases.append(("xunits.jdx", bad, rf"xunits.jdx, line {_line_no(bad, b'##XUNITS')}: unknown "
                  r"x unit 'FURLONGS'"))
    bad = good.replace(b"##YFACTOR=0.001", b"##YFACTOR=abc")
    cases.append(("yfactor.jdx", bad, rf"yfactor.jdx, line {_line_no(bad, b'##YFACTOR')}: "
                  r"##YFACTOR= must be a number, found 'abc'"))
    bad = good.replace(b"##FIRSTX=400\n", b"")
    cases.append(("firstx.jdx", bad, r"firstx.jdx, line \d+: ##XYDATA= needs ##FIRSTX="))
    bad = good.replace(b"##NPOINTS=601", b"##NPOINTS=99999999")
    cases.append(("big.jdx", bad, rf"big.jdx, line {_line_no(bad, b'##NPOINTS')}: "
                  rf"##NPOINTS=99999999 is more than MAX_POINTS={MAX_POINTS}"))
    bad = (b"##TITLE=t\n##JCAMP-DX=5.01\n##DATA TYPE=INFRARED SPECTRUM\n##XUNITS=1/CM\n"
           b"##PEAK TABLE=(XY..XY)\n527,1 577\n##END=\n")
    cases.append(("odd.jdx", bad, r"odd.jdx, line 6: ##PEAKTABLE=\(XY..XY\) holds 3 numbers, "
                  r"not a multiple of 2"))
    bad = (b"##TITLE=t\n##JCAMP-DX=5.01\n##DATA TYPE=NMR SPECTRUM\n##.OBSERVE NUCLEUS=^1H\n"
           b"##XUNITS=PPM\n##PEAK TABLE=(XY..XY)\n7.26,1 1.2,3\n##END=\n")
    cases.append(("proton.jdx", bad, r"proton.jdx, line 4: ##.OBSERVE NUCLEUS=\^1H: the kit "
                  r"reads 13C NMR spectra only"))
    bad = (b"##TITLE=t\n##JCAMP-DX=5.01\n##DATA TYPE=NMR FID\n##NTUPLES=NMR FID\n"
           b"##END NTUPLES=NMR FID\n##END=\n")
    cases.append(("ntuples.jdx", bad, r"ntuples.jdx, line 4: ##NTUPLES= tables are not "
                  r"supported"))
    bad = b"##TITLE=t\n##JCAMP-DX=5.01\n##DATA TYPE=INFRARED SPECTRUM\n##END=\n"
    cases.append(("nodata.jdx", bad, r"nodata.jdx, line 1: block 't' has no data table"))
    bad = (b"##TITLE=t\n##JCAMP-DX=5.01\n##DATA TYPE=NMR SPECTRUM\n##XUNITS=HZ\n"
           b"##FIRSTX=0\n##LASTX=10\n##NPOINTS=2\n##XYDATA=(X++(Y..Y))\n0 1 2\n##END=\n")
    cases.append(("nofreq.jdx", bad, r"nofreq.jdx, line 1: x is in Hz but the block has no "
                  r"##.OBSERVE FREQUENCY=; pass observe_mhz="))
    link = write_jcamp_link([Spectrum([1.0, 2.0], [1.0, 2.0], technique="ir")] * 2,
                            forms="AFFN")
    bad = link.replace(b"##BLOCKS=2", b"##BLOCKS=3")
    cases.append(("blocks.jdx", bad, r"blocks.jdx, line 4: LINK block 'cageprint link' "
                  r"declares ##BLOCKS=3 but holds 2 data blocks"))
    return cases


JCAMP_CASES = _jcamp_cases()


@pytest.mark.parametrize("name, data, pattern", JCAMP_CASES, ids=[c[0] for c in JCAMP_CASES])
def test_malformed_jcamp(tmp_path, name, data, pattern):
    p = tmp_path / name
    p.write_bytes(data)
    with pytest.raises(SpectrumFormatError, match=pattern):
        load_spectrum(p)


MZML_HEAD = (b'<?xml version="1.0" encoding="utf-8"?>\n'
             b'<mzML xmlns="http://psi.hupo.org/ms/mzml" version="1.1.0">\n')


def test_malformed_mzml(tmp_path):
    p = tmp_path / "cut.mzML"
    p.write_bytes(MZML_HEAD + b"<run id='r'><spectrumList count='1'><spectrum ")
    with pytest.raises(SpectrumFormatError, match=r"cut.mzML, line 3: not well-formed mzML XML"):
        load_spectrum(p)
    p = tmp_path / "nospec.mzML"
    p.write_bytes(MZML_HEAD + b"<run id='r'><spectrumList count='0'/></run></mzML>\n")
    with pytest.raises(SpectrumFormatError, match=r"nospec.mzML: mzML holds no spectra"):
        load_spectrum(p)
    p = tmp_path / "bomb.mzML"
    p.write_bytes(b'<?xml version="1.0"?>\n<!DOCTYPE mzML [<!ENTITY a "aaaaaaaa">'
                  b'<!ENTITY b "&a;&a;&a;&a;">]>\n<mzML>&b;</mzML>\n')
    with pytest.raises(SpectrumFormatError, match=r"bomb.mzML, line 2: mzML with a DOCTYPE or "
                       r"ENTITY declaration is refused"):
        load_spectrum(p)


def test_loader_level_errors(tmp_path):
    with pytest.raises(SpectrumFormatError, match=r"nothere.csv: no such file"):
        load_spectrum(tmp_path / "nothere.csv")
    # a folder is read as a raw NMR experiment (issue 12); one without one says so
    with pytest.raises(SpectrumFormatError, match=r"no NMR experiment here: a Bruker folder"):
        load_spectrum(tmp_path)
    with pytest.raises(SpectrumFormatError, match=r"<bytes>: unknown format='xls'; known formats"):
        load_spectrum(b"1,2\n", format="xls")
    with pytest.raises(SpectrumFormatError, match=r"expected a path, bytes or a binary file "
                       r"object, got int"):
        load_spectrum(42)
    with pytest.raises(SpectrumFormatError, match=r"technique='uv' is not one of mass, ir"):
        load_spectrum(b"m/z,i\n1,2\n2,3\n", technique="uv")


def test_at_least_twenty_malformed_cases():
    assert len(CSV_CASES) + len(JCAMP_CASES) + 3 >= 20


def test_no_reader_executes_or_unpickles(tmp_path):
    # common practice, no source: readers parse text and never evaluate it
    forbidden = re.compile(r"(?<![.\w])(eval|exec|compile|__import__)\s*\(|import pickle|pickle\.|"
                           r"marshal\.|yaml\.load|"
                           r"allow_pickle\s*=\s*True|np\.load\(|subprocess|os\.system")
    for path in sorted((READERS_DIR / "readers").glob("*.py")) + [READERS_DIR / "model.py"]:
        text = path.read_text()
        hit = forbidden.search(text)
        assert hit is None, f"{path.name}: {hit.group(0)}"
    marker = tmp_path / "pwned"
    payload = f"m/z,i\n1,2\n__import__('os').system('touch {marker}'),3\n".encode()
    with pytest.raises(SpectrumFormatError, match=r"line 3: non-numeric cell"):
        load_spectrum(payload)
    assert not marker.exists()


def _mutate(rng, data: bytes, alphabet: bytes) -> bytes:
    d = bytearray(data)
    for _ in range(int(rng.integers(1, 6))):
        i = int(rng.integers(0, max(len(d), 1)))
        op = int(rng.integers(0, 4))
        if op == 0 and d:
            d[i] = alphabet[int(rng.integers(0, len(alphabet)))]
        elif op == 1:
            del d[i:i + int(rng.integers(1, 20))]
        elif op == 2:
            d[i:i] = bytes(rng.choice(list(alphabet), int(rng.integers(1, 10))))
        else:
            d = d[:i]
    return bytes(d)


def test_fuzzed_text_inputs_raise_only_format_errors():
    # common practice, no source: seeded random corruption of valid files must end in a
    # SpectrumFormatError (or a spectrum), never in another exception
    from cageprint.spectra import write_csv, write_jcamp_link

    rng = np.random.default_rng(0)
    x = np.arange(400, 800, 2.0)
    s = Spectrum(x, rng.integers(0, 1000, x.size) * 1e-3, technique="ir", y_unit="absorbance")
    p = Spectrum([527.0, 577.0], [1.0, 0.5], technique="ir", kind="peaks", widths=[3.0, 4.0])
    seeds = [write_jcamp(s, form=f, yfactor=1e-3)
             for f in ("AFFN", "PAC", "SQZ", "DIF", "DUP", "XYPOINTS")]
    seeds += [write_jcamp(p), write_jcamp_link([s, p], forms=["DIF", None], yfactor=1e-3),
              write_csv(s), write_csv(s, delimiter=";", decimal=","), write_csv(p)]
    alphabet = (b"0123456789.,;+-eE \t\n#$=()?@ABCDEFGHIJKLMNOPQRSTUVWXYZ"
                b"abcdefghijklmnopqrstuvwxyz%\x00\xff")
    for trial in range(800):
        data = _mutate(rng, seeds[trial % len(seeds)], alphabet)
        try:
            load_spectrum(data)
        except SpectrumFormatError:
            pass


def _small_mzml(mz: np.ndarray, intensity: np.ndarray) -> bytes:
    """A minimal mzML with zlib-compressed base64 arrays (HUPO-PSI mzML 1.1 structure)."""
    import base64
    import zlib

    def array(a, accession, name):
        b = base64.b64encode(zlib.compress(a.astype("<f8").tobytes())).decode()
        return (f'<binaryDataArray encodedLength="{len(b)}">'
                '<cvParam cvRef="MS" accession="MS:1000523" name="64-bit float"/>'
                '<cvParam cvRef="MS" accession="MS:1000574" name="zlib compression"/>'
                f'<cvParam cvRef="MS" accession="{accession}" name="{name}"/>'
                f"<binary>{b}</binary></binaryDataArray>")

    return (
        '<?xml version="1.0" encoding="utf-8"?>\n'
        '<mzML xmlns="http://psi.hupo.org/ms/mzml" version="1.1.0">\n'
        '<run id="r"><spectrumList count="1">\n'
        f'<spectrum index="0" id="scan=1" defaultArrayLength="{mz.size}">\n'
        '<cvParam cvRef="MS" accession="MS:1000511" name="ms level" value="1"/>\n'
        '<cvParam cvRef="MS" accession="MS:1000128" name="profile spectrum"/>\n'
        '<binaryDataArrayList count="2">\n'
        + array(mz, "MS:1000514", "m/z array") + "\n"
        + array(intensity, "MS:1000515", "intensity array")
        + "\n</binaryDataArrayList></spectrum></spectrumList></run></mzML>\n"
    ).encode()


def test_fuzzed_mzml_raises_only_format_errors():
    import warnings

    mz = np.linspace(715.0, 730.0, 101)
    seed = _small_mzml(mz, np.exp(-((mz - 720) ** 2)))
    s = load_spectrum(seed)
    assert np.array_equal(s.x, mz) and s.kind == "profile"
    rng = np.random.default_rng(1)
    alphabet = b"0123456789<>/=\"' abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ+/\n"
    for _ in range(60):
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                load_spectrum(_mutate(rng, seed, alphabet), format="mzml")
        except SpectrumFormatError:
            pass
