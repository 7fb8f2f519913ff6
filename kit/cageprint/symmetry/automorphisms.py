"""Automorphisms of a cubic planar cage graph from its rotation system.

A fullerene graph is 3-connected, cubic and planar, so its embedding on the
sphere is unique up to reflection (Whitney).  An automorphism is then fixed
by the image of one dart (directed edge) and by whether it keeps or reverses
the cyclic order of the bonds at every atom.  There are at most ``6 n``
candidates; each is grown over a breadth-first spanning tree of the graph and
verified on every dart.  All candidates are grown together, one numpy step per
atom, and candidates whose atoms stop matching a cheap vertex invariant are
dropped as soon as they fail.

Automorphisms that keep the rotational sense are realised in 3D as proper
rotations, the others as improper operations (mirrors, inversion,
rotoreflections).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import CageError

__all__ = [
    "AutomorphismGroup",
    "automorphisms",
    "check_rotation_system",
    "checked_faces",
    "trace_faces",
]


@dataclass(frozen=True, eq=False)
class AutomorphismGroup:
    """The automorphisms of a cage graph.

    Attributes
    ----------
    perms : numpy.ndarray
        ``(g, n)`` int array; ``perms[k, i]`` is the atom that atom ``i`` is
        sent to by automorphism ``k``.  Row 0 is the identity.
    proper : numpy.ndarray
        ``(g,)`` bool array; True where the automorphism keeps the rotational
        sense of the embedding (a proper rotation in 3D).
    """

    perms: np.ndarray
    proper: np.ndarray

    @property
    def order(self) -> int:
        """Number of automorphisms (the order of the point group)."""
        return int(self.perms.shape[0])

    @property
    def n_proper(self) -> int:
        """Number of orientation-keeping automorphisms."""
        return int(self.proper.sum())

    def inverse(self) -> np.ndarray:
        """Return the ``(g, n)`` array of inverse permutations."""
        inv = np.empty_like(self.perms)
        rows = np.arange(self.perms.shape[0])[:, None]
        inv[rows, self.perms] = np.arange(self.perms.shape[1])[None, :]
        return inv


def check_rotation_system(neighbours) -> np.ndarray:
    """Validate a neighbour table (see :func:`checked_faces`) and return it as an int array.

    Examples
    --------
    >>> check_rotation_system([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]).shape
    (4, 3)
    """
    return checked_faces(neighbours)[0]


def checked_faces(neighbours) -> tuple[np.ndarray, list[tuple[int, ...]]]:
    """Validate a neighbour table with a rotation system and return it as an int array.

    Parameters
    ----------
    neighbours : array_like
        ``(n, 3)`` integers; row ``i`` lists the neighbours of atom ``i`` in one
        rotational sense, the same sense for every atom.

    Returns
    -------
    (numpy.ndarray, list of tuple of int)
        The table as a C-contiguous ``int64`` array, and its faces.

    Raises
    ------
    CageError
        If the table is not ``(n, 3)``, an index is out of range, a bond is
        not listed from both ends, or the faces traced from the rotation
        system do not close into a sphere (Euler: ``n/2 + 2`` faces).

    Examples
    --------
    >>> nb, faces = checked_faces([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    >>> nb.shape, len(faces)
    ((4, 3), 4)
    """
    try:
        nb = np.ascontiguousarray(neighbours, dtype=np.int64)
    except (TypeError, ValueError) as exc:
        raise CageError(f"neighbours: expected an (n, 3) integer array; got {exc}") from None
    if nb.ndim != 2 or nb.shape[1] != 3 or nb.shape[0] < 4:
        raise CageError(
            f"neighbours: expected an (n, 3) integer array with n >= 4; found shape {nb.shape}"
        )
    n = nb.shape[0]
    if nb.min() < 0 or nb.max() >= n:
        bad = int(np.argwhere((nb < 0) | (nb >= n))[0, 0])
        raise CageError(
            f"neighbours: row {bad} has an atom index outside 0..{n - 1}: {nb[bad].tolist()}"
        )
    rows = np.arange(n)[:, None]
    if np.any(nb == rows) or np.any(nb[:, 0] == nb[:, 1]) or np.any(nb[:, 1] == nb[:, 2]) or (
        np.any(nb[:, 0] == nb[:, 2])
    ):
        bad = int(
            np.argwhere(
                (nb == rows).any(1)
                | (nb[:, 0] == nb[:, 1])
                | (nb[:, 1] == nb[:, 2])
                | (nb[:, 0] == nb[:, 2])
            )[0, 0]
        )
        raise CageError(
            f"neighbours: row {bad} must list three distinct other atoms; found {nb[bad].tolist()}"
        )
    back = (nb[nb] == rows[:, :, None])  # (n, 3, 3): is i in row nb[i, m]?
    ok = back.sum(axis=2) == 1
    if not ok.all():
        i, m = (int(v) for v in np.argwhere(~ok)[0])
        raise CageError(
            f"neighbours: bond {i}-{int(nb[i, m])} is listed in row {i} but not in row "
            f"{int(nb[i, m])}; expected every bond listed from both ends"
        )
    faces = _trace(nb, np.argmax(back, axis=2))
    if len(faces) != n // 2 + 2:
        raise CageError(
            f"neighbours: the rotation system traces {len(faces)} faces; a cage with {n} atoms "
            f"on a sphere has {n // 2 + 2} (the rows are not all in one rotational sense, or the "
            "graph is not planar)"
        )
    return nb, faces


def _back_index(nb: np.ndarray) -> np.ndarray:
    """``back[i, m]`` = position of ``i`` in the row of its neighbour ``nb[i, m]``."""
    rows = np.arange(nb.shape[0])[:, None, None]
    return np.argmax(nb[nb] == rows, axis=2)


def trace_faces(neighbours) -> list[tuple[int, ...]]:
    """Trace the faces of a rotation system.

    Each face is a tuple of atoms in cyclic order.  The face that follows
    dart ``u -> v`` turns at ``v`` to the neighbour after ``u`` in ``v``'s row.

    Parameters
    ----------
    neighbours : array_like
        ``(n, 3)`` neighbour table in one rotational sense.

    Returns
    -------
    list of tuple of int
        The faces, in order of their smallest dart.

    Examples
    --------
    >>> sorted(len(f) for f in trace_faces([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]))
    [3, 3, 3, 3]
    """
    nb = np.asarray(neighbours, dtype=np.int64)
    return _trace(nb, _back_index(nb))


def _trace(nb: np.ndarray, back: np.ndarray) -> list[tuple[int, ...]]:
    """:func:`trace_faces` with the back index (:func:`_back_index`) known."""
    n = nb.shape[0]
    # dart 3u+m is u -> nb[u, m]; the next dart of its face leaves v = nb[u, m]
    nxt_a = (3 * nb + (back + 1) % 3).ravel()
    if _walk_compiled is not None:
        flat = np.empty(3 * n, dtype=np.int64)
        sizes = np.empty(3 * n, dtype=np.int64)
        k = _walk_compiled(nxt_a, flat, sizes)
        ends = np.cumsum(sizes[:k])
        cut = map(slice, (ends - sizes[:k]).tolist(), ends.tolist())
        return list(map(tuple, map(flat.tolist().__getitem__, cut)))
    nxt = nxt_a.tolist()
    seen = [False] * (3 * n)
    faces = []
    for d0 in range(3 * n):
        if seen[d0]:
            continue
        face = []
        d = d0
        while not seen[d]:
            seen[d] = True
            face.append(d // 3)
            d = nxt[d]
        faces.append(tuple(face))
    return faces


def _vertex_classes(nb: np.ndarray, faces: list[tuple[int, ...]], rounds: int = 3) -> np.ndarray:
    """A cheap isomorphism-invariant vertex colouring (face sizes, then refinement)."""
    n = nb.shape[0]
    sizes = np.fromiter(map(len, faces), dtype=np.int64, count=len(faces))
    flat = np.fromiter(itertools.chain.from_iterable(faces), dtype=np.int64, count=int(sizes.sum()))
    five = np.repeat(sizes == 5, sizes)
    pent = np.bincount(flat[five], minlength=n)
    hexa = np.bincount(flat[~five], minlength=n)
    label = _ranks(pent * 16 + np.minimum(hexa, 15))
    for _ in range(rounds):
        k = int(label.max()) + 1
        nbl = np.sort(label[nb], axis=1)
        key = ((label * k + nbl[:, 0]) * k + nbl[:, 1]) * k + nbl[:, 2]
        new = _ranks(key)
        if new.max() == label.max():
            label = new
            break
        label = new
    return label


def _ranks(key: np.ndarray) -> np.ndarray:
    """Rank of each value among the distinct values (``np.unique(..., return_inverse=True)``)."""
    order = np.argsort(key, kind="stable")
    srt = key[order]
    step = np.empty(srt.size, dtype=np.int64)
    step[:1] = 0
    np.not_equal(srt[1:], srt[:-1], out=step[1:])
    out = np.empty(srt.size, dtype=np.int64)
    out[order] = np.cumsum(step)
    return out


def _bfs_plan(nb: np.ndarray, back: np.ndarray, root: int):
    """Spanning-tree plan from dart ``root -> nb[root, 0]``.

    Returns ``order`` (atoms after the root), ``parent`` and ``offset`` with
    ``x = nb[parent, (kref[parent] + offset) % 3]``, and ``kref`` (the row
    position of each atom's reference dart, the one towards its parent).
    """
    n = nb.shape[0]
    kref = np.full(n, -1, dtype=np.int64)
    kref[root] = 0
    order, parent, offset = [], [], []
    queue = [root]
    head = 0
    while head < len(queue):
        a = queue[head]
        head += 1
        for j in range(3):
            m = (kref[a] + j) % 3
            x = int(nb[a, m])
            if kref[x] >= 0:
                continue
            kref[x] = back[a, m]
            order.append(x)
            parent.append(a)
            offset.append(j)
            queue.append(x)
    if len(order) != n - 1:
        raise CageError(
            f"neighbours: the graph is not connected ({len(order) + 1} of {n} atoms reachable "
            f"from atom {root})"
        )
    return (np.array(order), np.array(parent), np.array(offset), kref)


_njit: Any
try:  # numba compiles the candidate loop; without it the numpy lock-step path is used
    from numba import njit as _njit
except ImportError:  # pragma: no cover - exercised only without numba
    _njit = None


def _plan_and_grow(nb, back, label, root, targets, out_perm, out_sense):  # pragma: no cover
    """Spanning-tree plan from ``root`` and every candidate grown along it (compiled).

    Returns the number of automorphisms written to ``out_perm`` / ``out_sense``,
    or -1 when the graph is not connected.  Runs under numba (coverage cannot see it).
    """
    n = nb.shape[0]
    kref = np.full(n, -1, dtype=np.int64)
    order = np.empty(n, dtype=np.int64)
    parent = np.empty(n, dtype=np.int64)
    offset = np.empty(n, dtype=np.int64)
    kref[root] = 0
    order[0] = root
    head, tail = 0, 1
    while head < tail:
        a = order[head]
        head += 1
        for j in range(3):
            x = nb[a, (kref[a] + j) % 3]
            if kref[x] >= 0:
                continue
            kref[x] = back[a, (kref[a] + j) % 3]
            order[tail] = x
            parent[tail] = a
            offset[tail] = j
            tail += 1
    if tail != n:
        return -1
    img = np.empty(n, dtype=np.int64)
    kimg = np.empty(n, dtype=np.int64)
    stamp = np.zeros(n, dtype=np.int64)
    found = 0
    cur = 0
    for t in targets:
        for k in range(3):
            for s in (1, -1):
                cur += 1
                img[root] = t
                kimg[root] = k
                stamp[t] = cur
                ok = True
                for step in range(1, n):
                    x = order[step]
                    a = parent[step]
                    ia = img[a]
                    m = (kimg[a] + s * offset[step]) % 3
                    ix = nb[ia, m]
                    if label[ix] != label[x] or stamp[ix] == cur:
                        ok = False
                        break
                    stamp[ix] = cur
                    img[x] = ix
                    kimg[x] = back[ia, m]
                if not ok:
                    continue
                for x in range(n):
                    ix = img[x]
                    for mm in range(3):
                        if img[nb[x, mm]] != nb[ix, (kimg[x] + s * (mm - kref[x])) % 3]:
                            ok = False
                            break
                    if not ok:
                        break
                if ok:
                    out_perm[found, :] = img
                    out_sense[found] = s
                    found += 1
    return found


_grow_compiled = None if _njit is None else _njit(cache=True)(_plan_and_grow)


def _walk_faces(nxt, flat, sizes):  # pragma: no cover - runs compiled
    """The cycles of the dart map ``nxt``, smallest dart first: atoms into ``flat``,
    lengths into ``sizes``; returns the number of faces (same walk as :func:`trace_faces`)."""
    seen = np.zeros(nxt.size, dtype=np.bool_)
    pos = 0
    k = 0
    for d0 in range(nxt.size):
        if seen[d0]:
            continue
        d = d0
        start = pos
        while not seen[d]:
            seen[d] = True
            flat[pos] = d // 3
            pos += 1
            d = nxt[d]
        sizes[k] = pos - start
        k += 1
    return k


_walk_compiled = None if _njit is None else _njit(cache=True)(_walk_faces)


def automorphisms(neighbours, *, validate: bool = True, faces=None) -> AutomorphismGroup:
    """All automorphisms of a cubic planar cage graph, each marked proper or improper.

    Parameters
    ----------
    neighbours : array_like
        ``(n, 3)`` neighbour table; row ``i`` lists atom ``i``'s neighbours
        in one rotational sense (``Cage.neighbours``).
    validate : bool, default True
        Check the table first with :func:`check_rotation_system`.
    faces : list of tuple of int, optional
        The faces traced from the table (:func:`trace_faces`), if known.

    Returns
    -------
    AutomorphismGroup
        ``perms`` (identity first) and ``proper`` flags.

    Notes
    -----
    For a 3-connected planar graph the embedding is unique up to reflection,
    so an automorphism is fixed by one dart's image and the sense it keeps or
    reverses; the ``6 n`` candidates are pruned by a refined vertex invariant
    (pentagons and hexagons at each atom, refined over neighbours) and grown
    in lock step over a breadth-first tree, then checked on every dart.

    Examples
    --------
    A tetrahedron (the smallest cubic planar graph) has the 24 automorphisms
    of Td, 12 of them proper:

    >>> g = automorphisms([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    >>> g.order, g.n_proper
    (24, 12)
    """
    if validate:
        nb, faces = checked_faces(neighbours)
    else:
        nb = np.asarray(neighbours, np.int64)
        if faces is None:
            faces = trace_faces(nb)
    n = nb.shape[0]
    back = _back_index(nb)
    label = _vertex_classes(nb, faces)
    counts = np.bincount(label)
    # root in the rarest class (ties: smallest atom index)
    root = int(np.flatnonzero(counts[label] == counts[label].min())[0])
    targets = np.flatnonzero(label == label[root])
    if _grow_compiled is not None:
        perms = np.empty((6 * len(targets), n), dtype=np.int64)
        sense = np.empty(6 * len(targets), dtype=np.int64)
        found = _grow_compiled(nb, back, label.astype(np.int64), root, targets, perms, sense)
        if found < 0:
            _bfs_plan(nb, back, root)  # raises the CageError naming the unreachable atoms
        return _as_group(perms[:found], sense[:found] == 1)
    order, parent, offset, kref = _bfs_plan(nb, back, root)

    t = len(targets)
    # candidates: (target atom, dart position, sense)
    cu = np.repeat(targets, 6)
    ck = np.tile(np.repeat(np.arange(3), 2), t)
    cs = np.tile(np.array([1, -1]), 3 * t)

    img = np.empty((cu.size, n), dtype=np.int64)
    kimg = np.empty((cu.size, n), dtype=np.int64)
    img[:, root] = cu
    kimg[:, root] = ck
    alive = np.arange(cu.size)
    for x, a, j in zip(order.tolist(), parent.tolist(), offset.tolist(), strict=True):
        ia = img[alive, a]
        m = (kimg[alive, a] + cs[alive] * j) % 3
        ix = nb[ia, m]
        img[alive, x] = ix
        kimg[alive, x] = back[ia, m]
        good = label[ix] == label[x]
        if not good.all():
            alive = alive[good]
            if alive.size == 0:  # pragma: no cover - the identity always survives
                break
    img, kimg, cs = img[alive], kimg[alive], cs[alive]
    # verify every dart: image of nb[x, m] must be nb[img x, kimg x + s (m - kref x)]
    mm = np.arange(3)[None, None, :]
    pos = (kimg[:, :, None] + cs[:, None, None] * (mm - kref[None, :, None])) % 3
    lhs = img[:, nb]  # (c, n, 3)
    rhs = nb[img[:, :, None], pos]
    ok = (lhs == rhs).all(axis=(1, 2))
    srt = np.sort(img, axis=1)
    ok &= (srt == np.arange(n)[None, :]).all(axis=1)
    return _as_group(img[ok], cs[ok] == 1)


def _as_group(perms: np.ndarray, proper: np.ndarray) -> AutomorphismGroup:
    """Put the identity first and wrap."""
    n = perms.shape[1]
    ident = np.flatnonzero((perms == np.arange(n)[None, :]).all(axis=1) & proper)
    first = int(ident[0])
    if perms.shape[0] == 1:
        return AutomorphismGroup(perms=perms.copy(), proper=proper.copy())
    idx = np.r_[first, np.delete(np.arange(perms.shape[0]), first)]
    return AutomorphismGroup(perms=np.ascontiguousarray(perms[idx]), proper=proper[idx].copy())
