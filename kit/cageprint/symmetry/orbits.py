"""Atom and bond orbits under the automorphism group: 13C NMR lines and INADEQUATE links.

Symmetry-equivalent carbons give one 13C line whose intensity is proportional
to the orbit size (equal relaxation and NOE assumed, as usual for fullerene
spectra).  In a 13C-enriched sample the 2D INADEQUATE spectrum links two lines
when bonds join their carbons; the number of such bonds is the relative
strength of the cross peak pair.
"""

from __future__ import annotations

import functools
import itertools

import numpy as np

__all__ = [
    "atom_orbits",
    "bond_list",
    "bond_orbits",
    "inadequate_links",
    "nmr_orbits",
    "orbit_pattern",
]


def _orbit_slices(rep: np.ndarray) -> tuple[list[int], np.ndarray, np.ndarray]:
    """Items sorted by orbit representative, and each orbit's start and size in that list.

    Orbits largest first, ties by smallest representative; members in increasing order.
    """
    order = np.argsort(rep, kind="stable")
    srt = rep[order]
    m = srt.size
    new = np.empty(m, dtype=bool)
    new[:1] = True
    np.not_equal(srt[1:], srt[:-1], out=new[1:])
    starts = np.flatnonzero(new)
    counts = np.diff(np.append(starts, m))
    k = np.lexsort((srt[starts], -counts))
    return order.tolist(), starts[k], counts[k]


def _split(items: list, starts: np.ndarray, counts: np.ndarray) -> tuple[tuple, ...]:
    """``items[s:s+c]`` as tuples, for each start and size."""
    cut = map(slice, starts.tolist(), (starts + counts).tolist())
    return tuple(map(tuple, map(items.__getitem__, cut)))


def _orbit_groups(rep: np.ndarray) -> list[tuple[int, ...]]:
    """Group items by orbit representative (the smallest member of each orbit).

    Largest orbit first, ties by smallest member; members in increasing order.
    """
    return list(_split(*_orbit_slices(rep)))


def atom_orbits(perms) -> tuple[tuple[int, ...], ...]:
    """Orbits of the atoms under a permutation group.

    Parameters
    ----------
    perms : array_like
        ``(g, n)`` permutations forming a group.

    Returns
    -------
    tuple of tuple of int
        Atoms of each orbit in increasing order; orbits largest first, ties
        by smallest atom index.

    Examples
    --------
    >>> atom_orbits([[0, 1, 2, 3], [1, 0, 2, 3]])
    ((0, 1), (2,), (3,))
    """
    p = np.asarray(perms, dtype=np.int64)
    return tuple(_orbit_groups(p.min(axis=0)))


def bond_list(neighbours) -> np.ndarray:
    """``(3n/2, 2)`` bonds ``i < j`` in sorted order from a neighbour table.

    Examples
    --------
    >>> bond_list([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]).tolist()
    [[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]]
    """
    nb = np.sort(np.asarray(neighbours, dtype=np.int64), axis=1)
    i = np.repeat(np.arange(nb.shape[0]), nb.shape[1])
    j = nb.ravel()
    keep = i < j
    return np.stack([i[keep], j[keep]], axis=1)  # rows in order, each row sorted: (i, j) order


def bond_orbits(perms, bonds) -> tuple[tuple[tuple[int, int], ...], ...]:
    """Orbits of the bonds, each bond as ``(i, j)`` with ``i < j``.

    Examples
    --------
    >>> bond_orbits([[0, 1, 2], [1, 0, 2]], [[0, 1], [0, 2], [1, 2]])
    (((0, 2), (1, 2)), ((0, 1),))
    """
    p = np.asarray(perms, dtype=np.int64)
    b = np.asarray(bonds, dtype=np.int64)
    flat, starts, counts = _bond_orbit_slices(p, b)
    pairs = list(map(tuple, b[flat].tolist()))  # in orbit order
    return _split(pairs, starts, counts)


def _bond_orbit_slices(p: np.ndarray, b: np.ndarray):
    n = p.shape[1]
    a, c = p[:, b[:, 0]], p[:, b[:, 1]]
    code = np.minimum(a, c) * n + np.maximum(a, c)  # (g, m)
    return _orbit_slices(code.min(axis=0))


