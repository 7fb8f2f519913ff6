"""One number per cage per list kind (issue 15, "All-isomer candidate lists mix numberings").

Sources: C60 has 1,812 isomers and one IPR isomer, Ih, the last in spiral order; C78 has
24,109 isomers and 5 IPR ones (Fowler & Manolopoulos, An Atlas of Fullerenes, 1995, from
memory).  The spiral numbers of the C78 IPR cages (24105-24109) are the kit's own listing
(`cageprint isomers 78`), which the candidate list must agree with.
"""

from __future__ import annotations

import pytest

from cageprint.cage import Cage, isomer_number, iter_isomers
from cageprint.candidate import Candidate
from cageprint.formula import parse_cage_formula
from cageprint.session import generate_candidates

C60_IH = (1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32)


@pytest.mark.slow
def test_all_isomer_list_of_c60_has_one_number_per_cage():
    cands = generate_candidates(parse_cage_formula("C60"), ipr=False)
    numbers = [c.isomer for c in cands]
    assert sorted(numbers) == list(range(1, 1813))  # no two rows numbered 1
    ih = [c for c in cands if c.point_group == "Ih"]
    assert [c.isomer for c in ih] == [1812]
    assert Cage.from_spiral(60, ih[0].spiral).fused_pentagon_pairs == 0
    d5d = [c for c in cands if c.isomer == 1][0]
    assert Cage.from_spiral(60, d5d.spiral).fused_pentagon_pairs == 20


def test_ipr_cages_keep_their_all_isomer_number_in_an_all_isomer_list():
    for cage in iter_isomers(78, ipr=True):
        as_all = Candidate.from_cage(cage, numbering="all")
        as_ipr = Candidate.from_cage(cage, numbering="ipr")
        assert as_all.isomer == isomer_number(78, cage.spiral, ipr=False)
        assert as_ipr.isomer == isomer_number(78, cage.spiral, ipr=True)
    numbers = sorted(Candidate.from_cage(c, numbering="all").isomer
                     for c in iter_isomers(78, ipr=True))
    assert numbers == [24105, 24106, 24107, 24108, 24109]


def test_cli_and_candidates_agree_on_c60_ih(capsys):
    from cageprint.cli import main

    assert main(["isomers", "60", "--csv"]) == 0
    last = capsys.readouterr().out.splitlines()[-1].split(",")
    assert last[1] == "1812" and last[2] == " ".join(map(str, C60_IH))
    assert Candidate.from_cage(Cage.from_spiral(60, C60_IH), numbering="all").isomer == 1812


def test_unknown_numbering_refused():
    with pytest.raises(ValueError, match="numbering="):
        Candidate.from_cage(Cage.from_spiral(60, C60_IH), numbering="atlas")


def test_peak_markers_sit_on_the_drawn_spectrum():
    # issue 15: "Notebook 04's record figure draws IR/Raman peak markers at baseline-corrected
    # heights on the raw spectrum (a marker at 0.74 under a peak at 0.80)"
    import numpy as np

    from cageprint import figures
    from cageprint.spectra import Spectrum

    x = np.linspace(400, 1800, 1401)
    y = 0.06 + 0.74 * np.exp(-0.5 * ((x - 1428.0) / 3.0) ** 2)
    s = Spectrum(x, y, technique="ir", y_unit="absorbance")
    fig = figures.spectrum_figure(s, peaks=([1428.0], [0.74]))
    assert float(fig.data[1].y[0]) == pytest.approx(0.80, abs=1e-3)


def test_level_labels_read_the_same_lambda_as_their_axis():
    # issue 15: "Notebook 05's Hückel diagram labels 'HOMO λ=0.414' at y = -0.414 on an axis
    # 'bonding down'; labels sit far from their levels"
    from cageprint import figures

    fig = figures.level_figure([(0.414, 3, "t1u", 6), (-0.139, 3, "t1g", 0)],
                               homo=0.414, lumo=-0.139)
    assert fig.layout.yaxis.autorange == "reversed"  # bonding (λ > 0) drawn low
    homo = [a for a in fig.layout.annotations if a.text.startswith("HOMO")][0]
    assert homo.y == pytest.approx(0.414)
    assert set(fig.data[0].y) - {None} == {0.414}
    assert homo.x < 2.0  # beside its three bars (they end at x = 1.35)


def test_a_cage_is_not_its_own_second_component():
    # issue 15: "Loading a C78 mixture into the C76 panel reports 'a second component: C76
    # isomer 1' (the same isomer as the first)"; C76 D2 pattern 19x4 (from memory)
    import numpy as np

    from cageprint.techniques.nmr import NmrObservation, compare_nmr

    rng = np.random.default_rng(3)
    pos = np.sort(rng.uniform(130, 150, 38))
    ints = [4.0 if k % 2 else 2.0 for k in range(38)]  # 19 full lines, 19 at half scale
    obs = NmrObservation(tuple(pos), tuple(ints))
    v = compare_nmr((4,) * 19, obs, partners=[((4,) * 19, "C76 isomer 1")])
    assert "second_component" not in v.details or not v.details["second_component"]
    assert not any("C76 isomer 1" in r for r in v.reasons)


