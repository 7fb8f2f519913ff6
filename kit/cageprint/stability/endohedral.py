"""Endohedral cages with their cluster: placing M3N or M inside, relaxing the whole with xTB.

The bare cage anion (the ionic model) orders many cages well, but an M3N cluster
also binds to particular sites: each metal of a non-IPR cage sits over a fused
pentagon pair (a pentalene unit).  For a fair energy of such cages the cluster
is put inside and everything is relaxed together:

* M3N: N at the cage centre, the three metals at :data:`M3N_BOND` Å from it in
  a plane at 120°, the plane turned so the metals point as closely as possible
  at three *sites* (midpoints of fused-pentagon bonds first, then pentagon
  centres; the best-aligned triple by a Kabsch fit, each pentagon-centre site
  costing :data:`PENTAGON_SITE_PENALTY`);
* M (one metal): :data:`M_OFFSET` Å from the centre towards the best site.

Then GFN2-xTB relaxes all atoms (total charge 0).  The start geometry is a model
(cage: the kit's symmetric model geometry); only relaxed energies are compared.
"""

from __future__ import annotations

import itertools
import math

import numpy as np

from ..errors import StabilityError
from ..formula import parse_formula
from ..symmetry import symmetric_geometry

__all__ = ["M3N_BOND", "M_OFFSET", "PENTAGON_SITE_PENALTY", "ATOMIC_NUMBERS", "SYMBOLS",
           "sites", "placeable", "place_cluster"]

#: start N-M distance (Å) of an M3N cluster (Sc-N about 2.0 Å in Sc3N@C80; from memory),
#: a little short so the start is not pressed onto the cage
M3N_BOND = 1.9
#: start offset (Å) of a single metal from the cage centre
M_OFFSET = 1.6
#: cost (in units of the Kabsch residual) of aiming a metal at a pentagon centre rather
#: than at a fused-pentagon bond
PENTAGON_SITE_PENALTY = 0.5
#: atomic numbers of the elements the cluster model places
ATOMIC_NUMBERS = {"C": 6, "N": 7, "Sc": 21, "Y": 39, "La": 57, "Lu": 71, "Gd": 64,
                  "Er": 68, "Dy": 66, "Ho": 67, "Tm": 69, "Tb": 65, "Ce": 58, "Pr": 59,
                  "Nd": 60, "Ca": 20, "Sr": 38, "Ba": 56, "Sm": 62}
#: element symbol of each atomic number above
SYMBOLS = {z: e for e, z in ATOMIC_NUMBERS.items()}


def sites(cage, coords) -> tuple[np.ndarray, np.ndarray]:
    """Unit directions of fused-pentagon bond midpoints and of pentagon centres."""
    x = np.asarray(coords, dtype=float)
    x = x - x.mean(axis=0)
    pent = [r for r in cage.faces if len(r) == 5]
    on = np.zeros(cage.n, dtype=np.int64)
    for r in pent:
        on[list(r)] += 1
    # a fused bond: both atoms on the same two pentagons
    fused = []
    pents = [set(r) for r in pent]
    for a, b in cage.bonds.tolist():
        if on[a] >= 2 and on[b] >= 2 and sum(a in p and b in p for p in pents) == 2:
            fused.append((x[a] + x[b]) / 2)
    centres = [x[list(r)].mean(axis=0) for r in pent]

    def unit(v):
        v = np.asarray(v, dtype=float).reshape(-1, 3)
        return v / np.linalg.norm(v, axis=1, keepdims=True)

    return unit(fused) if fused else np.zeros((0, 3)), unit(centres)


def _kabsch(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, float]:
    # rotation r with r @ a[i] ~ b[i]; residual = rms distance
    h = a.T @ b
    u, _, vt = np.linalg.svd(h)
    d = np.sign(np.linalg.det(vt.T @ u.T)) or 1.0
    r = vt.T @ np.diag([1.0, 1.0, d]) @ u.T
    res = float(np.sqrt(np.mean(np.sum((a @ r.T - b) ** 2, axis=1))))
    return r, res


def _m3n_orientation(fused: np.ndarray, pents: np.ndarray) -> np.ndarray:
    tri = np.array([[math.cos(t), math.sin(t), 0.0] for t in (0, 2 * math.pi / 3,
                                                             4 * math.pi / 3)])
    cand = [(v, 0.0) for v in fused] + [(v, PENTAGON_SITE_PENALTY) for v in pents]
    best, best_cost = None, math.inf
    for i, j, k in itertools.combinations(range(len(cand)), 3):
        b = np.array([cand[i][0], cand[j][0], cand[k][0]])
        r, res = _kabsch(tri, b)
        cost = res + cand[i][1] + cand[j][1] + cand[k][1]
        if cost < best_cost - 1e-12:
            best, best_cost = r, cost
    if best is None:
        raise StabilityError("cluster placement: fewer than three sites to aim the metals at")
    return tri @ best.T


def placeable(formula) -> bool:
    """True when the cluster model can place the formula's inner part: M3N or one metal.

    Examples
    --------
    >>> [placeable(f) for f in ("Sc3N@C68", "La@C82", "Y2C2@C82", "C60")]
    [True, True, False, False]
    """
    f = parse_formula(formula) if isinstance(formula, str) else formula
    inner = dict(f.inner)
    metals = [e for e in inner if e != "N"]
    if len(metals) != 1 or metals[0] not in ATOMIC_NUMBERS:
        return False
    return (inner.get("N") == 1 and inner[metals[0]] == 3) or inner == {metals[0]: 1}


def place_cluster(cage, formula: str, coords=None) -> tuple[list[int], np.ndarray]:
    """Atomic numbers and start coordinates (Å) of the cage with its cluster inside.

    Raises
    ------
    StabilityError
        For a cluster the model cannot place (only M3N and a single metal).
    """
    f = parse_formula(formula)
    inner = dict(f.inner)
    x = np.asarray(symmetric_geometry(cage).coords if coords is None else coords, dtype=float)
    x = x - x.mean(axis=0)
    if not placeable(f):
        raise StabilityError(f"{formula}: the cluster model places M3N or a single metal "
                             "inside a cage; use the bare cage anion (charge) for others")
    fused, pents = sites(cage, x)
    (m,) = [e for e in inner if e != "N"]
    if "N" in inner:  # M3N: N at the centre, the metals in a plane around it
        dirs = _m3n_orientation(fused, pents)
        atoms = [ATOMIC_NUMBERS["N"]] + [ATOMIC_NUMBERS[m]] * 3
        extra = np.vstack([np.zeros(3), M3N_BOND * dirs])
    else:
        d = fused[0] if len(fused) else pents[0]
        atoms = [ATOMIC_NUMBERS[m]]
        extra = (M_OFFSET * d)[None, :]
    return [6] * cage.n + atoms, np.vstack([x, extra])
