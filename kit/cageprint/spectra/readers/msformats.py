"""mzXML and MGF mass spectra, and the choice among several spectra in one file.

mzXML (P. G. A. Pedrioli et al., "A common open representation of mass spectrometry
data and its application to proteomics research", Nat. Biotechnol. 22, 1459 (2004);
schema versions 2.x/3.x) is parsed here with the kit's guarded XML walk: each
``<scan>``'s ``<peaks>`` is base64, optionally zlib, 32- or 64-bit floats in network
(big-endian) order, m/z and intensity interleaved, and must hold ``peaksCount`` pairs.
MGF (Mascot generic format, plain text: ``BEGIN IONS`` ... ``END IONS`` blocks with
``KEY=value`` lines and ``m/z intensity [charge]`` peak lines) is parsed line by line.

Several spectra in one file: ``spectrum=`` (0-based index, or the scan number / TITLE),
``retention_time=`` (minutes, the nearest scan) or ``rt_range=(start, end)`` in minutes,
which sums the scans in the range (a MALDI spot, an LC peak): profile scans on the first
scan's m/z grid, centroids merged within ``MERGE_PPM``.  ``meta["spectra_used"]`` says
which were taken.
"""

from __future__ import annotations

import re
from typing import Any

import numpy as np

from ...errors import SpectrumFormatError
from ._common import (
    BYTES_SOURCE,
    ReadLimits,
    build_spectrum,
    check_input_size,
    decode_text,
    limits_for,
    resolve_technique,
    sha256,
)
from ._xml import decode_array, iter_xml, local_name

__all__ = ["parse_mzxml", "sniff_mzxml", "mzxml_blocks", "parse_mgf", "sniff_mgf",
           "mgf_blocks", "MERGE_PPM"]

#: centroids of summed scans closer than this (ppm of m/z) become one peak
MERGE_PPM = 5.0
_RT = re.compile(r"^P(?:T)?(?:(\d+(?:\.\d*)?)H)?(?:(\d+(?:\.\d*)?)M)?(?:(\d+(?:\.\d*)?)S)?$")


def _rt_minutes(text: str | None, source: str, line: int | None) -> float | None:
    if not text:
        return None
    m = _RT.match(text.strip())
    if not m or not any(m.groups()):
        raise SpectrumFormatError(f"retentionTime={text!r} is not an xs:duration such as "
                                  "PT12.5S", source, line)
    h, mi, s = (float(g) if g else 0.0 for g in m.groups())
    return h * 60 + mi + s / 60


def _scans_mzxml(data: bytes, source: str, limits: ReadLimits) -> list[dict]:
    scans: list[dict] = []
    current: dict | None = None
    for event, elem, _ in iter_xml(data, source, "mzXML", limits):
        name = local_name(elem.tag)
        if event == "start" and name == "scan":
            a = elem.attrib
            line = elem.sourceline
            try:
                count = int(a.get("peaksCount", ""))
            except ValueError:
                raise SpectrumFormatError(f"scan {a.get('num')!r}: peaksCount="
                                          f"{a.get('peaksCount')!r} is not a whole number",
                                          source, line) from None
            current = {"index": len(scans), "id": a.get("num", str(len(scans) + 1)),
                       "line": line, "count": count,
                       "rt": _rt_minutes(a.get("retentionTime"), source, line),
                       "ms_level": int(a.get("msLevel", "1") or 1),
                       "polarity": {"+": "positive", "-": "negative"}.get(a.get("polarity", "")),
                       "centroid": a.get("centroided", "0") == "1", "mz": None}
            scans.append(current)
        elif event == "end" and name == "peaks" and current is not None:
            a = elem.attrib
            line = elem.sourceline
            prec = a.get("precision", "32")
            order = a.get("byteOrder", "network")
            comp = a.get("compressionType", "none")
            if prec not in ("32", "64") or order != "network" or comp not in ("none", "zlib"):
                raise SpectrumFormatError(
                    f"scan {current['id']!r}: peaks precision={prec!r}, byteOrder={order!r}, "
                    f"compressionType={comp!r}; mzXML allows 32/64, network, none/zlib",
                    source, line)
            if a.get("contentType", a.get("pairOrder", "m/z-int")) not in ("m/z-int",
                                                                             "m/z-intensity"):
                raise SpectrumFormatError(f"scan {current['id']!r}: contentType="
                                          f"{a.get('contentType')!r} is not m/z-int", source,
                                          line)
            n = current["count"]
            values = decode_array(elem.text if n else "", dtype=">f4" if prec == "32" else ">f8",
                                  zlib_compressed=comp == "zlib", count=2 * n, limits=limits,
                                  source=source, line=line,
                                  what=f"scan {current['id']!r} peaks") if n else np.zeros(0)
            current["mz"], current["intensity"] = values[0::2], values[1::2]
        elif event == "end" and name == "scan":
            if current is not None and current["mz"] is None:
                raise SpectrumFormatError(f"scan {current['id']!r} has no <peaks>", source,
                                          current["line"])
            current = None
            elem.clear()
    if not scans:
        raise SpectrumFormatError("no <scan> in the mzXML file", source)
    return scans


