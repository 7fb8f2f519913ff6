"""``cageprint run-notebooks``: execute the template notebooks headless and keep shareable copies.

Each notebook runs in a fresh ``python3`` kernel with its own folder as the
working directory.  ``--param KEY=VALUE`` values are injected as a new cell
right after the cell tagged ``parameters`` (a later assignment wins, so the
template's defaults stay visible).  For every notebook two files are written:

* ``NAME.ipynb``: the executed copy **without** widget state (a plotly
  FigureWidget would add ~5 MB of front-end code to it and still not
  re-render without a kernel); live-widget outputs keep a one-line note;
* ``NAME.html``: an HTML export whose static figures draw with plotly.js from
  ``plotly-VERSION.min.js`` in the same folder (written once per folder, ~5 MB,
  shared by every notebook there), and no ``<script src=...>`` points to the internet.

Figures survive both because the kernel is started with
``PLOTLY_RENDERER=plotly_mimetype+notebook`` (JupyterLab draws the mimetype,
the HTML export the script); the plotly.js bundle that renderer embeds in each
notebook is moved into the shared file, so a copy weighs its figures' data only.

The heavy Jupyter packages are imported only when the command runs, so the
command-line core stays importable without them.
"""

from __future__ import annotations

import argparse
import ast
import collections
import json
import os
import pathlib
import re
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

from ..errors import NotebookRunError
from ..fileio import atomic_write_bytes, atomic_write_text

#: plotly renderer for kernels started here (see module docstring)
PLOTLY_RENDERER = "plotly_mimetype+notebook"
#: seconds one cell may run before the notebook counts as failed
CELL_TIMEOUT = 300
#: mimetype under which a notebook's last cell states its conclusion
CONCLUSION_MIME = "application/vnd.cageprint.conclusion+json"
#: text left in place of a live widget in the executed copy
WIDGET_NOTE = "[live control: open this notebook in JupyterLab and run it to use it]"

_WIDGET_MIME = "application/vnd.jupyter.widget-view+json"
_REMOTE_SCRIPT = re.compile(
    r"<script[^>]*\bsrc\s*=\s*[\"']?(?:https?:)?//[^>]*>\s*</script>", re.IGNORECASE
)
#: the plotly.js bundle the ``notebook`` renderer embeds (a licence banner opens it)
_PLOTLYJS = re.compile(
    r"<script>(/\*\*\s*\* plotly\.js v([0-9][0-9A-Za-z.+-]*)\s[\s\S]*?)</script>")
_KEY = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")
_ANSI = re.compile(r"\x1b\[[0-9;]*[A-Za-z]")


@dataclass(frozen=True)
class NotebookRun:
    """What one headless run produced.

    Attributes
    ----------
    source : pathlib.Path
        The template notebook.
    notebook, html : pathlib.Path
        Executed copy and its HTML export.
    seconds : float
        Wall time of the execution (kernel start included).
    conclusion : dict or None
        The payload of the last :data:`CONCLUSION_MIME` output, if any.
    """

    source: pathlib.Path
    notebook: pathlib.Path
    html: pathlib.Path
    seconds: float
    conclusion: dict | None = field(default=None)


def default_notebooks_dir() -> pathlib.Path:
    """The repository's ``notebooks/`` folder (next to ``kit/``), or ``./notebooks``."""
    here = pathlib.Path(__file__).resolve()
    for parent in here.parents:
        cand = parent / "notebooks"
        if cand.is_dir() and (parent / "pyproject.toml").exists():
            return cand
    return pathlib.Path("notebooks")


def parse_params(items: Sequence[str]) -> dict[str, object]:
    """Turn ``["KEY=VALUE", ...]`` into a dict; values are Python literals or plain text.

    Examples
    --------
    >>> parse_params(["nmr_file='a.jdx'", "snr=5", "fraction=B"])
    {'nmr_file': 'a.jdx', 'snr': 5, 'fraction': 'B'}
    """
    out: dict[str, object] = {}
    for item in items:
        key, sep, raw = item.partition("=")
        key = key.strip()
        if not sep or not _KEY.match(key):
            raise NotebookRunError(
                f"--param {item!r}: expected KEY=VALUE with KEY a Python name, found no usable KEY"
            )
        try:
            value: object = ast.literal_eval(raw.strip())
        except (ValueError, SyntaxError):
            value = raw.strip()
        out[key] = value
    return out


