"""The loader widget on raw NMR experiments: folder in the list, processing controls, redraw.

Sources: the signal is invented (tests/rawnmr_fixtures.py); processing is standard
practice, no source.
"""

from __future__ import annotations

import io
import zipfile

import pytest

pytest.importorskip("ipywidgets")
pytest.importorskip("nmrglue")

import rawnmr_fixtures as R  # noqa: E402
from cageprint.session import Session  # noqa: E402
from cageprint.widgets.loader import SpectrumLoader  # noqa: E402


def test_folder_listed_loaded_and_reprocessed(tmp_path):
    R.write_bruker(tmp_path / "13c-fraction-b", R.Signal(complex_points=8192))
    s = Session("C76")
    loader = SpectrumLoader(s, folder=tmp_path, technique="nmr", plot=False)
    assert "13c-fraction-b" in loader.file.options
    loader.file.value = "13c-fraction-b"
    assert loader.spectrum is not None
    assert s.spectra["nmr"].meta["format"] == "nmr-folder"
    assert loader.processing.ui.layout.display == ""  # controls shown for a raw FID
    assert s.spectra["nmr"].meta["processing"]["settings"]["line_broadening_hz"] == 0.3
    loader.processing.lb.value = 2.0  # redrawn and recorded
    assert s.spectra["nmr"].meta["processing"]["settings"]["line_broadening_hz"] == 2.0
    loader.processing.p0.value = 10.0  # a phase slider switches to phasing by hand
    proc = s.spectra["nmr"].meta["processing"]
    assert proc["phase_mode"] == "manual" and proc["p0"] == 10.0


def test_uploaded_zip_is_read_and_controls_hidden_for_text(tmp_path):
    folder = R.write_bruker(tmp_path / "9", R.Signal(complex_points=4096))
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for f in folder.iterdir():
            zf.write(f, f"9/{f.name}")
    s = Session("C76")
    loader = SpectrumLoader(s, folder=tmp_path, technique="nmr", plot=False)
    assert loader.load(buf.getvalue(), name="upload.zip")
    assert s.spectra["nmr"].meta["format"] == "nmr-folder"
    assert loader.load(b"ppm,intensity\n140.1,1\n140.2,5\n140.3,1\n", name="peaks.csv")
    assert loader.processing.ui.layout.display == "none"