def test_mixture_finding_reaches_the_row_reasons():
    # issue 15: "The mixture finding appears in the readable CLI output but not in the CSV
    # reasons, the HTML report or the board's table"
    from cageprint.evidence import TechniqueVerdict, rank

    c = Candidate("C78", 78, 1, "D3", (6,) * 13, 30, 60, 0.3)
    third = ("8 further lines (23 % of the intensity) fit a second component: C78 isomers "
             "4, 5 (D3h) (5x12+3x6); a mixture is assumed.")
    v = TechniqueVerdict("nmr", -3.0, "consistent",
                         ("23 lines observed, 13 predicted (13x6).", "13 lines match.", third),
                         {"second_component": {"label": "C78 isomers 4, 5 (D3h)"}})
    ranking = rank([c], {"nmr": [v]})
    assert any("second component" in r for r in ranking.rows[0].reasons)
    assert "second component" in ranking.table()[0]["reasons"]  # the CSV column


@pytest.mark.parametrize(("n", "ipr", "orbit_count"), [(76, True, 19), (84, False, 84)])
def test_cage_views_give_every_orbit_its_own_colour_and_marker(n, ipr, orbit_count):
    # issue 15: "the cage view colours orbits from a 10-colour cycle: 19-orbit cages repeat
    # colours; 84 one-carbon orbits are hopeless". The D2 C76 cage (19 orbits) and a C1 C84
    # with 84: every (colour, marker) pair is distinct in the 3D view and in the flat
    # projection, and hovering names the orbit (common practice, no source)
    from cageprint.symmetry import fingerprint
    from cageprint.widgets.cageview import cage_figures

    cage = next(c for c in iter_isomers(n, ipr=ipr)
                if len(fingerprint(c).nmr.orbits) == orbit_count)
    for fig in cage_figures(Candidate.from_cage(cage, fingerprint(cage))):
        pairs = [(t.marker.color, t.marker.symbol) for t in fig.data if t.name != "bonds"]
        assert len(pairs) == orbit_count and len(set(pairs)) == orbit_count
        hover = [t.hovertext[0] for t in fig.data if t.name != "bonds"]
        assert hover[0].endswith(f"orbit 1 of {orbit_count} · "
                                 f"{len(fingerprint(cage).nmr.orbits[0])} C, one 13C line")


def test_unknown_format_error_says_what_to_do_in_words(tmp_path):
    # issue 15: errors said "pass format= one of ..." (common practice, no source)
    from cageprint.errors import SpectrumFormatError
    from cageprint.spectra import load_spectrum

    p = tmp_path / "unknown.xyz"
    p.write_bytes(b"abc def\nghi\n")
    with pytest.raises(SpectrumFormatError) as info:
        load_spectrum(p)
    msg = str(info.value)
    assert "pass format=" not in msg and "export it as JCAMP-DX or two-column CSV" in msg


def test_beta_written_one_way_in_what_the_user_reads():
    # issue 15: "|beta|" beside "|β|" (common practice, no source)
    import dataclasses

    from cageprint.techniques import electronic, thresholds

    assert "|beta|" not in electronic.CAVEAT and "|β|" in electronic.CAVEAT
    helps = [f.metadata["setting"].help for f in dataclasses.fields(thresholds.UvVisSettings)]
    assert any("|β|" in h for h in helps) and not any("|beta|" in h for h in helps)


@pytest.fixture(scope="module")
def sc3n_c80(tmp_path_factory):
    # the demo's fraction D (Sc3N@C80, invented scenario): mass spectrum and 13C spectrum
    from cageprint.demo import ensure_demo
    from cageprint.session import Session

    d = ensure_demo(tmp_path_factory.mktemp("demo") / "demo-data")
    s = Session()
    s.load("mass", d / "fraction-D-mass.csv")
    s.load("nmr", d / "fraction-D-nmr.jdx")
    s.set_candidates(ipr=True)
    return s


def test_reasons_read_as_sentences(sc3n_c80):
    # issue 15: "reasons start in lower case", "1 1/6-intensity line matches 1 of the 1
    # four-carbon orbits", "a 80-carbon cage" (common practice, no source)
    reasons = sc3n_c80.ranking.rows[0].reasons
    assert "MS: Mass spectrum shows Sc3N@C80: a C80 cage is present." in reasons
    assert "NMR: One full-intensity line matches the one 60-carbon orbit." in reasons
    assert all(r.split(": ", 1)[1][:1].isupper() or r.split(": ", 1)[1][:1].isdigit()
               for r in reasons)


