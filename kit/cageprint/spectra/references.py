"""Reference lines: 13C solvent and standard shifts, and IR artefact regions.

Solvent lines are what a 13C spectrum of a fullerene sample shows besides the
cage: the deuterated lock solvent, a co-solvent, the TMS reference.
:func:`mark_reference_peaks` says which picked peaks are those, so they are
not counted as cage lines; :func:`rereference` moves the ppm axis so a
chosen solvent line sits at its tabulated shift.  IR artefact regions
(atmospheric CO2 and water vapour) are flagged the same way by
:func:`mark_ir_artefacts`; flagged peaks are not removed, since real cage
bands can fall inside (C60's 1429 cm-1 band lies in the water-bending region).
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from ..errors import SpectrumError
from .model import Spectrum
from .peaks import PeakResult

__all__ = [
    "SOLVENT_LINES",
    "IR_ARTEFACTS",
    "REFERENCE_TOL",
    "SolventLines",
    "ReferenceMarks",
    "solvent_names",
    "reference_lines",
    "multiplet_lines",
    "COUPLINGS",
    "rereference",
    "mark_reference_peaks",
    "mark_ir_artefacts",
]

#: default match tolerance (ppm) between a picked peak and a reference line
REFERENCE_TOL = 0.2


@dataclass(frozen=True)
class SolventLines:
    """13C lines of one solvent or reference compound.

    ``lines`` are (shift in ppm, which carbon); ``source`` names where the
    numbers come from.
    """

    name: str
    aliases: tuple[str, ...]
    lines: tuple[tuple[float, str], ...]
    source: str


_FULMER = ("G. R. Fulmer et al., 'NMR Chemical Shifts of Trace Impurities: Common Laboratory "
           "Solvents, Organics, and Gases in Deuterated Solvents Relevant to the Organometallic "
           "Chemist', Organometallics 29, 2176 (2010), Table 2 (residual solvent 13C signals)")
_GOTTLIEB = ("H. E. Gottlieb, V. Kotlyar, A. Nudelman, 'NMR Chemical Shifts of Common "
             "Laboratory Solvents as Trace Impurities', J. Org. Chem. 62, 7512 (1997)")

# name          aliases                               lines (ppm, carbon)                  source
_TABLE = (
    SolventLines("CDCl3", ("chloroform-d", "cdcl3", "chloroform"),
                 ((77.16, "CDCl3"),), f"{_FULMER}; {_GOTTLIEB}"),
    SolventLines("C6D6", ("benzene-d6", "c6d6", "benzene"),
                 ((128.06, "C6D6"),), f"{_FULMER}; {_GOTTLIEB}"),
    SolventLines("toluene-d8", ("toluene", "c7d8", "tol-d8"),
                 ((137.48, "C ipso"), (128.87, "CD ortho"), (127.96, "CD meta"),
                  (125.13, "CD para"), (20.43, "CD3")), _FULMER),
    SolventLines("CD2Cl2", ("dichloromethane-d2", "cd2cl2", "dichloromethane"),
                 ((53.84, "CD2Cl2"),), _FULMER),
    SolventLines("acetone-d6", ("acetone", "(cd3)2co"),
                 ((206.26, "C=O"), (29.84, "CD3")), _FULMER),
    # not in the two tables above; commonly tabulated values, from memory
    SolventLines("1,2-dichlorobenzene-d4", ("o-dichlorobenzene-d4", "odcb-d4", "odcb",
                                            "dichlorobenzene", "c6d4cl2"),
                 ((132.39, "C-Cl"), (130.05, "CD"), (127.19, "CD")),
                 "from memory (commonly tabulated 1,2-dichlorobenzene-d4 values; check locally)"),
    # shift: Fulmer et al. 2010 (Table 2, 1,1,2,2-tetrachloroethane-d2, 73.78 ppm)
    SolventLines("1,1,2,2-tetrachloroethane-d2", ("tetrachloroethane-d2", "tce-d2",
                                                  "c2d2cl4", "tetrachloroethane"),
                 ((73.78, "CDCl2"),), _FULMER),
    # CS2 has no deuterium lock; it is run with a lock solvent (below)
    SolventLines("CS2", ("carbon disulfide", "cs2"),
                 ((192.8, "CS2"),), "from memory (carbon disulfide 13C, about 192.8 ppm)"),
    # TMS defines 0 ppm for 13C: R. K. Harris et al., 'NMR nomenclature. Nuclear spin
    # properties and conventions for chemical shifts', Pure Appl. Chem. 73, 1795 (2001)
    SolventLines("TMS", ("tetramethylsilane", "tms"),
                 ((0.0, "Si(CH3)4"),), "R. K. Harris et al., Pure Appl. Chem. 73, 1795 (2001)"),
)

#: (solvent, carbon) -> (number of lines, J(C,D) in Hz) of the deuterated carbons, which
#: show as 1:1:1 triplets (CD), 1:2:3:2:1 quintets (CD2) and 1:3:6:7:6:3:1 septets (CD3);
#: carbons not listed are singlets.  Multiplicities follow from spin-1 deuterium (2nI + 1
#: lines); the J values are from memory (commonly quoted one-bond 13C-2H couplings, about
#: 1/6.5 of the 13C-1H ones; check locally): CDCl3 32.0, C6D6 24.3, CD2Cl2 27.2,
#: acetone-d6 CD3 19.4, toluene-d8 aromatic CD 24 and CD3 19.1, 1,2-dichlorobenzene-d4
#: CD 25, 1,1,2,2-tetrachloroethane-d2 CDCl2 about 29 Hz.
COUPLINGS: Mapping[tuple[str, str], tuple[int, float]] = MappingProxyType({
    ("CDCl3", "CDCl3"): (3, 32.0),
    ("C6D6", "C6D6"): (3, 24.3),
    ("toluene-d8", "CD ortho"): (3, 24.0),
    ("toluene-d8", "CD meta"): (3, 24.0),
    ("toluene-d8", "CD para"): (3, 24.3),
    ("toluene-d8", "CD3"): (7, 19.1),
    ("CD2Cl2", "CD2Cl2"): (5, 27.2),
    ("acetone-d6", "CD3"): (7, 19.4),
    ("1,2-dichlorobenzene-d4", "CD"): (3, 25.0),
    ("1,1,2,2-tetrachloroethane-d2", "CDCl2"): (3, 29.0),
})

#: solvent name -> SolventLines (names and aliases are matched case-insensitively)
SOLVENT_LINES: Mapping[str, SolventLines] = MappingProxyType({s.name: s for s in _TABLE})
_ALIAS = {a.lower(): s.name for s in _TABLE for a in (s.name, *s.aliases)}

#: IR regions where atmospheric absorption leaves artefacts: (lo, hi, label) in cm-1.
#: Band centres from memory (CO2 nu3 ~2349 and nu2 ~667 cm-1; H2O bending ~1595 cm-1 and
#: stretching ~3657/3756 cm-1, with their rotational structure); the region widths are
#: common practice, no source.
IR_ARTEFACTS: tuple[tuple[float, float, str], ...] = (
    (2280.0, 2400.0, "atmospheric CO2 (asymmetric stretch)"),
    (640.0, 700.0, "atmospheric CO2 (bend)"),
    (1300.0, 2000.0, "water vapour (bend, rotational lines)"),
    (3500.0, 3900.0, "water vapour (stretch, rotational lines)"),
)


def solvent_names() -> list[str]:
    """Names of the tabulated solvents and references.

    Examples
    --------
    >>> "CDCl3" in solvent_names()
    True
    """
    return list(SOLVENT_LINES)


def _solvents(solvent: str) -> list[SolventLines]:
    parts = [p.strip() for p in re.split(r"\s*(?:\+|/|;|\band\b)\s*", str(solvent)) if p.strip()]
    out = []
    for p in parts:
        key = _ALIAS.get(p.lower())
        if key is None:
            raise SpectrumError(
                f"unknown solvent {p!r}; known: {', '.join(SOLVENT_LINES)} (combine with '+', "
                "e.g. 'CS2 + C6D6')"
            )
        out.append(SOLVENT_LINES[key])
    if not out:
        raise SpectrumError("no solvent given")
    return out


def reference_lines(solvent: str) -> list[tuple[float, str, str]]:
    """The 13C lines (ppm, carbon, solvent) of a solvent or a mixture ``'CS2 + C6D6'``.

    Examples
    --------
    >>> reference_lines("CS2 + C6D6")
    [(192.8, 'CS2', 'CS2'), (128.06, 'C6D6', 'C6D6')]
    >>> [p for p, _, _ in reference_lines("toluene-d8")]
    [137.48, 128.87, 127.96, 125.13, 20.43]
    """
    return [(ppm, carbon, s.name) for s in _solvents(solvent) for ppm, carbon in s.lines]


def multiplet_lines(solvent: str, observe_mhz: float | None
                    ) -> list[tuple[float, float, str]]:
    """Every line of a solvent's 13C multiplets: (ppm, relative intensity, label).

    Deuterated carbons split into 2nI + 1 lines spaced by J(C,D) (:data:`COUPLINGS`); at
    ``observe_mhz`` the spacing in ppm is J / MHz.  Without a frequency the lines of the
    lowest common field (75 MHz) are given, which spans the widest range.

    Examples
    --------
    >>> [(round(p, 3), w) for p, w, _ in multiplet_lines("C6D6", 125.0)]
    [(127.866, 1.0), (128.06, 1.0), (128.254, 1.0)]
    >>> len(multiplet_lines("acetone-d6", 150.0))   # C=O singlet + CD3 septet
    8
    """
    mhz = float(observe_mhz) if observe_mhz else 75.0
    out: list[tuple[float, float, str]] = []
    for s in _solvents(solvent):
        for ppm, carbon in s.lines:
            n, j = COUPLINGS.get((s.name, carbon), (1, 0.0))
            weights = _pascal_spin1(n)
            for k, w in enumerate(weights):
                off = (k - (n - 1) / 2) * j / mhz
                out.append((ppm + off, w / max(weights), f"{s.name} {carbon}"))
    return out


def _pascal_spin1(n: int) -> list[float]:
    """Relative line intensities of coupling to spin-1 nuclei giving ``n`` lines."""
    w = [1.0]
    for _ in range((n - 1) // 2):
        w = [sum(w[i - k] for k in range(3) if 0 <= i - k < len(w)) for i in range(len(w) + 2)]
    return w


def rereference(
    spectrum: Spectrum | PeakResult,
    solvent: str,
    observed_position: float,
    line: float | None = None,
) -> tuple[Spectrum | PeakResult, dict]:
    """Shift the ppm axis so ``observed_position`` lands on a solvent line.

    Parameters
    ----------
    spectrum : Spectrum or PeakResult
        13C data (ppm).
    solvent : str
        Solvent or mixture; its line nearest to ``observed_position`` is used
        unless ``line`` (ppm) picks one.
    observed_position : float
        Where that line is observed now (ppm).

    Returns
    -------
    (Spectrum or PeakResult, dict)
        Shifted copy and diagnostics (offset, line used).

    Examples
    --------
    >>> s = Spectrum([76.9, 77.0, 77.1, 143.0], [0, 1, 0, 5], technique="nmr")
    >>> t, d = rereference(s, "CDCl3", 77.0)
    >>> round(d["offset"], 2), np.round(t.x, 2).tolist()
    (0.16, [77.06, 77.16, 77.26, 143.16])
    """
    tech = spectrum.technique
    if tech != "nmr":
        raise SpectrumError(f"rereference works on 13C NMR (ppm) data, not {tech}")
    lines = reference_lines(solvent)
    if line is None:
        ppm, carbon, name = min(lines, key=lambda t: abs(t[0] - observed_position))
    else:
        match = [t for t in lines if abs(t[0] - line) < 1e-9]
        if not match:
            raise SpectrumError(
                f"line={line} is not a line of {solvent!r}; its lines are "
                f"{', '.join(str(t[0]) for t in lines)} ppm"
            )
        ppm, carbon, name = match[0]
    offset = float(ppm - observed_position)
    diag = {"solvent": name, "line": ppm, "carbon": carbon, "observed": float(observed_position),
            "offset": offset}
    if isinstance(spectrum, PeakResult):
        d = dict(spectrum.diagnostics)
        d["rereference"] = diag
        return PeakResult(spectrum.positions + offset, spectrum.heights, spectrum.widths,
                          spectrum.areas, spectrum.snr, spectrum.technique, spectrum.x_unit,
                          d), diag
    meta = dict(spectrum.meta)
    meta["rereference"] = diag
    meta.setdefault("solvent", solvent)
    return spectrum.replace(x=spectrum.x + offset, meta=meta), diag


@dataclass(frozen=True, eq=False)
class ReferenceMarks:
    """Which peaks match a reference line (or an artefact region).

    ``is_reference[i]`` is True when peak i matches; ``labels[i]`` says what
    it matched ("" otherwise); ``positions`` are the peaks examined.
    """

    positions: np.ndarray
    is_reference: np.ndarray
    labels: tuple[str, ...]
    tolerance: float

    def __len__(self) -> int:
        return int(self.positions.size)

    @property
    def kept(self) -> np.ndarray:
        """Mask of the peaks that are not reference lines."""
        return ~self.is_reference


def _positions(peaks) -> np.ndarray:
    if isinstance(peaks, PeakResult):
        return np.asarray(peaks.positions, dtype=float)
    return np.asarray(peaks, dtype=float).ravel()


def mark_reference_peaks(
    peaks: PeakResult | Sequence[float], solvent: str, tol: float = REFERENCE_TOL
) -> ReferenceMarks:
    """Mark the picked 13C peaks that are solvent or reference lines.

    A peak matches a line when it lies within ``tol`` ppm of it.

    Examples
    --------
    >>> m = mark_reference_peaks([20.4, 125.1, 143.2, 137.5], "toluene-d8")
    >>> m.is_reference.tolist(), m.labels[2]
    ([True, True, False, True], '')
    """
    if not tol > 0:
        raise SpectrumError(f"tol must be > 0 ppm, got {tol!r}")
    pos = _positions(peaks)
    lines = reference_lines(solvent)
    flags = np.zeros(pos.size, dtype=bool)
    labels = []
    for p in pos:
        best = min(lines, key=lambda t: abs(t[0] - p))
        if abs(best[0] - p) <= tol:
            labels.append(f"{best[2]} {best[1]} ({best[0]} ppm)")
            flags[len(labels) - 1] = True
        else:
            labels.append("")
    return ReferenceMarks(pos, flags, tuple(labels), float(tol))


def mark_ir_artefacts(
    peaks: PeakResult | Sequence[float],
    regions: Sequence[tuple[float, float, str]] = IR_ARTEFACTS,
) -> ReferenceMarks:
    """Flag IR peaks inside atmospheric-artefact regions (CO2, water vapour).

    Examples
    --------
    >>> m = mark_ir_artefacts([527.0, 577.0, 1183.0, 1429.0, 2349.0])
    >>> m.is_reference.tolist()
    [False, False, False, True, True]
    >>> m.labels[4]
    'atmospheric CO2 (asymmetric stretch)'
    """
    pos = _positions(peaks)
    flags = np.zeros(pos.size, dtype=bool)
    labels = []
    for i, p in enumerate(pos):
        hit = [lab for lo, hi, lab in regions if lo <= p <= hi]
        flags[i] = bool(hit)
        labels.append("; ".join(hit))
    return ReferenceMarks(pos, flags, tuple(labels), 0.0)
