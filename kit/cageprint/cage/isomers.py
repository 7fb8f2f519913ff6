"""All isomers of C_n in canonical-spiral order, and their isomer numbers.

Notes
-----
The search lays the faces of a spiral one at a time, pentagon before hexagon,
starting with a pentagon, and abandons a partial spiral as soon as it cannot
close (a face would get too many neighbours, the rim closes early, a face is
surrounded too soon, or, for IPR, two pentagons touch).  A complete spiral is
kept only if no spiral read from another pentagon, neighbour and sense of
rotation is smaller; each competitor is abandoned at its first larger face.
Kept spirals therefore come out in increasing lexicographic order, which is
the order that defines isomer numbers (IPR isomers are numbered among IPR
isomers).  A cage is found if some spiral starting at a pentagon closes; the
smallest fullerenes known to have no spiral at all are far larger than the
sizes chemists meet (C380, from memory).

For larger cages the tree is cut at a fixed depth into a few hundred parts
(each part: all spirals that begin with one partial spiral), searched by
:data:`WORKERS` threads and handed over in order.

Partial spirals are also cut by two exact bounds: a face shortens the rim by
at most two faces (a pentagon by one) and the last face needs a rim of its
own size; and with isolated pentagons no two pentagons follow each other.

No shortcut from canonicity is taken before a spiral is complete: spirals
from a given start fail to close often enough (about one pentagon start in
eleven for the IPR cages up to C100) that a competitor which looks smaller
part-way may never close.  Checks in the test suite: the all-isomer counts
agree with the published ones for every even n from 20 to 60 and for 70, the
IPR counts for every even n from 60 to 100.

References
----------
D. E. Manolopoulos, J. C. May, S. E. Down, "Theoretical studies of the
fullerenes: C34 to C70", Chem. Phys. Lett. 181, 105 (1991).
P. W. Fowler, D. E. Manolopoulos, *An Atlas of Fullerenes*, Clarendon Press,
Oxford, 1995.
"""

from __future__ import annotations

import itertools
import os
import sys
from collections import deque
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from functools import lru_cache

import numpy as np

from ..errors import CageError
from . import _kernels as K
from .model import Cage
from .spiral import check_n

__all__ = ["iter_isomers", "iter_spirals", "count_isomers", "isomer_number"]

#: spirals handed over per call of the compiled search (the first call hands fewer)
BATCH = 4096

#: threads searching parts of one spiral tree at once (capped by the CPU count)
WORKERS = 2

#: cages with fewer faces than this are searched in one piece (all isomers / IPR only)
SPLIT_MIN_FACES = 30
SPLIT_MIN_FACES_IPR = 46

#: about how many parts a split search is cut into
SPLIT_PARTS = 256


def _run(st, ipr: bool, first: int = 64) -> Iterator[np.ndarray]:
    # drive one compiled search to its end, handing over batches
    size = first
    while True:
        out = np.zeros((size, 12), np.int64)
        found, done = K.search(
            st["size"], st["deg"], st["nbr"], st["bnd"], st["ptr"], st["tri"], st["nxt"],
            st["psave"], st["tried"], st["ctl"], bool(ipr), out, size,
        )
        if found:
            yield out[:found]
        if done:
            return
        size = min(BATCH, size * 4)


def _part(n: int, ipr: bool, prefix: np.ndarray, depth: int) -> np.ndarray:
    # every canonical spiral that starts with the given partial spiral of `depth` faces
    st = K.new_search_state(n)
    st["size"][:depth] = 6
    st["size"][prefix[prefix > 0] - 1] = 5
    st["ctl"][5] = depth
    parts = list(_run(st, ipr, BATCH))
    return np.concatenate(parts) if parts else np.zeros((0, 12), np.int64)


def _workers() -> int:
    n = os.cpu_count() or 1
    return max(1, min(WORKERS, n))


def iter_spirals(n: int, ipr: bool = False) -> Iterator[np.ndarray]:
    """Canonical spirals of C_n in lexicographic order, in batches.

    Yields (k, 12) int arrays of one-based pentagon positions.  This is the
    bare search behind :func:`iter_isomers`, without building Cage objects.
    For larger cages the search is split by the first faces of the spiral
    into parts searched by :data:`WORKERS` threads at once; the parts are
    handed over in order, so the output is the same.

    Examples
    --------
    >>> sum(len(b) for b in iter_spirals(40))
    40
    """
    n = check_n(n)
    nf = n // 2 + 2
    workers = _workers()
    if workers < 2 or nf < (SPLIT_MIN_FACES_IPR if ipr else SPLIT_MIN_FACES):
        yield from _run(K.new_search_state(n), ipr)
        return
    # split deep enough for a few hundred parts (listing them costs next to nothing)
    depth = 6
    while True:
        st = K.new_search_state(n)
        st["ctl"][6] = depth
        prefixes = np.concatenate(list(_run(st, ipr, BATCH)) or [np.zeros((0, 12), np.int64)])
        if len(prefixes) >= SPLIT_PARTS or depth >= nf - 6:
            break
        depth += 2
    pool = ThreadPoolExecutor(max_workers=workers, thread_name_prefix="cageprint-search")
    try:
        pending: deque = deque()
        todo = iter(prefixes)
        for prefix in itertools.islice(todo, 2 * workers):
            pending.append(pool.submit(_part, n, ipr, prefix, depth))
        while pending:
            found = pending.popleft().result()
            nxt = next(todo, None)
            if nxt is not None:
                pending.append(pool.submit(_part, n, ipr, nxt, depth))
            if len(found):
                yield found
    finally:  # also when the caller stops early
        pool.shutdown(wait=True, cancel_futures=True)


