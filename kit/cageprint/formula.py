"""Chemical formulas of cages: parsing, counting and canonical writing.

A cage formula is either a plain formula (``C60``, ``C60O2``, ``C70H2``,
``C59N``) or an endohedral one written ``INNER@OUTER`` (``La@C82``,
``Sc3N@C80``, ``Y2C2@C82``).  The parser returns a frozen :class:`Formula`
holding the element counts of the whole species and of its two parts.

Canonical writing: carbon first, then hydrogen, then the other elements in
alphabetical order for the outer part (``C60O``, ``C70H2``, ``C59N``); the
inner cluster lists its metals alphabetically, then C, N, O, S, H
(``Sc3N``, ``Y2C2``).

Charge convention, stated once for the whole kit: the inner cluster carries a
formal *cluster charge* (positive: the electrons it gives away, +6 for Sc3N,
+3 for La) and the cage carries ``cage_charge = -cluster_charge`` (-6 for
Sc3N@C80, 0 for an empty cage).
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, replace
from functools import lru_cache
from types import MappingProxyType

from .errors import FormulaError

__all__ = [
    "Formula",
    "parse_formula",
    "parse_cage_formula",
    "cage_charge",
    "KNOWN_ELEMENTS",
    "NONMETALS",
    "CLUSTER_CHARGES",
]

#: elements the kit has isotope data for (see :mod:`cageprint.isotopes`)
KNOWN_ELEMENTS: tuple[str, ...] = (
    "H", "Li", "C", "N", "O", "S", "K", "Ca", "Sc", "Ti", "Sr", "Y", "Ba",
    "La", "Ce", "Pr", "Nd", "Sm", "Gd", "Tb", "Dy", "Ho", "Er", "Tm", "Lu",
)

#: non-metal elements, in the order they are written after the metals of a cluster
NONMETALS: tuple[str, ...] = ("C", "N", "O", "S", "H")

#: formal charge of each atom inside a cage; a cluster's charge is their sum, so M3N
#: gives 6, M2C2 4 (C2 counts as C2(2-)), M2S and M2O 4, a trivalent metal alone 3 and a
#: divalent one 2.  From memory / common practice of the ionic model of endohedral
#: fullerenes, no single source: trivalent rare earths, Sc and Y; divalent Sm and Tm (in
#: mono-metallofullerenes), alkaline earths and Ti; monovalent alkali metals.
CLUSTER_CHARGES: Mapping[str, int] = MappingProxyType({
    "Sc": 3, "Y": 3, "La": 3, "Ce": 3, "Pr": 3, "Nd": 3, "Gd": 3, "Tb": 3, "Dy": 3,
    "Ho": 3, "Er": 3, "Lu": 3, "Sm": 2, "Tm": 2, "Ca": 2, "Sr": 2, "Ba": 2, "Ti": 2,
    "Li": 1, "K": 1, "N": -3, "C": -1, "O": -2, "S": -2, "H": 1,
})

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
    order: list[str] = [e for e in ("C", "H") if e in counts]
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
    cluster_charge : int
        Formal charge of the inner cluster (electrons it gives the cage): by
        default the sum of :data:`CLUSTER_CHARGES` over its atoms (6 for Sc3N,
        4 for Y2C2, 3 for La); ``parse_formula(..., cluster_charge=q)`` sets it.
    """

    inner: tuple[tuple[str, int], ...]
    outer: tuple[tuple[str, int], ...]
    cluster_charge: int = 0

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
    def cluster(self) -> str:
        """The inner cluster written canonically (``"Sc3N"``), or ``""``."""
        return _write_inner(dict(self.inner)) if self.inner else ""

    @property
    def cage_charge(self) -> int:
        """Formal charge of the cage: ``-cluster_charge`` (-6 for Sc3N@C80)."""
        return -self.cluster_charge

    @property
    def is_cage(self) -> bool:
        """True for a bare cage, empty or endohedral (``C78``, ``Sc3N@C80``)."""
        return set(dict(self.outer)) == {"C"}

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
        charge = sum(CLUSTER_CHARGES.get(e, 0) * n for e, n in inner.items())
        return Formula(inner=_frozen(inner), outer=_frozen(outer), cluster_charge=charge)
    return Formula(inner=(), outer=_frozen(_parse_part(parts[0], text, 0)))


def parse_formula(formula: str | Formula, *, cluster_charge: int | None = None) -> Formula:
    """Parse a cage formula.

    Parameters
    ----------
    formula : str or Formula
        ``"C60"``, ``"C60O2"``, ``"C70H2"``, ``"C59N"``, ``"La@C82"``,
        ``"Sc3N@C80"``, ``"Y2C2@C82"``...  Spaces are ignored.
    cluster_charge : int, optional
        Formal charge of the inner cluster, when the default model
        (:data:`CLUSTER_CHARGES` summed) does not fit the case.

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
    >>> f.cluster, f.cluster_charge, f.cage_charge
    ('Sc3N', 6, -6)
    >>> parse_formula("Sc3N@C80", cluster_charge=4).cage_charge
    -4
    """
    if isinstance(formula, Formula):
        parsed = formula
    elif not isinstance(formula, str):
        raise FormulaError(f"formula must be a string such as 'C60', got {type(formula).__name__}")
    else:
        text = "".join(formula.split())
        if not text:
            raise FormulaError("formula is empty; expected e.g. 'C60' or 'La@C82'")
        parsed = _parse(text)
    if cluster_charge is not None and int(cluster_charge) != parsed.cluster_charge:
        parsed = replace(parsed, cluster_charge=int(cluster_charge))
    return parsed


def parse_cage_formula(formula: str | Formula, *,
                       cluster_charge: int | None = None) -> Formula:
    """Parse the formula of a bare cage, empty or endohedral (``"C78"``, ``"Sc3N@C80"``).

    The cage must be a possible fullerene: an even number of carbons, 20 or
    24 and up, and nothing outside it.

    Examples
    --------
    >>> f = parse_cage_formula("Sc3N@C80")
    >>> f.cage_n, f.cluster, f.cage_charge
    (80, 'Sc3N', -6)
    >>> parse_cage_formula("C60O")
    Traceback (most recent call last):
    ...
    cageprint.errors.FormulaError: formula 'C60O': expected a cage such as 'C78' or ...
    """
    try:
        f = parse_formula(formula, cluster_charge=cluster_charge)
    except FormulaError as exc:
        raise FormulaError(f"formula {str(formula)!r}: expected a cage such as 'C78' or "
                           f"'Sc3N@C80' ({exc})") from None
    if not f.is_cage:
        raise FormulaError(f"formula {str(formula)!r}: expected a cage such as 'C78' or "
                           "'Sc3N@C80' (nothing outside the cage)")
    n = f.cage_n
    if n < 20 or n % 2 or n == 22:
        raise FormulaError(f"formula {str(formula)!r}: a fullerene cage has an even number of "
                           f"carbons, 20 or 24 and up; got {n}")
    return f


def cage_charge(formula: str | Formula) -> int:
    """Formal charge on the cage of an endohedral formula (0 for a plain one).

    Examples
    --------
    >>> cage_charge("Sc3N@C80"), cage_charge("La@C82"), cage_charge("Y2C2@C82"), cage_charge("C60")
    (-6, -3, -4, 0)
    """
    return parse_formula(formula).cage_charge
