"""Raw 1D NMR experiment folders (Bruker and Varian/Agilent layouts), as folders or zips.

A Bruker experiment folder holds ``fid`` and ``acqus`` (plus ``pdata/N/1r`` and
``procs`` once processed); a Varian/Agilent one holds ``fid`` and ``procpar``.  The
parameter files are read with nmrglue (J. J. Helmus and C. P. Jaroniec, "Nmrglue: an
open source Python package for the analysis, visualization and manipulation of NMR
data", J. Biomol. NMR 55, 355 (2013)); the binary data are read here with numpy after
their size and byte order are checked, so a truncated or mislabelled file is refused
by name rather than read as noise.  The FID is processed by
:func:`cageprint.spectra.fid.process_fid` with the settings given (every number used
goes into ``meta["processing"]``); the processed ``1r`` is read instead when asked.

Zips (what a browser upload gives) are unpacked into a temporary folder after every
member name is checked (no absolute paths, no ``..``) and the unpacked size is
budgeted.
"""

from __future__ import annotations

import datetime as _dt
import io
import math
import tempfile
import zipfile
from pathlib import Path
from typing import Any

import numpy as np

from ...errors import SpectrumError, SpectrumFormatError
from ..fid import Acquisition, FidProcessing, process_fid
from ._common import build_spectrum, sha256

__all__ = ["read_nmr_folder", "parse_nmr_zip", "sniff_zip", "find_experiments",
           "is_experiment_folder", "MAX_ZIP_BYTES"]

#: the most bytes a zipped experiment may unpack to
MAX_ZIP_BYTES = 1_000_000_000
_BRUKER_DTYPE = {0: "i4", 2: "f8"}


def is_experiment_folder(path: Path) -> bool:
    """True for a folder that holds a Bruker or Varian experiment (or a Bruker ``pdata/N``)."""
    return path.is_dir() and any((path / f).is_file() for f in ("acqus", "procpar", "procs"))


def find_experiments(path: Path) -> list[Path]:
    """The experiment folders at ``path``: itself, or its subfolders (two levels down)."""
    if is_experiment_folder(path):
        return [path]
    found = [p for p in sorted(path.iterdir()) if is_experiment_folder(p)]
    if not found:
        found = [q for p in sorted(path.iterdir()) if p.is_dir()
                 for q in sorted(p.iterdir()) if is_experiment_folder(q)]
    return found


def _name(folder: Path, file: str, shown: str | None) -> str:
    return f"{shown or folder}/{file}" if file else str(shown or folder)


def _params(path: Path, shown: str, reader) -> dict:
    try:
        dic = reader(str(path))
    except Exception as exc:  # nmrglue raises plain exceptions of many kinds
        raise SpectrumFormatError(f"cannot read the parameter file: {exc}", shown) from None
    if not isinstance(dic, dict) or not dic:
        raise SpectrumFormatError("the parameter file holds no parameters", shown)
    return dic


def _number(dic: dict, key: str, shown: str, default: float | None = None) -> float:
    val = dic.get(key, default)
    if isinstance(val, list):  # Varian procpar: {"values": [...]} already unpacked
        val = val[0] if val else default
    try:
        out = float(val)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        if default is None:
            raise SpectrumFormatError(f"parameter {key} is missing or not a number "
                                      f"(got {val!r})", shown) from None
        return float(default)
    if not math.isfinite(out):
        raise SpectrumFormatError(f"parameter {key}={val!r} is not finite", shown)
    return out


def _text(dic: dict, key: str) -> str:
    val = dic.get(key, "")
    if isinstance(val, list):
        val = val[0] if val else ""
    return str(val).strip().strip("<>").strip()


def _binary(path: Path, shown: str, dtype: str, big: bool, count: int) -> np.ndarray:
    """``count`` values of ``dtype`` from ``path``, checked for length and byte order."""
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise SpectrumFormatError(f"cannot read: {exc.strerror}", shown) from None
    item = np.dtype(dtype).itemsize
    if len(raw) < count * item:
        raise SpectrumFormatError(
            f"the file holds {len(raw)} bytes but the parameters call for {count} values of "
            f"{item} bytes ({count * item} bytes): truncated, or the wrong parameters", shown)
    data = np.frombuffer(raw, dtype=(">" if big else "<") + dtype, count=count)
    if dtype.startswith("i") and count >= 64:
        swapped = data.byteswap()
        here = np.median(np.abs(data.astype(float)))
        there = np.median(np.abs(swapped.astype(float)))
        if here > 2.0**26 and there < here * 1e-3:
            raise SpectrumFormatError(
                f"the values look byte-swapped: the parameters say {'big' if big else 'little'}"
                "-endian, but the data read sensibly the other way round (BYTORDA/BYTORDP wrong,"
                " or the file was copied from another machine's format)", shown)
    if not np.isfinite(data).all():
        raise SpectrumFormatError("the data hold non-finite values (wrong byte order or "
                                  "number type?)", shown)
    return data


