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

__all__ = ["tutte_layout", "schlegel_layout", "schlegel_projection"]

#: the eye sits this far beyond the outer face's centre, as a fraction of its distance
#: from the cage centre (close enough that the face encloses everything else)
EYE_BEYOND_FACE = 0.15


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


def schlegel_projection(coords, outer_face: Sequence[int],
                        beyond: float = EYE_BEYOND_FACE) -> np.ndarray:
    """Perspective projection of a convex cage through one face (a Schlegel diagram).

    The eye is put on the line from the cage centre through the centre of
    ``outer_face``, a little outside the face; every atom is projected onto a
    plane perpendicular to that line.  The outer face then encloses the rest
    of the drawing.  The result is scaled so the outer face's atoms lie at
    radius 1 on average.

    Parameters
    ----------
    coords : array_like of shape (n, 3)
        Atom positions of a (near) convex cage.
    outer_face : sequence of int
        Atoms of the face to look through.
    beyond : float
        Eye distance beyond the face, as a fraction of the face's distance from the centre.

    Returns
    -------
    numpy.ndarray of shape (n, 2)

    Notes
    -----
    V. Schlegel, "Theorie der homogen zusammengesetzten Raumgebilde", Nova Acta Leopoldina 44
    (1883): the projection of a polytope through one of its facets.

    Examples
    --------
    >>> cube = [[x, y, z] for x in (-1, 1) for y in (-1, 1) for z in (-1, 1)]
    >>> xy = schlegel_projection(cube, [1, 3, 7, 5])   # the z = +1 face
    >>> bool(np.all(np.hypot(*xy[[0, 2, 6, 4]].T) < 1))  # the far face lies inside
    True
    """
    x = np.asarray(coords, float)
    face = [int(a) for a in outer_face]
    centre = x.mean(axis=0)
    fc = x[face].mean(axis=0)
    axis = fc - centre
    dist = float(np.linalg.norm(axis))
    if dist == 0.0:
        raise CageError("outer_face: its centre coincides with the cage centre; pick another")
    axis /= dist
    eye = centre + axis * dist * (1.0 + beyond)
    rel = x - eye
    depth = -(rel @ axis)
    if np.any(depth <= 0):
        raise CageError(f"coords: atoms lie beyond the eye (beyond={beyond}); the cage is not "
                        "convex enough for this face, pass a larger beyond or use tutte_layout")
    ref = np.array([1.0, 0.0, 0.0]) if abs(axis[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    e1 = np.cross(axis, ref)
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(axis, e1)
    xy = np.column_stack([rel @ e1, rel @ e2]) / depth[:, None]
    xy -= xy[face].mean(axis=0)
    return xy / float(np.mean(np.hypot(*xy[face].T)))


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
