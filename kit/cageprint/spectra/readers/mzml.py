"""mzML (HUPO-PSI) mass spectra through pyteomics.mzml; no XML is parsed by hand.

Profile and centroid spectra; choose one with ``spectrum=`` (0-based index or
the spectrum's id).  Files declaring a DOCTYPE or entities are refused before
any XML parser sees them.

References
----------
L. Martens et al., "mzML -- a community standard for mass spectrometry
data", Mol. Cell. Proteomics 10, R110.000133 (2011).
"""

from __future__ import annotations

import functools
import io
import re
import zlib

import numpy as np

from ...errors import SpectrumFormatError
from ._common import BYTES_SOURCE, MAX_POINTS, build_spectrum, resolve_technique, sha256

__all__ = ["parse_mzml", "mzml_blocks", "sniff_mzml"]

_DOCTYPE = re.compile(rb"<!DOCTYPE|<!ENTITY", re.I)


def _check(data: bytes, source: str) -> None:
    if not data or not data.strip():
        raise SpectrumFormatError("empty input: no data at all", source)
    m = _DOCTYPE.search(data[:65536])
    if m:
        line = data.count(b"\n", 0, m.start()) + 1
        raise SpectrumFormatError(
            "mzML with a DOCTYPE or ENTITY declaration is refused (entities are not expanded)",
            source, line,
        )


@functools.cache
def _vocabulary():
    """The PSI-MS controlled vocabulary, loaded once (pyteomics would load it per file)."""
    try:
        # lazy: pyteomics and lxml are heavy imports; only mzML input needs them
        from pyteomics.auxiliary.psims_util import _has_psims, load_psims
    except ImportError:  # pragma: no cover - older pyteomics parse without it
        return None
    return load_psims() if _has_psims else None


def _spectra(data: bytes, source: str, decode: bool = True):
    """Yield pyteomics spectrum dicts; errors become SpectrumFormatError."""
    # lazy: pyteomics and lxml are heavy imports; only mzML input needs them
    from lxml import etree
    from pyteomics import mzml
    from pyteomics.auxiliary import PyteomicsError

    _check(data, source)
    cv = _vocabulary()
    try:
        kwargs = {"cv": cv} if cv is not None else {}
        reader = mzml.MzML(io.BytesIO(data), use_index=False, decode_binary=decode,
                           read_schema=False, huge_tree=False, **kwargs)
        with reader:
            yield from enumerate(reader)
    except etree.XMLSyntaxError as exc:
        line = getattr(exc, "lineno", None)
        raise SpectrumFormatError(f"not well-formed mzML XML: {exc.msg}", source, line) from None
    except SpectrumFormatError:
        raise
    except PyteomicsError as exc:
        if "psims" in str(exc):
            raise SpectrumFormatError(
                "reading mzML needs the psims package (pip install psims); " + str(exc), source
            ) from None
        raise SpectrumFormatError(f"unreadable mzML (PyteomicsError: {str(exc)[:120]})",
                                  source) from None
    except MemoryError:
        raise
    except (zlib.error, Exception) as exc:  # noqa: BLE001 - any library failure
        # a corrupt file can fail anywhere inside the XML, base64 or zlib layers of the library;
        # all of it is reported as one readable error naming the file
        raise SpectrumFormatError(
            f"unreadable mzML ({type(exc).__name__}: {str(exc)[:120]})", source
        ) from None


def mzml_blocks(data: bytes, source: str = BYTES_SOURCE, **_: object) -> list[dict]:
    """List the spectra of an mzML file: index, id, title, MS level, centroid, points."""
    out = []
    for k, spec in _spectra(data, source, decode=False):
        out.append({
            "index": k, "id": spec.get("id"), "title": spec.get("spectrum title", spec.get("id")),
            "ms_level": spec.get("ms level"), "centroid": "centroid spectrum" in spec,
            "npoints": int(spec["defaultArrayLength"]) if "defaultArrayLength" in spec else None,
        })
    if not out:
        raise SpectrumFormatError("mzML holds no spectra", source)
    return out


def parse_mzml(data: bytes, source: str = BYTES_SOURCE, *, technique: str | None = None,
               spectrum=None, max_points: int = MAX_POINTS, meta: dict | None = None):
    """Read one mass spectrum from mzML bytes.

    Parameters
    ----------
    spectrum : int or str, optional
        0-based index or the spectrum's ``id``; default the first spectrum.
        :func:`mzml_blocks` lists them.
    technique : {"mass", None}
        mzML holds mass spectra; any other technique is refused.

    Returns
    -------
    Spectrum
        ``kind="peaks"`` for centroid spectra, ``"profile"`` otherwise;
        ``meta`` holds the id, MS level, polarity and title.
    """
    tech = resolve_technique(technique, "mass", True, source, "mzML")
    chosen = None
    count = 0
    ids = []
    for k, spec in _spectra(data, source):
        count += 1
        ids.append(spec.get("id"))
        by_index = isinstance(spectrum, (int, np.integer)) and not isinstance(spectrum, bool)
        if spectrum is None or (by_index and spectrum == k) or (
            isinstance(spectrum, str) and spectrum == spec.get("id")
        ):
            chosen = (k, spec)
            break
    if chosen is None:
        if count == 0:
            raise SpectrumFormatError("mzML holds no spectra", source)
        shown = ", ".join(repr(i) for i in ids[:10]) + (" ..." if len(ids) > 10 else "")
        raise SpectrumFormatError(
            f"spectrum={spectrum!r} is not in the file; it holds {count} spectra "
            f"(0-based index or id: {shown})",
            source,
        )
    k, spec = chosen
    record = k + 1
    mz = spec.get("m/z array")
    inten = spec.get("intensity array")
    if mz is None or inten is None:
        raise SpectrumFormatError(
            f"spectrum {spec.get('id')!r} has no m/z or intensity array", source, record
        )
    mz = np.asarray(mz, dtype=float)
    inten = np.asarray(inten, dtype=float)
    if mz.size != inten.size:
        raise SpectrumFormatError(
            f"spectrum {spec.get('id')!r} has {mz.size} m/z values but {inten.size} "
            "intensities",
            source, record,
        )
    centroid = "centroid spectrum" in spec
    polarity = ("positive" if "positive scan" in spec else
                "negative" if "negative scan" in spec else None)
    m = {
        "source": source, "sha256": sha256(data), "format": "mzml", "spectrum_id": spec.get("id"),
        "spectrum_index": k, "ms_level": spec.get("ms level"),
        "polarity": polarity, "title": spec.get("spectrum title", spec.get("id")),
        "centroid": centroid,
    }
    m.update(meta or {})
    try:
        return build_spectrum(
            mz, inten, technique=tech, x_unit="m/z", y_unit="intensity",
            kind="peaks" if centroid else "profile", source=source, meta=m,
            max_points=max_points,
        )
    except SpectrumFormatError as exc:
        raise SpectrumFormatError(
            f"spectrum {spec.get('id')!r} (record {record}): {str(exc).split(': ', 1)[-1]}",
            source,
        ) from None


def sniff_mzml(head: bytes) -> float:
    """Confidence that ``head`` starts an mzML file."""
    h = head[:4096]
    if b"<mzML" in h or b"<indexedmzML" in h:
        return 1.0
    return 0.0