def _scans_mgf(data: bytes, source: str) -> list[dict]:
    text = decode_text(data, source)
    scans: list[dict] = []
    block: dict | None = None
    for no, raw in enumerate(text.splitlines(), 1):
        line = raw.strip()
        if not line or line[0] in "#;!/":
            continue
        upper = line.upper()
        if upper == "BEGIN IONS":
            if block is not None:
                raise SpectrumFormatError("BEGIN IONS before the previous block's END IONS",
                                          source, no)
            block = {"index": len(scans), "id": str(len(scans) + 1), "line": no, "rt": None,
                     "ms_level": 2, "polarity": None, "centroid": True, "pairs": [],
                     "title": ""}
        elif upper == "END IONS":
            if block is None:
                raise SpectrumFormatError("END IONS without BEGIN IONS", source, no)
            pairs = np.array(block.pop("pairs"), float).reshape(-1, 2)
            block["mz"], block["intensity"] = pairs[:, 0], pairs[:, 1]
            scans.append(block)
            block = None
        elif block is None:
            if "=" not in line:
                raise SpectrumFormatError(f"{line[:40]!r} outside a BEGIN IONS block", source, no)
        elif "=" in line and not line[0].isdigit():
            key, val = (p.strip() for p in line.split("=", 1))
            key = key.upper()
            if key == "TITLE":
                block["title"] = val
                block["id"] = val or block["id"]
            elif key == "RTINSECONDS":
                try:
                    block["rt"] = float(val.split("-")[0]) / 60
                except ValueError:
                    raise SpectrumFormatError(f"RTINSECONDS={val!r} is not a number", source,
                                              no) from None
            elif key == "CHARGE" and val.strip().endswith("-"):
                block["polarity"] = "negative"
        else:
            parts = line.replace("\t", " ").split()
            try:
                mz, inten = float(parts[0]), float(parts[1]) if len(parts) > 1 else 1.0
            except (ValueError, IndexError):
                raise SpectrumFormatError(f"peak line {line[:40]!r} is not 'm/z intensity'",
                                          source, no) from None
            block["pairs"].append((mz, inten))
    if block is not None:
        raise SpectrumFormatError(f"the block begun at line {block['line']} has no END IONS",
                                  source, block["line"])
    if not scans:
        raise SpectrumFormatError("no BEGIN IONS ... END IONS block in the MGF file", source)
    return scans


def _blocks(scans: list[dict]) -> list[dict]:
    return [{"index": s["index"], "title": s.get("title") or f"scan {s['id']}", "id": s["id"],
             "retention_time_min": s["rt"], "ms_level": s["ms_level"]} for s in scans]


def _sum(chosen: list[dict]) -> tuple[np.ndarray, np.ndarray]:
    if len(chosen) == 1:
        return chosen[0]["mz"], chosen[0]["intensity"]
    if not all(s["centroid"] for s in chosen):  # profile: on the first scan's grid
        grid = chosen[0]["mz"]
        total = np.zeros(grid.size)
        for s in chosen:
            total += np.interp(grid, s["mz"], s["intensity"], left=0.0, right=0.0)
        return grid, total
    mz = np.concatenate([s["mz"] for s in chosen])
    inten = np.concatenate([s["intensity"] for s in chosen])
    order = np.argsort(mz, kind="stable")
    mz, inten = mz[order], inten[order]
    new = np.ones(mz.size, bool)
    new[1:] = np.diff(mz) > MERGE_PPM * 1e-6 * mz[1:]
    group = np.cumsum(new) - 1
    w = np.bincount(group, weights=inten)
    centre = np.bincount(group, weights=mz * inten) / np.where(w > 0, w, 1)
    plain = np.bincount(group, weights=mz) / np.bincount(group)
    return np.where(w > 0, centre, plain), w


