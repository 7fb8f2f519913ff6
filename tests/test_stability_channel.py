"""The stability channel in the ranking: alone (no spectra) and breaking a 13C tie (issue 11).

Isomer numbers are spiral isomer numbers (IPR numbering for IPR cages; all-isomer
numbering for the non-IPR C68 cages), Fowler & Manolopoulos, An Atlas of Fullerenes (1995).
"""

from __future__ import annotations

import json

import pytest

from cageprint.cage import Cage, isomer_number
from cageprint.candidate import Candidate
from cageprint.cli import main
from cageprint.errors import StabilityError
from cageprint.session import Session
from cageprint.spectra import Spectrum
from cageprint.stability.channel import StabilityInput, accept_stability
from cageprint.symmetry import fingerprint


def _alone_first(session):
    rows = session.ranking.rows
    assert rows[0].rank == 1 and rows[1].rank == 2, "the top candidate is not alone"
    return rows[0]


def _session(formula):
    s = Session(formula)
    s.set_candidates(ipr=True)
    s.load("stability", "indices")
    return s


def test_sc3n_c80_alone_first():
    # Sc3N@C80: the Ih cage, IPR isomer 7 of 7 (Stevenson et al., Nature 1999); ionic model:
    # widest hexaanion gap (Campanera, Bo & Poblet, Angew. Chem. Int. Ed. 2005)
    top = _alone_first(_session("Sc3N@C80"))
    assert (top.candidate.isomer, top.candidate.point_group) == (7, "Ih")
    assert "Stability: Anion gap 0.99 |β|, widest of 7" in top.reasons


def test_sc3n_c78_alone_first():
    # Sc3N@C78: the D3h cage, IPR isomer 5 (Olmstead et al., Angew. Chem. 2001; from memory)
    top = _alone_first(_session("Sc3N@C78"))
    assert (top.candidate.isomer, top.candidate.point_group) == (5, "D3h")


def test_c76_alone_first():
    # C76: the D2 cage, isomer 1, over Td isomer 2 (Ettl, Chao, Diederich & Whetten,
    # Nature 1991)
    top = _alone_first(_session("C76"))
    assert (top.candidate.isomer, top.candidate.point_group) == (1, "D2")


def test_channel_is_off_until_given_and_weight_shown():
    s = Session("C76")
    s.set_candidates(ipr=True)
    assert not s.has_data("stability")
    assert s.weights["stability"] == 0.5
    assert [r.rank for r in s.ranking.rows] == [1, 1]  # no data at all: a tie
    s.load("stability", "indices")
    assert [r.rank for r in s.ranking.rows] == [1, 2]
    s.set_weight("stability", 0.0)
    assert [r.rank for r in s.ranking.rows] == [1, 1]


def test_given_energies_and_file(tmp_path):
    s = Session("C76")
    s.set_candidates(ipr=True)
    s.load("stability", {1: 40.0, 2: 0.0})  # invented energies: the Td cage lowest
    top = _alone_first(s)
    assert top.candidate.isomer == 2
    assert any("lowest of 2 by given energies" in r for r in top.reasons)
    f = tmp_path / "e.json"
    f.write_text(json.dumps({"1": 0.0, "2": 25.0}), encoding="utf-8")
    assert accept_stability(str(f)) == StabilityInput("energies", ((1, 0.0), (2, 25.0)),
                                                     "e.json")
    c = tmp_path / "e.csv"
    c.write_text("isomer,energy_kjmol\n1,3.5\n2,0\n", encoding="utf-8")
    assert accept_stability(c).energies == ((1, 3.5), (2, 0.0))
    with pytest.raises(StabilityError, match="expected 'indices'"):
        accept_stability("nonsense")


def test_xtb_mode_refuses_large_sets():
    s = Session("Sc3N@C80")
    s.set_candidates(ipr=True)
    s.load("stability", "xtb")
    s.set_threshold("stability", "max_relax", 3)
    with pytest.raises(StabilityError, match="max_relax"):
        s.ranking  # noqa: B018


# ------------------------------------------------------- a 13C tie broken by stability

