"""The cage library: DuckDB store, resumable builds (in process and on a 2-worker Dask
LocalCluster), pattern-first queries, the chooser's data source and the CLI (issue 11)."""

from __future__ import annotations

import os
import re
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

pytest.importorskip("duckdb")

from cageprint.cage import count_isomers, iter_isomers  # noqa: E402
from cageprint.cli import main  # noqa: E402
from cageprint.errors import LibraryError  # noqa: E402
from cageprint.library import (  # noqa: E402
    PAIRS_MEMO,
    build_library,
    export_parquet,
    library_cages,
    library_indices,
    library_info,
    normalise_pattern,
    open_library,
    plan_pieces,
    query_cages,
)
from cageprint.library.store import spiral_key  # noqa: E402
from cageprint.stability import stability_indices  # noqa: E402
from cageprint.symmetry import fingerprint  # noqa: E402

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def lib50(tmp_path_factory):
    # every C50 isomer (271, one piece) and the IPR cages C60-C70, built in this process
    path = tmp_path_factory.mktemp("lib") / "cages.duckdb"
    build_library("C50", ipr=False, path=path, workers=0, progress=False)
    build_library("C60-C70", path=path, workers=0, progress=False)
    return path


def test_rows_agree_with_enumeration_and_fingerprints(lib50):
    # the library must say exactly what the kit computes cage by cage (common practice)
    table = query_cages(lib50, sizes="C50")
    cages = list(iter_isomers(50))
    assert len(table) == len(cages) == 271  # all C50 isomers (Fowler & Manolopoulos 1995)
    assert table["isomer"].tolist() == list(range(1, 272))
    for cage, row in zip(cages[::27], table.iloc[::27].itertuples(), strict=True):
        assert row.spiral == " ".join(map(str, cage.spiral))
        fp = fingerprint(cage).columns()
        assert (row.point_group, row.nmr_pattern, row.ir_active, row.raman_active) == (
            fp["point_group"], fp["nmr_pattern"], fp["ir_active"], fp["raman_active"])
        assert row.pentagon_pairs == cage.fused_pentagon_pairs


def test_ipr_numbers(lib50):
    # one IPR isomer each for C60 (Ih) and C70 (D5h), none for C62-C68 (Fowler & Manolopoulos)
    t = query_cages(lib50, sizes="C60-C70", ipr=True)
    assert t[["formula", "isomer", "point_group"]].values.tolist() == [
        ["C60", 1, "Ih"], ["C70", 1, "D5h"]]
    assert t["isomer_all"].isna().all()  # an IPR-only build cannot know all-isomer numbers


def test_pattern_first_query(lib50):
    # C70 D5h: 5 lines 2x20+3x10 (Taylor et al., Chem. Commun. 1990; from memory)
    t = query_cages(lib50, pattern="3x10 + 2x20")
    assert t[["formula", "point_group"]].values.tolist() == [["C70", "D5h"]]
    assert normalise_pattern("1x2+11x6") == "11x6+1x2"
    with pytest.raises(LibraryError, match="expected terms like"):
        normalise_pattern("11 lines")


def test_indices_read_back(lib50):
    cage = list(iter_isomers(50))[100]
    got = library_indices(50, -6, lib50)[spiral_key(cage.spiral)]
    want = stability_indices(cage, -6)
    assert got.anion_pi_energy == pytest.approx(want.anion_pi_energy)
    assert got.anion_gap == pytest.approx(want.anion_gap)
    assert got.pentagon_pairs == want.pentagon_pairs and got.ipsi == pytest.approx(want.ipsi)
    with pytest.raises(LibraryError, match="charges"):
        library_indices(50, -5, lib50)


def test_second_build_computes_nothing(lib50):
    rep = build_library("C50,C60-C70", ipr=True, path=lib50, workers=0, progress=False)
    assert rep.computed == 0 and not rep.stopped_early
    # all-isomer C50 covers its IPR list too (none)
    assert [r.cages for r in rep.ranges][:1] == [271]


