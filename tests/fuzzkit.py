"""Seeded mutation fuzzing of the readers: seed files per family, mutations, invariants.

Shared by the hypothesis property tests (tests/test_fuzz_readers.py) and the long
campaign (tests/benchmarks/fuzz_campaign.py).  A reader given any input must end in
the kit's error (a CageprintError) or return a spectrum that passes
:func:`invariant_violations`.  Source for all: common practice, no source (mutation
fuzzing; the invariants restate the Spectrum contract in DEVELOPERS.md).

A new reader family joins by adding an entry to ``FAMILIES`` (format name and a
function returning its seed inputs).
"""

from __future__ import annotations

import base64
import zlib

import numpy as np

from cageprint.errors import CageprintError
from cageprint.spectra import Spectrum, load_spectrum, write_csv, write_jcamp, write_jcamp_link
from cageprint.spectra.model import TECHNIQUES
from cageprint.spectra.readers._common import MAX_POINTS, PHYSICAL_X_RANGE


def _ir(n=301, seed=0):
    rng = np.random.default_rng(seed)
    x = np.arange(n) * 2.0 + 400.0
    y = np.round(rng.random(n), 3) + np.exp(-((x - 527) / 4) ** 2)
    return Spectrum(x, y, technique="ir", y_unit="absorbance")


def _nmr():
    x = np.linspace(120.0, 160.0, 401)
    y = np.exp(-((x - 143.1) / 0.05) ** 2) + 0.5 * np.exp(-((x - 147.5) / 0.05) ** 2)
    return Spectrum(x, y, technique="nmr", meta={"observe_mhz": 125.0})


def jcamp_seeds() -> list[bytes]:
    s = _ir()
    flat = Spectrum(s.x, np.where(s.x > 900, 0.0, s.y), technique="ir")  # long DUP runs
    peaks = Spectrum([527.0, 577.0, 1183.0, 1429.0], [1.0, 0.5, 0.3, 0.4], technique="ir",
                     kind="peaks", widths=[3.0, 4.0, 2.0, 5.0])
    out = [write_jcamp(s, form=f, yfactor=1e-3) for f in ("AFFN", "PAC", "SQZ", "DIF", "DUP")]
    out += [write_jcamp(flat, form="DUP", yfactor=1e-3), write_jcamp(s, form="XYPOINTS"),
            write_jcamp(peaks, form="PEAK TABLE"),
            write_jcamp_link([s, peaks], forms=["DIF", None], yfactor=1e-3)]
    nmr = write_jcamp(_nmr(), form="DIF", yfactor=1e-4)
    out.append(nmr.replace(b"##XUNITS", b"##.SHIFT REFERENCE=(INTERNAL, CS2, 101, 130.0)\n"
                           b"##XUNITS"))
    return out


def delimited_seeds() -> list[bytes]:
    s = _ir(101)
    uv = Spectrum(np.linspace(300, 800, 101), np.linspace(1, 0, 101), technique="uvvis")
    return [
        write_csv(s), write_csv(s, delimiter=";", decimal=","), write_csv(s, delimiter="\t"),
        write_csv(uv, comments=["title: fraction B", "solvent: toluene"]),
        b"energy (eV),absorbance\n" + b"".join(b"%.3f,%.3f\n" % (1.5 + i / 50, i / 99)
                                                for i in range(100)),
        b"wavelength (um)\tabsorbance\n" + b"".join(b"%.2f\t%.3f\n" % (2.5 + i / 10, i / 99)
                                                   for i in range(100)),
        b"# 13C, 125.0 MHz\nppm,intensity\n" + b"".join(b"%.2f,%d\n" % (120 + i / 10, i % 7)
                                                       for i in range(200)),
    ]


def peaklist_seeds() -> list[bytes]:
    return [
        b"ppm intensity width\n143.1 5 0.02\n147.5 10 0.02\n144.8 9 0.03\n",
        b"# C70 lines\nshift (ppm);height\n150,07;10\n147,52;20\n146,82;20\n145,28;10\n",
        b"m/z,intensity\n719.9995,100\n721.0028,65\n839.9995,30\n",
        b"wavenumber (cm-1)\tabsorbance\twidth (cm-1)\n527\t1\t3\n577\t0.5\t4\n1183\t0.3\t2\n",
    ]


