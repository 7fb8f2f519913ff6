"""cageprint: decide which carbon cage a sample holds.

The top level offers what a script needs (in the style of ``ase.io.read`` and
networkx's top level):

* :func:`load_spectrum` reads a spectrum file or bytes (JCAMP-DX, mzML,
  delimited text, peak lists) into a :class:`Spectrum`;
* :func:`candidates` lists the candidate cages of a formula;
* :func:`assign` ranks them against the spectra given, returning a
  :class:`Ranking`;
* :class:`Session` does the same step by step, recomputing only what a change
  affects (what the notebooks' widgets use).

The library is pure computation (numpy, scipy, networkx, pandas, numba); the
notebook widgets live in :mod:`cageprint.widgets` and are imported only on
demand.

Examples
--------
>>> import cageprint
>>> [c.point_group for c in cageprint.candidates("C76")]
['D2', 'Td']
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

from . import errors
from .api import assign, candidates
from .candidate import Candidate
from .errors import (
    CageError,
    CageprintError,
    EvidenceError,
    FormulaError,
    NotebookRunError,
    SessionError,
    SettingsError,
    SpectrumError,
    SpectrumFormatError,
    SymmetryError,
)
from .evidence import Ranking
from .formula import parse_formula
from .session import Session
from .spectra import Spectrum, load_spectrum

try:
    __version__ = version("cageprint")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0+unknown"

__all__ = [
    "__version__",
    "load_spectrum",
    "candidates",
    "assign",
    "Session",
    "Spectrum",
    "Candidate",
    "Ranking",
    "parse_formula",
    *errors.__all__,  # the exception family
]
