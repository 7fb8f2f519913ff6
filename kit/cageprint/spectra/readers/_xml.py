"""Safe XML for the readers (mzML now, mzXML next): no DTD, bounded depth, bounded arrays.

- :func:`refuse_dtd` finds ``<!DOCTYPE`` / ``<!ENTITY`` anywhere in the input,
  in whatever encoding it declares (the encoding is detected as in XML 1.0,
  Appendix F: byte-order marks, UTF-16/32 without them, the XML declaration),
  and refuses encodings it cannot check;
- :func:`iter_xml` runs lxml's incremental parser with entities, DTDs and the
  network off, counts nesting depth, and turns every parser failure into the
  kit's error with its line;
- :func:`decode_array` decodes one base64 (optionally zlib) array of a stated
  length, refusing anything larger before it is allocated.

References
----------
W3C, "Extensible Markup Language (XML) 1.0 (Fifth Edition)", Appendix F (2008).
"""

from __future__ import annotations

import base64
import binascii
import io
import re

import numpy as np

from ...errors import SpectrumFormatError
from ._common import ReadLimits, check_input_size, inflate, over_limit

__all__ = ["refuse_dtd", "iter_xml", "decode_array", "local_name", "XML_ENCODINGS"]

#: the encodings an XML input may declare (others cannot be checked for a DOCTYPE)
XML_ENCODINGS = frozenset({"utf-8", "utf8", "us-ascii", "ascii", "iso-8859-1", "latin-1",
                           "latin1", "utf-16", "utf-16le", "utf-16be", "utf-32", "utf-32le",
                           "utf-32be"})
_DECL_ENCODING = re.compile(r"""<\?xml[^>]*?encoding\s*=\s*["']([A-Za-z0-9._-]+)["']""")
_DTD = re.compile(r"<!\s*(DOCTYPE|ENTITY)", re.I)


def _sniff_encoding(data: bytes) -> str:
    """The encoding of XML bytes from their first four bytes (XML 1.0, Appendix F)."""
    head = data[:4]
    for bom, enc in ((b"\x00\x00\xfe\xff", "utf-32-be"), (b"\xff\xfe\x00\x00", "utf-32-le"),
                     (b"\xfe\xff", "utf-16-be"), (b"\xff\xfe", "utf-16-le"),
                     (b"\xef\xbb\xbf", "utf-8")):
        if head.startswith(bom):
            return enc
    for probe, enc in ((b"\x00\x00\x00<", "utf-32-be"), (b"<\x00\x00\x00", "utf-32-le"),
                       (b"\x00<\x00?", "utf-16-be"), (b"<\x00?\x00", "utf-16-le")):
        if head == probe:
            return enc
    if len(data) >= 2 and data[0] == 0:
        return "utf-16-be"
    if len(data) >= 2 and data[1] == 0:
        return "utf-16-le"
    return "utf-8"


def refuse_dtd(data: bytes, source: str, what: str) -> None:
    """Raise the kit's error if the XML holds a DOCTYPE or ENTITY declaration anywhere.

    Examples
    --------
    >>> refuse_dtd('<?xml version="1.0"?><a/>'.encode("utf-16"), "<bytes>", "mzML")
    >>> refuse_dtd('<a/>\\n<!DOCTYPE a>'.encode("utf-16"), "x.mzML", "mzML")
    Traceback (most recent call last):
    ...
    cageprint.errors.SpectrumFormatError: x.mzML, line 2: mzML with a DOCTYPE or ENTITY ...
    """
    enc = _sniff_encoding(data)
    text = data.decode(enc, errors="replace")
    decl = _DECL_ENCODING.match(text.lstrip("\ufeff"))
    if decl is not None:
        declared = decl.group(1).lower()
        if declared not in XML_ENCODINGS:
            raise SpectrumFormatError(
                f"{what} declares the text encoding {decl.group(1)!r}; the kit reads XML in "
                "UTF-8, UTF-16, UTF-32, ASCII or ISO-8859-1 only",
                source, 1,
            )
        if enc == "utf-8" and declared.startswith(("utf-16", "utf-32")):
            raise SpectrumFormatError(
                f"{what} declares encoding={decl.group(1)!r} but its bytes are not UTF-16/32 "
                "(no byte-order mark, no zero bytes)",
                source, 1,
            )
    m = _DTD.search(text)
    if m is not None:
        raise SpectrumFormatError(
            f"{what} with a DOCTYPE or ENTITY declaration is refused (entities are not "
            "expanded)",
            source, text.count("\n", 0, m.start()) + 1,
        )


