"""Binary IR/Raman instrument files: recognised and refused with the export to use.

Reading a vendor's binary format is worth it only through a maintained reader whose
output can be checked against an independent file; none is wired in yet (the
candidates on PyPI were either unmaintained or could not be checked here).  Until then
these files are recognised by their opening bytes and refused with one clear message
naming the file and the export that works (JCAMP-DX or CSV from the instrument's own
software), instead of "could not recognise the format".

Opening bytes (from memory): Thermo OMNIC ``.spa`` files start with the text
``Spectral Data File``; GRAMS/Galactic ``.spc`` files with a flags byte and a version
byte ``0x4B`` (new format) or ``0x4D`` (old format); Bruker OPUS files with
``0A 0A FE FE``.
"""

from __future__ import annotations

from typing import Any

from ...errors import SpectrumFormatError

__all__ = ["sniff_instrument_binary", "refuse_instrument_binary", "INSTRUMENT_EXPORT"]

#: what to do instead, said in every refusal
INSTRUMENT_EXPORT = ("export the spectrum from the instrument software as JCAMP-DX (.jdx) or "
                     "as a two-column CSV (x, y) and load that")


def _kind(head: bytes) -> str | None:
    if head.startswith(b"Spectral Data File"):
        return "a Thermo OMNIC .spa file"
    if head[:4] == b"\x0a\x0a\xfe\xfe":
        return "a Bruker OPUS file"
    if len(head) >= 512 and head[1:2] in (b"\x4b", b"\x4d") and head[0] < 0x100 \
            and b"\x00" in head[:64]:
        return "a GRAMS/Galactic .spc file"
    return None


def sniff_instrument_binary(head: bytes) -> float:
    """Confidence that ``head`` opens one of the binary instrument formats above."""
    kind = _kind(head)
    if kind is None:
        return 0.0
    return 0.5 if "spc" in kind else 0.95


def refuse_instrument_binary(data: bytes, source: str = "<bytes>", **_: Any):
    """Raise the clear refusal for a recognised binary instrument file."""
    kind = _kind(data[:8192]) or "a binary instrument file"
    raise SpectrumFormatError(f"{kind}: cageprint does not read this vendor format; "
                              f"{INSTRUMENT_EXPORT}", source)