def inject_parameters(nb, params: Mapping[str, object]) -> None:
    """Insert a cell tagged ``injected-parameters`` after the ``parameters`` cell.

    Raises :class:`NotebookRunError` when parameters are given but the
    notebook has no cell tagged ``parameters``.
    """
    if not params:
        return
    # lazy: notebook-extra packages, heavy; only run-notebooks needs them
    import nbformat

    tagged = [i for i, c in enumerate(nb.cells)
              if "parameters" in c.get("metadata", {}).get("tags", [])]
    idx = tagged[0] if tagged else None
    if idx is None:
        raise NotebookRunError(
            "notebook has no cell tagged 'parameters'; cannot inject "
            + ", ".join(sorted(params))
        )
    lines = ["# Parameters injected by `cageprint run-notebooks`"]
    lines += [f"{k} = {v!r}" for k, v in params.items()]
    cell = nbformat.v4.new_code_cell("\n".join(lines))
    cell.metadata["tags"] = ["injected-parameters"]
    nb.cells.insert(idx + 1, cell)


def _declares(nb, name: str) -> bool:
    """True when the notebook's ``parameters`` cell assigns ``name``."""
    for c in nb.cells:
        if "parameters" in c.get("metadata", {}).get("tags", []):
            return any(ln.split("=", 1)[0].strip() == name for ln in c.source.splitlines()
                       if "=" in ln)
    return False


def _tidy_widget_outputs(nb) -> None:
    for cell in nb.cells:
        for out in cell.get("outputs", []):
            data = out.get("data")
            if data and _WIDGET_MIME in data:
                data["text/plain"] = WIDGET_NOTE


def share_plotlyjs(nb, folder: str | os.PathLike) -> str | None:
    """Move the plotly.js bundle embedded in an executed notebook into ``folder``.

    Each bundle becomes ``plotly-VERSION.min.js`` in ``folder`` (written once: a file of
    the same version and size is kept) and its inline script a ``<script src=...>`` to
    that file, relative, so the notebook's HTML export beside it draws offline.  Returns
    the file name, or None when the notebook embeds no bundle.

    Examples
    --------
    >>> import nbformat, tempfile
    >>> nb = nbformat.v4.new_notebook()
    >>> cell = nbformat.v4.new_code_cell("fig")
    >>> cell.outputs = [nbformat.v4.new_output("display_data", {"text/html":
    ...     "<script>/**\\n* plotly.js v9.9.9\\n*/ var Plotly = {};</script>"})]
    >>> nb.cells.append(cell)
    >>> share_plotlyjs(nb, tempfile.mkdtemp())
    'plotly-9.9.9.min.js'
    >>> nb.cells[0].outputs[0].data["text/html"]
    '<script src="plotly-9.9.9.min.js" charset="utf-8"></script>'
    """
    folder = pathlib.Path(folder)
    names: list[str] = []

    def move(m: re.Match) -> str:
        name = f"plotly-{m.group(2)}.min.js"
        data = m.group(1).encode("utf-8")
        target = folder / name
        if not (target.is_file() and target.stat().st_size == len(data)):
            atomic_write_bytes(target, data)
        names.append(name)
        return f'<script src="{name}" charset="utf-8"></script>'

    for cell in nb.cells:
        for out in cell.get("outputs", []):
            data = out.get("data") or {}
            html = data.get("text/html")
            if isinstance(html, list):
                html = "".join(html)
            if html and "plotly.js v" in html:
                data["text/html"] = _PLOTLYJS.sub(move, html)
    return names[0] if names else None


def find_conclusion(nb) -> dict | None:
    """Return the last conclusion payload written in an executed notebook, or None."""
    found = None
    for cell in nb.cells:
        for out in cell.get("outputs", []):
            data = out.get("data") or {}
            if CONCLUSION_MIME in data:
                payload = data[CONCLUSION_MIME]
                found = json.loads(payload) if isinstance(payload, str) else dict(payload)
    return found


def export_html(nb) -> str:
    """HTML of an executed notebook with every remote ``<script src=...>`` removed.

    The static figures bring plotly.js (embedded, or the shared file of
    :func:`share_plotlyjs`), so nothing is lost offline; remote loaders
    (require.js, MathJax) would only fail there.
    """
    # lazy: notebook-extra packages, heavy; only run-notebooks needs them
    from nbconvert import HTMLExporter

    exporter = HTMLExporter()
    body, _ = exporter.from_notebook_node(nb)
    return _REMOTE_SCRIPT.sub("", body)