def local_name(tag) -> str:
    """``{namespace}name`` -> ``name`` (comments and processing instructions -> ``""``)."""
    if not isinstance(tag, str):
        return ""
    return tag.rsplit("}", 1)[-1]


def iter_xml(data: bytes, source: str, what: str, limits: ReadLimits):
    """Yield ``(event, element, depth)`` for "start" and "end" events, safely.

    The whole input is checked first (size, DOCTYPE, encoding); the parser
    resolves no entities, loads no DTD, reaches no network and keeps its
    built-in size limits.  The caller should ``clear()`` elements it is done with.
    """
    from lxml import etree  # a compiled parser; imported only when XML is read

    check_input_size(data, source, limits)
    if not data.strip():
        raise SpectrumFormatError("empty input: no data at all", source)
    refuse_dtd(data, source, what)
    parser = etree.iterparse(
        io.BytesIO(data), events=("start", "end"), resolve_entities=False, no_network=True,
        load_dtd=False, dtd_validation=False, huge_tree=False, remove_comments=True,
        remove_pis=True,
    )
    depth = 0
    try:
        for event, elem in parser:
            if event == "start":
                depth += 1
                if depth > limits.max_depth:
                    raise over_limit(f"XML nesting {depth} deep", "max_depth",
                                     limits.max_depth, source, elem.sourceline)
                yield event, elem, depth
            else:
                yield event, elem, depth
                depth -= 1
    except etree.XMLSyntaxError as exc:
        raise SpectrumFormatError(f"not well-formed {what} XML: {exc.msg}", source,
                                  getattr(exc, "lineno", None)) from None


#: (array dtype name in mzML/mzXML) -> little-endian numpy dtype
DTYPES = {"32-bit float": "<f4", "64-bit float": "<f8", "32-bit integer": "<i4",
          "64-bit integer": "<i8"}


def decode_array(text: str | None, *, dtype: str, zlib_compressed: bool, count: int,
                 limits: ReadLimits, source: str, line: int | None, what: str) -> np.ndarray:
    """Decode a base64 (optionally zlib) array that must hold exactly ``count`` values.

    ``dtype`` is a numpy dtype string (``"<f8"``, ``">f4"``...).  Every size is
    checked against ``count`` and ``limits`` before the bytes are made.

    Examples
    --------
    >>> import zlib
    >>> b = base64.b64encode(zlib.compress(np.array([1.5, 2.0]).astype("<f8").tobytes()))
    >>> decode_array(b.decode(), dtype="<f8", zlib_compressed=True, count=2,
    ...              limits=ReadLimits(), source="<bytes>", line=1, what="m/z array").tolist()
    [1.5, 2.0]
    """
    dt = np.dtype(dtype)
    want = count * dt.itemsize
    if count > limits.max_points:
        raise over_limit(f"{what} of {count} values", "max_points", limits.max_points,
                         source, line)
    if want > limits.max_decompressed_bytes:
        raise over_limit(f"{what} of {want} bytes", "max_decompressed_bytes",
                         limits.max_decompressed_bytes, source, line)
    text = "".join((text or "").split())
    if len(text) // 4 * 3 > limits.max_decompressed_bytes:
        raise over_limit(f"{what} with {len(text)} base64 characters",
                         "max_decompressed_bytes", limits.max_decompressed_bytes, source, line)
    try:
        raw = base64.b64decode(text, validate=True)
    except (binascii.Error, ValueError) as exc:
        raise SpectrumFormatError(f"{what}: invalid base64 ({exc})", source, line) from None
    if zlib_compressed:
        raw = inflate(raw, want, source, line, stated=what)
    if len(raw) != want:
        raise SpectrumFormatError(
            f"{what} holds {len(raw)} bytes but {count} values of {dt.itemsize} bytes need "
            f"{want} (truncated or damaged array, or a wrong length attribute)",
            source, line,
        )
    return np.frombuffer(raw, dtype=dt).astype(float)
