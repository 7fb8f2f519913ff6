"""Frozen result classes of the predicted fingerprint (saved with ``to_dict``/``from_dict``).

:class:`NmrPrediction` (13C lines = carbon orbits, INADEQUATE links),
:class:`VibrationalPrediction` (Γvib, IR/Raman counts), :class:`ElectronicPrediction`
(Hückel levels, shell, frontier transitions) and the :class:`Fingerprint` holding
all three.  Computed by :mod:`cageprint.symmetry.fingerprint`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

__all__ = ["NmrPrediction", "VibrationalPrediction", "ElectronicPrediction", "Fingerprint"]


def _tuples(x):
    if isinstance(x, (list, tuple)):
        return tuple(_tuples(v) for v in x)
    return x


@dataclass(frozen=True)
class NmrPrediction:
    """Predicted 13C NMR pattern: one line per carbon orbit.

    Attributes
    ----------
    point_group : str
    orbits : tuple of tuple of int
        Atoms of each line; largest orbit first, ties by smallest atom index.
    sizes : tuple of int
        Orbit sizes (relative intensities), same order as ``orbits``.
    n_lines : int
    pattern : str
        Orbit-size groups, largest first, e.g. ``"2x20+3x10"`` for C70.
    bond_orbits : tuple of tuple of (int, int)
        Symmetry-distinct bonds, largest orbit first.
    inadequate : tuple of (int, int, int)
        ``(line_a, line_b, n_bonds)``: 2D INADEQUATE connectivity between
        lines (indices into ``orbits``) for 13C-enriched samples.
    """

    point_group: str
    orbits: tuple[tuple[int, ...], ...]
    sizes: tuple[int, ...]
    n_lines: int
    pattern: str
    bond_orbits: tuple[tuple[tuple[int, int], ...], ...] = field(repr=False)
    inadequate: tuple[tuple[int, int, int], ...] = field(repr=False)

    def to_dict(self) -> dict:
        """Plain data (lists) for saving."""
        return {
            "point_group": self.point_group,
            "orbits": [list(o) for o in self.orbits],
            "sizes": list(self.sizes),
            "n_lines": self.n_lines,
            "pattern": self.pattern,
            "bond_orbits": [[list(b) for b in o] for o in self.bond_orbits],
            "inadequate": [list(t) for t in self.inadequate],
        }

    @classmethod
    def from_dict(cls, d: dict) -> NmrPrediction:
        """Inverse of :meth:`to_dict`."""
        return cls(
            point_group=str(d["point_group"]),
            orbits=_tuples(d["orbits"]),
            sizes=_tuples(d["sizes"]),
            n_lines=int(d["n_lines"]),
            pattern=str(d["pattern"]),
            bond_orbits=_tuples(d["bond_orbits"]),
            inadequate=_tuples(d["inadequate"]),
        )


@dataclass(frozen=True)
class VibrationalPrediction:
    """Symmetry species of the normal modes and their IR/Raman activity.

    Attributes
    ----------
    point_group : str
    gamma_3n, gamma_vib : dict of str to int
        Multiplicity of each irrep (table order) in Γ3N and in Γvib.
    n_distinct : int
        Number of distinct fundamental frequencies (sum of Γvib multiplicities).
    ir_irreps, raman_irreps, silent_irreps : tuple of str
        Irreps of Γvib that are IR active (x, y, z), Raman active (quadratic
        functions), or neither.
    ir_count, raman_count, silent_count : int
        Number of distinct frequencies in each set.
    """

    point_group: str
    gamma_3n: dict[str, int] = field(hash=False)
    gamma_vib: dict[str, int] = field(hash=False)
    n_distinct: int
    ir_irreps: tuple[str, ...]
    raman_irreps: tuple[str, ...]
    silent_irreps: tuple[str, ...]
    ir_count: int
    raman_count: int
    silent_count: int

    @property
    def gamma_vib_text(self) -> str:
        """Γvib written as ``2Ag+3T1g+...`` in table order."""
        return _irrep_sum(self.gamma_vib)

    def to_dict(self) -> dict:
        """Plain data for saving."""
        d = dict(self.__dict__)
        d["gamma_3n"] = dict(self.gamma_3n)
        d["gamma_vib"] = dict(self.gamma_vib)
        for k in ("ir_irreps", "raman_irreps", "silent_irreps"):
            d[k] = list(d[k])
        return d

    @classmethod
    def from_dict(cls, d: dict) -> VibrationalPrediction:
        """Inverse of :meth:`to_dict`."""
        kw = dict(d)
        kw["gamma_3n"] = {str(k): int(v) for k, v in d["gamma_3n"].items()}
        kw["gamma_vib"] = {str(k): int(v) for k, v in d["gamma_vib"].items()}
        for k in ("ir_irreps", "raman_irreps", "silent_irreps"):
            kw[k] = tuple(d[k])
        return cls(**kw)


@dataclass(frozen=True)
class ElectronicPrediction:
    """Hückel π levels, filling and symmetry-allowed frontier transitions.

    Attributes
    ----------
    point_group : str
    charge : int
        Charge of the cage; ``n - charge`` π electrons.
    n_electrons : int
    levels : tuple of (float, int, str, int)
        ``(energy_beta, degeneracy, irrep, occupancy)``, most bonding first;
        ``irrep`` is what the reduction gives (e.g. ``"Hu"``, or
        ``"Gg+Hg"`` for an accidental degeneracy).
    homo, lumo : float or None
        λ of the HOMO and LUMO levels (equal for a partly filled level).
    homo_index, lumo_index : int or None
        Their rows in ``levels``.
    gap_beta : float
        ``λ_HOMO - λ_LUMO`` in units of |β| (0 for an open shell).
    shell : str
        ``"closed"`` or ``"open"``.
    shell_detail : str
        Finer class (see :mod:`cageprint.symmetry.huckel`).
    transitions : tuple of (str, str, float, bool)
        Frontier excitations HOMO-1/HOMO to LUMO/LUMO+1, per irrep pair:
        ``(from_irrep, to_irrep, delta_beta, dipole_allowed)``.
    allowed_transitions : tuple of (str, str, float)
        The dipole-allowed ones (direct product contains an irrep of x, y, z).
    notes : tuple of str
    """

    point_group: str
    charge: int
    n_electrons: int
    levels: tuple[tuple[float, int, str, int], ...] = field(repr=False)
    homo: float | None
    lumo: float | None
    homo_index: int | None
    lumo_index: int | None
    gap_beta: float
    shell: str
    shell_detail: str
    transitions: tuple[tuple[str, str, float, bool], ...] = field(repr=False)
    allowed_transitions: tuple[tuple[str, str, float], ...] = field(repr=False)
    notes: tuple[str, ...] = field(repr=False)

    @property
    def homo_irrep(self) -> str | None:
        return None if self.homo_index is None else self.levels[self.homo_index][2]

    @property
    def lumo_irrep(self) -> str | None:
        return None if self.lumo_index is None else self.levels[self.lumo_index][2]

    def to_dict(self) -> dict:
        """Plain data for saving."""
        d = dict(self.__dict__)
        d["levels"] = [list(t) for t in self.levels]
        d["transitions"] = [list(t) for t in self.transitions]
        d["allowed_transitions"] = [list(t) for t in self.allowed_transitions]
        d["notes"] = list(self.notes)
        return d

    @classmethod
    def from_dict(cls, d: dict) -> ElectronicPrediction:
        """Inverse of :meth:`to_dict`."""
        kw = dict(d)
        kw["levels"] = tuple((float(a), int(b), str(c), int(e)) for a, b, c, e in d["levels"])
        kw["transitions"] = tuple(
            (str(a), str(b), float(c), bool(e)) for a, b, c, e in d["transitions"]
        )
        kw["allowed_transitions"] = tuple(
            (str(a), str(b), float(c)) for a, b, c in d["allowed_transitions"]
        )
        kw["notes"] = tuple(d["notes"])
        return cls(**kw)


@dataclass(frozen=True)
class Fingerprint:
    """Everything predicted for one cage (and one charge).

    Attributes
    ----------
    n : int
        Number of carbons.
    spiral : tuple of int or None
        The cage's face spiral (one-based pentagon positions) when known.
    charge : int
    point_group : str
        Schoenflies symbol.
    group_order : int
        Number of automorphisms = order of the point group.
    n_proper : int
        Number of proper rotations.
    nmr, vib, elec :
        :class:`NmrPrediction`, :class:`VibrationalPrediction`,
        :class:`ElectronicPrediction`.
    """

    n: int
    spiral: tuple[int, ...] | None
    charge: int
    point_group: str
    group_order: int
    n_proper: int
    nmr: NmrPrediction = field(repr=False)
    vib: VibrationalPrediction = field(repr=False)
    elec: ElectronicPrediction = field(repr=False)

    @property
    def formula(self) -> str:
        return f"C{self.n}"

    def columns(self) -> dict[str, Any]:
        """The summary columns shown by ``cageprint isomers``."""
        return {
            "point_group": self.point_group,
            "nmr_lines": self.nmr.n_lines,
            "nmr_pattern": self.nmr.pattern,
            "ir_active": self.vib.ir_count,
            "raman_active": self.vib.raman_count,
            "gap_beta": round(self.elec.gap_beta, 4),
        }

    def to_dict(self) -> dict:
        """Plain data (JSON-ready) for saving."""
        return {
            "n": self.n,
            "spiral": None if self.spiral is None else list(self.spiral),
            "charge": self.charge,
            "point_group": self.point_group,
            "group_order": self.group_order,
            "n_proper": self.n_proper,
            "nmr": self.nmr.to_dict(),
            "vib": self.vib.to_dict(),
            "elec": self.elec.to_dict(),
        }

    @classmethod
    def from_dict(cls, d: dict) -> Fingerprint:
        """Inverse of :meth:`to_dict`."""
        return cls(
            n=int(d["n"]),
            spiral=None if d.get("spiral") is None else tuple(int(v) for v in d["spiral"]),
            charge=int(d["charge"]),
            point_group=str(d["point_group"]),
            group_order=int(d["group_order"]),
            n_proper=int(d["n_proper"]),
            nmr=NmrPrediction.from_dict(d["nmr"]),
            vib=VibrationalPrediction.from_dict(d["vib"]),
            elec=ElectronicPrediction.from_dict(d["elec"]),
        )


def _irrep_sum(counts: dict[str, int]) -> str:
    return "+".join(f"{c}{k}" if c != 1 else k for k, c in counts.items() if c)
