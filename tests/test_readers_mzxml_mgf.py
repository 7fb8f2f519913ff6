"""mzXML and MGF: the same spectra as an mzML written by psims load with the same m/z and
intensities; choice by index, id, retention time and a summed retention-time range;
malformed files refused with the file and the scan or line named.

Sources: mzXML built by hand from the published schema (Pedrioli et al., Nat. Biotechnol.
22, 1459 (2004); peaks base64, network byte order, m/z-int pairs); MGF built by hand from
the Mascot generic format as commonly written (BEGIN IONS/END IONS, KEY=value, peak lines):
common practice, no source.  The masses are invented near C60+ (12C = 12 exactly, electron
mass 0.000548580 u: CODATA 2018).
"""

from __future__ import annotations

import base64
import zlib

import numpy as np
import pytest

from cageprint.errors import SpectrumFormatError
from cageprint.spectra import list_blocks, load_spectrum
from test_readers_mzml import C60_PLUS, _write  # noqa: I001 - the mzML twin of the same spectra

MZ = np.linspace(715.0, 730.0, 1501)
PROFILE = 1000 * np.exp(-0.5 * ((MZ - C60_PLUS) / 0.05) ** 2) + 5.0
CENT_MZ = np.array([C60_PLUS, C60_PLUS + 1.00336, C60_PLUS + 2.00671])
CENT_I = np.array([100.0, 65.0, 21.0])


def _peaks(mz, inten, precision=32, compress=False):
    pairs = np.empty(2 * mz.size)
    pairs[0::2], pairs[1::2] = mz, inten
    raw = pairs.astype(">f4" if precision == 32 else ">f8").tobytes()
    if compress:
        raw = zlib.compress(raw)
    return base64.b64encode(raw).decode()


def mzxml(scans, *, precision=32, compress=False, count_fix=0):
    body = []
    for num, mz, inten, centroid, rt in scans:
        comp = ' compressionType="zlib"' if compress else ""
        body.append(
            f'<scan num="{num}" msLevel="1" peaksCount="{mz.size + count_fix}" polarity="+" '
            f'retentionTime="PT{rt * 60:.2f}S" centroided="{int(centroid)}">'
            f'<peaks precision="{precision}" byteOrder="network" contentType="m/z-int"{comp}>'
            f"{_peaks(mz, inten, precision, compress)}</peaks></scan>")
    return ('<?xml version="1.0" encoding="ISO-8859-1"?>\n<mzXML xmlns="http://sashimi.'
            'sourceforge.net/schema_revision/mzXML_3.2"><msRun scanCount="'
            f'{len(scans)}">' + "\n".join(body) + "</msRun></mzXML>\n").encode()


def mgf(blocks):
    out = []
    for title, mz, inten, rt in blocks:
        out += ["BEGIN IONS", f"TITLE={title}", f"RTINSECONDS={rt * 60:.2f}", "CHARGE=1+"]
        out += [f"{float(m)!r} {float(i)!r}" for m, i in zip(mz, inten, strict=True)]
        out.append("END IONS")
    return ("\n".join(out) + "\n").encode()


@pytest.fixture(scope="module")
def mzml_twin(tmp_path_factory):
    p = tmp_path_factory.mktemp("twin") / "twin.mzML"
    return _write(p, [("scan=1", MZ, PROFILE, False), ("scan=2", CENT_MZ, CENT_I, True)])


@pytest.mark.parametrize("precision, compress", [(32, False), (64, False), (64, True)])
def test_mzxml_equals_the_mzml_of_the_same_spectra(mzml_twin, precision, compress):
    data = mzxml([("1", MZ, PROFILE, False, 1.0), ("2", CENT_MZ, CENT_I, True, 1.5)],
                 precision=precision, compress=compress)
    for index in (0, 1):
        a = load_spectrum(mzml_twin, spectrum=index)
        b = load_spectrum(data, spectrum=index, source="twin.mzXML")
        assert b.meta["format"] == "mzxml" and a.kind == b.kind
        np.testing.assert_allclose(b.x, a.x, rtol=1e-7)  # float32 in both files
        np.testing.assert_allclose(b.y, a.y, rtol=1e-6)


def test_mgf_equals_the_mzml_of_the_same_centroids(mzml_twin):
    a = load_spectrum(mzml_twin, spectrum=1)
    b = load_spectrum(mgf([("C60 spot", CENT_MZ, CENT_I, 2.0)]), source="twin.mgf")
    assert b.meta["format"] == "mgf" and b.kind == "peaks" and b.meta["title"] == "C60 spot"
    np.testing.assert_allclose(b.x, a.x, rtol=1e-7)
    np.testing.assert_allclose(b.y, a.y, rtol=1e-6)


