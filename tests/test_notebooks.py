"""Every template notebook runs headless on the demo data and concludes what the truth says.

The notebooks are executed once per test session (``cageprint run-notebooks``'s
own code), then each is checked: no error, its conclusion matches the demo
scenario's truth table, the executed copy has no widget state, and the HTML
export carries the figures' data, draws with one plotly.js file shared by the folder, and
loads no remote script.
Wall times are written to ``test-artifacts/notebook-times.txt`` (target < 30 s
each; a benchmark-style figure, not an assertion).
"""

from __future__ import annotations

import json
import re

import nbformat
import pytest

from cageprint.cli import main
from cageprint.cli.notebooks import (
    WIDGET_NOTE,
    NotebookRunError,
    default_notebooks_dir,
    find_conclusion,
    inject_parameters,
    parse_params,
    run_notebook,
)
from cageprint.demo import load_truth

NOTEBOOKS = sorted(p.name for p in default_notebooks_dir().glob("[0-9]*.ipynb"))


@pytest.fixture(scope="module")
def truth():
    return load_truth()


@pytest.fixture(scope="module")
def runs(tmp_path_factory, repo_root):
    out = tmp_path_factory.mktemp("executed")
    done, failed = {}, {}
    for name in NOTEBOOKS:
        try:
            done[name] = run_notebook(default_notebooks_dir() / name, out)
        except NotebookRunError as exc:
            failed[name] = str(exc)
    art = repo_root / "test-artifacts"
    art.mkdir(exist_ok=True)
    (art / "notebook-times.txt").write_text(
        "".join(f"{n}\t{r.seconds:.1f} s\n" for n, r in done.items())
        + "".join(f"{n}\tFAILED\n" for n in failed))
    return done, failed


def _run(runs, name):
    done, failed = runs
    assert name not in failed, failed.get(name)
    return done[name]


def test_there_is_a_notebook_per_step():
    stems = [n.split("-", 1)[0] for n in NOTEBOOKS]
    assert stems == ["00", "01", "02", "03", "04", "05", "06"], NOTEBOOKS


def _check_00(c, truth):
    assert c["fractions"] == sorted(truth["fractions"])


def _check_01(c, truth):
    frac = truth["fractions"][c["fraction"]]
    assert c["formula"] == frac["formula"]
    assert c["charge"] == frac["charge"]


def _check_02(c, truth):
    # Fowler & Manolopoulos, An Atlas of Fullerenes (1995): C78 has 5 IPR isomers (from memory)
    assert c["formula"] == "C78" and c["ipr"] is True
    assert c["n_candidates"] == 5
    frac = truth["fractions"]["C"]
    assert {k["point_group"] for k in frac["cages"]} <= set(c["point_groups"])


def _check_top(c, truth):
    frac = truth["fractions"][c["fraction"]]
    major = max(frac["cages"], key=lambda k: k["share"])
    assert major["isomer"] in c["top_isomers"], (c, major)
    assert major["point_group"] in c["top_point_groups"]


def _check_05(c, truth):
    frac = truth["fractions"][c["fraction"]]
    major = max(frac["cages"], key=lambda k: k["share"])
    assert major["isomer"] not in c["ruled_out"]
    assert c["onset_nm"] is not None


def _check_04(c, truth):
    _check_top(c, truth)
    details = truth["fractions"][c["fraction"]]["details"]
    # C60: 4 IR-active T1u bands (Kraetschmer et al., Nature 1990) and 10 Raman-active 2Ag + 8Hg
    # (Bethune et al., Chem. Phys. Lett. 1991), both from memory; the demo data carry them
    assert c["bands"] == {"ir": len(details["ir"]["bands_cm1"]),
                          "raman": len(details["raman"]["bands_cm1"])} == {"ir": 4, "raman": 10}


def _check_06(c, truth):
    _check_top(c, truth)
    assert c["formula"] == truth["fractions"][c["fraction"]]["formula"]
    assert [p.rsplit(".", 1)[1] for p in c["exported"]] == ["json", "html"]


CHECKS = {"00": _check_00, "01": _check_01, "02": _check_02, "03": _check_top,
          "04": _check_04, "05": _check_05, "06": _check_06}


@pytest.mark.slow
@pytest.mark.parametrize("name", NOTEBOOKS)
def test_notebook_concludes_the_truth(runs, truth, name):
    res = _run(runs, name)
    assert res.conclusion is not None, f"{name} states no conclusion"
    CHECKS[name[:2]](res.conclusion, truth)


@pytest.mark.slow
@pytest.mark.parametrize("name", NOTEBOOKS)
def test_shared_copies_open_without_kernel_or_internet(runs, name):
    res = _run(runs, name)
    nb = nbformat.read(res.notebook, as_version=4)
    assert "widgets" not in nb.metadata  # no ~5 MB widget state per FigureWidget
    text = res.notebook.read_text()
    assert "application/vnd.jupyter.widget-state+json" not in text
    for cell in nb.cells:
        for out in cell.get("outputs", []):
            if "application/vnd.jupyter.widget-view+json" in out.get("data", {}):
                assert out["data"]["text/plain"] == WIDGET_NOTE  # not "VBox(children=(..."
    html = res.html.read_text()
    assert not re.search(r"<script[^>]*src=[\"']?(https?:)?//", html), "remote script in HTML"
    if name[:2] != "00":
        assert "Plotly.newPlot" in html  # the static figures' data are in the export
        # issue 15: "executed copies and HTML exports are 5-6 MB each (plotly.js in every
        # file)": plotly.js is one file beside them, shared by the folder, loaded relatively
        shared = re.findall(r'<script[^>]*\bsrc="(plotly-[0-9][^"]*\.min\.js)"', html)
        assert len(set(shared)) == 1, shared
        bundle = res.html.parent / shared[0]
        assert bundle.stat().st_size > 3_000_000
        assert "window.Plotly" in bundle.read_text()[-2000:]
        assert "plotly.js v" not in html and "plotly.js v" not in text
        assert len(text) < 1_500_000 and len(html) < 1_500_000, (len(text), len(html))
    assert len(list(res.html.parent.glob("plotly-*.min.js"))) <= 1


