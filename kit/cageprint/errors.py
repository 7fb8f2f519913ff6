"""The kit's one small exception family.

Every error the kit raises on purpose is a :class:`CageprintError`, itself a
:class:`ValueError`, so callers may catch either.  Messages name the argument,
file, line or record, what was expected and what was found, and, where a
tolerance is involved, the tolerance to change.
"""

from __future__ import annotations

__all__ = [
    "CageprintError",
    "CageError",
    "SymmetryError",
    "SpectrumFormatError",
    "SpectrumError",
    "FormulaError",
    "EvidenceError",
    "SessionError",
    "SettingsError",
    "NotebookRunError",
    "StabilityError",
    "LibraryError",
    "OutputError",
    "ReadLimitError",
]


class CageprintError(ValueError):
    """Base class of every error raised on purpose by cageprint."""


class CageError(CageprintError):
    """Bad cage input: atom count, face spiral, or a graph that is not a fullerene."""


class SymmetryError(CageprintError):
    """Symmetry could not be found or realised within the stated tolerance."""


class SpectrumFormatError(CageprintError):
    """A file or byte string could not be read as a spectrum.

    Parameters
    ----------
    message : str
        What is wrong, in plain words.
    source : str, optional
        File name (or ``"<bytes>"``) the problem was found in.
    line : int, optional
        One-based line number (or record number for mzML) of the problem.
    """

    def __init__(self, message: str, source: str | None = None, line: int | None = None):
        self.source = source
        self.line = line
        where = ""
        if source is not None:
            where = f"{source}"
            if line is not None:
                where += f", line {line}"
            where += ": "
        super().__init__(f"{where}{message}")


class ReadLimitError(SpectrumFormatError):
    """An input exceeds a reader's resource budget (points, digits, bytes, depth).

    The message names the file, the line and the limit; raise the limit with
    ``limits=ReadLimits(...)`` (or the reader's keyword) to read a huge file.
    """


class ReaderWarning(UserWarning):
    """A reader accepted a file by inferring something the file should have stated.

    A warning, not an error: it is kept out of ``__all__`` (the error family).
    """


class SpectrumError(CageprintError):
    """A valid spectrum that cannot be processed as asked (no peaks, bad region, ...)."""


class FormulaError(CageprintError):
    """A chemical formula or charge that cannot be used."""


class EvidenceError(CageprintError):
    """Inputs to the comparison or ranking are inconsistent."""


class SessionError(CageprintError):
    """A session could not be saved, loaded or updated."""


class SettingsError(CageprintError):
    """A setting (threshold or option) that is unknown or has a value out of its range."""


class NotebookRunError(CageprintError):
    """A notebook could not be prepared, or a cell failed while it ran headless."""


class StabilityError(CageprintError):
    """A stability index or computed energy could not be made (e.g. no SCF convergence)."""


class LibraryError(CageprintError):
    """The cage library file could not be opened, built or queried as asked."""


class OutputError(SessionError, OSError):
    """A file could not be written where asked (missing folder, bad export name, disk error).

    A :class:`SessionError` (records, reports and sessions are what the kit
    saves) and an :class:`OSError` (what a failed write is to any caller).
    """
