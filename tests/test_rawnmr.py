"""Raw 1D 13C experiment folders: Bruker and Varian/Agilent layouts, zips, FID processing.

Sources: the signals are invented (tests/rawnmr_fixtures.py) and written by nmrglue's own
writers; the processing steps (group-delay removal, apodisation, zero filling, Fourier
transform, phase, baseline, referencing) are standard practice, no source.  The C6D6
line at 128.06 ppm is from Fulmer et al., Organometallics 29, 2176 (2010); its J(C,D)
of 24.3 Hz from memory.
"""

from __future__ import annotations

import io
import shutil
import zipfile

import numpy as np
import pytest

import rawnmr_fixtures as R
from cageprint.errors import SpectrumFormatError
from cageprint.spectra.fid import FidProcessing
from cageprint.spectra.readers import load_spectrum

pytest.importorskip("nmrglue")

ISOLATED = (150.10, 147.30, 142.10, 138.00, 133.40)


def _apex(spec, ppm, half=0.006):
    m = (spec.x > ppm - half) & (spec.x < ppm + half)
    j = np.flatnonzero(m)[np.argmax(spec.y[m])]
    return float(spec.x[j])


def _area(spec, ppm, half_hz=15.0, mhz=125.7):
    m = np.abs(spec.x - ppm) <= half_hz / mhz
    return float(np.sum(spec.y[m]))


def _check_lines(spec, sig):
    step = float(np.median(np.diff(spec.x)))
    for ppm, _ in sig.all_lines():  # positions within one digital point
        assert abs(_apex(spec, ppm) - ppm) <= step, (ppm, _apex(spec, ppm))
    ref = _area(spec, ISOLATED[0])
    truth = dict(sig.lines)
    for ppm in ISOLATED[1:]:  # relative integrals within 3 %
        ratio = _area(spec, ppm) / ref
        assert ratio == pytest.approx(truth[ppm] / truth[ISOLATED[0]], rel=0.03), ppm
    p = spec.meta["processing"]
    for ppm, _ in sig.all_lines():  # phase within 5 degrees where there is signal
        f = (ppm - sig.carrier_ppm) * sig.mhz
        x = 0.5 - f / sig.sw_hz
        err = (p["p0"] + p["p1"] * x + sig.phase_error_deg(ppm) + 180) % 360 - 180
        assert abs(err) < 5, (ppm, err)


@pytest.mark.parametrize("group_delay", [0.0, 76.0])
def test_bruker_fid_gives_the_lines_back(tmp_path, group_delay):
    sig = R.Signal(group_delay=group_delay)
    spec = load_spectrum(R.write_bruker(tmp_path / "10", sig))
    assert spec.technique == "nmr" and spec.meta["format"] == "nmr-folder"
    assert spec.meta["solvent"] == "C6D6" and spec.meta["observe_mhz"] == pytest.approx(125.7)
    assert spec.meta["processing"]["group_delay"] == group_delay
    _check_lines(spec, sig)


def test_varian_fid_gives_the_lines_back(tmp_path):
    sig = R.Signal(p0=-70.0, p1=15.0, mhz=100.6)
    spec = load_spectrum(R.write_varian(tmp_path / "c13.fid", sig))
    assert spec.meta["vendor"] == "varian" and spec.meta["solvent"] == "C6D6"
    step = float(np.median(np.diff(spec.x)))
    for ppm, _ in sig.all_lines():
        assert abs(_apex(spec, ppm) - ppm) <= step


def test_float64_bruker_fid(tmp_path):
    sig = R.Signal(seed=3)
    _check_lines(load_spectrum(R.write_bruker(tmp_path / "2", sig, float64=True)), sig)


def test_close_pair_stays_resolved_with_default_broadening(tmp_path):
    spec = load_spectrum(R.write_bruker(tmp_path / "1", R.Signal()))
    m = (spec.x > 144.97) & (spec.x < 145.02)
    y = spec.y[m]
    peaks = [i for i in range(1, y.size - 1) if y[i] > y[i - 1] and y[i] >= y[i + 1]
             and y[i] > 0.3 * y.max()]
    assert len(peaks) == 2  # 0.012 ppm = 1.5 Hz at 125.7 MHz, lines 0.8 Hz wide


def test_heavy_broadening_merges_the_pair_and_is_recorded(tmp_path):
    spec = load_spectrum(R.write_bruker(tmp_path / "1", R.Signal()),
                         processing={"line_broadening_hz": 5.0})
    assert spec.meta["processing"]["settings"]["line_broadening_hz"] == 5.0
    m = (spec.x > 144.95) & (spec.x < 145.04)
    y = spec.y[m]
    assert sum(1 for i in range(1, y.size - 1) if y[i] > y[i - 1] and y[i] >= y[i + 1]
               and y[i] > 0.3 * y.max()) == 1