@pytest.mark.slow
@pytest.mark.parametrize("name", NOTEBOOKS)
def test_few_lines_of_code_before_the_first_result(runs, name):
    # issue 15: "each template notebook opens with plumbing (imports from six modules, a
    # renderer line, demo set-up)". The code cells before the first one that shows something
    # hold at most 6 lines, the parameters cell aside (comment and blank lines not counted)
    nb = nbformat.read(_run(runs, name).notebook, as_version=4)
    lines = 0
    for cell in nb.cells:
        if cell.cell_type != "code" or "parameters" in cell.metadata.get("tags", []) \
                or "injected-parameters" in cell.metadata.get("tags", []):
            continue
        if cell.get("outputs"):
            break
        lines += sum(1 for ln in cell.source.splitlines()
                     if ln.strip() and not ln.strip().startswith("#"))
    assert lines <= 6, f"{name}: {lines} lines of code before the first result"
    first = next(c for c in nb.cells if c.cell_type == "code" and not {
        "parameters", "injected-parameters"} & set(c.metadata.get("tags", [])))
    assert "cpw.setup(" in first.source  # one explicit set-up call


@pytest.mark.slow
def test_run_notebooks_keeps_exports_out_of_the_source_tree(runs):
    # issue 15: "run-notebooks --out DIR also writes notebook 06's export into the source
    # tree": OUT_DIR is set beside the executed copy unless the caller sets it
    res = _run(runs, "06-assignment.ipynb")
    exports = res.notebook.parent / "06-assignment-exports"
    assert sorted(p.suffix for p in exports.iterdir()) == [".html", ".json"]
    assert not (default_notebooks_dir() / "results").exists()


@pytest.mark.slow
def test_nmr_notebook_on_the_mixture_fraction(tmp_path, truth):
    # the same template on other inputs, as `cageprint run-notebooks --param` does
    frac = truth["fractions"]["C"]
    nb = default_notebooks_dir() / "03-carbon-13-nmr.ipynb"
    assert main(["run-notebooks", "--out", str(tmp_path), str(nb),
                 "--param", f"NMR_FILE=demo-data/{frac['files']['nmr']}",
                 "--param", f"FORMULA={frac['formula']}", "--param", "SAMPLE=C"]) == 0
    conclusion = find_conclusion(nbformat.read(tmp_path / nb.name, as_version=4))
    assert conclusion["fraction"] == "C"
    _check_top(conclusion, truth)


def test_parameters_are_injected_after_the_parameters_cell():
    nb = nbformat.v4.new_notebook()
    p = nbformat.v4.new_code_cell("SNR = 5")
    p.metadata["tags"] = ["parameters"]
    nb.cells = [nbformat.v4.new_markdown_cell("x"), p, nbformat.v4.new_code_cell("print(SNR)")]
    inject_parameters(nb, parse_params(["SNR=20", "FILE=a b.jdx"]))
    assert nb.cells[2].metadata["tags"] == ["injected-parameters"]
    assert "SNR = 20" in nb.cells[2].source and "FILE = 'a b.jdx'" in nb.cells[2].source


def test_parameter_errors_are_plain():
    with pytest.raises(NotebookRunError, match=r"--param '5=x': expected KEY=VALUE"):
        parse_params(["5=x"])
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_code_cell("x = 1")]
    with pytest.raises(NotebookRunError, match="no cell tagged 'parameters'; cannot inject SNR"):
        inject_parameters(nb, {"SNR": 3})


def test_run_notebooks_reports_a_missing_notebook(tmp_path, capsys):
    assert main(["run-notebooks", "--out", str(tmp_path), str(tmp_path / "nope.ipynb")]) == 1
    assert "no such file" in capsys.readouterr().out


def test_a_failing_cell_is_reported_with_the_notebook_and_error(tmp_path):
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_code_cell("x = 1"), nbformat.v4.new_code_cell("x / 0")]
    nbformat.write(nb, tmp_path / "broken.ipynb")
    with pytest.raises(NotebookRunError, match=r"notebook 'broken.ipynb' failed after .* s: "
                                               r"ZeroDivisionError"):
        run_notebook(tmp_path / "broken.ipynb", tmp_path / "out")
    assert (tmp_path / "out" / "broken.ipynb").exists()  # kept, with the traceback in it


def test_notebooks_are_stored_without_outputs():
    # the templates are committed clean; executed copies are products of run-notebooks
    for name in NOTEBOOKS:
        nb = json.loads((default_notebooks_dir() / name).read_text())
        assert all(not c.get("outputs") for c in nb["cells"] if c["cell_type"] == "code"), name
        tagged = [c for c in nb["cells"] if "parameters" in c.get("metadata", {}).get("tags", [])]
        assert len(tagged) == 1, name
