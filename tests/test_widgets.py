"""Widgets without a browser: set a control from Python, check the session, table and figure."""

from __future__ import annotations

import re

import numpy as np
import pytest

pytest.importorskip("ipywidgets")
pytest.importorskip("anywidget")

from cageprint.evidence import Candidate  # noqa: E402
from cageprint.session import Session  # noqa: E402
from cageprint.spectra import Spectrum  # noqa: E402
from cageprint.widgets import (  # noqa: E402
    AssignmentBoard,
    CandidateChooser,
    ComparisonPanel,
    SpectrumLoader,
    sync_figure,
)

# Invented candidates with made-up fingerprints: the widget logic, not the science, is tested.
CANDIDATES = [
    Candidate("C76", 76, 1, "D2", (4,) * 19, 165, 192, 0.1),
    Candidate("C76", 76, 2, "Td", (24, 24, 12, 12, 4), 29, 49, 0.0),
]


def _nmr_profile(seed: int = 3) -> Spectrum:
    """19 strong lines and 3 weak ones on a flat, noisy baseline (invented)."""
    rng = np.random.default_rng(seed)
    x = np.linspace(125.0, 160.0, 14001)
    strong = 131.0 + 1.0 * np.arange(19)
    weak = np.array([127.0, 151.5, 153.5])
    y = np.zeros_like(x)
    for c, h in [(c, 1.0) for c in strong] + [(c, 0.12) for c in weak]:
        y += h * 0.015**2 / ((x - c) ** 2 + 0.015**2)
    y += rng.normal(0, 0.01, x.size)
    return Spectrum(x, y, technique="nmr", meta={"title": "invented 13C"})


@pytest.fixture()
def session():
    s = Session()
    s.set_candidates(CANDIDATES)
    s.load("nmr", _nmr_profile(), name="invented.jdx")
    return s


def _observed(panel) -> int:
    return int(re.search(r'data-observed="(\d+)"', panel.table.value).group(1))


def _predicted(panel) -> list[str]:
    return re.findall(r"<tr data-key=\"\d+\"[^>]*><td>[^<]*</td><td>[^<]*</td><td>[^<]*</td>"
                      r"<td>([^<]*)</td>", panel.table.value)


def test_threshold_changes_observed_count_table_and_figure(session):
    panel = ComparisonPanel(session, "nmr")
    n0, table0 = _observed(panel), panel.table.value
    peaks0 = len(panel.fig.data[1].x)
    assert n0 == peaks0 == 22  # 19 strong + 3 weak lines at S/N 12 (> default 5)
    panel.snr.value = 50.0
    assert _observed(panel) == 19 == len(panel.fig.data[1].x)
    assert panel.table.value != table0
    assert "19 lines observed" in panel.fig.layout.title.text
    assert session.thresholds("nmr")["snr"] == 50.0
    assert panel.problem.message == ""


def test_control_moved_like_the_browser(session):
    panel = ComparisonPanel(session, "nmr")
    idx = list(panel.snr.options).index(("50", 50.0))
    panel.snr.set_state({"index": idx})  # the front end sends the index, not the value
    assert session.thresholds("nmr")["snr"] == 50.0
    assert _observed(panel) == 19


def test_region_and_solvent_reach_the_session(session):
    panel = ComparisonPanel(session, "nmr")
    panel.region.value = (129.5, 140.5)  # lines at 131..140 ppm inside
    assert session.thresholds("nmr")["region"] == tuple(panel.region.value)
    assert _observed(panel) == 10
    assert panel.fig.layout.xaxis.range == tuple(panel.region.value)[::-1]  # shift drawn falling
    assert panel.fig.layout.xaxis.autorange is False
    panel.solvent.value = "CS2"
    assert session.thresholds("nmr")["solvent"] == "CS2"


def test_picking_another_candidate_changes_the_predicted_counts(session):
    panel = ComparisonPanel(session, "nmr", chosen=[1])
    assert _predicted(panel) == ["19"]
    panel.pick.value = (2,)
    assert _predicted(panel) == ["5"]
    assert 'data-key="2"' in panel.table.value and 'data-key="1"' not in panel.table.value


