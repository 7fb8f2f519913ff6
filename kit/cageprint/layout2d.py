"""Flat drawings of a cage: a Schlegel-type projection by barycentric (Tutte) embedding.

One face is chosen as the outer face and its atoms are pinned on a regular
polygon; every other atom is placed at the mean of its neighbours, which is
one sparse linear solve.  For a 3-connected planar graph (every fullerene)
this draws each face as a convex polygon with no crossing bonds (Tutte 1963).

Pure computation: numpy and scipy only.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.linalg import spsolve

from .errors import CageError

__all__ = ["tutte_layout", "schlegel_layout"]


def tutte_layout(n: int, bonds, outer_face: Sequence[int]) -> np.ndarray:
    """Barycentric embedding of a planar graph with ``outer_face`` on the unit circle.

    Parameters
    ----------
    n : int
        Number of atoms (vertices), indexed ``0 .. n-1``.
    bonds : array_like of shape (m, 2)
        Bonded atom pairs.
    outer_face : sequence of int
        Atoms of the outer face in cyclic order.

    Returns
    -------
    numpy.ndarray of shape (n, 2)
        Coordinates; the outer face lies on the unit circle.

    Notes
    -----
    W. T. Tutte, "How to draw a graph", Proc. London Math. Soc. 13, 743-768 (1963).

    Examples
    --------
    >>> sq = [(0, 1), (1, 2), (2, 3), (3, 0), (0, 4), (1, 4), (2, 4), (3, 4)]
    >>> xy = tutte_layout(5, sq, [0, 1, 2, 3])
    >>> [round(float(v), 6) + 0.0 for v in xy[4]]
    [0.0, 0.0]
    """
    b = np.asarray(bonds, dtype=int).reshape(-1, 2)
    outer = [int(a) for a in outer_face]
    if len(outer) < 3 or len(set(outer)) != len(outer):
        raise CageError(f"outer_face: expected 3 or more distinct atoms, found {outer_face!r}")
    if b.size and (b.min() < 0 or b.max() >= n):
        raise CageError(f"bonds: atom indices must lie in 0..{n - 1}, found {b.min()}..{b.max()}")
    k = len(outer)
    ang = np.pi / 2 + 2 * np.pi * np.arange(k) / k
    xy = np.zeros((n, 2))
    xy[outer] = np.column_stack([np.cos(ang), np.sin(ang)])
    fixed = np.zeros(n, bool)
    fixed[outer] = True
    free = np.flatnonzero(~fixed)
    if free.size == 0:
        return xy
    deg = np.bincount(b.ravel(), minlength=n).astype(float)
    if np.any(deg[free] == 0):
        bad = int(free[deg[free] == 0][0])
        raise CageError(f"bonds: atom {bad} has no bond, so it cannot be placed")
    pos = -np.ones(n, int)
    pos[free] = np.arange(free.size)
    rows, cols, vals = [pos[free]], [pos[free]], [deg[free]]
    rhs = np.zeros((free.size, 2))
    for i, j in ((b[:, 0], b[:, 1]), (b[:, 1], b[:, 0])):
        sel = ~fixed[i]
        ii, jj = i[sel], j[sel]
        both = ~fixed[jj]
        rows.append(pos[ii[both]])
        cols.append(pos[jj[both]])
        vals.append(-np.ones(int(both.sum())))
        np.add.at(rhs, pos[ii[~both]], xy[jj[~both]])
    mat = coo_matrix(
        (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
        shape=(free.size, free.size),
    ).tocsc()
    sol = np.column_stack([spsolve(mat, rhs[:, 0]), spsolve(mat, rhs[:, 1])])
    xy[free] = sol
    return xy


def schlegel_layout(cage, outer: int | None = None) -> tuple[np.ndarray, tuple[int, ...]]:
    """Flat layout of a cage (anything with ``n``, ``bonds`` and ``faces``).

    Parameters
    ----------
    cage : Cage-like
        Needs ``n``, ``bonds`` ((m, 2) atom pairs) and ``faces`` (atom tuples in
        cyclic order).
    outer : int, optional
        Index into ``cage.faces`` of the face drawn outermost; default the first
        hexagon (a hexagon spreads the drawing more evenly than a pentagon),
        else face 0.

    Returns
    -------
    xy : numpy.ndarray of shape (n, 2)
    outer_face : tuple of int
        The atoms of the face that was put outside.

    Examples
    --------
    >>> class Square:  # a square with a centre atom, as a stand-in for a cage
    ...     n = 5
    ...     bonds = [(0, 1), (1, 2), (2, 3), (3, 0), (0, 4), (1, 4), (2, 4), (3, 4)]
    ...     faces = ((0, 1, 4), (0, 1, 2, 3))
    >>> xy, face = schlegel_layout(Square(), outer=1)
    >>> face
    (0, 1, 2, 3)
    """
    faces = tuple(tuple(int(a) for a in f) for f in cage.faces)
    if not faces:
        raise CageError("cage.faces: expected at least one face, found none")
    if outer is None:
        outer = next((i for i, f in enumerate(faces) if len(f) == 6), 0)
    if not 0 <= outer < len(faces):
        raise CageError(f"outer: expected a face index in 0..{len(faces) - 1}, found {outer}")
    face = faces[outer]
    return tutte_layout(int(cage.n), cage.bonds, face), face