def _bruker_date(acqus: dict) -> str:
    try:
        return _dt.datetime.fromtimestamp(float(acqus.get("DATE")), _dt.timezone.utc).isoformat()
    except (TypeError, ValueError, OverflowError, OSError):
        return ""


def _read_bruker(folder: Path, shown: str, solvent: str | None, group_delay: float | None):
    import nmrglue as ng  # heavy import, only for raw folders

    if (folder / "acqu2s").is_file() or ((folder / "ser").is_file()
                                          and not (folder / "fid").is_file()):
        raise SpectrumFormatError("a 2D experiment (acqu2s or ser found); cageprint reads 1D "
                                  "13C experiments: give the 1D experiment's folder",
                                  _name(folder, "acqu2s" if (folder / "acqu2s").is_file()
                                        else "ser", shown))
    acqus = _params(folder / "acqus", _name(folder, "acqus", shown), ng.bruker.read_jcamp)
    where = _name(folder, "acqus", shown)
    td = int(_number(acqus, "TD", where))
    if td < 32 or td % 2:
        raise SpectrumFormatError(f"TD={td} is not an even number of points >= 32", where)
    sw = _number(acqus, "SW_h", where)
    bf1 = _number(acqus, "BF1", where)
    sfo1 = _number(acqus, "SFO1", where, default=bf1 + _number(acqus, "O1", where, 0.0) / 1e6)
    aq_mod = int(_number(acqus, "AQ_mod", where, 3))
    if aq_mod in (0, 2):
        raise SpectrumFormatError(f"AQ_mod={aq_mod}: single-channel (real) detection is not "
                                  "supported; cageprint needs quadrature (DQD/qsim) data", where)
    dtypa = int(_number(acqus, "DTYPA", where, 0))
    if dtypa not in _BRUKER_DTYPE:
        raise SpectrumFormatError(f"DTYPA={dtypa}: unknown number type (0 int32, 2 float64)",
                                  where)
    fid_path = folder / "fid"
    if not fid_path.is_file():
        raise SpectrumFormatError("no fid file in the experiment folder", _name(folder, "fid",
                                                                                   shown))
    raw = _binary(fid_path, _name(folder, "fid", shown), _BRUKER_DTYPE[dtypa],
                  int(_number(acqus, "BYTORDA", where, 0)) == 1, td)
    fid = raw[0::2].astype(float) + 1j * raw[1::2].astype(float)
    sf = bf1
    procs_path = folder / "pdata" / "1" / "procs"
    if procs_path.is_file():  # SF carries the referencing (BF1 + SR)
        procs = _params(procs_path, _name(folder, "pdata/1/procs", shown), ng.bruker.read_jcamp)
        sf = _number(procs, "SF", _name(folder, "pdata/1/procs", shown), bf1)
    if group_delay is None:
        group_delay = _number(acqus, "GRPDLY", where, -1.0)
        if group_delay < 0:  # older consoles: from the decimation and DSP firmware tables
            decim, dspfvs = int(_number(acqus, "DECIM", where, 1)), int(
                _number(acqus, "DSPFVS", where, 0))
            group_delay = float(ng.bruker.bruker_dsp_table.get(dspfvs, {}).get(decim, 0.0))
    acq = Acquisition(sw_hz=sw, sf_mhz=sf, carrier_offset_hz=(sfo1 - sf) * 1e6,
                      group_delay=group_delay, nucleus=_text(acqus, "NUC1") or "13C",
                      solvent=solvent or _text(acqus, "SOLVENT"), date=_bruker_date(acqus),
                      vendor="bruker")
    return fid, acq


