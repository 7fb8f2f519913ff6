"""A candidate cage as the ranking sees it: identity plus per-technique signatures.

:class:`Candidate` is built from a cage and its fingerprint
(:meth:`Candidate.from_cage`) or from a saved record; :mod:`cageprint.evidence`
ranks lists of them.  Re-exported by :mod:`cageprint.evidence`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from .errors import EvidenceError

__all__ = ["TECHNIQUE_ORDER", "Candidate"]

#: the techniques a ranking knows, in display order
TECHNIQUE_ORDER: tuple[str, ...] = ("mass", "nmr", "ir", "raman", "uvvis")


@dataclass(frozen=True)
class Candidate:
    """One candidate cage as the ranking sees it: identity plus per-technique signatures.

    Parameters
    ----------
    formula : str
        ``"C78"``, or an endohedral label such as ``"Sc3N@C80"``.
    n : int
        Cage carbons.
    isomer : int
        Isomer number (IPR numbering for IPR cages, else the all-isomer number).
    point_group : str
    nmr_sizes : tuple of int
        13C orbit sizes, largest first (sum ``n``).
    ir_count, raman_count : int or None
        Distinct IR- and Raman-active fundamentals.
    gap_beta : float or None
        Hückel HOMO-LUMO gap in units of ``|beta|``.
    transitions_beta : tuple of float
        Energies (units of ``|beta|``) of dipole-allowed transitions, lowest first.
    cage_charge : int
        Formal charge of the cage (-6 for Sc3N@C80; 0 for an empty cage), as
        in :func:`cageprint.techniques.mass.cage_charge`.
    spiral : tuple of int, optional
    label : str, optional
        Display label; defaults to ``"C78 isomer 3 (C2v)"`` form.

    Examples
    --------
    >>> c = Candidate("C60", 60, 1, "Ih", (60,), 4, 10, 0.757)
    >>> c.pattern
    '1x60'
    >>> Candidate.from_dict(c.to_dict()) == c
    True
    """

    formula: str
    n: int
    isomer: int
    point_group: str
    nmr_sizes: tuple[int, ...] = ()
    ir_count: int | None = None
    raman_count: int | None = None
    gap_beta: float | None = None
    transitions_beta: tuple[float, ...] = ()
    cage_charge: int = 0
    spiral: tuple[int, ...] = ()
    label: str = ""

    def __post_init__(self) -> None:
        sizes = tuple(sorted((int(s) for s in self.nmr_sizes), reverse=True))
        object.__setattr__(self, "nmr_sizes", sizes)
        object.__setattr__(
            self, "transitions_beta", tuple(float(t) for t in self.transitions_beta)
        )
        object.__setattr__(self, "spiral", tuple(int(s) for s in self.spiral))
        if not self.label:
            object.__setattr__(
                self, "label", f"{self.formula} isomer {self.isomer} ({self.point_group})"
            )

    @property
    def pattern(self) -> str:
        """13C pattern as ``"count x size"`` terms, largest orbit first (``"18x4+3x2"``)."""
        if not self.nmr_sizes:
            return ""
        terms: list[str] = []
        for s in sorted(set(self.nmr_sizes), reverse=True):
            terms.append(f"{self.nmr_sizes.count(s)}x{s}")
        return "+".join(terms)

    def signature(self, technique: str) -> Any:
        """What a technique's comparison depends on: equal signatures, equal verdicts."""
        cache = self.__dict__.get("_signatures")
        if cache is None:
            cache = {}
            object.__setattr__(self, "_signatures", cache)
        sig = cache.get(technique)
        if sig is None:
            sig = cache[technique] = self._signature(technique)
        return sig

    def _signature(self, technique: str) -> Any:
        if technique == "nmr":
            return self.nmr_sizes
        if technique == "ir":
            return self.ir_count
        if technique == "raman":
            return self.raman_count
        if technique == "uvvis":
            gap = None if self.gap_beta is None else round(self.gap_beta, 6)
            return (gap, tuple(round(t, 6) for t in self.transitions_beta[:3]))
        if technique == "mass":
            return (self.n, self.cage_charge)
        raise EvidenceError(f"technique must be one of {', '.join(TECHNIQUE_ORDER)}; "
                            f"got {technique!r}")

    @classmethod
    def from_cage(cls, cage: Any, fingerprint: Any = None, *, charge: int = 0,
                  formula: str | None = None) -> Candidate:
        """Build a candidate from a :class:`cageprint.cage.Cage` and its fingerprint.

        ``fingerprint`` defaults to ``cageprint.symmetry.fingerprint(cage, charge)``.
        """
        if fingerprint is None:
            from .symmetry import fingerprint as _fp

            fingerprint = _fp(cage, charge=charge)
        return cls.from_fingerprint(
            fingerprint, n=int(cage.n), isomer=int(getattr(cage, "isomer", 0) or 0),
            formula=formula or str(getattr(cage, "formula", f"C{cage.n}")),
            spiral=tuple(getattr(cage, "spiral", ()) or ()), cage_charge=charge,
        )

    @classmethod
    def from_fingerprint(cls, fp: Any, *, n: int, isomer: int, formula: str,
                         spiral: Sequence[int] = (), cage_charge: int = 0) -> Candidate:
        """Build a candidate from any object shaped like a symmetry Fingerprint."""
        nmr = getattr(fp, "nmr", None)
        vib = getattr(fp, "vib", None)
        elec = getattr(fp, "elec", None)
        return cls(
            formula=formula, n=n, isomer=isomer, point_group=str(fp.point_group),
            nmr_sizes=tuple(getattr(nmr, "sizes", ()) or ()),
            ir_count=None if vib is None else int(vib.ir_count),
            raman_count=None if vib is None else int(vib.raman_count),
            gap_beta=None if elec is None else float(elec.gap_beta),
            transitions_beta=_transition_energies(elec),
            cage_charge=cage_charge, spiral=tuple(spiral),
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "formula": self.formula, "n": self.n, "isomer": self.isomer,
            "point_group": self.point_group, "nmr_sizes": list(self.nmr_sizes),
            "ir_count": self.ir_count, "raman_count": self.raman_count,
            "gap_beta": self.gap_beta, "transitions_beta": list(self.transitions_beta),
            "cage_charge": self.cage_charge, "spiral": list(self.spiral), "label": self.label,
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Candidate:
        try:
            return cls(
                formula=d["formula"], n=int(d["n"]), isomer=int(d["isomer"]),
                point_group=d["point_group"], nmr_sizes=tuple(d.get("nmr_sizes", ())),
                ir_count=d.get("ir_count"), raman_count=d.get("raman_count"),
                gap_beta=d.get("gap_beta"), transitions_beta=tuple(d.get("transitions_beta", ())),
                cage_charge=int(d.get("cage_charge", 0)), spiral=tuple(d.get("spiral", ())),
                label=d.get("label", ""),
            )
        except KeyError as exc:
            raise EvidenceError(f"candidate record lacks the key {exc.args[0]!r}") from None


def _transition_energies(elec: Any) -> tuple[float, ...]:
    """Energies (units of |beta|) of allowed transitions, lowest first, from a prediction.

    Accepts items that are numbers, objects with an ``energy_beta``/``energy``
    attribute, mappings with such a key, or tuples whose last number is the
    energy.  Anything else is skipped.
    """
    items = getattr(elec, "allowed_transitions", None) or ()
    out: list[float] = []
    for it in items:
        e = None
        if isinstance(it, (int, float)):
            e = float(it)
        elif isinstance(it, Mapping):
            e = it.get("energy_beta", it.get("energy"))
        elif hasattr(it, "energy_beta"):
            e = it.energy_beta
        elif hasattr(it, "energy"):
            e = it.energy
        elif isinstance(it, (tuple, list)):
            nums = [v for v in it if isinstance(v, (int, float)) and not isinstance(v, bool)]
            e = nums[-1] if nums else None
        if e is not None and math.isfinite(float(e)) and float(e) > 0:
            out.append(abs(float(e)))
    return tuple(sorted(out))
