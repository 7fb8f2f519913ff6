"""Readers behind one :func:`load_spectrum`, each working from bytes.

A registry maps a format name to its byte parser, a content sniffer and file
extensions.  :func:`load_spectrum` picks the format by explicit argument,
then content sniffing, then extension.  No reader executes, evaluates or
unpickles anything it reads.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ...errors import SpectrumFormatError
from ..model import Spectrum
from ._common import BYTES_SOURCE, MAX_POINTS, ReadLimits, check_binary, is_blank
from .delimited import parse_delimited, sniff_delimited
from .irbinary import (
    OPUS_EXTENSIONS,
    opus_blocks,
    parse_opus,
    refuse_spa,
    refuse_spc,
    sniff_opus,
    sniff_spa,
    sniff_spc,
)
from .jcamp import jcamp_blocks, parse_jcamp, sniff_jcamp
from .msformats import mgf_blocks, mzxml_blocks, parse_mgf, parse_mzxml, sniff_mgf, sniff_mzxml
from .mzml import mzml_blocks, parse_mzml, sniff_mzml
from .peaklist import parse_peaklist
from .rawnmr import parse_nmr_zip, read_nmr_folder, sniff_zip

__all__ = [
    "READERS",
    "ReaderInfo",
    "register_reader",
    "load_spectrum",
    "list_blocks",
    "parse_delimited",
    "parse_csv",
    "parse_peaklist",
    "read_csv",
    "read_peaklist",
    "parse_jcamp",
    "read_jcamp",
    "jcamp_blocks",
    "parse_mzml",
    "read_mzml",
    "mzml_blocks",
    "read_nmr_folder",
    "parse_mzxml",
    "parse_mgf",
    "parse_nmr_zip",
    "parse_opus",
    "MAX_POINTS",
    "ReadLimits",
    "SNIFF_BYTES",
]

#: how many leading bytes the sniffers see
SNIFF_BYTES = 8192


@dataclass(frozen=True)
class ReaderInfo:
    """One registered format.

    ``parse(data, source, **options) -> Spectrum``; ``sniff(head) -> float``
    confidence in 0..1; ``extensions`` lower case with the dot;
    ``blocks(data, source) -> list[dict]`` for formats holding several spectra.
    """

    name: str
    parse: Callable[..., Spectrum]
    sniff: Callable[[bytes], float] | None
    extensions: tuple[str, ...]
    blocks: Callable[..., list[dict]] | None = None


#: format name -> ReaderInfo (use :func:`register_reader` to add one)
READERS: dict[str, ReaderInfo] = {}


def register_reader(
    name: str,
    parse: Callable[..., Spectrum],
    *,
    sniff: Callable[[bytes], float] | None = None,
    extensions: Sequence[str] = (),
    blocks: Callable[..., list[dict]] | None = None,
) -> ReaderInfo:
    """Register (or replace) a reader under ``name``.

    Examples
    --------
    >>> info = register_reader("demo-two-col", parse_delimited, extensions=[".twocol"])
    >>> READERS["demo-two-col"].extensions
    ('.twocol',)
    >>> del READERS["demo-two-col"]
    """
    exts = tuple(e.lower() if e.startswith(".") else "." + e.lower() for e in extensions)
    info = ReaderInfo(name, parse, sniff, exts, blocks)
    READERS[name] = info
    return info


def _read_input(path_or_bytes: Any, source: str | None) -> tuple[bytes, str, str | None]:
    """Return (data, source name, extension)."""
    if isinstance(path_or_bytes, (bytes, bytearray, memoryview)):
        return bytes(path_or_bytes), source or BYTES_SOURCE, None
    if hasattr(path_or_bytes, "read"):
        data = path_or_bytes.read()
        if isinstance(data, str):
            data = data.encode("utf-8")
        name = source or getattr(path_or_bytes, "name", None) or BYTES_SOURCE
        return bytes(data), str(name), Path(str(name)).suffix.lower() or None
    if isinstance(path_or_bytes, (str, os.PathLike)):
        p = Path(path_or_bytes)
        name = source or str(p)
        try:
            data = p.read_bytes()
        except FileNotFoundError:
            raise SpectrumFormatError("no such file", name) from None
        except IsADirectoryError:
            raise SpectrumFormatError("is a directory, not a file", name) from None
        except OSError as exc:
            raise SpectrumFormatError(f"cannot read the file: {exc.strerror}", name) from None
        return data, name, p.suffix.lower() or None
    raise SpectrumFormatError(
        f"expected a path, bytes or a binary file object, got {type(path_or_bytes).__name__}",
        source or BYTES_SOURCE,
    )


def _choose_format(data: bytes, source: str, ext: str | None, fmt: str | None) -> str:
    if fmt is not None:
        key = fmt.lower()
        key = {"csv": "delimited", "tsv": "delimited", "txt": "delimited", "jdx": "jcamp",
               "dx": "jcamp", "jcamp-dx": "jcamp", "peaks": "peaklist"}.get(key, key)
        if key not in READERS:
            raise SpectrumFormatError(
                f"unknown format={fmt!r}; known formats: {', '.join(sorted(READERS))}", source
            )
        return key
    if is_blank(data):
        raise SpectrumFormatError("empty input: no data at all", source)
    head = data[:SNIFF_BYTES]
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):  # UTF-16 text: sniff its UTF-8 form
        head = head[: len(head) // 2 * 2].decode("utf-16", errors="ignore").encode("utf-8")
    best, best_score = None, 0.0
    for info in READERS.values():
        if info.sniff is None:
            continue
        score = info.sniff(head)
        if score > best_score:
            best, best_score = info.name, score
    if ext is not None:
        by_ext = [i.name for i in READERS.values() if ext in i.extensions]
        # an extension settles ties with weak sniffs (e.g. a peak list is also delimited text)
        if by_ext and (best is None or best_score < 0.9):
            return by_ext[0]
    if best is not None:
        return best
    check_binary(data, source)
    raise SpectrumFormatError(
        "could not recognise the format (not JCAMP-DX, mzML or columns of numbers); "
        "export it as JCAMP-DX or two-column CSV, or name its format in Python "
        f"(load_spectrum(path, format=...)) as one of: {', '.join(sorted(READERS))}",
        source,
    )


def load_spectrum(
    path_or_bytes: Any,
    format: str | None = None,  # noqa: A002 - the public name the kit documents
    technique: str | None = None,
    **options: Any,
) -> Spectrum:
    """Read one spectrum from a path, bytes or binary file object.

    Parameters
    ----------
    path_or_bytes : str, os.PathLike, bytes or file object
        Where the data are.
    format : str, optional
        A key of :data:`READERS` (``"delimited"``, ``"peaklist"``, ``"jcamp"``,
        ``"mzml"``); when None, sniffed from the content, then the extension.
    technique : str, optional
        ``mass``, ``ir``, ``raman``, ``nmr`` or ``uvvis``; when None the reader
        guesses it from the file (JCAMP DATA TYPE, units, mzML) or raises.
    **options
        Passed to the reader (e.g. ``x_column=``, ``block=``, ``spectrum=``,
        ``source=`` to name bytes in messages).

    Returns
    -------
    Spectrum
        With ``meta["source"]``, ``meta["sha256"]`` of the bytes and ``meta["format"]``.

    Raises
    ------
    SpectrumFormatError
        For anything unreadable, naming the file (or ``"<bytes>"``), the line
        or record, and the problem.

    Examples
    --------
    >>> s = load_spectrum(b"m/z,intensity\\n719.9,10\\n720.0,100\\n720.1,12\\n")
    >>> s.technique, len(s), s.meta["format"]
    ('mass', 3, 'delimited')
    """
    if isinstance(path_or_bytes, (str, os.PathLike)) and Path(path_or_bytes).is_dir():
        if format not in (None, "nmr-folder", "nmr-zip"):
            raise SpectrumFormatError(f"is a folder; format={format!r} reads files (a folder "
                                      "is read as a raw NMR experiment)", str(path_or_bytes))
        return read_nmr_folder(path_or_bytes, technique=technique, **options)
    data, source, ext = _read_input(path_or_bytes, options.pop("source", None))
    key = _choose_format(data, source, ext, format)
    return READERS[key].parse(data, source, technique=technique, **options)


def list_blocks(path_or_bytes: Any, format: str | None = None, **options: Any) -> list[dict]:
    """List the spectra a multi-spectrum input holds (JCAMP-DX LINK blocks, mzML spectra).

    Each entry is a dict with at least ``index`` and ``title``; pass the
    index (or id) back as ``block=`` (JCAMP-DX) or ``spectrum=`` (mzML).  A
    single-spectrum format gives one entry.

    Examples
    --------
    >>> list_blocks(b"x y\\n1 2\\n2 3\\n")
    [{'index': 0, 'title': '<bytes>'}]
    """
    data, source, ext = _read_input(path_or_bytes, options.pop("source", None))
    key = _choose_format(data, source, ext, format)
    info = READERS[key]
    if info.blocks is None:
        return [{"index": 0, "title": source}]
    return info.blocks(data, source, **options)


def parse_csv(data: bytes, source: str = BYTES_SOURCE, **options: Any) -> Spectrum:
    """Alias of :func:`parse_delimited` (CSV, TSV and whitespace columns alike)."""
    return parse_delimited(data, source, **options)


def read_csv(path: str | os.PathLike, **options: Any) -> Spectrum:
    """Read a delimited text file from disk (thin wrapper of :func:`parse_delimited`)."""
    return load_spectrum(path, format="delimited", **options)


def read_jcamp(path: str | os.PathLike, **options: Any) -> Spectrum:
    """Read a JCAMP-DX file from disk (thin wrapper of :func:`parse_jcamp`)."""
    return load_spectrum(path, format="jcamp", **options)


def read_mzml(path: str | os.PathLike, **options: Any) -> Spectrum:
    """Read an mzML file from disk (thin wrapper of :func:`parse_mzml`)."""
    return load_spectrum(path, format="mzml", **options)


def read_peaklist(path: str | os.PathLike, **options: Any) -> Spectrum:
    """Read a peak-list file from disk (thin wrapper of :func:`parse_peaklist`)."""
    return load_spectrum(path, format="peaklist", **options)


register_reader(
    "delimited", parse_delimited, sniff=sniff_delimited,
    extensions=(".csv", ".tsv", ".txt", ".dat", ".xy", ".asc"),
)
register_reader(
    "jcamp", parse_jcamp, sniff=sniff_jcamp, extensions=(".jdx", ".dx", ".jcamp", ".jcm"),
    blocks=jcamp_blocks,
)
register_reader("mzml", parse_mzml, sniff=sniff_mzml, extensions=(".mzml",), blocks=mzml_blocks)
register_reader("peaklist", parse_peaklist, extensions=(".peaks", ".peaklist"))
register_reader("mzxml", parse_mzxml, sniff=sniff_mzxml, extensions=(".mzxml",),
                blocks=mzxml_blocks)
register_reader("mgf", parse_mgf, sniff=sniff_mgf, extensions=(".mgf",), blocks=mgf_blocks)
register_reader("opus", parse_opus, sniff=sniff_opus, extensions=OPUS_EXTENSIONS,
                blocks=opus_blocks)
register_reader("spc", refuse_spc, sniff=sniff_spc, extensions=(".spc",))
register_reader("spa", refuse_spa, sniff=sniff_spa, extensions=(".spa",))
register_reader("nmr-zip", parse_nmr_zip, sniff=sniff_zip, extensions=(".zip",))
