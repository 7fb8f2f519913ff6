"""mzML (HUPO-PSI) mass spectra, read with lxml's incremental parser and checked whole.

Profile and centroid spectra; choose one with ``spectrum=`` (0-based index or
the spectrum's id).  The reader knows the few PSI-MS accessions it needs
(array kinds, number types, compression, centroid/profile, MS level,
polarity, title), so no controlled vocabulary is loaded: the first file in a
process reads as fast as the next.

Every input is read to its end and checked for completeness before any
spectrum is returned: well-formed to the closing tag, ``spectrumList
count=`` equal to the spectra found, each spectrum's ``index=`` in order and
its id unique, each ``<binaryDataArray>`` holding its ``<binary>``, each array
decoding to ``defaultArrayLength`` values.  DOCTYPE/ENTITY declarations are
refused wherever they appear, in any encoding; sizes are budgeted by
:class:`~cageprint.spectra.readers.ReadLimits` before allocation.

References
----------
L. Martens et al., "mzML -- a community standard for mass spectrometry
data", Mol. Cell. Proteomics 10, R110.000133 (2011); accessions from the
PSI-MS controlled vocabulary (psi-ms.obo).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...errors import SpectrumFormatError
from ._common import BYTES_SOURCE, ReadLimits, build_spectrum, limits_for, resolve_technique, sha256
from ._xml import decode_array, iter_xml, local_name

__all__ = ["parse_mzml", "mzml_blocks", "sniff_mzml"]

# PSI-MS accessions (psi-ms.obo): number types, compression, array kinds, spectrum terms
_DTYPE = {"MS:1000521": "<f4", "MS:1000523": "<f8", "MS:1000519": "<i4", "MS:1000522": "<i8"}
_ZLIB, _NO_COMPRESSION = "MS:1000574", "MS:1000576"
_NUMPRESS = {"MS:1002312", "MS:1002313", "MS:1002314", "MS:1002746", "MS:1002747",
             "MS:1002748"}
_MZ, _INTENSITY = "MS:1000514", "MS:1000515"
_CENTROID, _PROFILE = "MS:1000127", "MS:1000128"
_MS_LEVEL, _TITLE = "MS:1000511", "MS:1000796"
_POSITIVE, _NEGATIVE = "MS:1000130", "MS:1000129"


@dataclass
class _Array:
    params: dict
    line: int
    text: str | None = None
    has_binary: bool = False
    encoded_length: str | None = None
    array_length: str | None = None


@dataclass
class _Spec:
    k: int
    sid: str | None
    line: int
    index: str | None
    length: str | None
    params: dict = field(default_factory=dict)
    arrays: list = field(default_factory=list)


def _whole(value, what: str, source: str, line: int) -> int:
    if value is None or not str(value).strip().isdigit() or len(str(value).strip()) > 15:
        raise SpectrumFormatError(f"{what}={value!r} is not a whole number >= 0", source, line)
    return int(value)


class _Walk:
    """One pass over an mzML input, collecting spectrum records and one spectrum's arrays."""

    def __init__(self, data: bytes, source: str, limits: ReadLimits, want=None):
        self.source, self.limits, self.want = source, limits, want
        self.groups: dict[str, dict] = {}
        self.spectra: list[_Spec] = []
        self.chosen = None
        self.declared = None  # (count, line) of <spectrumList count=>
        self._arrays: list[_Array] = []  # the arrays of the spectrum being read
        self._run(data)

    def _params(self, elem) -> dict:
        out = {}
        for child in elem:
            name = local_name(child.tag)
            if name == "cvParam":
                out[child.get("accession", "")] = child.get("value", "")
            elif name == "referenceableParamGroupRef":
                ref = child.get("ref")
                if ref not in self.groups:
                    raise SpectrumFormatError(
                        f"referenceableParamGroupRef {ref!r} names no referenceableParamGroup",
                        self.source, child.sourceline,
                    )
                out.update(self.groups[ref])
        return out

    def _run(self, data: bytes) -> None:
        root_seen = False
        for event, elem, _depth in iter_xml(data, self.source, "mzML", self.limits):
            name = local_name(elem.tag)
            if event == "start":
                if not root_seen:
                    root_seen = True
                    if name not in ("mzML", "indexedmzML"):
                        raise SpectrumFormatError(
                            f"not mzML: the root element is <{name}>", self.source,
                            elem.sourceline,
                        )
                elif name == "spectrumList":
                    self.declared = (elem.get("count"), elem.sourceline)
                elif name in ("spectrum", "chromatogram"):
                    self._arrays = []
                continue
            if name == "referenceableParamGroup":
                self.groups[elem.get("id")] = self._params(elem)
            elif name == "binaryDataArray":
                self._array_end(elem)
            elif name == "spectrum":
                self._spectrum_end(elem)
            elif name == "chromatogram":
                elem.clear()

    def _array_end(self, elem) -> None:
        arr = _Array(self._params(elem), elem.sourceline,
                     encoded_length=elem.get("encodedLength"),
                     array_length=elem.get("arrayLength"))
        for child in elem:
            if local_name(child.tag) == "binary":
                arr.has_binary = True
                arr.text = child.text
        elem.clear()
        self._arrays.append(arr)

    def _spectrum_end(self, elem) -> None:
        k = len(self.spectra)
        spec = _Spec(k, elem.get("id"), elem.sourceline, elem.get("index"),
                     elem.get("defaultArrayLength"), params=self._params(elem),
                     arrays=self._arrays)
        self._arrays = []
        self._check(spec)
        self.spectra.append(spec)
        if self.chosen is None and self.want is not None and self.want(k, spec.sid):
            self.chosen = (spec, self._decode(spec))
        spec.arrays = [len(spec.arrays)]  # the text is no longer needed
        elem.clear()
        parent = elem.getparent()
        while parent is not None and elem.getprevious() is not None:
            del parent[0]

    def _check(self, spec: _Spec) -> None:
        src, line = self.source, spec.line
        if not spec.sid:
            raise SpectrumFormatError(f"spectrum {spec.k} has no id", src, line)
        if spec.index is not None and spec.index.strip() != str(spec.k):
            raise SpectrumFormatError(
                f"spectrum {spec.sid!r} has index={spec.index!r} but is spectrum {spec.k} of "
                "the list (spectra lost or reordered?)",
                src, line,
            )
        if any(s.sid == spec.sid for s in self.spectra):
            raise SpectrumFormatError(f"spectrum id {spec.sid!r} occurs twice", src, line)
        n = _whole(spec.length, f"spectrum {spec.sid!r} defaultArrayLength", src, line)
        if n > self.limits.max_points:
            raise SpectrumFormatError(
                f"spectrum {spec.sid!r}: defaultArrayLength={n} points is more than "
                f"MAX_POINTS={self.limits.max_points}; pass max_points= to read it",
                src, line,
            )
        for arr in spec.arrays:
            if not arr.has_binary:
                raise SpectrumFormatError(
                    f"spectrum {spec.sid!r}: a <binaryDataArray> has no <binary> element",
                    src, arr.line,
                )
            if arr.encoded_length is not None:
                got = len("".join((arr.text or "").split()))
                if _whole(arr.encoded_length, "encodedLength", src, arr.line) != got:
                    raise SpectrumFormatError(
                        f"spectrum {spec.sid!r}: encodedLength={arr.encoded_length} but the "
                        f"<binary> holds {got} characters (truncated or edited?)",
                        src, arr.line,
                    )

    def _decode(self, spec: _Spec) -> dict:
        out = {}
        n = int(spec.length)
        for arr in spec.arrays:
            kind = "mz" if _MZ in arr.params else "intensity" if _INTENSITY in arr.params else None
            if kind is None:
                continue
            what = f"spectrum {spec.sid!r} {'m/z' if kind == 'mz' else 'intensity'} array"
            if kind in out:
                raise SpectrumFormatError(f"{what} occurs twice", self.source, arr.line)
            if _NUMPRESS & arr.params.keys():
                raise SpectrumFormatError(f"{what} is Numpress-compressed; the kit reads "
                                          "zlib or uncompressed arrays", self.source, arr.line)
            dtypes = [_DTYPE[a] for a in arr.params if a in _DTYPE]
            if len(dtypes) != 1:
                raise SpectrumFormatError(f"{what} states {len(dtypes)} number types; "
                                          "expected one", self.source, arr.line)
            count = n if arr.array_length is None else _whole(
                arr.array_length, "arrayLength", self.source, arr.line)
            out[kind] = decode_array(arr.text, dtype=dtypes[0],
                                     zlib_compressed=_ZLIB in arr.params, count=count,
                                     limits=self.limits, source=self.source, line=arr.line,
                                     what=what)
        return out

    def finish(self) -> None:
        """Checks that need the whole file: the declared spectrum count."""
        if self.declared is not None:
            count, line = self.declared
            declared = _whole(count, "spectrumList count", self.source, line)
            if declared != len(self.spectra):
                raise SpectrumFormatError(
                    f"spectrumList declares count={declared} but holds {len(self.spectra)} "
                    "spectra (truncated or edited file?)",
                    self.source, line,
                )
        if not self.spectra:
            raise SpectrumFormatError("mzML holds no spectra", self.source)