def test_partial_build_resumes(tmp_path):
    path = tmp_path / "p.duckdb"
    pieces = plan_pieces(56, parts=8)
    first = build_library("C56", ipr=False, path=path, workers=0, progress=False, parts=8,
                          stop_after=3)
    assert first.stopped_early and first.computed == 3
    info = library_info(path)
    assert info["partial"] == [{"n": 56, "scope": "all", "pieces_done": 3, "pieces": 8}]
    second = build_library("C56", ipr=False, path=path, workers=0, progress=False, parts=8)
    r = second.ranges[0]
    assert (r.computed, r.skipped, r.cages) == (len(pieces) - 3, 3, 924)  # 924 C56 isomers
    assert query_cages(path, sizes="C56")["isomer"].tolist() == list(range(1, 925))


def test_killed_build_resumes_without_recomputing(tmp_path):
    # a real SIGKILL in the middle of a build (CLI, in-process workers)
    path = tmp_path / "k.duckdb"
    env = dict(os.environ, PYTHONPATH=str(REPO / "kit"))
    proc = subprocess.Popen(
        [sys.executable, "-m", "cageprint", "library", "build", "C58", "--all", "--workers",
         "0", "--path", str(path)], stderr=subprocess.PIPE, env=env)
    seen: list[int] = []

    def watch():
        buf = b""
        while True:
            chunk = proc.stderr.read1(256) if hasattr(proc.stderr, "read1") else b""
            if not chunk:
                return
            buf = (buf + chunk)[-400:]
            found = re.findall(rb"(\d+)/(\d+)", buf)
            if found:
                seen.append(int(found[-1][0]))

    t = threading.Thread(target=watch, daemon=True)
    t.start()
    deadline = time.monotonic() + 600
    while time.monotonic() < deadline and (not seen or seen[-1] < 10) and proc.poll() is None:
        time.sleep(0.05)
    assert proc.poll() is None, "the build finished before it could be killed"
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    t.join(5)
    done = library_info(path)["partial"][0]["pieces_done"]
    assert 10 <= done < 96
    rep = build_library("C58", ipr=False, path=path, workers=0, progress=False)
    r = rep.ranges[0]
    assert r.skipped == done and r.computed == r.pieces - done
    assert r.cages == count_isomers(58) == 1205  # C58 isomers (Fowler & Manolopoulos 1995)


def test_build_on_two_worker_local_cluster(tmp_path):
    pytest.importorskip("distributed")
    path = tmp_path / "d.duckdb"
    rep = build_library("C56", ipr=False, path=path, workers=2, progress=False, parts=12)
    assert rep.workers == 2 and rep.ranges[0].cages == 924 and rep.ranges[0].computed == 12
    serial = tmp_path / "s.duckdb"
    build_library("C56", ipr=False, path=serial, workers=0, progress=False, parts=5)
    a = query_cages(path, sizes="C56")
    b = query_cages(serial, sizes="C56")
    assert a.equals(b)  # same rows whatever the pieces and workers


def test_chooser_source_builds_when_missing(tmp_path):
    path = tmp_path / "c.duckdb"
    with pytest.raises(LibraryError, match="library build C76"):
        library_cages(76, path=path, build=False)
    t = library_cages(76, path=path, progress=False)
    # C76: two IPR isomers, D2 and Td (Manolopoulos & Fowler 1991; from memory)
    assert t["point_group"].tolist() == ["D2", "Td"]
    assert library_cages(76, path=path, build=False)["isomer"].tolist() == [1, 2]


def test_parquet_export(lib50, tmp_path):
    con = open_library(lib50, read_only=True)
    try:
        files = export_parquet(con, tmp_path / "pq")
    finally:
        con.close()
    import duckdb

    n = duckdb.sql(f"SELECT count(*) FROM '{tmp_path / 'pq' / 'cages.parquet'}'").fetchall()[0][0]
    assert n == 273 and len(files) == 4


def test_cli_build_query_info(tmp_path, capsys):
    path = str(tmp_path / "cli.duckdb")
    assert main(["library", "build", "C60-C70", "--workers", "0", "--quiet", "--path", path]) == 0
    out = capsys.readouterr().out
    assert "C60 (ipr): 1 cages" in out
    assert main(["library", "query", "--pattern", "2x20+3x10", "--path", path]) == 0
    out = capsys.readouterr().out
    assert "D5h" in out and "1 cage(s)" in out
    assert main(["library", "query", "C60", "--csv", "--path", path]) == 0
    assert capsys.readouterr().out.splitlines()[1].startswith("C60,60,1,")
    assert main(["library", "info", "--path", path]) == 0
    assert "2 cages" in capsys.readouterr().out
    assert main(["library", "query", "--path", str(tmp_path / "none.duckdb")]) == 2
    assert "no such file" in capsys.readouterr().err