def _mzml_array(a, accession, name, dtype="<f8", compress=True):
    raw = np.asarray(a).astype(dtype).tobytes()
    b = base64.b64encode(zlib.compress(raw) if compress else raw).decode()
    prec = "MS:1000523\" name=\"64-bit float" if dtype == "<f8" else \
        "MS:1000521\" name=\"32-bit float"
    comp = ("MS:1000574\" name=\"zlib compression" if compress else
            "MS:1000576\" name=\"no compression")
    return (f'<binaryDataArray encodedLength="{len(b)}">\n'
            f'<cvParam cvRef="MS" accession="{prec}"/>\n'
            f'<cvParam cvRef="MS" accession="{comp}"/>\n'
            f'<cvParam cvRef="MS" accession="{accession}" name="{name}"/>\n'
            f"<binary>{b}</binary>\n</binaryDataArray>\n")


def mzml_document(spectra, *, indexed=False, dtype="<f8", compress=True) -> bytes:
    """A small mzML 1.1 document (HUPO-PSI structure) with the given (id, mz, y, centroid)."""
    body = [f'<run id="r"><spectrumList count="{len(spectra)}">\n']
    for k, (sid, mz, y, centroid) in enumerate(spectra):
        body.append(
            f'<spectrum index="{k}" id="{sid}" defaultArrayLength="{len(mz)}">\n'
            '<cvParam cvRef="MS" accession="MS:1000511" name="ms level" value="1"/>\n'
            + ('<cvParam cvRef="MS" accession="MS:1000127" name="centroid spectrum"/>\n'
               if centroid else
               '<cvParam cvRef="MS" accession="MS:1000128" name="profile spectrum"/>\n')
            + '<cvParam cvRef="MS" accession="MS:1000130" name="positive scan"/>\n'
            f'<cvParam cvRef="MS" accession="MS:1000796" name="spectrum title" value="{sid}"/>\n'
            '<binaryDataArrayList count="2">\n'
            + _mzml_array(mz, "MS:1000514", "m/z array", dtype, compress)
            + _mzml_array(y, "MS:1000515", "intensity array", dtype, compress)
            + "</binaryDataArrayList>\n</spectrum>\n")
    body.append("</spectrumList></run>\n")
    doc = ('<mzML xmlns="http://psi.hupo.org/ms/mzml" version="1.1.0">\n'
           + "".join(body) + "</mzML>\n")
    if indexed:
        doc = ('<indexedmzML xmlns="http://psi.hupo.org/ms/mzml">\n' + doc
               + "<indexListOffset>0</indexListOffset>\n</indexedmzML>\n")
    return ('<?xml version="1.0" encoding="utf-8"?>\n' + doc).encode()


def mzml_seeds() -> list[bytes]:
    mz = np.linspace(715.0, 730.0, 151)
    prof = 1000 * np.exp(-0.5 * ((mz - 720.0) / 0.05) ** 2) + 5
    cen = (np.array([719.99945, 721.0028, 839.99945]), np.array([100.0, 65.0, 30.0]))
    return [
        mzml_document([("scan=1", mz, prof, False), ("scan=2", *cen, True)]),
        mzml_document([("scan=1", mz, prof, False)], indexed=True, dtype="<f4"),
        mzml_document([("scan=1", *cen, True)], compress=False),
    ]


#: family -> (format passed to load_spectrum, seed function)
FAMILIES = {
    "jcamp": ("jcamp", jcamp_seeds),
    "delimited": ("delimited", delimited_seeds),
    "peaklist": ("peaklist", peaklist_seeds),
    "mzml": ("mzml", mzml_seeds),
}

