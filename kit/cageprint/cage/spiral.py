"""Face spirals: checking the input, winding a spiral up, reading spirals off a cage.

A face spiral of a fullerene C_n lists its ``n/2 + 2`` faces in an order in
which each face touches the one before it and the first earlier face that
still has a free edge.  Twelve faces are pentagons, the rest hexagons, so the
whole spiral is given by the twelve one-based positions of the pentagons.

References
----------
D. E. Manolopoulos, J. C. May, S. E. Down, "Theoretical studies of the
fullerenes: C34 to C70", Chem. Phys. Lett. 181, 105 (1991).
P. W. Fowler, D. E. Manolopoulos, *An Atlas of Fullerenes*, Clarendon Press,
Oxford, 1995.
"""

from __future__ import annotations

import numbers
from collections.abc import Iterable

import numpy as np

from ..errors import CageError
from . import _kernels as K

__all__ = ["check_n", "check_spiral", "wind_up", "spiral_faces", "canonical_spiral_of"]

#: Smallest atom count of a fullerene.
MIN_ATOMS = 20


def check_n(n, name: str = "n") -> int:
    """Return ``n`` as an int if a fullerene C_n can exist, else raise CageError.

    Parameters
    ----------
    n : int
        Number of carbon atoms.
    name : str
        Argument name used in the message.

    Examples
    --------
    >>> check_n(60)
    60
    >>> check_n(22)
    Traceback (most recent call last):
    ...
    cageprint.errors.CageError: n=22: no fullerene C22 exists (every even n >= 20 except 22 has one)
    """
    if isinstance(n, bool) or not isinstance(n, numbers.Integral):
        raise CageError(f"{name}={n!r}: expected an integer atom count, found {type(n).__name__}")
    n = int(n)
    if n < MIN_ATOMS:
        raise CageError(f"{name}={n}: a fullerene has at least {MIN_ATOMS} atoms")
    if n % 2:
        raise CageError(f"{name}={n}: a fullerene has an even number of atoms, found an odd one")
    if n == 22:
        raise CageError(
            f"{name}=22: no fullerene C22 exists (every even n >= 20 except 22 has one)"
        )
    return n


def check_spiral(n: int, spiral) -> tuple[int, ...]:
    """Validate 12 pentagon positions for C_n; return them sorted as a tuple of ints.

    Examples
    --------
    >>> check_spiral(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32])
    (1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32)
    """
    n = check_n(n)
    nf = n // 2 + 2
    if isinstance(spiral, (str, bytes)) or not isinstance(spiral, Iterable):
        raise CageError(
            f"spiral={spiral!r}: expected 12 pentagon positions (integers 1..{nf}), "
            f"found {type(spiral).__name__}"
        )
    pos = list(spiral)
    if len(pos) != 12:
        raise CageError(
            f"spiral has {len(pos)} positions, expected 12 (one per pentagon) for C{n}"
        )
    out = []
    for i, p in enumerate(pos, 1):
        if isinstance(p, bool) or not isinstance(p, numbers.Integral):
            raise CageError(
                f"spiral position {i} is {p!r}: expected an integer face number 1..{nf}"
            )
        p = int(p)
        if not 1 <= p <= nf:
            raise CageError(
                f"spiral position {i} is {p}: out of range, C{n} has faces 1..{nf}"
            )
        out.append(p)
    seen = set()
    for p in out:
        if p in seen:
            raise CageError(f"spiral repeats face {p}: the 12 pentagon positions must differ")
        seen.add(p)
    return tuple(sorted(out))


_REASONS = {
    K.OVERFULL: "face {face} would make face {other} touch more faces than its {other_size} sides",
    K.FUSED: "face {face} would fuse pentagons",
    K.EARLY: "the faces close up at face {face}, before the last face {last}",
    K.SURROUNDED: "face {face} is surrounded before the spiral ends",
    K.OPEN: "the last face {last} does not close the cage",
}


def _sizes(n: int, spiral: tuple[int, ...]) -> np.ndarray:
    size = np.full(n // 2 + 2, 6, np.int64)
    size[np.asarray(spiral, np.int64) - 1] = 5
    return size


def wind_up(n: int, spiral) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Wind a face spiral up into the dual triangulation.

    Returns
    -------
    size : (F,) int array
        Face sizes (5 or 6) in spiral order.
    nxt : (F, F) int array
        ``nxt[a, b]`` is the neighbour of face ``a`` that follows ``b`` in one
        fixed sense of rotation (``-1`` where ``a`` and ``b`` do not touch).
    tri : (n, 3) int array
        The ``n`` oriented triangles of the dual, one per atom.

    Raises
    ------
    CageError
        Bad ``n`` or spiral, or a spiral that does not close into a cage.

    Examples
    --------
    >>> size, nxt, tri = wind_up(20, range(1, 13))
    >>> tri.shape
    (20, 3)
    """
    n = check_n(n)
    spiral = check_spiral(n, spiral)
    size = _sizes(n, spiral)
    status, face, other, deg, nbr, tri = K.windup(size, 0)
    if status != K.OK:
        words = " ".join(str(p) for p in spiral)
        reason = _REASONS[int(status)].format(
            face=int(face) + 1,
            other=int(other) + 1,
            other_size=int(size[other]),
            last=len(size),
        )
        raise CageError(f"spiral {words} does not close into a C{n} cage: {reason}")
    return size, K.next_matrix(tri, len(size)), tri


def _rotation(size: np.ndarray, nxt: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Neighbour table ``nbr`` (F, 6) in rotation order and degree array of the dual."""
    nf = len(size)
    nbr = np.full((nf, 6), -1, np.int64)
    for a in range(nf):
        b = int(np.flatnonzero(nxt[a] >= 0)[0])
        for j in range(int(size[a])):
            nbr[a, j] = b
            b = int(nxt[a, b])
    return nbr, size.copy()


def spiral_faces(size, nxt, f0: int, f1: int, sense: int) -> np.ndarray | None:
    """Face order of the spiral that starts at faces ``f0, f1`` (0-based), or None.

    ``sense`` 0 turns like the triangles in ``nxt``, 1 the other way.
    """
    size = np.asarray(size, np.int64)
    nbr, deg = _rotation(size, nxt)
    nf = len(size)
    out = np.zeros(nf, np.int64)
    r = K.unwind(
        f0, f1, sense, nxt, size, deg, nbr, size, False, out,
        np.zeros(nf, np.int64), np.zeros(nf, np.int64), np.zeros(nf + 1, np.int64),
    )
    return None if r < 0 else out


def canonical_spiral_of(size, nxt) -> tuple[tuple[int, ...], np.ndarray]:
    """Lexicographically smallest spiral of a cage and its face order.

    Every start face, second face and sense of rotation is tried; start faces
    that are pentagons first, since any spiral starting at a pentagon beats
    one starting at a hexagon.
    """
    size = np.asarray(size, np.int64)
    nbr, deg = _rotation(size, nxt)
    faces = K.smallest_spiral(nxt, size, deg, nbr, True)
    if faces[0] < 0:  # no spiral from any pentagon: try the hexagons too
        faces = K.smallest_spiral(nxt, size, deg, nbr, False)
    if faces[0] < 0:
        raise CageError(
            f"this C{2 * len(size) - 4} cage has no face spiral from any start face; "
            "it cannot be named by a spiral"
        )
    pos = tuple(int(i) + 1 for i in np.flatnonzero(size[faces] == 5))
    return pos, faces
