"""Binary IR/Raman instrument files are recognised and refused with the export to use.

Sources: the opening bytes of the formats are from memory (see the reader's docstring);
the files here are minimal invented headers, not instrument output.
"""

from __future__ import annotations

import pytest

from cageprint.errors import SpectrumFormatError
from cageprint.spectra import load_spectrum


@pytest.mark.parametrize("head, name, words", [
    (b"Spectral Data File" + bytes(600), "film.spa", "OMNIC"),
    (b"\x0a\x0a\xfe\xfe" + bytes(600), "sample.0", "OPUS"),
    (b"\x00\x4b" + bytes(1000), "raman.spc", "GRAMS"),
])
def test_instrument_binaries_refused_with_the_export_named(tmp_path, head, name, words):
    path = tmp_path / name
    path.write_bytes(head)
    with pytest.raises(SpectrumFormatError) as err:
        load_spectrum(path)
    msg = str(err.value)
    assert words in msg and "JCAMP-DX" in msg and name in msg


def test_text_is_not_taken_for_an_instrument_binary():
    s = load_spectrum(b"MK\n1 2\n2 3\n3 4\n", technique="ir")
    assert s.meta["format"] == "delimited"
