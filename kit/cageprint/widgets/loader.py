"""Spectrum loader: pick a file from the folder or upload one; see it at once."""

from __future__ import annotations

import html
import os
import pathlib

import ipywidgets as w

from .. import figures
from ..session import Session
from ..spectra import Spectrum
from ..techniques import registry
from . import _port
from ._common import Problem, boxed, figure_widget, sync_figure

#: file endings offered in the picker
SPECTRUM_SUFFIXES = (".jdx", ".dx", ".jcamp", ".csv", ".tsv", ".txt", ".mzml", ".peaks")
_AUTO = "(from the file)"


class SpectrumLoader:
    """Load a spectrum into a session from the notebook's folder or an upload.

    The format is detected by the readers; the technique and units found are
    shown and the technique can be corrected (the file is then read again as
    that technique).  A file that cannot be read leaves the previous spectrum
    in place and says why in plain words.

    Parameters
    ----------
    session : Session
        The headless session the spectrum goes into.
    folder : path-like
        Folder whose spectrum files are offered (default: the working directory).
    technique : str, optional
        Preselect a technique instead of taking it from the file.
    initial : str, optional
        File (name in ``folder``) to load at once.
    plot : bool
        Show the loader's own plot (leave it out when a comparison panel shows the spectrum).
    """

    def __init__(self, session: Session, folder: str | os.PathLike = ".",
                 technique: str | None = None, initial: str | None = None, plot: bool = True):
        self.session = session
        self.folder = pathlib.Path(folder)
        self.spectrum = None
        self.source: str | None = None
        self._listeners: list = []
        self._read_from = None
        files = sorted(p.name for p in self.folder.iterdir()
                       if p.is_file() and p.suffix.lower() in SPECTRUM_SUFFIXES) \
            if self.folder.is_dir() else []
        self.file = w.Dropdown(options=["", *files], value="", description="file",
                               layout=w.Layout(width="420px"))
        self.file.add_class("cp-file")
        self.upload = w.FileUpload(accept=",".join(SPECTRUM_SUFFIXES), multiple=False,
                                   description="upload")
        self.upload.add_class("cp-upload")
        opts = [(_AUTO, "")] + [(t.label, t.key) for t in registry.techniques()
                                if t.needs_spectrum]
        self.technique = w.Dropdown(options=opts, value=technique or "", description="technique")
        self.technique.add_class("cp-technique")
        self.info = w.HTML()
        self.info.add_class("cp-spectrum-info")
        self.problem = Problem("cp-loader-error")
        self.fig = figure_widget(figures.spectrum_figure(_placeholder(), title="no spectrum yet"),
                                 "cp-loader-figure")
        self.file.observe(self._on_file, names=["value"])
        self.upload.observe(self._on_upload, names=["value"])
        self.technique.observe(self._on_technique, names=["value"])
        parts = [w.HBox([self.file, self.upload, self.technique]), self.info, self.problem.widget]
        self.ui = w.VBox(parts + ([boxed(self.fig)] if plot else []))
        self.ui.add_class("cp-loader")
        if initial and initial in self.file.options:
            self.file.value = initial
        elif initial:
            self._initial_elsewhere(initial)

    def _initial_elsewhere(self, initial: str) -> None:
        """An initial file not in the list: read it if it exists, else say which and why."""
        path = self.folder / initial
        if path.is_file():
            self.load(path, name=initial)
            return
        why = ("the folder does not exist" if not self.folder.is_dir() else
               "no such file" + (" (it is a folder)" if path.is_dir() else ""))
        self.problem.show(f"Could not read {initial} in {self.folder}: {why}")

    # -- actions -------------------------------------------------------------
    def load(self, source, name: str | None = None) -> bool:
        """Read ``source`` (path or bytes) into the session; True when it worked."""
        tech = self.technique.value or None
        try:
            spec = _port.load(self.session, source, technique=tech, name=name)
        except Exception as exc:  # shown, not swallowed: the user reads it in the widget
            shown = name or str(source)
            self.problem.show(f"Could not read {shown}: {exc}. "
                              "The previous spectrum is still loaded." if self.spectrum
                              is not None else f"Could not read {shown}: {exc}")
            return False
        self.problem.clear()
        previous = self.spectrum
        if previous is not None and previous.technique != spec.technique \
                and self.source == (name or str(source)):
            self.session.unload(previous.technique)  # the technique was corrected
        self.spectrum = spec
        self.source = name or str(source)
        self._read_from = source  # path or uploaded bytes, to read again as another technique
        self._show()
        for fn in self._listeners:
            fn(spec)
        return True

    def on_loaded(self, fn) -> None:
        """Call ``fn(spectrum)`` after each successful load (e.g. a comparison panel's refresh)."""
        self._listeners.append(fn)

    def _show(self) -> None:
        s = self.spectrum
        fmt = s.meta.get("format", "")
        self.info.value = (
            f'<span class="cp-found" data-technique="{s.technique}">'
            f"{html.escape(self.source or '')}: {html.escape(registry.get(s.technique).label)}, "
            f"x in {html.escape(s.x_unit)}, y as {html.escape(s.y_unit)}, {len(s)} points"
            f"{', ' + html.escape(str(fmt)) if fmt else ''}, {s.kind}</span>")
        new = figures.spectrum_figure(s, title=self.source)
        with self.fig.batch_update():
            self.fig.data[0].x, self.fig.data[0].y = figures.trace_xy(s)
            self.fig.data[1].x, self.fig.data[1].y = [], []
            self.fig.data[1].name = "peaks (not picked yet)"
            self.fig.layout.title.text = self.source
            self.fig.layout.xaxis.title.text = new.layout.xaxis.title.text
            self.fig.layout.yaxis.title.text = new.layout.yaxis.title.text
            self.fig.layout.xaxis.autorange = new.layout.xaxis.autorange or True
        sync_figure(self.fig)

    # -- callbacks -----------------------------------------------------------
    def _on_file(self, change) -> None:
        if change["new"]:
            self.load(self.folder / change["new"], name=change["new"])

    def _on_upload(self, change) -> None:
        for item in change["new"] or ():
            content = item["content"] if isinstance(item, dict) else item.content
            name = item["name"] if isinstance(item, dict) else item.name
            self.load(bytes(content), name=name)

    def _on_technique(self, change) -> None:
        if self._read_from is not None:
            self.load(self._read_from, name=self.source)


def _placeholder() -> Spectrum:
    return Spectrum([0.0, 1.0], [0.0, 0.0], technique="ir", meta={"title": "no spectrum yet"})
