"""cageprint: decide which carbon cage a sample holds.

The library is pure computation (numpy, scipy, networkx, pandas); the
notebook widgets live in :mod:`cageprint.widgets` and are imported only on
demand.
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

from .errors import (
    CageError,
    CageprintError,
    EvidenceError,
    FormulaError,
    SessionError,
    SpectrumError,
    SpectrumFormatError,
    SymmetryError,
)

try:
    __version__ = version("cageprint")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0+unknown"

__all__ = [
    "__version__",
    "CageprintError",
    "CageError",
    "SymmetryError",
    "SpectrumFormatError",
    "SpectrumError",
    "FormulaError",
    "EvidenceError",
    "SessionError",
]