def _title(spec: _Spec):
    return spec.params.get(_TITLE) or spec.sid


def mzml_blocks(data: bytes, source: str = BYTES_SOURCE, *, limits: ReadLimits | None = None,
                **_: object) -> list[dict]:
    """List the spectra of an mzML file: index, id, title, MS level, centroid, points."""
    walk = _Walk(data, source, limits_for(limits))
    walk.finish()
    return [{"index": s.k, "id": s.sid, "title": _title(s), "ms_level": _ms_level(s),
             "centroid": _CENTROID in s.params, "npoints": int(s.length)} for s in walk.spectra]


def _ms_level(spec: _Spec):
    v = spec.params.get(_MS_LEVEL)
    return int(v) if v is not None and v.strip().isdigit() and len(v) < 4 else None


def parse_mzml(data: bytes, source: str = BYTES_SOURCE, *, technique: str | None = None,
               spectrum=None, max_points: int | None = None, meta: dict | None = None,
               limits: ReadLimits | None = None):
    """Read one mass spectrum from mzML bytes.

    Parameters
    ----------
    spectrum : int or str, optional
        0-based index or the spectrum's ``id``; default the first spectrum.
        :func:`mzml_blocks` lists them.
    technique : {"mass", None}
        mzML holds mass spectra; any other technique is refused.
    limits : ReadLimits, optional
        Resource budget; ``max_points`` overrides its ``max_points``.

    Returns
    -------
    Spectrum
        ``kind="peaks"`` for centroid spectra, ``"profile"`` otherwise;
        ``meta`` holds the id, MS level, polarity and title.
    """
    tech = resolve_technique(technique, "mass", True, source, "mzML")
    limits = limits_for(limits, max_points)
    by_index = isinstance(spectrum, (int, np.integer)) and not isinstance(spectrum, bool)

    def want(k, sid):
        return spectrum is None or (by_index and spectrum == k) or (
            isinstance(spectrum, str) and spectrum == sid)

    walk = _Walk(data, source, limits, want)
    walk.finish()
    if walk.chosen is None:
        ids = [s.sid for s in walk.spectra]
        shown = ", ".join(repr(i) for i in ids[:10]) + (" ..." if len(ids) > 10 else "")
        raise SpectrumFormatError(
            f"spectrum={spectrum!r} is not in the file; it holds {len(ids)} spectra "
            f"(0-based index or id: {shown})",
            source,
        )
    spec, arrays = walk.chosen
    if "mz" not in arrays or "intensity" not in arrays:
        raise SpectrumFormatError(f"spectrum {spec.sid!r} has no m/z or intensity array",
                                  source, spec.line)
    centroid = _CENTROID in spec.params
    polarity = ("positive" if _POSITIVE in spec.params else
                "negative" if _NEGATIVE in spec.params else None)
    m = {
        "source": source, "sha256": sha256(data), "format": "mzml", "spectrum_id": spec.sid,
        "spectrum_index": spec.k, "ms_level": _ms_level(spec), "polarity": polarity,
        "title": _title(spec), "centroid": centroid,
    }
    m.update(meta or {})
    try:
        return build_spectrum(
            arrays["mz"], arrays["intensity"], technique=tech, x_unit="m/z",
            y_unit="intensity", kind="peaks" if centroid else "profile", source=source,
            meta=m, max_points=limits.max_points,
        )
    except SpectrumFormatError as exc:
        raise SpectrumFormatError(
            f"spectrum {spec.sid!r} (record {spec.k + 1}): {str(exc).split(': ', 1)[-1]}",
            source, spec.line,
        ) from None


def sniff_mzml(head: bytes) -> float:
    """Confidence that ``head`` starts an mzML file."""
    h = head[:4096]
    if b"<mzML" in h or b"<indexedmzML" in h:
        return 1.0
    return 0.0