def _choose(scans: list[dict], source: str, spectrum, retention_time, rt_range) -> list[dict]:
    given = [n for n, v in (("spectrum", spectrum), ("retention_time", retention_time),
                            ("rt_range", rt_range)) if v is not None]
    if len(given) > 1:
        raise SpectrumFormatError(f"give one of {', '.join(given)}, not several", source)
    ids = ", ".join(repr(s["id"]) for s in scans[:10]) + (" ..." if len(scans) > 10 else "")
    rts = [s["rt"] for s in scans if s["rt"] is not None]
    span = f"{min(rts):.3f}-{max(rts):.3f} min" if rts else "none stored"
    if retention_time is not None or rt_range is not None:
        if not rts:
            raise SpectrumFormatError("the file stores no retention times; choose with "
                                      f"spectrum= (0-based index or id: {ids})", source)
        if retention_time is not None:
            return [min((s for s in scans if s["rt"] is not None),
                        key=lambda s: abs(s["rt"] - float(retention_time)))]
        lo, hi = sorted(float(v) for v in rt_range)
        chosen = [s for s in scans if s["rt"] is not None and lo <= s["rt"] <= hi]
        if not chosen:
            raise SpectrumFormatError(f"no scan in rt_range {lo:g}-{hi:g} min; the file's "
                                      f"scans span {span}", source)
        return chosen
    if spectrum is None:
        return [scans[0]]
    if isinstance(spectrum, (int, np.integer)) and not isinstance(spectrum, bool):
        if 0 <= spectrum < len(scans):
            return [scans[int(spectrum)]]
    else:
        hit = [s for s in scans if s["id"] == str(spectrum)]
        if hit:
            return hit[:1]
    raise SpectrumFormatError(f"spectrum={spectrum!r} is not in the file; it holds "
                              f"{len(scans)} spectra (0-based index or id: {ids}; retention "
                              f"times {span})", source)


def _finish(scans, data, source, fmt, *, technique, spectrum, retention_time, rt_range,
            limits):
    tech = resolve_technique(technique, "mass", True, source, fmt)
    chosen = _choose(scans, source, spectrum, retention_time, rt_range)
    mz, inten = _sum(chosen)
    first = chosen[0]
    meta = {"source": source, "sha256": sha256(data), "format": fmt.lower(),
            "spectrum_id": first["id"], "spectrum_index": first["index"],
            "ms_level": first["ms_level"], "polarity": first["polarity"],
            "title": first.get("title") or f"scan {first['id']}",
            "retention_time_min": first["rt"], "centroid": all(s["centroid"] for s in chosen),
            "spectra_used": [s["id"] for s in chosen]}
    try:
        return build_spectrum(mz, inten, technique=tech, x_unit="m/z", y_unit="intensity",
                              kind="peaks" if meta["centroid"] else "profile", source=source,
                              meta=meta, max_points=limits.max_points)
    except SpectrumFormatError as exc:
        raise SpectrumFormatError(f"spectrum {first['id']!r}: {str(exc).split(': ', 1)[-1]}",
                                  source, first["line"]) from None


def parse_mzxml(data: bytes, source: str = BYTES_SOURCE, *, technique: str | None = None,
                spectrum=None, retention_time: float | None = None,
                rt_range: tuple[float, float] | None = None, max_points: int | None = None,
                limits: ReadLimits | None = None) -> Any:
    """Read one mass spectrum (or a sum over a retention-time range) from mzXML bytes."""
    limits = limits_for(limits, max_points)
    scans = _scans_mzxml(data, source, limits)
    return _finish(scans, data, source, "mzXML", technique=technique, spectrum=spectrum,
                   retention_time=retention_time, rt_range=rt_range, limits=limits)


def parse_mgf(data: bytes, source: str = BYTES_SOURCE, *, technique: str | None = None,
              spectrum=None, retention_time: float | None = None,
              rt_range: tuple[float, float] | None = None, max_points: int | None = None,
              limits: ReadLimits | None = None) -> Any:
    """Read one mass spectrum (or a sum over a retention-time range) from MGF bytes.

    Examples
    --------
    >>> s = parse_mgf(b"BEGIN IONS\\nTITLE=spot A1\\n719.99 100\\n720.99 66\\nEND IONS\\n")
    >>> s.kind, s.x.tolist(), s.meta["title"]
    ('peaks', [719.99, 720.99], 'spot A1')
    """
    limits = limits_for(limits, max_points)
    check_input_size(data, source, limits)
    scans = _scans_mgf(data, source)
    return _finish(scans, data, source, "MGF", technique=technique, spectrum=spectrum,
                   retention_time=retention_time, rt_range=rt_range, limits=limits)


def mzxml_blocks(data: bytes, source: str = BYTES_SOURCE, *, limits: ReadLimits | None = None,
                 **_: Any) -> list[dict]:
    """The scans of an mzXML file (index, id, title, retention time, MS level)."""
    return _blocks(_scans_mzxml(data, source, limits_for(limits, None)))


def mgf_blocks(data: bytes, source: str = BYTES_SOURCE, **_: Any) -> list[dict]:
    """The BEGIN IONS blocks of an MGF file (index, id/TITLE, retention time)."""
    return _blocks(_scans_mgf(data, source))


def sniff_mzxml(head: bytes) -> float:
    """Confidence that ``head`` starts an mzXML file."""
    return 1.0 if b"<mzXML" in head[:4096] or b"<msRun" in head[:4096] else 0.0


def sniff_mgf(head: bytes) -> float:
    """Confidence that ``head`` starts an MGF file."""
    return 0.95 if re.search(rb"(?m)^\s*BEGIN IONS\s*$", head[:4096]) else 0.0
