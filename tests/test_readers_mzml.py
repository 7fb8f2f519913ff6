"""mzML read through pyteomics: files written in the test by psims (a test dependency)."""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from cageprint.errors import SpectrumFormatError
from cageprint.spectra import list_blocks, load_spectrum, mzml_blocks, parse_mzml, read_mzml

psims_writer = pytest.importorskip("psims.mzml.writer")

# invented demo masses near C60+ and C70+ radical cations (12C = 12 exactly, electron mass
# 0.000548580 u: CODATA 2018; so 12*60 - m_e = 719.99945)
C60_PLUS = 719.99945
C70_PLUS = 839.99945


def _write(path, spectra):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with psims_writer.MzMLWriter(open(path, "wb"), close=True) as out:
            out.controlled_vocabularies()
            out.file_description(["MS1 spectrum"])
            out.software_list([{"id": "demo", "version": "0.1",
                                "params": ["custom unreleased software tool"]}])
            out.instrument_configuration_list([{"id": "IC1", "component_list": []}])
            out.data_processing_list([{"id": "DP1", "processing_methods": [
                {"order": 1, "software_reference": "demo", "params": ["conversion to mzML"]}]}])
            with out.run(id="run1", instrument_configuration="IC1"):
                with out.spectrum_list(count=len(spectra)):
                    for sid, mz, inten, centroid in spectra:
                        out.write_spectrum(
                            mz, inten, id=sid, centroided=centroid, polarity="positive scan",
                            params=["MS1 spectrum", {"ms level": 1},
                                    {"spectrum title": f"demo {sid}"}],
                        )
    return path


@pytest.fixture(scope="module")
def mzml_file(tmp_path_factory):
    mz = np.linspace(715.0, 730.0, 1501)
    prof = 1000 * np.exp(-0.5 * ((mz - C60_PLUS) / 0.05) ** 2) + 5.0
    cent_mz = np.array([C60_PLUS, C60_PLUS + 1.00336, C70_PLUS])
    cent_i = np.array([100.0, 65.0, 30.0])
    p = tmp_path_factory.mktemp("mzml") / "demo.mzML"
    return _write(p, [("scan=1", mz, prof, False), ("scan=2", cent_mz, cent_i, True)]), mz, prof


def test_profile_spectrum_read_back(mzml_file):
    path, mz, prof = mzml_file
    s = load_spectrum(path)
    assert s.technique == "mass" and s.kind == "profile" and s.x_unit == "m/z"
    assert np.array_equal(s.x, mz)  # m/z written as float64
    assert np.allclose(s.y, prof, rtol=1e-6)  # psims stores intensities as float32
    assert s.meta["spectrum_id"] == "scan=1" and s.meta["ms_level"] == 1
    assert s.meta["polarity"] == "positive" and s.meta["format"] == "mzml"


def test_centroid_spectrum_by_id_and_index(mzml_file):
    path, _, _ = mzml_file
    data = path.read_bytes()
    by_id = parse_mzml(data, spectrum="scan=2")
    by_index = read_mzml(path, spectrum=1)
    for s in (by_id, by_index):
        assert s.kind == "peaks"
        assert np.allclose(s.x, [C60_PLUS, C60_PLUS + 1.00336, C70_PLUS], rtol=0, atol=1e-9)
        assert s.y.tolist() == [100.0, 65.0, 30.0]


def test_blocks_listing(mzml_file):
    path, _, _ = mzml_file
    blocks = list_blocks(path)
    assert [(b["index"], b["id"], b["centroid"], b["npoints"]) for b in blocks] == [
        (0, "scan=1", False, 1501), (1, "scan=2", True, 3)]
    assert mzml_blocks(path.read_bytes()) == blocks


def test_errors(mzml_file, tmp_path):
    path, _, _ = mzml_file
    with pytest.raises(SpectrumFormatError, match=r"demo.mzML: spectrum=7 is not in the file; "
                       r"it holds 2 spectra \(0-based index or id: 'scan=1', 'scan=2'\)"):
        load_spectrum(path, spectrum=7)
    with pytest.raises(SpectrumFormatError, match=r"declares a mass spectrum \(mzML\) but "
                       r"technique='ir'"):
        load_spectrum(path, technique="ir")
    empty = _write(tmp_path / "empty.mzML", [])
    with pytest.raises(SpectrumFormatError, match=r"empty.mzML: mzML holds no spectra"):
        load_spectrum(empty)
