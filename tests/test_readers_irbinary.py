"""Binary IR/Raman instrument files: Bruker OPUS read, GRAMS .spc and OMNIC .spa refused.

Sources: no library here writes OPUS files, so the OPUS files below are built by hand,
built from the reader's documented layout (the ``brukeropus`` package's own docstrings
of ``parse_header``, ``parse_directory``, ``parse_params`` and its block-type codes);
the spectra in them are invented. The opening bytes of .spc and .spa are from memory
(see the reader's module docstring); those files are minimal invented headers.
"""

from __future__ import annotations

import struct
import sys

import numpy as np
import pytest

from cageprint.errors import SpectrumFormatError
from cageprint.spectra import load_spectrum
from cageprint.spectra.readers import list_blocks
from cageprint.spectra.readers.irbinary import OPUS_MAGIC, check_opus_layout, sniff_spc

brukeropus = pytest.importorskip("brukeropus")

# directory type code fields (c0..c5) of the blocks used here, from the reader's table:
# c1 1=sample channel / 3=ratioed result; c2 1=data status / 3=acquisition / 10=sample
# origin; c3 4=absorbance / 5=transmittance / 1=single channel / 10=Raman / 13=directory
DIRECTORY = (0, 0, 0, 13, 0, 0)
ACQ_PARAMS = (0, 0, 3, 0, 0, 0)
SAMPLE_PARAMS = (0, 0, 10, 0, 0, 0)


def type_int(code):
    out, shift = 0, 0
    for value, width in zip(code, (2, 2, 6, 7, 2, 3), strict=True):
        out |= value << shift
        shift += width
    return out