def test_a_technique_at_weight_zero_says_it_is_not_counted(sc3n_c80):
    # issue 15: "with the NMR weight at 0, all candidates tie 'same cage size' while their NMR
    # column says 'ruled out'" (common practice, no source)
    from cageprint.evidence import label
    from cageprint.widgets import ranking_rows

    sc3n_c80.set_weight("nmr", 0.0)
    try:
        ranking = sc3n_c80.ranking
        words = {row[label("nmr")] for row in ranking_rows(ranking)}
        assert words and all(w.endswith("(weight 0, not counted)") for w in words)
    finally:
        sc3n_c80.set_weight("nmr", 1.0)


@pytest.mark.slow
@pytest.mark.parametrize("n", [60, 70, 78])
def test_cli_and_chooser_agree_on_every_number_and_fused_count(n, capsys):
    # issue 15 done-when: over all isomers of C60, C70 and C78, one number per cage per list
    # kind, the CLI and the chooser agree, and fused-pentagon counts match the cage. Counts
    # 1,812 / 8,149 / 24,109 isomers and 1 / 1 / 5 IPR ones (Fowler & Manolopoulos, An Atlas
    # of Fullerenes, 1995, from memory)
    import csv
    import io

    from cageprint.cli import main
    from cageprint.session import Session
    from cageprint.widgets.chooser import CandidateChooser

    expected = {60: (1812, 1), 70: (8149, 1), 78: (24109, 5)}[n]
    for ipr, count in ((False, expected[0]), (True, expected[1])):
        capsys.readouterr()  # drop what the chooser's progress bar wrote
        assert main(["isomers", str(n), "--csv"] + (["--ipr"] if ipr else [])) == 0
        listed = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
        cli = {r["spiral"]: (int(r["isomer"]), int(r["fused_pentagon_pairs"])) for r in listed}
        assert sorted(v[0] for v in cli.values()) == list(range(1, count + 1))
        chooser = CandidateChooser(Session(), f"C{n}", ipr=ipr)
        cands = chooser.session.candidates
        assert len(cands) == count and len(chooser.rows) == count
        for c, row in zip(cands, chooser.rows, strict=True):
            number, fused = cli[" ".join(map(str, c.spiral))]
            assert c.isomer == row["isomer"] == number
            assert row["fused pentagons"] == fused
        for c in cands[:: max(1, count // 200)]:  # the count is the cage's own, re-derived
            assert Cage.from_spiral(n, c.spiral).fused_pentagon_pairs == cli[
                " ".join(map(str, c.spiral))][1]


@pytest.mark.parametrize(("n", "ipr", "orbit_count"), [(76, True, 19), (84, False, 84)])
def test_orbits_sharing_a_shape_stay_apart_under_colour_vision_deficiency(n, ipr, orbit_count):
    # issue 15: orbit colours "checked under a simulated colour-vision deficiency". Orbits
    # drawn with the same marker shape differ by at least 10 CAM02-UCS units under normal
    # vision and simulated deuteranomaly, protanomaly and tritanomaly at full severity
    # (Machado, Oliveira & Fernandes, IEEE TVCG 2009, as implemented by colorspacious; the
    # threshold of 10 is common practice, no source)
    import itertools

    from colorspacious import cspace_convert, deltaE

    from cageprint.figures import orbit_styles
    from cageprint.symmetry import fingerprint

    cage = next(c for c in iter_isomers(n, ipr=ipr)
                if len(fingerprint(c).nmr.orbits) == orbit_count)
    for flat in (False, True):
        styles = orbit_styles(fingerprint(cage).nmr.orbits, flat=flat)
        rgb = {c: [int(c[i:i + 2], 16) / 255 for i in (1, 3, 5)] for c, _ in styles}
        for cvd in (None, "deuteranomaly", "protanomaly", "tritanomaly"):
            seen = {c: v if cvd is None else cspace_convert(
                v, {"name": "sRGB1+CVD", "cvd_type": cvd, "severity": 100}, "sRGB1").clip(0, 1)
                for c, v in rgb.items()}
            for (c1, s1), (c2, s2) in itertools.combinations(styles, 2):
                if s1 == s2:
                    assert deltaE(seen[c1], seen[c2], input_space="sRGB1") >= 10, (cvd, c1, c2)


def test_tables_align_text_left(sc3n_c80, tmp_path):
    # issue 15: "Ranking and record tables right-align long text" (common practice, no
    # source: text columns read left to right)
    from cageprint.figures import html_table
    from cageprint.report import write_report
    from cageprint.widgets import ranking_rows

    table = html_table(ranking_rows(sc3n_c80.ranking), name="ranking")
    assert ".cp-table th,.cp-table td{" in table and "text-align:left" in table
    assert "text-align:right" not in table
    write_report(sc3n_c80, tmp_path / "report.html")
    page = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert "text-align:left" in page and "text-align:right" not in page


def test_the_report_names_techniques_not_keys(sc3n_c80, tmp_path):
    # issue 15: '"using mass, nmr"' (common practice, no source: the reader sees technique
    # names, not the kit's internal keys)
    from cageprint.report import write_report

    write_report(sc3n_c80, tmp_path / "report.html")
    page = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert "using mass, nmr" not in page and "mass, nmr" not in page
