"""Safe file writing: atomic replacement, kept modes, no leftovers, confined export names.

Source for all: common practice, no source (POSIX rename(2) atomicity; issue 14 cases).
"""

from __future__ import annotations

import os
import signal
import stat
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from cageprint import fileio
from cageprint.errors import OutputError
from cageprint.fileio import (
    TEMP_PREFIX,
    atomic_write_bytes,
    atomic_write_text,
    clean_stale_temps,
    confined_path,
)
from cageprint.spectra import Spectrum, write_csv, write_jcamp

KIT = str(Path(__file__).resolve().parents[1] / "kit")


def _env():
    env = dict(os.environ)
    env["PYTHONPATH"] = KIT + os.pathsep + env.get("PYTHONPATH", "")
    return env


def _temps(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.startswith(TEMP_PREFIX))


def test_new_file_gets_0644_under_umask_022(tmp_path):
    # issue 14: "records and reports are written mode 0600"
    old = os.umask(0o022)
    try:
        p = atomic_write_text(tmp_path / "rec.json", "{}")
    finally:
        os.umask(old)
    assert stat.S_IMODE(p.stat().st_mode) == 0o644


def test_new_file_respects_a_stricter_umask(tmp_path):
    old = os.umask(0o077)
    try:
        p = atomic_write_text(tmp_path / "rec.json", "{}")
    finally:
        os.umask(old)
    assert stat.S_IMODE(p.stat().st_mode) == 0o600


def test_replacing_keeps_the_targets_mode(tmp_path):
    # issue 14: "... replacing a 0644 file's mode"
    p = tmp_path / "report.html"
    p.write_text("old")
    os.chmod(p, 0o640)
    atomic_write_text(p, "new")
    assert p.read_text() == "new"
    assert stat.S_IMODE(p.stat().st_mode) == 0o640


def test_failed_write_leaves_no_temp_and_keeps_the_old_file(tmp_path, monkeypatch):
    p = tmp_path / "a.json"
    p.write_text("old")

    def boom(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(fileio.os, "replace", boom)
    with pytest.raises(OutputError, match=r"a.json: could not be written \(No space left"):
        atomic_write_text(p, "new")
    assert p.read_text() == "old"
    assert _temps(tmp_path) == []


def test_missing_folder_and_folder_target_are_named(tmp_path):
    with pytest.raises(OutputError, match=r"the folder .*nope does not exist"):
        atomic_write_bytes(tmp_path / "nope" / "a.bin", b"x")
    with pytest.raises(OutputError, match=r"is a folder; give a file name"):
        atomic_write_bytes(tmp_path, b"x")


def test_killed_save_leaves_nothing_after_the_next_start(tmp_path):
    # issue 14: "killed saves leave hidden temp files that are never cleaned (2.3 GB after one
    # run)"; a writer is killed (SIGKILL) after its temp file is written, before the rename
    script = textwrap.dedent(f"""
        import os, sys, time
        from cageprint import fileio
        def hang(src, dst):
            print("written", flush=True)
            time.sleep(120)
        fileio.os.replace = hang
        fileio.atomic_write_bytes({str(tmp_path / "big.jdx")!r}, b"y" * 2_000_000)
    """)
    proc = subprocess.Popen([sys.executable, "-c", script], stdout=subprocess.PIPE, env=_env())
    assert proc.stdout.readline().strip() == b"written"
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    left = _temps(tmp_path)
    assert len(left) == 1 and (tmp_path / left[0]).stat().st_size == 2_000_000
    assert not (tmp_path / "big.jdx").exists()
    # the next save into the folder (any file) removes the dead run's temp file
    atomic_write_text(tmp_path / "other.json", "{}")
    assert _temps(tmp_path) == []


def test_live_writers_temp_files_are_not_removed(tmp_path):
    mine = tmp_path / f"{TEMP_PREFIX}{fileio._HOST}-{os.getpid()}-abc.tmp"
    mine.write_text("in progress")
    assert clean_stale_temps(tmp_path) == []
    assert mine.exists()


WRITER = textwrap.dedent("""
    import sys
    from cageprint.fileio import atomic_write_bytes
    path, tag, n = sys.argv[1], sys.argv[2].encode(), int(sys.argv[3])
    for i in range(n):
        body = tag * (20000 + 37 * (i % 50))
        atomic_write_bytes(path, body + b"|%d|END\\n" % i)
""")


def test_two_processes_writing_one_path_never_expose_an_empty_or_partial_file(tmp_path):
    # issue 14: "the spectrum writers use one fixed .part name, so two writers to the same path
    # race (a reader saw the target empty thousands of times)"
    target = tmp_path / "spectrum.jdx"
    atomic_write_bytes(target, b"A" * 20000 + b"|init|END\n")
    procs = [subprocess.Popen([sys.executable, "-c", WRITER, str(target), tag, "300"],
                              env=_env()) for tag in ("A", "B")]
    reads = bad = 0
    while any(p.poll() is None for p in procs):
        data = target.read_bytes()
        reads += 1
        body, _, tail = data.partition(b"|")
        if not (data.endswith(b"|END\n") and body and len(set(body)) == 1):
            bad += 1
    assert [p.wait() for p in procs] == [0, 0]
    assert reads > 0 and bad == 0
    assert _temps(tmp_path) == []


def test_spectrum_writers_use_unique_temp_names(tmp_path, monkeypatch):
    seen = []
    real = fileio.os.replace

    def spy(src, dst):
        seen.append(Path(src).name)
        real(src, dst)

    monkeypatch.setattr(fileio.os, "replace", spy)
    s = Spectrum(np.arange(5.0) + 400, np.arange(5.0), technique="ir")
    write_jcamp(s, tmp_path / "a.jdx")
    write_jcamp(s, tmp_path / "a.jdx")
    write_csv(s, tmp_path / "a.csv")
    assert len(set(seen)) == 3 and all(n.startswith(TEMP_PREFIX) for n in seen)
    assert not any(n.endswith(".part") for n in seen)


@pytest.mark.parametrize("name", ["../../x", "/tmp/x", "a/b", "..", ".hidden", "", "a\x00b",
                                  "c:\\x", "x" * 300])
def test_export_names_cannot_leave_the_folder(tmp_path, name):
    # issue 14: "the assignment board's export name can escape its folder (../../x, absolute
    # paths)"
    with pytest.raises(OutputError, match=r"export name .*give a plain file name"):
        confined_path(tmp_path, name, ".json")


def test_plain_export_names_stay_in_the_folder(tmp_path):
    p = confined_path(tmp_path, "fraction B (run 2)", ".html")
    assert p.parent == tmp_path and p.name == "fraction B (run 2).html"