#: tokens that have broken readers before (issue 14), spliced in by the mutator
DICTIONARY = [
    b"S99999999", b"Z.5", b"s9", b"9" * 400, b"1" * 5000, b"1e400", b"-1e308", b"nan", b"inf",
    b"@", b"?", b"%", b"E-3", b"##XYDATA=(X++(Y..Y))\n", b"##NPOINTS=1e400\n",
    b"##YFACTOR=", b"##END=\n", b"##TITLE=x\n", b"##XUNITS=HZ\n", b"##FIRSTY=", b"$$",
    b"<!DOCTYPE x [<!ENTITY a \"aaaa\">]>", b"&a;", b"</spectrum>", b"<binary>", b"</binary>",
    b"<spectrum index=\"0\" id=\"x\" defaultArrayLength=\"99999999\">", b"eJzt", b"AAAA",
    b"count=\"7\"", b"\xff\xfe", b"\x00", b"\r", b"\t", b";", b",", b"-", b"(eV)", b"(um)",
    b"(Hz)", b"ppm", b"\xc3\xa9",
]


def mutate(rng: np.random.Generator, data: bytes, ops: int | None = None) -> bytes:
    """Apply 1-5 random edits: replace, delete, insert random bytes or a dictionary token,
    truncate, duplicate a slice."""
    d = bytearray(data)
    for _ in range(ops or int(rng.integers(1, 6))):
        i = int(rng.integers(0, max(len(d), 1)))
        op = int(rng.integers(0, 6))
        if op == 0 and d:
            d[i] = int(rng.integers(0, 256))
        elif op == 1:
            del d[i:i + int(rng.integers(1, 40))]
        elif op == 2:
            d[i:i] = bytes(rng.integers(0, 256, int(rng.integers(1, 8)), dtype=np.uint8))
        elif op == 3:
            d[i:i] = DICTIONARY[int(rng.integers(0, len(DICTIONARY)))]
        elif op == 4:
            d = d[:i]
        else:
            j = int(rng.integers(0, max(len(d), 1)))
            a, b = min(i, j), max(i, j)
            d[a:a] = d[a:min(b, a + 4000)]
    return bytes(d)


def invariant_violations(s) -> list[str]:
    """What is wrong with a spectrum a reader returned (empty when it keeps its contract)."""
    bad = []
    if not isinstance(s, Spectrum):
        return [f"returned {type(s).__name__}, not a Spectrum"]
    x, y = s.x, s.y
    if s.technique not in TECHNIQUES:
        bad.append(f"technique {s.technique!r}")
    elif s.x_unit != TECHNIQUES[s.technique]:
        bad.append(f"x unit {s.x_unit!r} for {s.technique}")
    if x.dtype != float or y.dtype != float or x.ndim != 1 or x.shape != y.shape:
        bad.append("x/y not equal-length float64 vectors")
    elif x.flags.writeable or y.flags.writeable:
        bad.append("arrays are writeable")
    if not (np.isfinite(x).all() and np.isfinite(y).all()):
        bad.append("non-finite values")
    if not 1 <= x.size <= MAX_POINTS:
        bad.append(f"{x.size} points")
    if s.kind == "profile" and (x.size < 2 or np.any(np.diff(x) <= 0)):
        bad.append("profile x not strictly increasing with >= 2 points")
    if s.kind == "peaks" and np.unique(x).size != x.size:
        bad.append("repeated peak positions")
    if s.technique in PHYSICAL_X_RANGE and x.size:
        lo, hi = PHYSICAL_X_RANGE[s.technique]
        if x.min() < lo or x.max() > hi:
            bad.append(f"x outside {lo}..{hi} {s.x_unit}")
    if s.widths is not None and (s.widths.shape != x.shape or not np.isfinite(s.widths).all()
                                 or np.any(s.widths < 0)):
        bad.append("bad widths")
    for key in ("source", "sha256", "format"):
        if key not in s.meta:
            bad.append(f"meta lacks {key!r}")
    return bad


def run_one(data: bytes, fmt: str) -> tuple[str, str]:
    """Read one input -> ("ok" | "kit-error" | "violation" | "foreign", detail)."""
    try:
        s = load_spectrum(data, format=fmt)
    except CageprintError as exc:
        return "kit-error", type(exc).__name__
    except Exception as exc:  # noqa: BLE001 - what the fuzzing is looking for
        return "foreign", f"{type(exc).__name__}: {str(exc)[:200]}"
    bad = invariant_violations(s)
    return ("violation", "; ".join(bad)) if bad else ("ok", s.kind)