def param_block(items):
    """Parameter block: 3-char key, pad byte, int16 type, int16 size in 2-byte words, value."""
    out = b""
    for key, value in items:
        if isinstance(value, int):
            kind, payload = 0, struct.pack("<i", value)
        elif isinstance(value, float):
            kind, payload = 1, struct.pack("<d", value)
        else:
            raw = value.encode("latin-1") + b"\x00"
            kind, payload = 2, raw + bytes(-len(raw) % 4)
        out += key.encode() + b"\x00" + struct.pack("<2h", kind, len(payload) // 2) + payload
    out += b"END\x00" + bytes(4)
    return out + bytes(-len(out) % 4)


def status_params(x, y, *, dxu="WN", npt=None):
    return param_block([
        ("DPF", 1), ("NPT", len(y) if npt is None else npt), ("FXV", float(x[0])),
        ("LXV", float(x[-1])), ("CSF", 1.0), ("MXY", float(np.max(y))),
        ("MNY", float(np.min(y))), ("DXU", dxu), ("DAT", "04/12/2026"),
        ("TIM", "10:20:30.000 (GMT+0)"),
    ])


def opus_file(blocks):
    """Header, a directory listing itself and ``blocks`` (list of (code, bytes)), the blocks."""
    n = len(blocks) + 1
    start = 24
    offset = start + 12 * n
    entries = [(type_int(DIRECTORY), n * 3, start)]
    body = b""
    for code, raw in blocks:
        entries.append((type_int(code), len(raw) // 4, offset + len(body)))
        body += raw
    header = OPUS_MAGIC + struct.pack("<d", 920622.0) + struct.pack("<3i", start, n, n)
    directory = b"".join(struct.pack("<3i", *e) for e in entries)
    return header + directory + body


def spectrum_blocks(x, y, c3, *, dxu="WN", npt=None, c1=None):
    c1 = (1 if c3 == 1 else 3) if c1 is None else c1
    data_code = (0, c1, 0, c3, 0, 0)
    status_code = (0, c1, 1, c3, 0, 0)
    return [(status_code, status_params(x, y, dxu=dxu, npt=npt)),
            (data_code, np.asarray(y, dtype="<f4").tobytes())]


X = np.linspace(4000.0, 400.0, 721)
# invented absorbance: two Gaussian bands (positions are the C60 IR lines, used only as
# plausible numbers: 527 and 1429 cm-1, common practice, no source)
Y = (0.8 * np.exp(-((X - 527.0) / 4.0) ** 2) + 0.5 * np.exp(-((X - 1429.0) / 5.0) ** 2)
     ).astype("<f4")


def absorbance_file(**kw):
    return opus_file(spectrum_blocks(X, Y, 4, **kw) + [
        (ACQ_PARAMS, param_block([("RES", 2.0)])),
        (SAMPLE_PARAMS, param_block([("SNM", "film on KBr"), ("SFM", "solid")])),
    ])


def test_opus_absorbance_comes_back(tmp_path):
    path = tmp_path / "film.0"
    path.write_bytes(absorbance_file())
    s = load_spectrum(path)
    assert s.meta["format"] == "opus" and s.technique == "ir" and s.x_unit == "cm-1"
    assert s.y_unit == "absorbance" and len(s) == X.size
    np.testing.assert_allclose(s.x, X[::-1])
    np.testing.assert_allclose(s.y, Y[::-1].astype(float))
    assert s.x[np.argmax(s.y)] == pytest.approx(527.0, abs=5.0)
    assert s.meta["sample"] == "film on KBr" and s.meta["resolution_cm1"] == 2.0
    assert s.meta["date"].startswith("2026-12-04T10:20:30")
    assert s.meta["block"] == "a"


def test_opus_prefers_absorbance_and_block_picks_another():
    sc = np.linspace(1.0, 2.0, X.size).astype("<f4")
    data = opus_file(spectrum_blocks(X, sc, 1) + spectrum_blocks(X, Y, 4))
    assert load_spectrum(data).meta["block"] == "a"
    assert [b["key"] for b in list_blocks(data)] == ["a", "sm"]
    single = load_spectrum(data, block="sm", technique="ir")
    np.testing.assert_allclose(single.y, sc[::-1].astype(float))
    with pytest.raises(SpectrumFormatError, match="cannot tell the technique"):
        load_spectrum(data, block="sm")
    with pytest.raises(SpectrumFormatError, match=r"block='ig' is not in the file; it holds a"):
        load_spectrum(data, block="ig")


@pytest.mark.parametrize("c1", [1, 3])
def test_opus_raman_block_is_raman_and_refuses_ir(c1):
    shift = np.linspace(100.0, 3200.0, 500)
    y = np.exp(-((shift - 1469.0) / 3.0) ** 2).astype("<f4")
    data = opus_file(spectrum_blocks(shift, y, 10, c1=c1)
                     + [(ACQ_PARAMS, param_block([("RLW", 9394.0), ("RES", 4.0)]))])
    s = load_spectrum(data)
    assert s.technique == "raman" and s.meta["laser_wavenumber_cm1"] == 9394.0
    with pytest.raises(SpectrumFormatError, match="declares a raman spectrum"):
        load_spectrum(data, technique="ir")


def test_opus_single_channel_with_raman_laser_is_raman():
    # Raman laser parameters mark a single-channel spectrum as Raman (common practice, no source)
    shift = np.linspace(100.0, 3200.0, 300)
    data = opus_file(spectrum_blocks(shift, np.ones(300, "<f4"), 1)
                     + [(ACQ_PARAMS, param_block([("RLP", 300.0)]))])
    assert load_spectrum(data).technique == "raman"


def test_opus_micrometre_axis_is_converted():
    um = np.linspace(2.5, 25.0, 200)
    s = load_spectrum(opus_file(spectrum_blocks(um, np.linspace(0, 1, 200, dtype="<f4"), 5,
                                                dxu="MI")))
    assert s.y_unit == "transmittance"
    assert s.x.min() == pytest.approx(400.0) and s.x.max() == pytest.approx(4000.0)


def test_opus_without_brukeropus_says_what_to_install(monkeypatch):
    monkeypatch.setitem(sys.modules, "brukeropus", None)
    with pytest.raises(SpectrumFormatError) as err:
        load_spectrum(absorbance_file(), source="film.0")
    msg = str(err.value)
    assert "film.0" in msg and "pip install 'cageprint[instruments]'" in msg
    assert "JCAMP-DX" in msg


def _corrupt(data, offset, fmt, value):
    out = bytearray(data)
    struct.pack_into(fmt, out, offset, value)
    return bytes(out)


GOOD = absorbance_file()
# malformed binaries (invented damage; the layout is the reader's documented one)
MALFORMED = [
    ("trunc.0", GOOD[:20], r"truncated OPUS header: 20 bytes"),
    ("far.0", _corrupt(GOOD, 12, "<i", 10**6), r"bad OPUS block directory: .* outside the file"),
    ("counts.0", _corrupt(GOOD, 20, "<i", 99), r"bad OPUS header: 99 blocks of at most"),
    ("past.0", _corrupt(GOOD, 24 + 12 * 2 + 8, "<i", len(GOOD) - 8),
     r"entry 3: block at offset \d+ of \d+ bytes runs past the end"),
    ("empty.0", _corrupt(GOOD, 24 + 12 * 2 + 4, "<i", 0), r"entry 3: zero-length data block"),
    ("cut.0", GOOD[:-200], r"runs past the end of the file"),
    ("magic.0", b"\x0a\x0a\xfe\xff" + GOOD[4:], r"not a Bruker OPUS file: it opens with "
     r"0A 0A FE FF"),
    ("text.1", b"\x00\x01binary junk\x00" * 4, r"not a Bruker OPUS file"),
    ("units.0", opus_file(spectrum_blocks(X, Y, 4, dxu="PNT")), r"DXU='PNT' is not wavenumber"),
    ("npt.0", opus_file(spectrum_blocks(X, Y, 4, npt=X.size + 5)),
     r"1 data block\(s\) had no fitting status block, e.g. NPT larger than the data"),
    ("noab.0", opus_file(spectrum_blocks(X, Y, 2)), r"no absorbance, transmittance, Raman"),
]


@pytest.mark.parametrize("name, data, match", MALFORMED, ids=[m[0] for m in MALFORMED])
def test_malformed_opus_refused_naming_the_file(tmp_path, name, data, match):
    path = tmp_path / name
    path.write_bytes(data)
    with pytest.raises(SpectrumFormatError, match=match) as err:
        load_spectrum(path)
    assert name in str(err.value)


def test_text_named_like_opus_is_pointed_to_the_text_reader(tmp_path):
    path = tmp_path / "run.1"
    path.write_bytes(b"1 2\n2 3\n3 4\n")
    with pytest.raises(SpectrumFormatError, match="not a Bruker OPUS file.*format='delimited'"):
        load_spectrum(path, technique="ir")
    assert len(load_spectrum(path, format="delimited", technique="ir")) == 3


def test_zip_is_not_taken_for_spc():
    assert sniff_spc(b"PK\x03\x04" + bytes(600)) == 0.0


def test_layout_check_accepts_the_good_file():
    rows = check_opus_layout(GOOD, "film.0")
    assert len(rows) == 5 and all(size > 0 for _, size, _ in rows)


SPC_HEAD = b"\x00\x4b\x00\x00" + struct.pack("<i", 100) + bytes(504)  # flags, 0x4B, npts


@pytest.mark.parametrize("head, name, words", [
    (b"Spectral Data File" + bytes(600), "film.spa", "a Thermo OMNIC .spa file"),
    (SPC_HEAD + bytes(400), "raman.spc", "a GRAMS/Galactic .spc file"),
    (b"1 2\n3 4\n", "fake.spc", "does not open like a GRAMS/Galactic .spc file"),
    (b"1 2\n3 4\n", "fake.spa", "does not open like a Thermo OMNIC .spa file"),
])
def test_instrument_binaries_refused_with_the_export_named(tmp_path, head, name, words):
    path = tmp_path / name
    path.write_bytes(head)
    with pytest.raises(SpectrumFormatError) as err:
        load_spectrum(path)
    msg = str(err.value)
    assert words in msg and "JCAMP-DX" in msg and "CSV" in msg and name in msg


def test_spc_and_spa_sniffed_without_their_extension():
    with pytest.raises(SpectrumFormatError, match="GRAMS/Galactic .spc"):
        load_spectrum(SPC_HEAD + bytes(100), source="upload.bin")
    with pytest.raises(SpectrumFormatError, match="OMNIC .spa"):
        load_spectrum(b"Spectral Data File" + bytes(100), source="upload.bin")


def test_text_is_not_taken_for_an_instrument_binary():
    s = load_spectrum(b"MK\n1 2\n2 3\n3 4\n", technique="ir")
    assert s.meta["format"] == "delimited"