def test_independent_reader_agrees(tmp_path):
    # pyteomics' own mzXML and MGF readers as the oracle (a runtime dependency already)
    from pyteomics import mgf as pmgf
    from pyteomics import mzxml as pmzxml

    path = tmp_path / "one.mzXML"
    path.write_bytes(mzxml([("1", MZ, PROFILE, False, 1.0)], precision=64))
    with pmzxml.read(str(path)) as r:
        ref = next(iter(r))
    ours = load_spectrum(path)
    np.testing.assert_allclose(ours.x, ref["m/z array"])
    np.testing.assert_allclose(ours.y, ref["intensity array"])
    path = tmp_path / "one.mgf"
    path.write_bytes(mgf([("t", CENT_MZ, CENT_I, 1.0)]))
    with pmgf.read(str(path)) as r:
        ref = next(iter(r))
    np.testing.assert_allclose(load_spectrum(path).x, ref["m/z array"])


def test_choice_by_id_retention_time_and_summed_range():
    scans = [(str(k + 1), CENT_MZ, CENT_I * (k + 1), True, 0.5 * k) for k in range(5)]
    data = mzxml(scans)
    assert [b["id"] for b in list_blocks(data)] == ["1", "2", "3", "4", "5"]
    assert load_spectrum(data, spectrum="3").meta["spectrum_index"] == 2
    near = load_spectrum(data, retention_time=1.1)  # nearest scan: 1.0 min, scan 3
    assert near.meta["spectra_used"] == ["3"]
    summed = load_spectrum(data, rt_range=(0.4, 1.6))  # scans 2, 3, 4
    assert summed.meta["spectra_used"] == ["2", "3", "4"]
    np.testing.assert_allclose(summed.y, CENT_I * 9, rtol=1e-6)
    np.testing.assert_allclose(summed.x, CENT_MZ, rtol=1e-7)
    prof = mzxml([(str(k + 1), MZ, PROFILE, False, 0.5 * k) for k in range(3)])
    total = load_spectrum(prof, rt_range=(0, 10))
    np.testing.assert_allclose(total.y, 3 * PROFILE.astype(np.float32), rtol=1e-6)
    blocks = mgf([(f"spot {k}", CENT_MZ, CENT_I, k) for k in range(3)])
    assert load_spectrum(blocks, spectrum="spot 2").meta["spectrum_index"] == 2
    assert load_spectrum(blocks, rt_range=(0.5, 2.5)).meta["spectra_used"] == ["spot 1", "spot 2"]


@pytest.mark.parametrize("make, words", [
    (lambda: mzxml([("1", CENT_MZ, CENT_I, True, 1.0)]).replace(b"</peaks>", b"AAAA</peaks>")
     .replace(b'peaksCount="3"', b'peaksCount="3"'), "scan '1'"),
    (lambda: mzxml([("1", CENT_MZ, CENT_I, True, 1.0)], count_fix=2), "scan '1'"),
    (lambda: mzxml([("1", CENT_MZ, CENT_I, True, 1.0)]).replace(b'byteOrder="network"',
                                                               b'byteOrder="little"'),
     "byteOrder"),
    (lambda: mzxml([("1", CENT_MZ, CENT_I, True, 1.0)]).replace(b'precision="32"',
                                                               b'precision="16"'), "precision"),
    (lambda: mzxml([("1", CENT_MZ, CENT_I, True, 1.0)]).replace(b'retentionTime="PT60.00S"',
                                                               b'retentionTime="soon"'),
     "retentionTime"),
    (lambda: mgf([("a", CENT_MZ, CENT_I, 1.0)]).replace(b"END IONS\n", b""), "END IONS"),
    (lambda: mgf([("a", CENT_MZ, CENT_I, 1.0)]).replace(b"719.99945", b"7x9.99945"), "peak line"),
    (lambda: mgf([("a", CENT_MZ, CENT_I, 1.0)]) * 1 + b"BEGIN IONS\nBEGIN IONS\n", "BEGIN IONS"),
])
def test_malformed_ms_files_name_file_and_place(make, words):
    with pytest.raises(SpectrumFormatError) as err:
        load_spectrum(make(), source="run7.dat", technique="mass",
                      format="mgf" if b"BEGIN IONS" in make() else "mzxml")
    assert words in str(err.value) and "run7.dat" in str(err.value)


def test_absent_choice_says_what_is_there():
    data = mzxml([("1", CENT_MZ, CENT_I, True, 1.0), ("2", CENT_MZ, CENT_I, True, 2.0)])
    with pytest.raises(SpectrumFormatError, match=r"holds 2 spectra.*1.000-2.000 min"):
        load_spectrum(data, spectrum=5)
    with pytest.raises(SpectrumFormatError, match="no scan in rt_range 5-6 min"):
        load_spectrum(data, rt_range=(5, 6))