def iter_isomers(n: int, ipr: bool = False, progress: bool = False) -> Iterator[Cage]:
    """Every isomer of C_n (or every IPR isomer), numbered, in canonical-spiral order.

    A generator: isomers stream out as the search finds them.

    Parameters
    ----------
    n : int
        Number of atoms.
    ipr : bool
        Only isomers obeying the isolated pentagon rule, numbered among themselves.
    progress : bool
        Show a progress bar (tqdm) on standard error.

    Yields
    ------
    Cage
        With ``spiral == canonical_spiral`` and its isomer number set
        (``isomer`` for IPR lists, ``isomer_all`` for full lists).

    Examples
    --------
    >>> [c.isomer for c in iter_isomers(28)]
    [1, 2]
    >>> [c.spiral for c in iter_isomers(70, ipr=True)]
    [(1, 7, 9, 11, 13, 15, 27, 29, 31, 33, 35, 37)]
    """
    n = check_n(n)
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(
            desc=f"C{n} {'IPR ' if ipr else ''}isomers", unit=" isomers", file=sys.stderr
        )
    rank = 0
    try:
        for batch in iter_spirals(n, ipr):
            for row in batch.tolist():
                rank += 1
                if ipr:
                    yield Cage._trusted(n, row, isomer_ipr=rank)
                else:
                    yield Cage._trusted(n, row, isomer_all=rank)
            if bar is not None:
                bar.update(len(batch))
    finally:
        if bar is not None:
            bar.close()


def count_isomers(n: int, ipr: bool = False) -> int:
    """Number of isomers of C_n (IPR isomers only with ``ipr=True``).

    Examples
    --------
    >>> count_isomers(60), count_isomers(60, ipr=True)
    (1812, 1)
    """
    return sum(len(b) for b in iter_spirals(n, ipr))


def isomer_number(n: int, spiral, ipr: bool | None = None) -> int:
    """Isomer number of the cage with this spiral (any spiral of it).

    Parameters
    ----------
    n : int
        Number of atoms.
    spiral : sequence of 12 int
        Pentagon positions of any face spiral of the cage.
    ipr : bool or None
        ``True``: rank among IPR isomers; ``False``: rank among all isomers;
        ``None`` (default): the literature number, i.e. the IPR rank for an
        IPR cage and the all-isomer rank otherwise.

    Raises
    ------
    CageError
        Bad input, or ``ipr=True`` for a cage with fused pentagons.

    Examples
    --------
    >>> isomer_number(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32])
    1
    >>> isomer_number(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32], ipr=False)
    1812
    """
    cage = Cage.from_spiral(n, spiral)
    if ipr is None:
        ipr = cage.is_ipr
    if ipr and not cage.is_ipr:
        raise CageError(
            f"spiral {' '.join(map(str, cage.spiral))}: this C{cage.n} cage has "
            f"{cage.fused_pentagon_pairs} fused pentagon pair(s), so it has no IPR isomer "
            "number; pass ipr=False"
        )
    return _rank(cage.n, cage.canonical_spiral, bool(ipr))


class _Ranks:
    """Canonical spirals of one (n, ipr) list found so far, and the search to continue it."""

    def __init__(self, n: int, ipr: bool):
        self.n = n
        self.ipr = ipr
        self.rank: dict[tuple[int, ...], int] = {}
        self.last: tuple[int, ...] = ()
        self._batches = iter_spirals(n, ipr)

    def __call__(self, canon: tuple[int, ...]) -> int:
        while canon not in self.rank and canon > self.last:
            batch = next(self._batches, None)
            if batch is None:
                break
            for row in batch.tolist():
                self.rank[tuple(row)] = len(self.rank) + 1
            self.last = tuple(batch[-1].tolist())
        if canon in self.rank:
            return self.rank[canon]
        raise CageError(  # pragma: no cover - would mean the search missed a cage
            f"C{self.n} spiral {' '.join(map(str, canon))} was not found by the isomer search"
        )


@lru_cache(maxsize=4)
def _ranks(n: int, ipr: bool) -> _Ranks:
    # kept between calls, so numbering many cages of one formula searches once
    return _Ranks(n, ipr)


def _rank(n: int, canon: tuple[int, ...], ipr: bool) -> int:
    return _ranks(n, ipr)(canon)
