"""Spectrum loader: pick a file from the folder or upload one; see it at once."""

from __future__ import annotations

import html
import os
import pathlib

import ipywidgets as w

from .. import figures
from ..session import Session
from ..spectra import Spectrum
from ..spectra.fid import FidProcessing
from ..spectra.readers.rawnmr import is_experiment_folder
from ..techniques import registry
from . import _port
from ._common import Problem, boxed, figure_widget, sync_figure

#: file endings offered in the picker
SPECTRUM_SUFFIXES = (".jdx", ".dx", ".jcamp", ".csv", ".tsv", ".txt", ".mzml", ".mzxml",
                     ".mgf", ".peaks", ".zip")
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
        self._reverting = False
        files = sorted(p.name for p in self.folder.iterdir()
                       if (p.is_file() and p.suffix.lower() in SPECTRUM_SUFFIXES)
                       or is_experiment_folder(p)) \
            if self.folder.is_dir() else []
        self.file = w.Dropdown(options=["", *files], value="", description="file",
                               layout=w.Layout(width="420px"))
        self.file.add_class("cp-file")
        self.upload = w.FileUpload(accept=",".join(SPECTRUM_SUFFIXES), multiple=False,
                                   description="upload",
                                   tooltip="Read a spectrum file from your computer "
                                           "(JCAMP-DX, CSV, peak list, mzML, zipped raw NMR)")
        self.upload.add_class("cp-upload")
        opts = [(_AUTO, "")] + [(t.label, t.key) for t in registry.techniques()
                                if t.needs_spectrum]
        self.technique = w.Dropdown(options=opts, value=technique or "", description="technique")
        self.technique.add_class("cp-technique")
        self.info = w.HTML()
        self.info.add_class("cp-spectrum-info")
        self.processing = FidControls(self._on_processing)
        self.problem = Problem("cp-loader-error")
        self.fig = figure_widget(figures.spectrum_figure(_placeholder(), title="no spectrum yet"),
                                 "cp-loader-figure")
        self.file.observe(self._on_file, names=["value"])
        self.upload.observe(self._on_upload, names=["value"])
        self.technique.observe(self._on_technique, names=["value"])
        parts = [w.HBox([self.file, self.upload, self.technique]), self.info,
                 self.processing.ui, self.problem.widget]
        self.ui = w.VBox(parts + ([boxed(self.fig)] if plot else []))
        self.ui.add_class("cp-loader")
        if initial and initial in self.file.options:
            self.file.value = initial
        elif initial:
            self._initial_elsewhere(initial)

    @classmethod
    def for_file(cls, session: Session, path: str | os.PathLike, technique: str | None = None,
                 plot: bool = True) -> SpectrumLoader:
        """A loader over the folder of ``path``, with ``path`` loaded."""
        p = pathlib.Path(path)
        return cls(session, folder=p.parent, technique=technique, initial=p.name, plot=plot)

    def _initial_elsewhere(self, initial: str) -> None:
        """An initial file not in the list: read it if it exists, else say which and why."""
        path = self.folder / initial
        if path.is_file() or is_experiment_folder(path):
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
            spec = _port.load(self.session, source, technique=tech, name=name,
                              **self.processing.options_for(source))
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
        self.processing.show_for(spec)
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
            if self.load(bytes(content), name=name):
                self.file.value = ""  # the folder's file is no longer what is loaded

    def _on_technique(self, change) -> None:
        if self._read_from is None or self._reverting:
            return
        if not self.load(self._read_from, name=self.source) and self.spectrum is not None:
            # the file does not fit the new technique: the menu goes back to what is loaded
            self._reverting = True
            try:
                self.technique.value = change["old"]
            finally:
                self._reverting = False

    def _on_processing(self) -> None:
        if self._read_from is not None:
            self.load(self._read_from, name=self.source)


class FidControls:
    """Processing controls for a raw NMR experiment (shown only when one is loaded).

    Each change reprocesses the FID and redraws; the settings used go into the
    spectrum's ``meta["processing"]``, hence into the session, record and report.
    """

    def __init__(self, on_change):
        d = FidProcessing()
        style = {"description_width": "initial"}
        self.lb = w.BoundedFloatText(value=d.line_broadening_hz, min=0.0, max=50.0, step=0.1,
                                     description="line broadening (Hz)", style=style,
                                     layout=w.Layout(width="220px"))
        self.window = w.Dropdown(options=["exponential", "gaussian", "none"], value=d.window,
                                 description="window", layout=w.Layout(width="200px"))
        self.phase = w.ToggleButtons(options=[("auto phase", "auto"), ("by hand", "manual")],
                                     value=d.phase)
        self.p0 = w.FloatSlider(value=0.0, min=-180.0, max=180.0, step=0.5,
                                description="p0 (deg)", continuous_update=False)
        self.p1 = w.FloatSlider(value=0.0, min=-360.0, max=360.0, step=1.0,
                                description="p1 (deg)", continuous_update=False)
        self.reference = w.Dropdown(options=[("stored", "stored"), ("solvent line", "solvent"),
                                             ("TMS", "tms")], value="stored",
                                    description="reference")
        self.note = w.HTML()
        self._on_change = on_change
        self._quiet = False
        for c in (self.lb, self.window, self.phase, self.p0, self.p1, self.reference):
            c.observe(self._changed, names=["value"])
        self.ui = w.VBox([w.HBox([self.lb, self.window, self.reference]),
                          w.HBox([self.phase, self.p0, self.p1]), self.note],
                         layout=w.Layout(display="none"))
        self.ui.add_class("cp-fid-controls")

    def settings(self) -> FidProcessing:
        return FidProcessing(line_broadening_hz=float(self.lb.value), window=self.window.value,
                             phase=self.phase.value, p0=float(self.p0.value),
                             p1=float(self.p1.value), reference=self.reference.value)

    def options_for(self, source) -> dict:
        raw = isinstance(source, (bytes, bytearray)) and bytes(source[:4]) == b"PK\x03\x04"
        raw = raw or (isinstance(source, (str, os.PathLike)) and pathlib.Path(source).is_dir())
        return {"processing": self.settings()} if raw else {}

    def show_for(self, spectrum) -> None:
        proc = spectrum.meta.get("processing") if spectrum is not None else None
        is_fid = isinstance(proc, dict) and "p0" in proc
        self.ui.layout.display = "" if is_fid else "none"
        if not is_fid:
            return
        self._quiet = True  # show the phase the automatic correction chose
        try:
            if proc.get("phase_mode") == "auto":
                self.p0.value = max(-180.0, min(180.0, round(proc["p0"], 1)))
                self.p1.value = max(-360.0, min(360.0, round(proc["p1"], 1)))
        finally:
            self._quiet = False
        self.note.value = html.escape(
            f"FID {proc.get('points')} points -> {proc.get('size')}, phase p0 "
            f"{proc['p0']:.1f} deg, p1 {proc['p1']:.1f} deg ({proc.get('phase_mode')}), "
            f"reference: {proc.get('reference', '')}")

    def _changed(self, change) -> None:
        if self._quiet:
            return
        if change["owner"] in (self.p0, self.p1) and self.phase.value == "auto":
            self._quiet = True
            self.phase.value = "manual"  # moving a phase slider means phasing by hand
            self._quiet = False
        self._on_change()


def _placeholder() -> Spectrum:
    return Spectrum([0.0, 1.0], [0.0, 0.0], technique="ir", meta={"title": "no spectrum yet"})