def _read_varian(folder: Path, shown: str, solvent: str | None):
    import nmrglue as ng  # heavy import (~1 s), only for raw folders

    where = _name(folder, "procpar", shown)
    pp = _params(folder / "procpar", where, ng.varian.read_procpar)
    vals = {k: v.get("values", []) for k, v in pp.items() if isinstance(v, dict)}
    fid_path = folder / "fid"
    fshown = _name(folder, "fid", shown)
    if not fid_path.is_file():
        raise SpectrumFormatError("no fid file in the experiment folder", fshown)
    head = fid_path.read_bytes()[:32]
    if len(head) < 32:
        raise SpectrumFormatError(f"the file header needs 32 bytes, the file has {len(head)}",
                                  fshown)
    nblocks, ntraces, npts, ebytes, tbytes, bbytes = np.frombuffer(head[:24], ">i4")
    if not (0 < nblocks < 1e6 and 0 < ntraces < 1e6 and 0 < npts < 1e8 and ebytes in (2, 4)
            and tbytes == npts * ebytes and bbytes >= ntraces * tbytes):
        raise SpectrumFormatError(
            f"the file header is not a Varian/Agilent FID header (blocks {nblocks}, traces "
            f"{ntraces}, points {npts}, bytes per value {ebytes}): damaged, or not big-endian",
            fshown)
    if nblocks * ntraces > 1 or _number(vals, "ni", where, 1) > 1:
        raise SpectrumFormatError(f"{nblocks * ntraces} FIDs in one file (an arrayed or 2D "
                                  "experiment); cageprint reads one 1D 13C FID", fshown)
    need = 32 + int(nblocks) * int(bbytes)
    size = fid_path.stat().st_size
    if size < need:
        raise SpectrumFormatError(f"the file holds {size} bytes but its header calls for "
                                  f"{need}: truncated", fshown)
    try:
        _, data = ng.varian.read(str(folder))
    except Exception as exc:
        raise SpectrumFormatError(f"cannot read the FID: {exc}", fshown) from None
    fid = np.asarray(data, dtype=complex).reshape(-1)
    sw = _number(vals, "sw", where)
    sfrq = _number(vals, "sfrq", where)
    rfl, rfp = vals.get("rfl"), vals.get("rfp")
    referenced = bool(rfl) and bool(rfp)
    offset = (sw / 2 - _number(vals, "rfl", where, 0.0) + _number(vals, "rfp", where, 0.0)
              if referenced else 0.0)
    acq = Acquisition(sw_hz=sw, sf_mhz=sfrq, carrier_offset_hz=offset,
                      nucleus=_text(vals, "tn") or "13C",
                      solvent=solvent or _text(vals, "solvent"),
                      date=_text(vals, "time_complete") or _text(vals, "date"),
                      vendor="varian", referenced=referenced)
    return fid, acq


def _read_processed(folder: Path, shown: str, pdata: int):
    import nmrglue as ng  # heavy import (~1 s), only for raw folders

    pdir = folder if (folder / "procs").is_file() else folder / "pdata" / str(pdata)
    pshown = _name(folder, "" if pdir == folder else f"pdata/{pdata}", shown)
    if not (pdir / "procs").is_file():
        raise SpectrumFormatError("no processed spectrum here (pdata/N/procs missing); read "
                                  "the FID instead (processed=False)", _name(pdir, "procs",
                                                                             pshown))
    where = f"{pshown}/procs"
    procs = _params(pdir / "procs", where, ng.bruker.read_jcamp)
    si = int(_number(procs, "SI", where))
    sf, off, swp = (_number(procs, k, where) for k in ("SF", "OFFSET", "SW_p"))
    dtypp = int(_number(procs, "DTYPP", where, 0))
    if si < 16 or dtypp not in _BRUKER_DTYPE:
        raise SpectrumFormatError(f"SI={si}, DTYPP={dtypp}: not a readable 1D spectrum", where)
    if not (pdir / "1r").is_file():
        raise SpectrumFormatError("no 1r file (the processed real spectrum)", f"{pshown}/1r")
    real = _binary(pdir / "1r", f"{pshown}/1r", _BRUKER_DTYPE[dtypp],
                   int(_number(procs, "BYTORDP", where, 0)) == 1, si).astype(float)
    real = real * 2.0 ** _number(procs, "NC_proc", where, 0.0)
    ppm = off - np.arange(si) * (swp / sf) / si
    meta = {"processing": {"from": "1r", "SI": si, "SF": sf, "OFFSET": off, "SW_p": swp},
            "observe_mhz": sf, "nucleus": "13C"}
    return ppm, real, meta


