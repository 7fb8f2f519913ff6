"""The spiral search: canonical spirals of C_n in order, and their ranks (isomer numbers).

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
The face-spiral method and isomer numbering: Manolopoulos, May & Down, Chem. Phys.
Lett. 181, 105 (1991); Fowler & Manolopoulos, *An Atlas of Fullerenes* (1995); full
citations in :mod:`cageprint.cage.spiral`.
"""

from __future__ import annotations

import itertools
import os
import threading
from collections import deque
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from functools import lru_cache

import numpy as np

from ..errors import CageError
from . import _kernels as K
from ._prune import new_memo
from .spiral import check_n

__all__ = ["iter_spirals", "count_isomers", "isomer_rank"]

#: spirals handed over per call of the compiled search (the first call hands fewer)
BATCH = 4096

#: threads searching parts of one spiral tree at once (capped by the CPU count)
WORKERS = 2

#: cages with fewer faces than this are searched in one piece (all isomers / IPR only)
SPLIT_MIN_FACES = 30
SPLIT_MIN_FACES_IPR = 46

#: about how many parts a split search is cut into
SPLIT_PARTS = 256


_LOCAL = threading.local()
_OFF = np.zeros(1, np.int64)

#: remember dead states in all-isomer searches (in IPR searches they rarely recur)
MEMO_ALL = True
MEMO_IPR = False


def _memo(ipr: bool) -> np.ndarray:
    # one dead-state table per thread, kept between searches (keys hold no cage size)
    if not (MEMO_IPR if ipr else MEMO_ALL):
        return _OFF
    name = "ipr" if ipr else "all"
    table = getattr(_LOCAL, name, None)
    if table is None:
        table = new_memo()
        setattr(_LOCAL, name, table)
    return table


def _run(st, ipr: bool, first: int = 64) -> Iterator[np.ndarray]:
    # drive one compiled search to its end, handing over batches
    size = first
    while True:
        out = np.zeros((size, 12), np.int64)
        found, done = K.search(
            st["size"], st["deg"], st["nbr"], st["bnd"], st["ptr"], st["tri"], st["nxt"],
            st["psave"], st["tried"], st["ctl"], bool(ipr), out, size,
            st["mkey"], st["wmark"], _memo(ipr),
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
    bare search behind :func:`~cageprint.cage.iter_isomers`, without building Cage objects.
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


def count_isomers(n: int, ipr: bool = False) -> int:
    """Number of isomers of C_n (IPR isomers only with ``ipr=True``).

    Examples
    --------
    >>> count_isomers(60), count_isomers(60, ipr=True)
    (1812, 1)
    """
    return sum(len(b) for b in iter_spirals(n, ipr))


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


def isomer_rank(n: int, canonical_spiral: tuple[int, ...], ipr: bool) -> int:
    """Rank of a canonical spiral among the canonical spirals of C_n (IPR ones if ``ipr``).

    The search runs once per (n, ipr) and is kept for later calls.

    Examples
    --------
    >>> isomer_rank(60, (1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32), True)
    1
    """
    return _ranks(n, ipr)(tuple(canonical_spiral))