def run_notebook(
    path: str | os.PathLike,
    out_dir: str | os.PathLike,
    params: Mapping[str, object] | None = None,
    timeout: int = CELL_TIMEOUT,
) -> NotebookRun:
    """Execute one notebook headless; write the executed copy and its HTML export.

    Parameters
    ----------
    path : path-like
        The template notebook; it runs with its own folder as working directory.
    out_dir : path-like
        Where ``NAME.ipynb`` and ``NAME.html`` are written (created if needed).
    params : mapping, optional
        Values injected after the cell tagged ``parameters``.
    timeout : int
        Seconds one cell may take.

    Returns
    -------
    NotebookRun
    """
    # lazy: notebook-extra packages, heavy; only run-notebooks needs them
    import nbformat
    from nbclient import NotebookClient
    from nbclient.exceptions import CellExecutionError

    src = pathlib.Path(path).resolve()
    if not src.is_file():
        raise NotebookRunError(f"notebook {str(path)!r}: no such file")
    try:
        nb = nbformat.read(src, as_version=4)
    except Exception as exc:  # nbformat raises several unrelated types
        raise NotebookRunError(f"notebook {src.name!r}: not a readable .ipynb ({exc})") from exc
    out = pathlib.Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    params = dict(params or {})
    if "OUT_DIR" not in params and _declares(nb, "OUT_DIR"):
        # a notebook's own exports go beside its executed copy, never into the source tree
        params["OUT_DIR"] = str(out.resolve() / f"{src.stem}-exports")
    inject_parameters(nb, params)

    old = os.environ.get("PLOTLY_RENDERER")
    os.environ["PLOTLY_RENDERER"] = PLOTLY_RENDERER  # kernels inherit the environment
    t0 = time.perf_counter()
    class _Client(NotebookClient):
        # nbclient's stand-in for Output widgets writes each captured output into
        # widget_state even when widget state is not stored, and fails (KeyError) on the first
        # one (e.g. a progress bar shown inside an Output widget); a default entry per widget
        # is enough, and none of it reaches the saved notebook (metadata.widgets is dropped)
        def reset_execution_trackers(self) -> None:
            super().reset_execution_trackers()
            self.widget_state = collections.defaultdict(dict)

    client = _Client(
        nb,
        timeout=timeout,
        kernel_name="python3",
        store_widget_state=False,
        resources={"metadata": {"path": str(src.parent)}},
    )
    error: str | None = None
    try:
        client.execute()
    except CellExecutionError as exc:
        error = str(exc)
    finally:
        if old is None:
            os.environ.pop("PLOTLY_RENDERER", None)
        else:
            os.environ["PLOTLY_RENDERER"] = old
    seconds = time.perf_counter() - t0
    nb.metadata.pop("widgets", None)
    _tidy_widget_outputs(nb)
    share_plotlyjs(nb, out)
    ipynb = out / src.name
    nbformat.write(nb, ipynb)
    html = out / (src.stem + ".html")
    atomic_write_text(html, export_html(nb))
    if error is not None:
        plain = _ANSI.sub("", error).strip()
        last = plain.splitlines()[-1] if plain else "cell failed"
        raise NotebookRunError(
            f"notebook {src.name!r} failed after {seconds:.1f} s: {last} "
            f"(executed copy with the traceback: {ipynb})"
        )
    return NotebookRun(src, ipynb, html, seconds, find_conclusion(nb))


def run_notebooks(
    notebooks: Sequence[str | os.PathLike] | None = None,
    out_dir: str | os.PathLike = "out/notebooks",
    params: Mapping[str, object] | None = None,
    timeout: int = CELL_TIMEOUT,
) -> list[NotebookRun]:
    """Execute several notebooks (default: every ``*.ipynb`` in ``notebooks/``), in name order."""
    if not notebooks:
        folder = default_notebooks_dir()
        notebooks = sorted(folder.glob("[0-9]*.ipynb"))
        if not notebooks:
            raise NotebookRunError(f"no numbered notebooks found in {folder}")
    return [run_notebook(p, out_dir, params, timeout) for p in notebooks]


def add_parser(sub) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "run-notebooks",
        help="execute the template notebooks headless; write executed copies and HTML",
        description="Execute notebooks headless (default: every numbered notebook in "
        "notebooks/) and write, per notebook, an executed copy without widget state and an "
        "HTML export that opens offline.",
    )
    p.add_argument("notebooks", nargs="*", metavar="NOTEBOOK", help="notebooks to run")
    p.add_argument("--out", default="out/notebooks", metavar="DIR",
                   help="output folder (default: out/notebooks)")
    p.add_argument("--param", action="append", default=[], metavar="KEY=VALUE",
                   help="value for the notebooks' parameters cell; repeatable")
    p.add_argument("--timeout", type=int, default=CELL_TIMEOUT, metavar="S",
                   help=f"seconds one cell may take (default {CELL_TIMEOUT})")
    return p


def run(args) -> int:
    params = parse_params(args.param)
    failed = 0
    paths = args.notebooks or None
    targets = list(paths) if paths else sorted(default_notebooks_dir().glob("[0-9]*.ipynb"))
    if not targets:
        raise NotebookRunError(f"no numbered notebooks found in {default_notebooks_dir()}")
    for nbpath in targets:
        try:
            res = run_notebook(nbpath, args.out, params, args.timeout)
        except NotebookRunError as exc:
            failed += 1
            print(f"FAILED {pathlib.Path(nbpath).name}: {exc}")
            continue
        said = ""
        if res.conclusion:
            said = "  -> " + str(res.conclusion.get("summary", ""))
        print(f"ok     {res.source.name}  {res.seconds:5.1f} s  {res.notebook}  {res.html}{said}")
    return 1 if failed else 0