def test_figure_state_is_synced_after_an_update(session):
    panel = ComparisonPanel(session, "nmr")
    panel.snr.value = 50.0
    assert panel.fig._widget_data[1]["x"] is not None
    assert len(panel.fig._widget_data[1]["x"]) == 19
    assert panel.fig._widget_layout["title"]["text"] == panel.fig.layout.title.text
    sync_figure(panel.fig)  # idempotent


def test_a_bad_threshold_is_shown_in_the_panel(session):
    panel = ComparisonPanel(session, "nmr")
    table = panel.table.value
    panel.update({"region": (150.0, 150.0)})
    assert "region" in panel.problem.message
    assert panel.table.value == table  # the last good table stays


def _write_ir_csv(path, shift=0.0):
    x = np.linspace(400, 1600, 1201)
    y = sum(np.exp(-0.5 * ((x - c - shift) / 3) ** 2) for c in (527, 577, 1183, 1429))
    path.write_text("wavenumber,absorbance\n"
                    + "".join(f"{a:.1f},{b:.6f}\n" for a, b in zip(x, y, strict=True)))


def test_malformed_file_shows_error_and_keeps_previous_spectrum(tmp_path):
    _write_ir_csv(tmp_path / "good.csv")
    (tmp_path / "bad.csv").write_text("wavenumber,absorbance\n1,2\nthree,four\n5\n")
    s = Session()
    loader = SpectrumLoader(s, folder=tmp_path, technique="ir", initial="good.csv")
    good = loader.spectrum
    assert good is not None and s.spectra["ir"] is good
    y_before = np.array(loader.fig.data[0].y)
    loader.file.value = "bad.csv"
    assert "Could not read bad.csv" in loader.problem.message
    assert "previous spectrum is still loaded" in loader.problem.message
    assert "cp-problem" in loader.problem.widget.value
    assert loader.spectrum is good and s.spectra["ir"] is good
    np.testing.assert_array_equal(np.array(loader.fig.data[0].y), y_before)


def test_panel_follows_a_spectrum_loaded_later(session, tmp_path):
    panel_spectrum = session.spectra["nmr"]
    x = np.linspace(125.0, 160.0, 14001)
    y = sum(0.015**2 / ((x - c) ** 2 + 0.015**2) for c in (140.0, 150.0)) \
        + np.random.default_rng(1).normal(0, 0.01, x.size)
    (tmp_path / "two.csv").write_text("ppm,intensity\n" + "".join(
        f"{a:.4f},{b:.6f}\n" for a, b in zip(x, y, strict=True)))
    loader = SpectrumLoader(session, folder=tmp_path, technique="nmr")
    panel = ComparisonPanel(session, "nmr", loader=loader)
    assert panel.spectrum is panel_spectrum and _observed(panel) == 22
    loader.file.value = "two.csv"
    assert panel.spectrum is session.spectra["nmr"] is loader.spectrum
    assert _observed(panel) == 2 and len(panel.fig.data[0].x) == x.size


def test_correcting_the_technique_rereads_the_file(tmp_path):
    _write_ir_csv(tmp_path / "band.csv")
    s = Session()
    loader = SpectrumLoader(s, folder=tmp_path, technique="ir", initial="band.csv")
    loader.technique.value = "raman"
    assert set(s.spectra) == {"raman"} and loader.spectrum.technique == "raman"
    assert 'data-technique="raman"' in loader.info.value


def test_upload_reads_bytes(tmp_path):
    _write_ir_csv(tmp_path / "up.csv", shift=2.0)
    s = Session()
    loader = SpectrumLoader(s, folder=tmp_path, technique="ir")
    loader._on_upload({"new": ({"name": "up.csv", "content": (tmp_path / "up.csv").read_bytes()},)})
    assert s.spectra["ir"] is loader.spectrum
    assert "up.csv" in loader.info.value and 'data-technique="ir"' in loader.info.value
    loader.technique.value = "raman"  # an upload can be corrected too
    assert set(s.spectra) == {"raman"}


