"""A candidate cage as the ranking sees it: identity plus what each technique predicts.

:class:`Candidate` is built from a cage and its fingerprint
(:meth:`Candidate.from_cage`) or from a saved record.  What a technique's
comparison looks at (its *signature*) is read from the candidate by that
technique's registry entry (:mod:`cageprint.techniques.registry`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from .cage import Cage
from .errors import EvidenceError
from .plain import plain
from .symmetry import ElectronicPrediction, Fingerprint, fingerprint

__all__ = ["Candidate", "Known", "PAIRS_MEMO"]

#: key of a candidate's memo holding its fused-pentagon pair count (set where the cage is at
#: hand: generation and the cage library), so tables need no cage graph per row
PAIRS_MEMO = "pentagon_pairs"


class Known:
    """A memo filler returning a value already known (stored or computed with the cage).

    Examples
    --------
    >>> Known(3)(None)
    3
    """

    def __init__(self, value: Any) -> None:
        self.value = value

    def __call__(self, _candidate: Any) -> Any:
        return self.value


@dataclass(frozen=True)
class Candidate:
    """One candidate cage as the ranking sees it.

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
        Formal charge of the cage: minus the charge of the inner cluster
        (-6 for Sc3N@C80, 0 for an empty cage; :mod:`cageprint.formula`).
    spiral : tuple of int, optional
    label : str, optional
        Display label; defaults to ``"C78 isomer 3 (C2v)"`` form.
    extra : mapping, optional
        Predictions of further registered techniques, keyed by technique
        (JSON-ready values, filled by their ``predict`` hook).

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
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False)

    def __post_init__(self) -> None:
        sizes = tuple(sorted((int(s) for s in self.nmr_sizes), reverse=True))
        object.__setattr__(self, "nmr_sizes", sizes)
        object.__setattr__(
            self, "transitions_beta", tuple(float(t) for t in self.transitions_beta)
        )
        object.__setattr__(self, "spiral", tuple(int(s) for s in self.spiral))
        object.__setattr__(self, "extra", MappingProxyType(dict(self.extra or {})))
        if not self.label:
            object.__setattr__(
                self, "label", f"{self.formula} isomer {self.isomer} ({self.point_group})"
            )

    def memo(self, key: str, compute: Callable[[Candidate], Any]) -> Any:
        """``compute(self)``, computed once per candidate and key (candidates are immutable).

        The technique registry keeps each technique's signature here, so a
        re-rank does not recompute them.
        """
        cache = self.__dict__.get("_memo")
        if cache is None:
            cache = {}
            object.__setattr__(self, "_memo", cache)
        if key not in cache:
            cache[key] = compute(self)
        return cache[key]

    @property
    def pattern(self) -> str:
        """13C pattern as ``"count x size"`` terms, largest orbit first (``"18x4+3x2"``)."""
        return orbit_pattern(self.nmr_sizes)

    @classmethod
    def from_cage(cls, cage: Cage, fingerprint_: Fingerprint | None = None, *,
                  charge: int = 0, formula: str | None = None,
                  extra: Mapping[str, Any] | None = None,
                  numbering: str = "literature") -> Candidate:
        """Build a candidate from a :class:`cageprint.cage.Cage` and its fingerprint.

        The fingerprint defaults to ``cageprint.symmetry.fingerprint(cage, charge)``.
        ``numbering`` says which list the isomer number counts in: ``"all"`` (every
        isomer), ``"ipr"`` (IPR isomers; the cage must be IPR) or ``"literature"``
        (the IPR number for an IPR cage, else the all-isomer number).  A list of
        candidates must use one kind throughout.
        """
        fp = fingerprint(cage, charge=charge) if fingerprint_ is None else fingerprint_
        if numbering not in ("all", "ipr", "literature"):
            raise ValueError(f"numbering={numbering!r}; use 'all', 'ipr' or 'literature'")
        number = cage.isomer_all if numbering == "all" else cage.isomer
        return cls.from_fingerprint(
            fp, n=int(cage.n), isomer=int(number or 0),
            formula=formula or cage.formula, spiral=cage.spiral, cage_charge=charge,
            extra=extra,
        )

    @classmethod
    def from_fingerprint(cls, fp: Fingerprint, *, n: int, isomer: int, formula: str,
                         spiral: tuple[int, ...] = (), cage_charge: int = 0,
                         extra: Mapping[str, Any] | None = None) -> Candidate:
        """Build a candidate from a symmetry :class:`~cageprint.symmetry.Fingerprint`."""
        return cls(
            formula=formula, n=n, isomer=isomer, point_group=str(fp.point_group),
            nmr_sizes=tuple(fp.nmr.sizes), ir_count=int(fp.vib.ir_count),
            raman_count=int(fp.vib.raman_count), gap_beta=float(fp.elec.gap_beta),
            transitions_beta=transition_energies(fp.elec), cage_charge=cage_charge,
            spiral=tuple(spiral), extra=extra or {},
        )

    def to_dict(self) -> dict[str, Any]:
        d = {
            "formula": self.formula, "n": self.n, "isomer": self.isomer,
            "point_group": self.point_group, "nmr_sizes": list(self.nmr_sizes),
            "ir_count": self.ir_count, "raman_count": self.raman_count,
            "gap_beta": self.gap_beta, "transitions_beta": list(self.transitions_beta),
            "cage_charge": self.cage_charge, "spiral": list(self.spiral), "label": self.label,
        }
        if self.extra:
            d["extra"] = plain(self.extra)
        return d

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Candidate:
        try:
            return cls(
                formula=d["formula"], n=int(d["n"]), isomer=int(d["isomer"]),
                point_group=d["point_group"], nmr_sizes=tuple(d.get("nmr_sizes", ())),
                ir_count=d.get("ir_count"), raman_count=d.get("raman_count"),
                gap_beta=d.get("gap_beta"), transitions_beta=tuple(d.get("transitions_beta", ())),
                cage_charge=int(d.get("cage_charge", 0)), spiral=tuple(d.get("spiral", ())),
                label=d.get("label", ""), extra=d.get("extra", {}),
            )
        except KeyError as exc:
            raise EvidenceError(f"candidate record lacks the key {exc.args[0]!r}") from None


def orbit_pattern(sizes: tuple[int, ...]) -> str:
    """Orbit sizes as ``"count x size"`` terms, largest first.

    Examples
    --------
    >>> orbit_pattern((4, 4, 2, 4))
    '3x4+1x2'
    """
    ordered = sorted((int(s) for s in sizes), reverse=True)
    return "+".join(f"{ordered.count(s)}x{s}" for s in sorted(set(ordered), reverse=True))


def transition_energies(elec: ElectronicPrediction) -> tuple[float, ...]:
    """Energies (units of |beta|) of the dipole-allowed transitions, lowest first.

    ``elec.allowed_transitions`` holds ``(from_irrep, to_irrep, energy)``
    items; zero or negative energies are left out.
    """
    out = [abs(float(e)) for _a, _b, e in elec.allowed_transitions if float(e) > 0]
    return tuple(sorted(out))
