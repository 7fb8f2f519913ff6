"""Stability indices of a cage from its graph (fast: no optimised geometry).

Every index has an entry in :data:`INDEX_INFO` with its unit, which way is
favoured and its source.  All indices of one cage come from one call of
:func:`stability_indices`, which reuses the cached adjacency spectrum of the
symmetry analysis, so a cage already fingerprinted costs well under a
millisecond more.

Conventions
-----------
* Hückel: α = 0, energies λ in units of β (E = α + λβ, β < 0), as in
  :mod:`cageprint.symmetry.huckel`.  The π energy is ``Σ occupancy·λ`` in
  units of ``|β|``: *larger is more stable*.  A gap is ``λ_HOMO − λ_LUMO``
  in ``|β|``; a partly filled level gives 0.
* Charge: the formal charge of the cage (``−6`` for Sc3N@C80), as in
  :func:`cageprint.techniques.mass.cage_charge`; the cage then holds
  ``n − charge`` π electrons.
* IPSI is computed on a spherical model layout (the three p-like adjacency
  eigenvectors, each atom pushed onto a sphere of the size of a real cage),
  not on an optimised structure; it orders cages of one size, its absolute
  value is a model value.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from types import MappingProxyType
from typing import Any

import numpy as np

from ..errors import CageError
from ..formula import CLUSTER_CHARGES, parse_formula
from ..symmetry import cage_symmetry
from ..symmetry.huckel import fill_levels, frontier, levels_from_eigenvalues

__all__ = [
    "INDEX_INFO",
    "EXTRA_CHARGES",
    "C60_RADIUS",
    "StabilityIndices",
    "formal_charge",
    "stability_indices",
    "stability_indices_at",
    "pentagon_counts",
]

#: radius (Å) of C60 used to size the spherical layout of IPSI (C60 cage radius
#: about 3.55 Å from its diffraction bond lengths; from memory); C_n scales as sqrt(n/60)
C60_RADIUS = 3.55

#: divalent donors missing from the formula module's table (Yb and Eu give two electrons
#: in mono-metallofullerenes such as Yb@C84; from memory); used only here
EXTRA_CHARGES = MappingProxyType({"Yb": 2, "Eu": 2})

# name -> (label, unit, favoured direction, source and convention)
INDEX_INFO = MappingProxyType({
    "pentagon_pairs": (
        "fused pentagon pairs", "", "lower",
        "number of bonds shared by two pentagons (pentagon adjacencies); each costs "
        "strain: the pentagon adjacency penalty rule (Albertazzi, Domene, Fowler, Heine, "
        "Seifert, Van Alsenoy, Zerbetto, PCCP 1999; from memory)",
    ),
    "pentagon_triples": (
        "fused pentagon triples", "", "lower",
        "atoms shared by three pentagons (a strained triquinacene-like patch); "
        "common practice, no source",
    ),
    "pentagon_neighbours": (
        "pentagons by fused neighbours", "", "",
        "p_k = number of pentagons with k pentagonal neighbours, k = 0..5 (descriptive; "
        "Fowler & Manolopoulos, An Atlas of Fullerenes, 1995)",
    ),
    "hexagon_neighbours": (
        "hexagons by hexagonal neighbours", "", "",
        "h_k = number of hexagons with k hexagonal neighbours, k = 0..6 (Raghavachari, "
        "Chem. Phys. Lett. 1992; from memory)",
    ),
    "hexagon_index": (
        "hexagon neighbour spread", "", "lower",
        "variance of k over the hexagons (Σ k² h_k / H − (Σ k h_k / H)²); the most stable "
        "isomers have the most uniform hexagon neighbourhoods (Raghavachari, Chem. Phys. "
        "Lett. 1992; from memory); 0 = all hexagons alike",
    ),
    "ipsi": (
        "inverse pentagon separation index", "1/Å", "lower",
        "IPSI = Σ over the 66 pentagon pairs of 1/R_ij, R_ij the distance between pentagon "
        "centres; the maximum pentagon separation rule for endohedral cage anions "
        "(Rodríguez-Fortea, Alegret, Balch & Poblet, Nature Chem. 2010); here on a "
        "spherical model layout",
    ),
    "pi_energy": (
        "Hückel π energy (neutral)", "|β|", "higher",
        "Σ occupancy·λ of the neutral cage (Hückel, α = 0); larger = more bonding",
    ),
    "gap": (
        "Hückel gap (neutral)", "|β|", "higher",
        "λ_HOMO − λ_LUMO of the neutral cage; 0 = open shell",
    ),
    "anion_pi_energy": (
        "Hückel π energy at the formal charge", "|β|", "higher",
        "Σ occupancy·λ of the cage holding the electrons of its inner cluster "
        "(ionic model of endohedral fullerenes)",
    ),
    "anion_gap": (
        "Hückel gap at the formal charge", "|β|", "higher",
        "λ_HOMO − λ_LUMO of the cage anion, i.e. the gap between the last neutral LUMO "
        "that takes cluster electrons and the next; a wide gap is the ionic-model "
        "criterion of Campanera, Bo & Poblet (Angew. Chem. Int. Ed. 2005)",
    ),
    "acceptor_level": (
        "highest filled level of the anion", "|β|", "higher",
        "λ of the anion's HOMO: the neutral cage's acceptor level; a low-lying acceptor "
        "(λ larger, less antibonding) takes the cluster electrons more easily (Campanera, "
        "Bo & Poblet, Angew. Chem. Int. Ed. 2005)",
    ),
})


def formal_charge(formula: str, charges=None) -> int:
    """Formal charge the inner cluster gives the cage (``0`` for an empty cage).

    M3N → −6 (3×(+3) − 3), M2C2 → −4 (C2 as C2²⁻), M (La, Y, Sc, Gd, ...) → −3,
    Ca/Sr/Ba/Sm/Yb → −2.  ``charges`` maps element → donated electrons and
    overrides the table (settable, e.g. ``{"Sm": 3}``).

    Examples
    --------
    >>> [formal_charge(f) for f in ("Sc3N@C80", "Y2C2@C82", "La@C82", "Ca@C84", "C76")]
    [-6, -4, -3, -2, 0]
    >>> formal_charge("Sm@C84", charges={"Sm": 3})
    -3
    """
    f = parse_formula(formula)
    table = {**CLUSTER_CHARGES, **EXTRA_CHARGES, **dict(charges or {})}
    return -sum(int(table.get(e, 0)) * k for e, k in f.inner)


@dataclass(frozen=True)
class StabilityIndices:
    """Stability indices of one cage (see :data:`INDEX_INFO` for each field).

    Examples
    --------
    >>> from cageprint.cage import Cage
    >>> c60 = Cage.from_spiral(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32])
    >>> s = stability_indices(c60)
    >>> s.pentagon_pairs, s.hexagon_index, round(s.gap, 3)
    (0, 0.0, 0.757)
    >>> StabilityIndices.from_dict(s.to_dict()) == s
    True
    """

    n: int
    charge: int
    pentagon_pairs: int
    pentagon_triples: int
    pentagon_neighbours: tuple[int, ...]
    hexagon_neighbours: tuple[int, ...]
    hexagon_index: float
    ipsi: float
    pi_energy: float
    gap: float
    anion_pi_energy: float
    anion_gap: float
    acceptor_level: float
    anion_shell: str

    def to_dict(self) -> dict:
        d = asdict(self)
        d["pentagon_neighbours"] = list(self.pentagon_neighbours)
        d["hexagon_neighbours"] = list(self.hexagon_neighbours)
        return d

    @classmethod
    def from_dict(cls, d: dict) -> StabilityIndices:
        d = dict(d)
        d["pentagon_neighbours"] = tuple(int(x) for x in d["pentagon_neighbours"])
        d["hexagon_neighbours"] = tuple(int(x) for x in d["hexagon_neighbours"])
        return cls(**d)

    def columns(self) -> dict:
        """Flat columns for a table or the cage library (no nested values)."""
        d = self.to_dict()
        d.pop("n")
        d["pentagon_neighbours"] = " ".join(map(str, self.pentagon_neighbours))
        d["hexagon_neighbours"] = " ".join(map(str, self.hexagon_neighbours))
        return d


def _face_adjacency(faces, n: int) -> np.ndarray:
    # every bond lies on exactly two faces: sort the faces' bonds by atom pair, pair them up
    sizes = np.fromiter((len(r) for r in faces), dtype=np.int64, count=len(faces))
    a = np.fromiter((v for r in faces for v in r), dtype=np.int64, count=int(sizes.sum()))
    starts = np.repeat(np.cumsum(sizes) - sizes, sizes)
    pos = np.arange(len(a)) - starts
    b = a[starts + (pos + 1) % np.repeat(sizes, sizes)]
    face = np.repeat(np.arange(len(faces)), sizes)
    order = np.argsort(np.minimum(a, b) * n + np.maximum(a, b), kind="stable")
    f1, f2 = face[order[0::2]], face[order[1::2]]
    adj = np.zeros((len(faces), len(faces)), dtype=bool)
    adj[f1, f2] = True
    adj[f2, f1] = True
    return adj


def pentagon_counts(faces, n: int) -> tuple[int, int, np.ndarray, np.ndarray, np.ndarray]:
    """Face-adjacency counts: (pairs, triples, p_k, h_k, pentagon mask).

    Two faces are adjacent when they share two atoms (a bond).

    Examples
    --------
    >>> from cageprint.cage import Cage
    >>> c20 = Cage.from_spiral(20, range(1, 13))
    >>> pairs, triples, pk, hk, _ = pentagon_counts(c20.faces, 20)
    >>> pairs, triples, pk.tolist()
    (30, 20, [0, 0, 0, 0, 0, 12])
    """
    adj = _face_adjacency(faces, n)
    pent = np.array([len(r) == 5 for r in faces])
    pp = adj[np.ix_(pent, pent)]
    hh = adj[np.ix_(~pent, ~pent)]
    pairs = int(pp.sum() // 2)
    on_pent = np.bincount([v for r in faces if len(r) == 5 for v in r], minlength=n)
    triples = int(np.count_nonzero(on_pent == 3))
    pk = np.bincount(pp.sum(axis=1), minlength=6)[:6]
    hk = np.bincount(hh.sum(axis=1), minlength=7)[:7]
    return pairs, triples, pk, hk, pent


def _spread(hk: np.ndarray) -> float:
    h = hk.sum()
    if not h:
        return 0.0
    k = np.arange(len(hk))
    mean = (k * hk).sum() / h
    return float(max(0.0, (k * k * hk).sum() / h - mean * mean))


def _ipsi(faces, pent: np.ndarray, vectors: np.ndarray, n: int) -> float:
    # spherical layout from the p-like eigenvectors (columns 1..3), radius of a real cage
    x = vectors[:, 1:4]
    norm = np.linalg.norm(x, axis=1, keepdims=True)
    x = x / np.where(norm > 0, norm, 1.0) * (C60_RADIUS * math.sqrt(n / 60.0))
    rings = np.array([r for r, p in zip(faces, pent, strict=True) if p], dtype=np.int64)
    centres = x[rings].mean(axis=1)
    d = np.linalg.norm(centres[:, None, :] - centres[None, :, :], axis=2)
    iu = np.triu_indices(len(centres), 1)
    dist = d[iu]
    return float(np.sum(1.0 / np.maximum(dist, 1e-6)))


def _levels(lam: np.ndarray) -> tuple[list[float], list[int]]:
    levels = levels_from_eigenvalues(lam)
    return [e for e, _, _ in levels], [b - a for _, a, b in levels]


def _huckel(levels: tuple[list[float], list[int]],
            n_electrons: int) -> tuple[float, float, float, str]:
    energies, degs = levels
    occ = fill_levels(degs, n_electrons)
    homo, lumo = frontier(degs, occ)
    pi = float(sum(e * o for e, o in zip(energies, occ, strict=True)))
    if homo is None or lumo is None:
        return pi, 0.0, float("nan") if homo is None else energies[homo], "closed"
    if homo == lumo:
        return pi, 0.0, float(energies[homo]), "open"
    gap = max(0.0, energies[homo] - energies[lumo])
    return pi, float(gap), float(energies[homo]), "closed" if gap > 1e-6 else "open"


def stability_indices(cage, charge: int = 0) -> StabilityIndices:
    """All stability indices of ``cage`` (a :class:`~cageprint.cage.Cage`).

    Parameters
    ----------
    cage : Cage
        Needs ``n``, ``faces`` and ``neighbours``.
    charge : int
        Formal charge of the cage for the anion columns (``−6`` for M3N@C2n,
        see :func:`formal_charge`); ``0`` repeats the neutral values.

    Raises
    ------
    CageError
        If the charge leaves fewer than 0 or more than 2n π electrons.

    Examples
    --------
    >>> from cageprint.cage import iter_isomers
    >>> c80 = [c for c in iter_isomers(80, ipr=True)][6]          # Ih C80
    >>> s = stability_indices(c80, charge=-6)
    >>> s.gap, s.anion_shell, round(s.anion_gap, 3)
    (0.0, 'closed', 0.987)
    """
    return stability_indices_at(cage, (charge,))[0]


def stability_indices_at(cage, charges) -> list[StabilityIndices]:
    """:func:`stability_indices` at several charges; the graph part is computed once.

    Examples
    --------
    >>> from cageprint.cage import Cage
    >>> c20 = Cage.from_spiral(20, range(1, 13))
    >>> [s.anion_shell for s in stability_indices_at(c20, (0, -6))]
    ['open', 'closed']
    """
    n = int(cage.n)
    for q in charges:
        if abs(int(q)) > n:
            raise CageError(f"charge: {q} is out of range for C{n}; expected |charge| <= {n}")
    faces = cage.faces
    pairs, triples, pk, hk, pent = pentagon_counts(faces, n)
    lam, vec = cage_symmetry(cage).spectrum
    levels = _levels(lam)  # grouped once, filled at every charge
    pi0, gap0, _, _ = _huckel(levels, n)
    base: dict[str, Any] = dict(
        n=n,
        pentagon_pairs=pairs,
        pentagon_triples=triples,
        pentagon_neighbours=tuple(int(v) for v in pk),
        hexagon_neighbours=tuple(int(v) for v in hk),
        hexagon_index=round(_spread(hk), 10),
        ipsi=round(_ipsi(faces, pent, vec, n), 10),
        pi_energy=round(pi0, 10),
        gap=round(gap0, 10),
    )
    out = []
    for q in charges:
        pi1, gap1, acc, shell1 = _huckel(levels, n - int(q))
        out.append(StabilityIndices(
            charge=int(q), anion_pi_energy=round(pi1, 10), anion_gap=round(gap1, 10),
            acceptor_level=round(acc, 10), anion_shell=shell1, **base,
        ))
    return out
