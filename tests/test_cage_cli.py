"""The `cageprint isomers` command line."""

from __future__ import annotations

import csv
import io
import subprocess
import sys

import pytest

from cageprint.cli import main


def _run(*args):
    return subprocess.run(
        [sys.executable, "-m", "cageprint", "isomers", *args],
        capture_output=True,
        text=True,
        timeout=300,
    )


def test_csv_ipr_c84():
    # Atlas of Fullerenes (Fowler & Manolopoulos, 1995), from memory: 24 IPR isomers of C84
    res = _run("84", "--ipr", "--csv")
    assert res.returncode == 0, res.stderr
    lines = res.stdout.splitlines()
    assert lines[0].startswith("formula,isomer,spiral")
    rows = list(csv.DictReader(io.StringIO(res.stdout)))
    assert len(rows) == 24
    assert [int(r["isomer"]) for r in rows] == list(range(1, 25))
    assert {r["formula"] for r in rows} == {"C84"}
    for r in rows:
        positions = [int(p) for p in r["spiral"].split(" ")]
        assert len(positions) == 12 and positions == sorted(positions)
    assert rows[21]["spiral"] == "1 7 10 13 18 22 25 27 31 34 38 44"


def test_table_c60_lists_1812_isomers(capsys):
    # Atlas of Fullerenes (1995), from memory: 1,812 isomers of C60
    assert main(["isomers", "60"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert out[0].split() == ["cage", "all", "no.", "fused", "pentagon", "pairs", "face",
                              "spiral"]
    assert out[-1] == "1812 isomers of C60"
    body = out[1:-1]
    assert len(body) == 1812
    # the last isomer is Ih C60, no fused pentagons, its spiral last
    assert body[-1].split() == ["C60", "1812", "0"] + "1 7 9 11 13 15 18 20 22 24 26 32".split()


@pytest.mark.parametrize(
    ("n", "message"),
    [
        ("61", "cageprint isomers: error: N=61: a fullerene has an even number of atoms, "
               "found an odd one"),
        ("22", "cageprint isomers: error: N=22: no fullerene C22 exists"),
        ("10", "cageprint isomers: error: N=10: a fullerene has at least 20 atoms"),
    ],
)
def test_bad_n_exits_nonzero_with_one_line(n, message):
    res = _run(n, "--csv")
    assert res.returncode != 0
    assert res.stdout == ""
    err = res.stderr.strip().splitlines()
    assert len(err) == 1
    assert err[0].startswith(message)


def test_progress_bar_on_stderr():
    res = _run("40", "--csv", "--progress")
    assert res.returncode == 0
    assert len(res.stdout.splitlines()) == 41
    assert "C40 isomers" in res.stderr


def test_columns_can_be_extended(monkeypatch, capsys):
    from cageprint.cli import isomers as cmd

    monkeypatch.setattr(cmd, "COLUMNS", cmd.COLUMNS + [("atoms", lambda c: c.n)])
    assert main(["isomers", "28", "--csv", "--columns", "all"]) == 0
    rows = list(csv.reader(io.StringIO(capsys.readouterr().out)))
    assert rows[0][-1] == "atoms" and rows[1][-1] == "28"


def test_warm_up_runs_every_kernel(capsys):
    # issue 16: one warm-up compiles and caches the kernels (search, spirals, symmetry, 13C)
    assert main(["warm-up"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert [ln.split(":")[0] for ln in out[:-1]] == [
        "isomer search, all isomers (C40)", "isomer search, IPR (C80)",
        "spiral wind-up and canonical spiral (C60)", "symmetry and fingerprint (C60)",
        "13C line matching (C70 pattern)"]
    assert out[-1].startswith("ready")