def test_manual_phase_is_used_as_given(tmp_path):
    folder = R.write_bruker(tmp_path / "1", R.Signal())
    spec = load_spectrum(folder, processing=FidProcessing(phase="manual", p0=-37.0, p1=25.0))
    p = spec.meta["processing"]
    assert (p["p0"], p["p1"], p["phase_mode"]) == (-37.0, 25.0, "manual")
    assert spec.y[np.argmax(np.abs(spec.y))] > 0


def test_solvent_referencing_moves_a_misreferenced_axis_back(tmp_path):
    # the stored frequencies put every line 0.3 ppm too high (a wrong reference frequency)
    sig = R.Signal()
    folder = R.write_bruker(tmp_path / "1", sig, )
    acqus = (folder / "acqus").read_text()
    off = sig.mhz + sig.carrier_ppm * sig.mhz / 1e6 + 0.3 * sig.mhz / 1e6
    lines = [ln if not ln.startswith("##$SFO1=") else f"##$SFO1= {off!r}"
             for ln in acqus.splitlines()]
    (folder / "acqus").write_text("\n".join(lines) + "\n")
    raw = load_spectrum(folder)
    assert _apex(raw, 150.4, half=0.02) == pytest.approx(150.4, abs=0.01)
    fixed = load_spectrum(folder, processing={"reference": "solvent"})
    assert fixed.meta["processing"]["reference_offset_ppm"] == pytest.approx(-0.3, abs=0.005)
    assert _apex(fixed, 150.10) == pytest.approx(150.10, abs=0.005)


def test_processed_1r_and_fid_agree(tmp_path):
    import nmrglue as ng

    folder = R.write_bruker(tmp_path / "1", R.Signal())
    spec = load_spectrum(folder)
    y = spec.y[::-1]  # 1r runs from high ppm to low
    si = y.size
    swp = float((spec.x[-1] - spec.x[0]) * 125.7 * si / (si - 1))
    procs = {"SI": si, "SF": 125.7, "OFFSET": float(spec.x[-1]), "SW_p": swp, "NC_proc": 0,
             "BYTORDP": 0, "DTYPP": 0, "_comments": [], "_coreheader": []}
    dic = {"procs": procs, "acqus": {}}
    scale = 2.0**20 / np.abs(y).max()
    ng.bruker.write_pdata(str(folder), dic, np.round(y * scale).astype(np.int32),
                          pdata_folder=1, write_procs=True, overwrite=True)
    from_1r = load_spectrum(folder, processed=True)
    assert from_1r.meta["processing"]["from"] == "1r"
    step = float(np.median(np.diff(spec.x)))
    for ppm, _ in R.Signal().all_lines():
        assert abs(_apex(from_1r, ppm) - _apex(spec, ppm)) <= step
    a, b = from_1r.y / from_1r.y.max(), spec.y / spec.y.max()
    assert np.max(np.abs(a - b)) < 1e-4


def test_zip_of_a_folder_loads_like_the_folder(tmp_path):
    folder = R.write_bruker(tmp_path / "exp" / "5", R.Signal())
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for f in folder.iterdir():
            zf.write(f, f"5/{f.name}")
    a = load_spectrum(folder)
    b = load_spectrum(buf.getvalue(), source="upload.zip")
    np.testing.assert_allclose(a.y, b.y)
    assert b.meta["source"].startswith("upload.zip")


# ---- malformed input: one clear error naming the folder and the file inside -------------

def _bruker(tmp_path):
    return R.write_bruker(tmp_path / "7", R.Signal(complex_points=2048))


def _edit(folder, key, value):
    text = (folder / "acqus").read_text().splitlines()
    out = [ln for ln in text if not ln.startswith(f"##${key}=")]
    if value is not None:
        out.insert(1, f"##${key}= {value}")
    (folder / "acqus").write_text("\n".join(out) + "\n")