def read_nmr_folder(path: str | Path, *, technique: str | None = None,
                    processing: FidProcessing | dict | None = None, processed: bool = False,
                    experiment: str | None = None, pdata: int = 1, solvent: str | None = None,
                    group_delay: float | None = None, source: str | None = None,
                    **_ignored: Any):
    """Read a raw 1D 13C experiment folder and process it into a Spectrum.

    Parameters
    ----------
    path : str or Path
        The experiment folder, or a folder holding experiments (then ``experiment=``
        names one when there are several).
    processing : FidProcessing or dict, optional
        Processing settings (a dict of :class:`~cageprint.spectra.fid.FidProcessing`
        fields is accepted); defaults when None.
    processed : bool
        Read the stored processed spectrum (Bruker ``pdata/<pdata>/1r``) instead.
    solvent : str, optional
        Overrides the solvent stored in the parameters.
    group_delay : float, optional
        Overrides the digital filter's delay (points).
    source : str, optional
        The name used in messages and ``meta["source"]``.

    Returns
    -------
    Spectrum
        13C NMR on ppm; ``meta`` carries ``observe_mhz``, ``solvent``, ``nucleus``,
        ``acquired``, ``vendor``, ``format="nmr-folder"`` and ``processing`` (every
        setting and the phase and reference actually used).
    """
    folder = Path(path)
    shown = source or str(folder)
    if not folder.exists():
        raise SpectrumFormatError("no such folder", shown)
    exps = find_experiments(folder)
    if experiment is not None:
        exps = [e for e in exps if e.name == str(experiment) or e == folder / str(experiment)]
    if not exps:
        raise SpectrumFormatError(
            "no NMR experiment here: a Bruker folder needs acqus and fid, a Varian/Agilent "
            "folder procpar and fid" + (f" (no experiment named {experiment!r})"
                                        if experiment is not None else ""), shown)
    if len(exps) > 1:
        raise SpectrumFormatError(
            f"{len(exps)} experiments here ({', '.join(e.name for e in exps[:12])}); "
            "choose one with experiment=", shown)
    exp = exps[0]
    eshown = shown if exp == folder else f"{shown}/{exp.relative_to(folder)}"
    if technique not in (None, "nmr"):
        raise SpectrumFormatError(f"an NMR experiment folder cannot be read as {technique}",
                                  eshown)
    if processed or ((exp / "procs").is_file() and not (exp / "fid").is_file()):
        ppm, real, meta = _read_processed(exp, eshown, pdata)
        meta["vendor"] = "bruker"
    else:
        if (exp / "acqus").is_file():
            fid, acq = _read_bruker(exp, eshown, solvent, group_delay)
        elif (exp / "procpar").is_file():
            fid, acq = _read_varian(exp, eshown, solvent)
        else:
            raise SpectrumFormatError("neither acqus (Bruker) nor procpar (Varian/Agilent) "
                                      "found", eshown)
        if acq.nucleus.upper() not in ("13C", "C13"):
            raise SpectrumFormatError(f"the observed nucleus is {acq.nucleus}, not 13C", eshown)
        settings = (FidProcessing(**processing) if isinstance(processing, dict)
                    else processing or FidProcessing())
        try:
            out = process_fid(fid, acq, settings)
        except SpectrumError as exc:
            raise SpectrumFormatError(f"processing failed: {exc}", eshown) from None
        ppm, real = out.ppm, out.real
        meta = {"processing": out.diagnostics, "observe_mhz": acq.sf_mhz,
                "nucleus": "13C", "vendor": acq.vendor, "acquired": acq.date}
        if acq.solvent:
            meta["solvent"] = acq.solvent
    meta.update({"source": eshown, "format": "nmr-folder", "title": exp.name})
    digest = sha256(b"".join(sorted(f.name.encode() + f.read_bytes()[:1 << 20]
                                    for f in exp.iterdir() if f.is_file())))
    meta["sha256"] = digest
    return build_spectrum(ppm, real, technique="nmr", x_unit="ppm", y_unit="intensity",
                          kind="profile", source=eshown, meta=meta,
                          observe_mhz=meta.get("observe_mhz"), check_order=False)


def sniff_zip(head: bytes) -> float:
    """A zip archive (what an upload of a folder gives)."""
    return 0.6 if head.startswith(b"PK\x03\x04") else 0.0


def parse_nmr_zip(data: bytes, source: str = "<bytes>", **options: Any):
    """Unpack a zipped experiment folder safely and read it with :func:`read_nmr_folder`."""
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
    except zipfile.BadZipFile as exc:
        raise SpectrumFormatError(f"not a readable zip archive: {exc}", source) from None
    with zf, tempfile.TemporaryDirectory(prefix="cageprint-zip-") as tmp:
        total = 0
        for info in zf.infolist():
            name = info.filename
            if name.startswith(("/", "\\")) or ".." in Path(name).parts or ":" in name:
                raise SpectrumFormatError(f"unsafe member name {name!r} (absolute or with "
                                          "'..'); refusing to unpack", source)
            total += info.file_size
            if total > MAX_ZIP_BYTES:
                raise SpectrumFormatError(f"unpacks to more than MAX_ZIP_BYTES={MAX_ZIP_BYTES}",
                                          source)
        try:
            zf.extractall(tmp)
        except (zipfile.BadZipFile, OSError, EOFError, ValueError) as exc:
            raise SpectrumFormatError(f"cannot unpack: {exc}", source) from None
        root = Path(tmp)
        kids = [p for p in root.iterdir() if not p.name.startswith("__MACOSX")]
        if len(kids) == 1 and kids[0].is_dir() and not is_experiment_folder(root):
            root = kids[0]
        spec = read_nmr_folder(root, source=source, **options)
    return spec