def test_core_imports_without_optional_packages():
    # the library, stability and CLI modules import without duckdb, dask or tblite (lazy
    # imports; common practice, no source)
    code = (
        "import sys\n"
        "class B:\n"
        "    def find_spec(self, name, path=None, target=None):\n"
        "        if name.split('.')[0] in ('duckdb', 'dask', 'distributed', 'tblite'):\n"
        "            raise ImportError('blocked ' + name)\n"
        "sys.meta_path.insert(0, B())\n"
        "import cageprint.library, cageprint.library.screen, cageprint.stability.energy\n"
        "import cageprint.cli.library\n"
        "from cageprint.library import parse_range\n"
        "print(parse_range('C60-C64'))\n"
    )
    env = dict(os.environ, PYTHONPATH=str(REPO / "kit"))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[60, 62, 64]"


def test_library_candidates(tmp_path):
    # candidates read from the library carry the gap at the formula's cage charge
    from cageprint.candidate import Candidate
    from cageprint.library import library_candidates

    path = tmp_path / "lc.duckdb"
    cands = library_candidates("Sc3N@C80", path=path, progress=False)
    ref = [Candidate.from_cage(c, charge=-6, formula="Sc3N@C80")
           for c in iter_isomers(80, ipr=True)]
    assert [c.isomer for c in cands] == list(range(1, 8))
    for a, b in zip(cands, ref, strict=True):
        assert (a.nmr_sizes, a.ir_count, a.raman_count, a.point_group, a.spiral) == (
            b.nmr_sizes, b.ir_count, b.raman_count, b.point_group, b.spiral)
        assert a.gap_beta == pytest.approx(b.gap_beta, abs=1e-6) and a.cage_charge == -6


def test_chooser_reads_the_library(tmp_path):
    # the candidate chooser with a library: every cage of the size from the file (built
    # first when missing); the same table as generating them (common practice, no source)
    pytest.importorskip("ipywidgets")
    from cageprint.session import Session
    from cageprint.widgets.chooser import CandidateChooser

    path = tmp_path / "ch.duckdb"
    ch = CandidateChooser(Session(), "C50", ipr=False, library=path)
    assert len(ch.session.candidates) == 271 and len(ch.rows) == 271
    plain = CandidateChooser(Session(), "C50", ipr=False)
    cols = ("isomer", "lines", "ir", "fused pentagons")
    key = [tuple(r[k] for k in cols) for r in plain.rows]
    assert [tuple(r[k] for k in cols) for r in ch.rows] == key
    # the library's stored fused-pair counts reach the chooser without a cage graph
    assert all(c.memo(PAIRS_MEMO, None) == r["fused pentagons"]
               for c, r in zip(ch.session.candidates, ch.rows, strict=True))


@pytest.mark.slow
def test_all_isomer_numbers_for_ipr_cages(tmp_path):
    # with all isomers, IPR cages keep their all-isomer number: C60 Ih is isomer 1812 of
    # 1812 (Fowler & Manolopoulos, An Atlas of Fullerenes, 1995)
    path = tmp_path / "c60.duckdb"
    build_library("C60", ipr=False, path=path, workers=0, progress=False)
    table = library_cages(60, ipr=False, path=path, build=False)
    assert table["isomer"].tolist() == list(range(1, 1813))
    ih = table[table["point_group"] == "Ih"]
    assert ih["isomer"].tolist() == [1812] and ih["isomer_ipr"].tolist() == [1]
    assert library_cages(60, path=path, build=False)["isomer"].tolist() == [1]


def test_build_report_cpu_is_process_time(tmp_path, monkeypatch):
    # cpu_seconds adds process CPU time of the tasks, not their wall time: a task that
    # waits (here: sleeps) costs wall time but no CPU (common practice, no source)
    from cageprint.library import compute

    real = compute.cage_columns

    def slow(cage):
        time.sleep(0.1)
        return real(cage)

    monkeypatch.setattr(compute, "cage_columns", slow)
    rep = build_library("C36", ipr=False, path=tmp_path / "cpu.duckdb", workers=0,
                        progress=False)
    assert rep.ranges[0].cages == 15  # C36 isomers (Fowler & Manolopoulos 1995)
    assert rep.wall_seconds > 1.5
    assert 0 < rep.cpu_seconds < rep.wall_seconds - 1.0
