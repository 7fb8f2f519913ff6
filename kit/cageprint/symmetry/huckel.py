"""Simple Hückel π levels of a cage: energies, degeneracies, filling, shell type.

Convention (DEVELOPERS.md): α = 0 and energies are the adjacency eigenvalues λ
in units of β, ``E = α + λβ``; β < 0, so λ > 0 is bonding.  Each carbon gives
one π electron; a cage of charge ``q`` holds ``n - q`` π electrons (``q = -6``
for a cage holding six electrons from an inner cluster, as in M3N@C80).

Shell types (the coarse ``shell`` is ``"closed"`` or ``"open"``):

``"properly closed"``
    filled HOMO level, HOMO bonding (λ > 0) and LUMO antibonding (λ < 0);
``"pseudo-closed"``
    filled HOMO level but the LUMO is also bonding (λ_LUMO > 0);
``"meta-closed"``
    filled HOMO level but the HOMO is antibonding (λ_HOMO < 0);
``"open: partly filled level"``
    the HOMO level is degenerate and only partly filled;
``"open: zero gap"``
    the HOMO level is full but the LUMO has the same energy (within GAP_TOL).

A level at λ = 0 counts as neither bonding nor antibonding: it makes the
closed shell "pseudo-closed" when it is the LUMO and "meta-closed" when it
is the HOMO.  These finer terms follow the usual closed-shell classes of
fullerene Hückel theory (Fowler & Manolopoulos, *An Atlas of Fullerenes*,
1995).
"""

from __future__ import annotations

import numpy as np

from ..errors import CageError

__all__ = [
    "DEGENERACY_TOL",
    "GAP_TOL",
    "levels_from_eigenvalues",
    "fill_levels",
    "frontier",
    "shell_type",
    "level_characters",
]

#: eigenvalues closer than this (in |β|) form one degenerate level
DEGENERACY_TOL = 1e-6
#: a HOMO-LUMO gap at most this (in |β|) counts as zero
GAP_TOL = 1e-6


def levels_from_eigenvalues(lam, tol: float = DEGENERACY_TOL) -> list[tuple[float, int, int]]:
    """Group descending eigenvalues into levels ``(energy_beta, start, stop)``.

    Examples
    --------
    >>> levels_from_eigenvalues([3.0, -1.0, -1.0, -1.0])
    [(3.0, 0, 1), (-1.0, 1, 4)]
    """
    lam = np.asarray(lam, dtype=float).reshape(-1)
    if not lam.size:
        return []
    cuts = np.flatnonzero(np.abs(np.diff(lam)) > tol) + 1
    starts = np.concatenate(([0], cuts))
    stops = np.concatenate((cuts, [lam.size]))
    means = (np.add.reduceat(lam, starts) / (stops - starts)).tolist()
    return list(zip(means, starts.tolist(), stops.tolist(), strict=True))


def fill_levels(degeneracies, n_electrons: int) -> list[int]:
    """Aufbau filling, two electrons per orbital, most bonding level first.

    Raises
    ------
    CageError
        If ``n_electrons`` is negative or more than twice the number of orbitals.

    Examples
    --------
    >>> fill_levels([1, 3, 3], 6)
    [2, 4, 0]
    """
    cap = 2 * int(sum(degeneracies))
    if not 0 <= n_electrons <= cap:
        raise CageError(
            f"charge: gives {n_electrons} π electrons; expected 0..{cap} for this cage"
        )
    cap_k = 2 * np.asarray(degeneracies, dtype=np.int64).reshape(-1)
    before = np.cumsum(cap_k) - cap_k
    return np.clip(int(n_electrons) - before, 0, cap_k).tolist()


def frontier(degeneracies, occupancy) -> tuple[int | None, int | None]:
    """Indices of the HOMO level (highest with electrons) and LUMO level (first with room).

    For a partly filled level both are that level.

    Examples
    --------
    >>> frontier([1, 3, 3], [2, 4, 0])
    (1, 1)
    >>> frontier([1, 3, 3], [2, 6, 0])
    (1, 2)
    """
    occ, deg = list(occupancy), list(degeneracies)
    if len(occ) != len(deg):
        raise CageError(f"occupancy: expected {len(deg)} values, one per level; found {len(occ)}")
    # electrons fill from the bottom: scan down from the top for the HOMO, up for the LUMO
    homo = next((k for k in range(len(occ) - 1, -1, -1) if occ[k] > 0), None)
    lumo = next((k for k, (d, o) in enumerate(zip(deg, occ, strict=True)) if o < 2 * d), None)
    return homo, lumo


def shell_type(
    energies, degeneracies, occupancy, gap_tol: float = GAP_TOL
) -> tuple[str, str]:
    """Coarse and fine shell type, ``("closed" | "open", detail)`` (see module notes).

    Examples
    --------
    >>> shell_type([3.0, 1.0, -1.0], [1, 3, 3], [2, 6, 0])
    ('closed', 'properly closed')
    >>> shell_type([3.0, 1.0, -1.0], [1, 3, 3], [2, 4, 0])
    ('open', 'open: partly filled level')
    """
    homo, lumo = frontier(degeneracies, occupancy)
    if homo is None:
        return "closed", "no π electrons"
    if lumo is None:
        return "closed", "all levels filled"
    if homo == lumo:
        return "open", "open: partly filled level"
    eh, el = energies[homo], energies[lumo]
    if eh - el <= gap_tol:
        return "open", "open: zero gap"
    if eh <= gap_tol:
        return "closed", "meta-closed"
    if el >= -gap_tol:
        return "closed", "pseudo-closed"
    return "closed", "properly closed"


def level_characters(vectors, levels, perms) -> np.ndarray:
    """Characters of the permutation representation on each level's eigenspace.

    ``chi[g, k] = trace(V_k^T P_g V_k)`` where ``V_k`` are the level's
    orthonormal eigenvectors and ``(P_g v)[p_g(i)] = v[i]``.

    Parameters
    ----------
    vectors : numpy.ndarray
        ``(n, n)`` eigenvectors as columns, in the order of ``levels``.
    levels : sequence of (energy, start, stop)
        As from :func:`levels_from_eigenvalues`.
    perms : numpy.ndarray
        ``(g, n)`` permutations.

    Returns
    -------
    numpy.ndarray
        ``(g, n_levels)`` real characters (rounded to integers where within 1e-6).

    Examples
    --------
    >>> v = np.eye(2)
    >>> level_characters(v, [(1.0, 0, 2)], np.array([[0, 1], [1, 0]])).tolist()
    [[2.0], [0.0]]
    """
    v = np.asarray(vectors, dtype=float)
    p = np.asarray(perms)
    # diag_g[k] = sum_i v[p(i), k] v[i, k]
    diag = np.einsum("gnk,nk->gk", v[p], v)
    starts = np.array([a for _, a, _ in levels])
    chi = np.add.reduceat(diag, starts, axis=1)
    r = np.round(chi)
    return np.where(np.abs(chi - r) < 1e-6, r, chi)