def test_a_technique_that_does_not_fit_puts_the_menu_back(tmp_path):
    # issue 15: "switching technique on a file that does not fit leaves the dropdown on the
    # wrong technique" (common practice, no source)
    _write_ir_csv(tmp_path / "band.csv")
    s = Session()
    loader = SpectrumLoader(s, folder=tmp_path, technique="ir", initial="band.csv")
    loader.technique.value = "nmr"  # x in cm-1 cannot be ppm
    assert "does not fit a nmr spectrum" in loader.problem.message
    assert loader.technique.value == "ir" and loader.spectrum.technique == "ir"
    assert set(s.spectra) == {"ir"}
    assert "does not fit" in loader.problem.message  # the reason stays on screen


def test_an_upload_clears_the_file_menu_and_has_a_tooltip(tmp_path):
    # issue 15: "after an upload the file dropdown still shows the old file"; "the upload
    # tooltip reads 'null'" (common practice, no source)
    _write_ir_csv(tmp_path / "first.csv")
    _write_ir_csv(tmp_path / "up.csv", shift=2.0)
    s = Session()
    loader = SpectrumLoader(s, folder=tmp_path, technique="ir", initial="first.csv")
    assert loader.file.value == "first.csv"
    loader._on_upload({"new": ({"name": "mine.csv",
                                "content": (tmp_path / "up.csv").read_bytes()},)})
    assert loader.file.value == "" and loader.source == "mine.csv"
    assert loader.upload.tooltip and "spectrum file" in loader.upload.tooltip


def test_panel_captions_and_controls_speak_words_with_units(session):
    # issue 15: captions read like code ("prominence=None"); units missing on the region
    # readout (common practice, no source)
    panel = ComparisonPanel(session, "nmr")
    cap = panel.settings_caption()
    assert "=" not in cap and "min S/N: " in cap and "region: " in cap and " ppm" in cap
    assert "prominence: none" in cap
    labels = {c.name: c.widget.description for c in panel.controls.values()}
    assert labels["region"] == "region (ppm)"


def test_scores_are_explained_where_they_are_shown(session):
    # issue 15: "scores ... explained only in the HTML report; a panel shows an unweighted
    # score beside a weighted one in the table" (common practice, no source)
    session.set_weight("nmr", 0.5)
    try:
        panel = ComparisonPanel(session, "nmr")
        table = panel.table.value
        assert "<th>weighted</th>" in table and "log-likelihood-like" in table
        assert "weight, 0.5" in table
        board = AssignmentBoard(session)
        assert "log-likelihood-like" in board.table.value and "posterior share" in \
            board.table.value
    finally:
        session.set_weight("nmr", 1.0)


def test_chooser_filters_sorts_and_picks(session):
    session.formula, session.ipr = "C76", True
    chooser = CandidateChooser(session, "C76", ipr=True)
    assert 'data-rows="2"' in chooser.table.value
    chooser.point_group.value = "Td"
    assert [r["isomer"] for r in chooser.visible_rows()] == [2]
    chooser.point_group.value = "any"
    chooser.sort.value = "13C lines"
    assert [r["isomer"] for r in chooser.visible_rows()] == [2, 1]
    chooser.pick.value = (1,)
    assert chooser.chosen == (1,)
    assert 'class="cp-picked"' in chooser.table.value


def test_chooser_reports_a_bad_formula():
    chooser = CandidateChooser(Session(), "C61")
    assert "C61" in chooser.problem.message and "even number" in chooser.problem.message


def test_board_weights_rerank_and_show(session):
    board = AssignmentBoard(session)
    before = board.table.value
    assert 'data-cp-table="ranking"' in before
    board.weights["nmr"].value = 0.0
    assert session.weights["nmr"] == 0.0
    assert board.table.value != before