def nmr_orbits(perms, neighbours):
    """Atom orbits, bond orbits and INADEQUATE links in one pass (arrays throughout).

    Same results as :func:`atom_orbits`, :func:`bond_orbits` of
    :func:`bond_list` and :func:`inadequate_links`.

    Examples
    --------
    >>> o, bo, links = nmr_orbits([[0, 1, 2, 3]], [[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    >>> len(o), len(bo), links[:2]
    (4, 6, ((0, 1, 1), (0, 2, 1)))
    """
    p = np.asarray(perms, dtype=np.int64)
    b = bond_list(neighbours)
    n = p.shape[1]
    if p.shape[0] == 1:
        # the identity alone: every atom and bond on its own, lines = atoms, bonds in order
        pairs = list(map(tuple, b.tolist()))
        ones = itertools.repeat(1, len(pairs))
        return (
            _singletons(n),
            tuple(zip(pairs)),  # ((i, j),) each
            tuple(zip(b[:, 0].tolist(), b[:, 1].tolist(), ones, strict=True)),
        )
    aflat, ast, acn = _orbit_slices(p.min(axis=0))
    orbits = _split(aflat, ast, acn)
    bflat, bst, bcn = _bond_orbit_slices(p, b)
    pairs = list(map(tuple, b[bflat].tolist()))  # in orbit order
    borbits = _split(pairs, bst, bcn)
    # line of each atom; each bond orbit adds its size to the pair of lines of its first bond
    n_lines = len(acn)
    line = np.empty(n, dtype=np.int64)
    line[np.asarray(aflat, dtype=np.int64)[ast.repeat(acn) + _ranges(acn)]] = np.repeat(
        np.arange(n_lines), acn
    )
    first = np.asarray(bflat, dtype=np.int64)[bst]
    la, lb = line[b[first, 0]], line[b[first, 1]]
    code = np.minimum(la, lb) * n_lines + np.maximum(la, lb)
    tot = np.bincount(code, weights=bcn, minlength=n_lines * n_lines)
    nz = np.flatnonzero(tot)
    links = tuple(
        zip((nz // n_lines).tolist(), (nz % n_lines).tolist(), tot[nz].astype(np.int64).tolist(),
            strict=True)
    )
    return orbits, borbits, links


@functools.lru_cache(maxsize=64)
def _singletons(n: int) -> tuple[tuple[int], ...]:
    return tuple((i,) for i in range(n))


def _ranges(counts: np.ndarray) -> np.ndarray:
    """``[0..c0-1, 0..c1-1, ...]`` for counts ``c``."""
    ends = np.cumsum(counts)
    return np.arange(ends[-1] if len(ends) else 0) - np.repeat(ends - counts, counts)


def inadequate_links(orbits, bond_orbits_) -> tuple[tuple[int, int, int], ...]:
    """Which pairs of 13C lines are bonded, and by how many bonds.

    Parameters
    ----------
    orbits : sequence of sequence of int
        Atom orbits (the NMR lines), as from :func:`atom_orbits`.
    bond_orbits_ : sequence of sequence of (int, int)
        Bond orbits, as from :func:`bond_orbits`.

    Returns
    -------
    tuple of (line_a, line_b, n_bonds)
        ``line_a <= line_b`` are indices into ``orbits``; ``n_bonds`` counts the
        bonds joining a carbon of one line to a carbon of the other.  A line
        linked to itself (``line_a == line_b``) gives no INADEQUATE cross peak
        (equal shifts) but is listed for completeness.  Sorted by lines.

    Examples
    --------
    >>> inadequate_links([(0, 1), (2,)], [((0, 2), (1, 2)), ((0, 1),)])
    ((0, 0, 1), (0, 1, 2))
    """
    line = {}
    for k, orb in enumerate(orbits):
        for a in orb:
            line[int(a)] = k
    count: dict[tuple[int, int], int] = {}
    for orb in bond_orbits_:
        i, j = orb[0]
        a, b = sorted((line[int(i)], line[int(j)]))
        key = (a, b)
        count[key] = count.get(key, 0) + len(orb)
    return tuple((a, b, c) for (a, b), c in sorted(count.items()))


def orbit_pattern(sizes) -> str:
    """Orbit sizes written as groups, largest first: ``2x20+3x10``.

    Examples
    --------
    >>> orbit_pattern([10, 20, 10, 20, 10])
    '2x20+3x10'
    >>> orbit_pattern([60])
    '1x60'
    """
    counts: dict[int, int] = {}
    for s in map(int, sizes):
        counts[s] = counts.get(s, 0) + 1
    return "+".join(f"{counts[s]}x{s}" for s in sorted(counts, reverse=True))
