"""Chemical formulas of cages: parsing, counting and canonical writing.

A cage formula is either a plain formula (``C60``, ``C60O2``, ``C70H2``,
``C59N``) or an endohedral one written ``INNER@OUTER`` (``La@C82``,
``Sc3N@C80``, ``Y2C2@C82``).  The parser returns a frozen :class:`Formula`
holding the element counts of the whole species and of its two parts.

Canonical writing: carbon first, then hydrogen, then the other elements in
alphabetical order for the outer part (``C60O``, ``C70H2``, ``C59N``); the
inner cluster lists its metals alphabetically, then C, N, O, S, H
(``Sc3N``, ``Y2C2``).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

from .errors import FormulaError

__all__ = ["Formula", "parse_formula", "KNOWN_ELEMENTS", "NONMETALS"]

#: elements the kit has isotope data for (see :mod:`cageprint.isotopes`)
KNOWN_ELEMENTS: tuple[str, ...] = (
    "H", "Li", "C", "N", "O", "S", "K", "Ca", "Sc", "Ti", "Sr", "Y", "Ba",
    "La", "Ce", "Pr", "Nd", "Sm", "Gd", "Tb", "Dy", "Ho", "Er", "Tm", "Lu",
)

#: non-metal elements, in the order they are written after the metals of a cluster
NONMETALS: tuple[str, ...] = ("C", "N", "O", "S", "H")

_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)")


def _parse_part(text: str, whole: str, start: int) -> dict[str, int]:
    counts: dict[str, int] = {}
    pos = 0
    if not text:
        raise FormulaError(
            f"formula {whole!r}: empty part at character {start + 1}; expected element "
            "symbols with counts such as 'C60' or 'Sc3N@C80'"
        )
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if m is None:
            raise FormulaError(
                f"formula {whole!r}: unexpected {text[pos]!r} at character {start + pos + 1}; "
                "expected an element symbol (capital letter, optional small letter) "
                "followed by an optional count"
            )
        symbol, digits = m.group(1), m.group(2)
        if symbol not in KNOWN_ELEMENTS:
            # 'Co' may be a typo for C + O; say so rather than guess
            raise FormulaError(
                f"formula {whole!r}: unknown element {symbol!r} at character "
                f"{start + pos + 1}; known elements: {', '.join(KNOWN_ELEMENTS)}"
            )
        n = int(digits) if digits else 1
        if n == 0:
            raise FormulaError(
                f"formula {whole!r}: count 0 for {symbol!r} at character {start + pos + 1}; "
                "leave the element out instead"
            )
        counts[symbol] = counts.get(symbol, 0) + n
        pos = m.end()
    return counts


def _write_outer(counts: dict[str, int]) -> str:
    order = [e for e in ("C", "H") if e in counts]
    order += sorted(e for e in counts if e not in ("C", "H"))
    return "".join(e + (str(counts[e]) if counts[e] != 1 else "") for e in order)


def _write_inner(counts: dict[str, int]) -> str:
    metals = sorted(e for e in counts if e not in NONMETALS)
    order = metals + [e for e in NONMETALS if e in counts]
    return "".join(e + (str(counts[e]) if counts[e] != 1 else "") for e in order)


def _frozen(counts: dict[str, int]) -> tuple[tuple[str, int], ...]:
    return tuple(sorted(counts.items()))


@dataclass(frozen=True)
class Formula:
    """A parsed cage formula.

    Attributes
    ----------
    inner : tuple of (element, count)
        The encapsulated cluster; empty for a plain formula.
    outer : tuple of (element, count)
        The cage and any exohedral atoms (``C60O`` -> C 60, O 1).
    """

    inner: tuple[tuple[str, int], ...]
    outer: tuple[tuple[str, int], ...]

    @property
    def counts(self) -> dict[str, int]:
        """Element counts of the whole species."""
        total: dict[str, int] = {}
        for e, n in self.inner + self.outer:
            total[e] = total.get(e, 0) + n
        return total

    @property
    def is_endohedral(self) -> bool:
        return bool(self.inner)

    @property
    def cage_n(self) -> int:
        """Number of carbon atoms in the cage (outer part)."""
        return dict(self.outer).get("C", 0)

    @property
    def text(self) -> str:
        """Canonical writing, e.g. ``'Sc3N@C80'``."""
        outer = _write_outer(dict(self.outer))
        if self.inner:
            return _write_inner(dict(self.inner)) + "@" + outer
        return outer

    def __str__(self) -> str:
        return self.text


@lru_cache(maxsize=4096)
def _parse(text: str) -> Formula:
    parts = text.split("@")
    if len(parts) > 2:
        raise FormulaError(
            f"formula {text!r}: more than one '@'; expected 'INNER@CAGE' such as 'Sc3N@C80'"
        )
    if len(parts) == 2:
        inner = _parse_part(parts[0], text, 0)
        outer = _parse_part(parts[1], text, len(parts[0]) + 1)
        if "C" not in outer:
            raise FormulaError(
                f"formula {text!r}: the part after '@' has no carbon; expected a cage such "
                "as 'C82'"
            )
        return Formula(inner=_frozen(inner), outer=_frozen(outer))
    return Formula(inner=(), outer=_frozen(_parse_part(parts[0], text, 0)))


def parse_formula(formula: str | Formula) -> Formula:
    """Parse a cage formula.

    Parameters
    ----------
    formula : str or Formula
        ``"C60"``, ``"C60O2"``, ``"C70H2"``, ``"C59N"``, ``"La@C82"``,
        ``"Sc3N@C80"``, ``"Y2C2@C82"``...  Spaces are ignored.

    Returns
    -------
    Formula

    Raises
    ------
    FormulaError
        Unknown element, bad syntax, zero count; the message names the token.

    Examples
    --------
    >>> f = parse_formula("Sc3N@C80")
    >>> f.counts, f.cage_n, f.text
    ({'N': 1, 'Sc': 3, 'C': 80}, 80, 'Sc3N@C80')
    >>> parse_formula("OC60").text
    'C60O'
    """
    if isinstance(formula, Formula):
        return formula
    if not isinstance(formula, str):
        raise FormulaError(f"formula must be a string such as 'C60', got {type(formula).__name__}")
    text = "".join(formula.split())
    if not text:
        raise FormulaError("formula is empty; expected e.g. 'C60' or 'La@C82'")
    return _parse(text)