def test_cage_view_follows_the_picked_candidate():
    from cageprint.widgets import CageView

    s = Session("C76")
    s.set_candidates(ipr=True)
    view = CageView(s, isomer=1)
    names = [t.name for t in view.fig3d.data[1:]]
    # Fowler & Manolopoulos, An Atlas of Fullerenes (1995): C76 D2 has 19 four-carbon orbits,
    # C76 Td 2x24 + 2x12 + 1x4 (from memory; also what cageprint.symmetry finds)
    assert len(names) == 19 and set(n.split(": ")[1] for n in names) == {"4 C"}
    view.pick.value = 2
    sizes = sorted(int(t.name.split(": ")[1].split()[0]) for t in view.fig3d.data[1:])
    assert sizes == [4, 12, 12, 24, 24]
    assert [t.name for t in view.fig2d.data[1:]] == [t.name for t in view.fig3d.data[1:]]
    assert "(Td)" in view.fig3d.layout.title.text
    assert view.problem.message == ""


def test_board_export_writes_record_and_report(session, tmp_path):
    import json

    board = AssignmentBoard(session, out_dir=tmp_path / "out", name="frac-x")
    rec, rep = board.export()
    assert json.loads(rec.read_text())  # the record is JSON
    assert "<html" in rep.read_text().lower()
    assert "frac-x.json" in board.exported.value and board.problem.message == ""


def test_board_export_failure_is_shown(session, tmp_path):
    blocker = tmp_path / "taken"
    blocker.write_text("a file where the output folder should be")
    board = AssignmentBoard(session, out_dir=blocker / "sub")
    assert board.export() is None
    assert "Export failed, nothing was overwritten" in board.problem.message


def test_board_export_button_is_as_wide_as_its_caption(session):
    # issue 15: "Board: the export caption is cut" (ipywidgets' default button width)
    board = AssignmentBoard(session)
    assert board.export_button.layout.width == "auto"
    assert board.export_button.description == "export record + report"


def test_board_old_written_line_goes_when_a_new_export_fails(session, tmp_path):
    # issue 15: "an old 'written:' line stays above a new error"
    board = AssignmentBoard(session, out_dir=tmp_path / "out", name="frac-x")
    assert board.export() is not None and "written:" in board.exported.value
    blocker = tmp_path / "taken"
    blocker.write_text("a file where the output folder should be")
    board.out_dir = blocker / "sub"
    assert board.export() is None
    assert board.exported.value == "" and "Export failed" in board.problem.message


def test_a_peak_list_is_drawn_as_sticks_and_counted():
    s = Session()
    s.set_candidates(CANDIDATES)
    lines = Spectrum(131.0 + np.arange(19), np.full(19, 4.0), technique="nmr", kind="peaks")
    s.load("nmr", lines)
    panel = ComparisonPanel(s, "nmr", chosen=[1, 2])
    x = np.array(panel.fig.data[0].x, dtype=float)
    assert x.size == 3 * 19 and np.isnan(x[2::3]).all()
    assert _observed(panel) == 19 and _predicted(panel) == ["19", "5"]


def test_chooser_fused_pentagon_filter_on_all_isomers():
    # Fowler & Manolopoulos, An Atlas of Fullerenes (1995): C28 has 2 isomers, D2 and Td
    # (from memory); every C28 cage has fused pentagons (IPR needs 60 or 70+ atoms)
    chooser = CandidateChooser(Session(), "C28", ipr=False)
    fused = [v for _, v in chooser.fused.options if v >= 0]
    assert len(chooser.rows) == 2 and min(fused) > 0
    chooser.fused.value = fused[0]
    assert all(r["fused pentagons"] == fused[0] for r in chooser.visible_rows())
    assert "isomers of C28" in chooser.table.value


def test_panel_shows_the_threshold_the_session_used(session):
    # regression: with S/N 8 in the session, the dropdown showed 10 and the caption said
    # snr=10 while the observation used 8 (the caption now says "min S/N: 8")
    session.set_threshold("nmr", "snr", 8)
    panel = ComparisonPanel(session, "nmr")
    assert panel.snr.value == 8.0 and ("8", 8.0) in panel.snr.options
    assert panel.observation.thresholds["snr"] == 8.0
    caption = re.search(r"<caption>(.*?)</caption>", panel.table.value).group(1)
    assert "min S/N: 8," in caption and "min S/N: 10" not in caption
    session.set_threshold("nmr", "snr", 20)  # changed elsewhere: the panel follows
    panel.update()
    assert panel.snr.value == 20.0 and "min S/N: 20," in panel.table.value
    panel.snr.value = 50.0  # and the other way round
    assert session.settings("nmr").snr == 50.0


