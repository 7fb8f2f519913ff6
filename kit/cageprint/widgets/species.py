"""The species a mass spectrum shows, as a table that follows the loaded file."""

from __future__ import annotations

from typing import Any

import ipywidgets as w

from .. import figures
from ..errors import CageprintError
from ..session import Session
from ._common import Problem

#: columns of the species table, in order
SPECIES_COLUMNS = ("formula", "charge", "m/z (mono)", "relative", "error / ppm", "envelope fit",
                   "13C fraction", "kind", "why")


def species_rows(observation: Any) -> list[dict[str, Any]]:
    """One row per isotope envelope of a mass observation, in readable units.

    The 13C fraction shows ``± error`` when it was fitted (``c13="fit"``).
    """
    rows = []
    for s in observation.species:
        c13 = f"{s.c13_fraction:.4f}"
        if s.c13_fraction_err is not None:
            c13 += f" ± {s.c13_fraction_err:.4f}"
        rows.append({"formula": s.formula, "charge": f"{s.charge:+d}",
                     "m/z (mono)": round(s.mz, 4), "relative": round(s.relative_abundance, 3),
                     "error / ppm": round(s.error_ppm, 1),
                     "envelope fit": round(s.envelope_score, 3), "13C fraction": c13,
                     "kind": s.kind, "why": " ".join(s.reasons)})
    return rows


def species_html(observation: Any, source: str = "") -> str:
    """The species table (:func:`species_rows`) with a caption naming ``source``."""
    rows = species_rows(observation)
    where = f" in {source}" if source else ""
    return figures.html_table(rows, list(SPECIES_COLUMNS), name="mass-species", key="formula",
                              caption=f"{len(rows)} species{where}")


class SpeciesTable:
    """The mass spectrum's species, redrawn after every load of ``loader``.

    Parameters
    ----------
    session : Session
    loader : SpectrumLoader, optional
        Its loads refresh the table, and its file name is the caption's.
    """

    def __init__(self, session: Session, loader: Any = None):
        self.session = session
        self.loader = loader
        self.problem = Problem("cp-species-error")
        self.table = w.HTML()
        self.table.add_class("cp-species")
        self.ui = w.VBox([self.problem.widget, self.table])
        if loader is not None:
            loader.on_loaded(self.refresh)
        self.refresh()

    def refresh(self, *_: Any) -> None:
        """Redraw from the session's current mass observation."""
        self.problem.clear()
        if not self.session.has_data("mass"):
            self.table.value = '<p class="cp-note">No mass spectrum loaded yet.</p>'
            return
        source = (getattr(self.loader, "source", None)
                  or self.session.spectra["mass"].meta.get("title", ""))
        try:
            obs = self.session.observation("mass")
        except CageprintError as exc:  # shown, not swallowed; the last table stays
            self.problem.show(f"Could not find species in {source}: {exc}")
            return
        self.table.value = species_html(obs, str(source))