def _malformed_cases():
    def no_acqus(tmp):
        f = _bruker(tmp)
        (f / "acqus").unlink()
        return f, "no NMR experiment"

    def no_fid(tmp):
        f = _bruker(tmp)
        (f / "fid").unlink()
        return f, "fid"

    def empty_folder(tmp):
        (tmp / "empty").mkdir()
        return tmp / "empty", "no NMR experiment"

    def no_td(tmp):
        f = _bruker(tmp)
        _edit(f, "TD", None)
        return f, "acqus"

    def odd_td(tmp):
        f = _bruker(tmp)
        _edit(f, "TD", 4095)
        return f, "TD=4095"

    def truncated_fid(tmp):
        f = _bruker(tmp)
        data = (f / "fid").read_bytes()
        (f / "fid").write_bytes(data[: len(data) // 3])
        return f, "truncated"

    def byte_swapped(tmp):
        f = _bruker(tmp)
        _edit(f, "BYTORDA", 1)
        return f, "byte-swapped"

    def two_d(tmp):
        f = _bruker(tmp)
        shutil.copy(f / "acqus", f / "acqu2s")
        return f, "2D"

    def unknown_dtype(tmp):
        f = _bruker(tmp)
        _edit(f, "DTYPA", 5)
        return f, "DTYPA=5"

    def not_carbon(tmp):
        f = _bruker(tmp)
        _edit(f, "NUC1", "<1H>")
        return f, "not 13C"

    def real_only(tmp):
        f = _bruker(tmp)
        _edit(f, "AQ_mod", 0)
        return f, "AQ_mod=0"

    def varian_no_procpar(tmp):
        f = R.write_varian(tmp / "v.fid", R.Signal(complex_points=2048))
        (f / "procpar").unlink()
        return f, "no NMR experiment"

    def varian_truncated(tmp):
        f = R.write_varian(tmp / "v.fid", R.Signal(complex_points=2048))
        data = (f / "fid").read_bytes()
        (f / "fid").write_bytes(data[:5000])
        return f, "truncated"

    def varian_bad_header(tmp):
        f = R.write_varian(tmp / "v.fid", R.Signal(complex_points=2048))
        data = bytearray((f / "fid").read_bytes())
        data[0:24] = bytes(reversed(data[0:24]))
        (f / "fid").write_bytes(bytes(data))
        return f, "header"

    def two_experiments(tmp):
        R.write_bruker(tmp / "run" / "1", R.Signal(complex_points=2048))
        R.write_bruker(tmp / "run" / "2", R.Signal(complex_points=2048))
        return tmp / "run", "experiment="

    def processed_missing(tmp):
        f = _bruker(tmp)
        return f, "procs"

    return [no_acqus, no_fid, empty_folder, no_td, odd_td, truncated_fid, byte_swapped,
            two_d, unknown_dtype, not_carbon, real_only, varian_no_procpar, varian_truncated,
            varian_bad_header, two_experiments, processed_missing]


@pytest.mark.parametrize("case", _malformed_cases(), ids=lambda c: c.__name__)
def test_malformed_raw_folders_are_refused_by_name(tmp_path, case):
    folder, words = case(tmp_path)
    opts = {"processed": True} if case.__name__ == "processed_missing" else {}
    with pytest.raises(SpectrumFormatError) as err:
        load_spectrum(folder, **opts)
    msg = str(err.value)
    assert words in msg, msg
    assert str(folder) in msg, msg  # the folder (and the file inside, where one is at fault)


def _zip_bytes(members):
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for name, data in members:
            zf.writestr(name, data)
    return buf.getvalue()


@pytest.mark.parametrize("members, words", [
    ([("../evil/acqus", b"##TITLE= x\n")], "unsafe member name"),
    ([("/abs/acqus", b"##TITLE= x\n")], "unsafe member name"),
    ([("notes/readme.txt", b"hello")], "no NMR experiment"),
])
def test_bad_zips_are_refused(members, words):
    with pytest.raises(SpectrumFormatError) as err:
        load_spectrum(_zip_bytes(members), source="upload.zip")
    assert words in str(err.value) and "upload.zip" in str(err.value)


def test_truncated_zip_is_refused():
    data = _zip_bytes([("1/acqus", b"##TITLE= x\n" * 50)])
    with pytest.raises(SpectrumFormatError, match="upload.zip"):
        load_spectrum(data[: len(data) // 2], source="upload.zip", format="nmr-zip")


def _c76_folder(tmp_path):
    rng = np.random.default_rng(5)  # 19 invented lines of equal area: the D2 pattern 19x4
    lines = tuple((float(p), 1.0) for p in np.sort(rng.uniform(130, 150, 19)))
    return R.write_bruker(tmp_path / "c76" / "1", R.Signal(lines=lines, complex_points=65536,
                                                           noise=0.05))


def test_assign_takes_a_raw_folder(tmp_path, capsys):
    # C76 IPR isomers: 1 (D2, 19 lines of 4 carbons) and 2 (Td); from memory
    from cageprint.cli import main

    folder = _c76_folder(tmp_path)
    record = tmp_path / "rec.json"
    assert main(["assign", "C76", "--ipr", "--nmr", str(folder), "--csv",
                 "--fid", "line_broadening_hz=0.5", "--record", str(record)]) == 0
    out = capsys.readouterr().out.splitlines()
    assert out[1].split(",")[1:3] == ["C76", "1"]
    import json

    proc = json.loads(record.read_text())["inputs"]["nmr"]["processing"]
    assert proc["settings"]["line_broadening_hz"] == 0.5 and proc["phase_mode"] == "auto"


def test_notebook_parameter_accepts_a_folder(tmp_path):
    # notebook 03 hands NMR_FILE to SpectrumLoader(folder=parent, initial=name)
    pytest.importorskip("ipywidgets")
    from cageprint.session import Session
    from cageprint.widgets.loader import SpectrumLoader

    folder = _c76_folder(tmp_path)
    s = Session("C76")
    SpectrumLoader(s, folder=folder.parent, technique="nmr", initial=folder.name, plot=False)
    assert s.spectra["nmr"].meta["format"] == "nmr-folder"