@pytest.mark.parametrize("name", ["../../x", "/tmp/escape", "sub/x"])
def test_board_export_name_cannot_escape_its_folder(session, tmp_path, name):
    # issue 14: "the assignment board's export name can escape its folder (../../x, absolute
    # paths)"; common practice, no source
    out = tmp_path / "a" / "b" / "out"
    board = AssignmentBoard(session, out_dir=out, name=name)
    assert board.export() is None
    assert "export name" in board.problem.message and "plain file name" in board.problem.message
    assert not any(p.suffix in (".json", ".html") for p in tmp_path.rglob("*"))


def test_missing_initial_file_names_the_file_not_a_trait_error(tmp_path):
    # issue 14: "A missing notebook input file shows a widget TraitError, not the file"
    s = Session()
    loader = SpectrumLoader(s, folder=tmp_path, technique="ir", initial="fraction-Z-ir.jdx")
    assert loader.problem.message == f"Could not read fraction-Z-ir.jdx in {tmp_path}: no such file"
    gone = SpectrumLoader(s, folder=tmp_path / "nope", technique="ir", initial="a.jdx")
    assert "a.jdx" in gone.problem.message and "the folder does not exist" in gone.problem.message


def test_chooser_pages_through_every_isomer_and_sorts_all_of_them():
    # issue 15: "'All isomers' renders every row as one HTML table ... C80 (31,924) or C84
    # (51,592) would freeze the tab". C50, all 271 isomers: pages of MAX_ROWS rows, sorting
    # and filtering act on every row, picks survive page turns, the caption names the
    # numbering (common practice, no source)
    from cageprint.widgets.chooser import MAX_ROWS

    chooser = CandidateChooser(Session(), "C50", ipr=False)
    assert len(chooser.rows) == 271 and f'data-rows="{MAX_ROWS}"' in chooser.table.value
    assert "rows 1–200 of 271" in chooser.page_info.value and chooser.prev.disabled
    assert "numbers of the all-isomer list" in chooser.table.value
    chooser.pick.value = (3,)
    chooser.turn(+1)
    assert "rows 201–271 of 271" in chooser.page_info.value and chooser.next.disabled
    assert 'data-rows="71"' in chooser.table.value and chooser.chosen == (3,)
    assert 271 in [v for _, v in chooser.pick.options]  # this page's cages can be picked
    chooser.sort.value = "point group order"  # a new order: back to the first page
    assert chooser.page == 0
    orders = [r["order"] for r in chooser.visible_rows()]
    assert orders == sorted(orders, reverse=True) and len(orders) == 271


def test_species_table_follows_the_loaded_mass_file(tmp_path):
    # issue 15: "the species table below does not follow the loaded file". The demo fractions
    # are invented (cageprint.demo): D holds Sc3N@C80, A holds C60 (their truth table).
    from cageprint.demo import ensure_demo, load_truth
    from cageprint.widgets import SpeciesTable

    demo = ensure_demo(tmp_path / "demo")
    truth = load_truth(demo)["fractions"]
    s = Session()
    loader = SpectrumLoader(s, folder=demo, technique="mass", initial="fraction-D-mass.csv")
    table = SpeciesTable(s, loader)
    assert "in fraction-D-mass.csv" in table.table.value
    assert f'data-key="{truth["D"]["formula"]}"' in table.table.value
    loader.file.value = "fraction-A-mass.csv"
    assert "in fraction-A-mass.csv" in table.table.value
    assert f'data-key="{truth["A"]["formula"]}"' in table.table.value
    assert f'data-key="{truth["D"]["formula"]}"' not in table.table.value
    empty = SpeciesTable(Session())
    assert "No mass spectrum loaded" in empty.table.value
