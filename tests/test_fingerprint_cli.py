"""Fingerprint columns of `cageprint isomers`."""

from __future__ import annotations

import csv
import io

from cageprint.cli import main

COLUMNS = ["point_group", "nmr_lines", "nmr_pattern", "ir_active", "raman_active", "gap_beta"]


def test_csv_has_fingerprint_columns_for_c78(capsys):
    # Diederich et al., Science 1991 (C78 isomers by 13C NMR; counts from memory):
    # D3 13 lines, C2v 21, C2v' 22, D3h 8 and 8
    assert main(["isomers", "78", "--ipr", "--csv", "--columns", "all"]) == 0
    table = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert list(table[0])[-6:] == COLUMNS
    got = [(r["point_group"], int(r["nmr_lines"])) for r in table]
    assert got == [("D3", 13), ("C2v", 21), ("C2v", 22), ("D3h", 8), ("D3h", 8)]
    assert table[0]["nmr_pattern"] == "13x6"
    assert all(float(r["gap_beta"]) >= 0 for r in table)


def test_readable_table_shows_c70_pattern(capsys):
    # Taylor et al., J. Chem. Soc., Chem. Commun. 1990: C70 five lines 1:2:1:2:1;
    # Dresselhaus, Dresselhaus & Eklund 1996: 31 IR- and 53 Raman-active modes
    assert main(["isomers", "70", "--ipr", "--columns", "all"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[1].split()[:10] == ["C70", "1", "D5h", "5", "2x20+3x10", "31", "53", "0",
                                     "0.5293", "1"]


def test_readable_table_has_a_layout_of_its_own(capsys):
    # issue 15: "the `isomers` listing lays out isomer number, the twelve pentagon positions,
    # point group, pattern, counts and gap in the order of tables practitioners know from
    # elsewhere": the readable table leads with point group, 13C lines and pattern, band
    # counts, fused pentagons and gap, says which numbering it uses, and puts the spiral last;
    # the CSV keeps its names and order for scripts (common practice, no source)
    assert main(["isomers", "70", "--ipr", "--columns", "all"]) == 0
    head = capsys.readouterr().out.splitlines()[0]
    order = ["cage", "IPR no.", "point group", "13C lines", "13C pattern", "IR bands",
             "Raman bands", "fused pentagon pairs", "gap/|β|", "face spiral"]
    assert [head.index(h) for h in order] == sorted(head.index(h) for h in order)
    assert head.rstrip().endswith("face spiral")
    assert main(["isomers", "40"]) == 0
    assert "all no." in capsys.readouterr().out.splitlines()[0]
    assert main(["isomers", "70", "--ipr", "--csv", "--columns", "all"]) == 0
    assert capsys.readouterr().out.splitlines()[0] == (
        "formula,isomer,spiral,fused_pentagon_pairs," + ",".join(COLUMNS))


def test_cages_alone_by_default_and_chosen_columns(capsys, monkeypatch):
    # issue 16: listing cages must not compute fingerprints unless a column needs them
    from cageprint.cli import isomers as cmd

    def no_fingerprints(cage):
        raise AssertionError("a fingerprint was computed")

    monkeypatch.setattr(cmd, "fingerprint", no_fingerprints)
    assert main(["isomers", "70", "--ipr", "--csv"]) == 0
    head = capsys.readouterr().out.splitlines()[0]
    assert head == "formula,isomer,spiral,fused_pentagon_pairs"
    monkeypatch.undo()
    assert main(["isomers", "70", "--ipr", "--csv", "--columns", "isomer,point_group"]) == 0
    assert capsys.readouterr().out.splitlines() == ["isomer,point_group", "1,D5h"]


def test_unknown_column_is_one_clear_error(capsys):
    assert main(["isomers", "70", "--columns", "isomer,colour"]) != 0
    assert "unknown column(s) colour" in capsys.readouterr().err