# The 11 C68 cages whose 13C pattern is 11x6+1x2 (found by the kit's own enumeration and
# fingerprints; all-isomer numbers): the pattern of Sc3N@C68, whose cage is the D3 isomer
# 6140 with three fused pentagon pairs (Stevenson et al., Nature 2000; Campanera, Bo &
# Poblet, Angew. Chem. Int. Ed. 2005)
C68_PATTERN_GROUP = {
    663: (1, 2, 3, 4, 19, 23, 24, 28, 29, 32, 33, 36),
    2189: (1, 2, 3, 10, 13, 16, 21, 24, 27, 34, 35, 36),
    3093: (1, 2, 3, 12, 15, 18, 19, 22, 25, 34, 35, 36),
    3862: (1, 2, 4, 7, 17, 21, 22, 26, 29, 30, 33, 34),
    3875: (1, 2, 4, 7, 17, 22, 27, 28, 29, 32, 33, 34),
    3993: (1, 2, 4, 7, 19, 24, 29, 30, 31, 34, 35, 36),
    6015: (1, 2, 9, 10, 13, 22, 24, 27, 28, 30, 33, 35),
    6059: (1, 2, 9, 11, 12, 19, 24, 25, 27, 31, 32, 35),
    6140: (1, 2, 9, 11, 14, 16, 22, 27, 29, 31, 33, 35),
    6263: (1, 2, 9, 12, 13, 19, 24, 27, 28, 31, 33, 35),
    6275: (1, 2, 9, 12, 14, 17, 23, 28, 30, 32, 34, 36),
}


def _c68_candidates():
    out = []
    for iso, spiral in sorted(C68_PATTERN_GROUP.items()):
        fp = fingerprint(Cage.from_spiral(68, spiral), charge=-6)
        out.append(Candidate.from_fingerprint(fp, n=68, isomer=iso, formula="Sc3N@C68",
                                              spiral=spiral, cage_charge=-6))
    return out


@pytest.mark.slow
def test_isomer_numbers_of_the_group():
    # the spirals above carry these all-isomer numbers (canonical spiral order)
    assert isomer_number(68, C68_PATTERN_GROUP[6140], ipr=False) == 6140
    assert isomer_number(68, C68_PATTERN_GROUP[663], ipr=False) == 663


def test_spectrum_tie_broken_by_stability():
    cands = _c68_candidates()
    assert {c.pattern for c in cands} == {"11x6+1x2"}
    # an invented 13C peak list: 11 lines of intensity 6 and one of 2 (130-150 ppm)
    ppm = [131.2, 133.0, 134.8, 136.1, 137.9, 139.4, 140.7, 142.2, 143.6, 145.0, 146.9, 148.3]
    height = [6.0] * 5 + [2.0] + [6.0] * 6
    s = Session("Sc3N@C68")
    s.set_candidates(cands)
    s.load("nmr", Spectrum(ppm, height, technique="nmr", kind="peaks"))
    rows = s.ranking.rows
    assert rows[0].rank == 1 and len(rows[0].tied_with) == len(cands) - 1  # spectra: a tie
    s.load("stability", "indices")
    top = _alone_first(s)
    assert top.candidate.isomer == 6140
    assert top.verdicts["nmr"].verdict == rows[0].verdicts["nmr"].verdict
    assert any(r.startswith("Stability: Breaks the tie among the 11 cages with 13C pattern "
                            "11x6+1x2") for r in top.reasons)


def test_never_overrides_clear_spectral_evidence():
    # C76: stability prefers D2 (isomer 1), but a 13C spectrum with the Td pattern (5 lines,
    # 24:24:12:12:4 carbons; orbit sizes of the Td cage, Fowler & Manolopoulos 1995) must
    # keep the Td cage first
    s = _session("C76")
    td = [c for c in s.candidates if c.point_group == "Td"][0]
    ppm = [135.0 + 2.5 * k for k in range(len(td.nmr_sizes))]
    s.load("nmr", Spectrum(ppm, [float(x) for x in td.nmr_sizes], technique="nmr",
                           kind="peaks"))
    top = _alone_first(s)
    assert top.candidate.point_group == "Td"
    assert top.verdicts["stability"].verdict != "consistent"


def test_cli_assign_takes_stability(tmp_path, capsys):
    rec = tmp_path / "rec.json"
    code = main(["assign", "Sc3N@C80", "--ipr", "--stability", "indices", "--csv",
                 "--record", str(rec)])
    lines = capsys.readouterr().out.splitlines()
    assert code == 0
    head = lines[0].split(",")
    first = dict(zip(head, lines[1].split(","), strict=False))
    assert first["isomer"] == "7" and first["rank"] == "1"
    assert json.loads(rec.read_text(encoding="utf-8"))  # the record is written
