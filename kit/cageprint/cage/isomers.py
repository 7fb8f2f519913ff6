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
sizes chemists meet (C380, from memory).  Below C100 every cage has a closing
spiral from a pentagon (the all-isomer counts agree with OEIS A007894); one
C100 cage has none.  All-isomer lists from :data:`HEXAGON_STARTS_FROM` on
therefore also search spirals from a hexagon, keeping those of cages on which
no spiral from a pentagon closes; their canonical spirals start at a hexagon,
so they come after all others and leave the other numbers unchanged.  That
search costs a few times the first one (see :func:`hexagon_starts`).

For larger cages the tree is cut into subtrees of about equal estimated work
(:func:`plan_subtrees`: the partial spirals each holds a dozen faces deeper,
weighted by the pentagons they have still to place, the heavy ones cut deeper),
searched by :data:`WORKERS` threads and handed over in order; the progress shown
is the estimated work done.

Partial spirals are also cut by exact bounds: a face shortens the rim by at
most two faces (a pentagon by one) and the last face needs a rim of its own
size; a rim cannot enclose more faces than its rings allow
(:func:`~cageprint.cage._prune.fill_bound`); with isolated pentagons no two
pentagons follow each other.  In all-isomer searches, states from which no
spiral closed are remembered exactly and cut when met again
(:mod:`cageprint.cage._prune`).

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

__all__ = ["iter_spirals", "iter_spirals_work", "plan_subtrees", "count_isomers", "isomer_rank",
           "hexagon_starts"]

#: spirals handed over per call of the compiled search (the first call hands fewer)
BATCH = 4096

#: threads searching parts of one spiral tree at once (capped by the CPU count)
WORKERS = 2

#: cages with fewer faces than this are searched in one piece (all isomers / IPR only)
SPLIT_MIN_FACES = 30
SPLIT_MIN_FACES_IPR = 46

#: about how many parts a split search is cut into
SPLIT_PARTS = 256

#: faces beyond a subtree's prefix whose partial spirals estimate its work
AHEAD = 12
#: smaller cages (a few seconds of search) skip the estimate: their subtrees weigh alike
PLAN_MIN_FACES = 40
#: a heavy subtree is cut again this many faces deeper
REFINE_STEP = 4
#: all-isomer lists of cages this large also search spirals that start at a hexagon, for
#: cages on which no spiral from a pentagon closes (their canonical spirals start at a
#: hexagon and come after all others); without them the counts agree with OEIS A007894
#: for every n below (checked for n <= 98), and C100 has one such cage
HEXAGON_STARTS_FROM = 100

#: the spirals (from a hexagon) of the cages on which no spiral from a pentagon closes,
#: found by this module's own search from hexagons (``hexagons=True``, hours) for every n
#: from HEXAGON_STARTS_FROM to the largest key; lists of these sizes take them from here
#: (each re-checked as it is listed), larger ones search (a long test repeats the search)
HEXAGON_START_CAGES: dict[int, tuple[tuple[int, ...], ...]] = {
    # C100: the search from hexagons took 1,305 s on one core (2026-12-05) and kept one
    100: ((2, 8, 9, 23, 24, 28, 29, 37, 41, 45, 46, 52),),
}

#: each pentagon a partial spiral has still to place multiplies the work below it by about
#: this much (fitted on the subtree times of all-isomer C70 and C80)
WORK_PER_PENTAGON = 2.5


_TABLES: dict[bool, np.ndarray] = {}
_TABLES_LOCK = threading.Lock()
_OFF = np.zeros(1, np.int64)

#: remember dead states in all-isomer searches (in IPR searches they rarely recur)
MEMO_ALL = True
MEMO_IPR = False


def _memo(ipr: bool) -> np.ndarray:
    # one dead-state table per search kind, kept between searches (keys hold no cage size)
    # and shared by the search threads: entries are whole aligned 64-bit words, so a
    # thread reads either a key another wrote or the one before it; a clash only forgets
    if not (MEMO_IPR if ipr else MEMO_ALL):
        return _OFF
    with _TABLES_LOCK:
        if ipr not in _TABLES:
            _TABLES[ipr] = new_memo()
        return _TABLES[ipr]


def forget_dead_states() -> None:
    """Empty the dead-state tables (benchmarks time cold searches with it)."""
    with _TABLES_LOCK:
        _TABLES.clear()


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
    # (from a hexagon when position 1 is not among its pentagons)
    st = K.new_search_state(n)
    st["size"][:depth] = 6
    st["size"][prefix[prefix > 0] - 1] = 5
    st["ctl"][5] = depth
    st["ctl"][7] = st["size"][0]
    parts = list(_run(st, ipr, BATCH))
    return np.concatenate(parts) if parts else np.zeros((0, 12), np.int64)


def _workers() -> int:
    n = os.cpu_count() or 1
    return max(1, min(WORKERS, n))


def _listing(n: int, ipr: bool, stop: int, first: int = 5) -> np.ndarray:
    # every partial spiral of `stop` faces that the search would go on from (pentagon rows)
    st = K.new_search_state(n, first)
    st["ctl"][6] = stop
    found = list(_run(st, ipr, BATCH))
    return np.concatenate(found) if found else np.zeros((0, 12), np.int64)


def _groups(rows: np.ndarray, depth: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    # the distinct prefixes of `depth` faces among listing rows (in order): prefix, start, count
    pre = np.where(rows <= depth, rows, 0)
    if not len(pre):
        return pre, np.zeros(0, np.int64), np.zeros(0, np.int64)
    new = np.ones(len(pre), bool)
    new[1:] = np.any(pre[1:] != pre[:-1], axis=1)
    starts = np.flatnonzero(new)
    return pre[starts], starts, np.diff(np.append(starts, len(pre)))


def hexagon_starts(n: int, ipr: bool = False) -> bool:
    """Whether the list of C_n also searches spirals from a hexagon (see
    :data:`HEXAGON_STARTS_FROM`).

    Examples
    --------
    >>> hexagon_starts(98), hexagon_starts(100), hexagon_starts(100, ipr=True)
    (False, True, False)
    """
    return not ipr and n >= HEXAGON_STARTS_FROM


def _hexagon_part(n: int, ipr: bool, hexagons: bool | None):
    # None (no spirals from a hexagon), "search", or the known spirals of HEXAGON_START_CAGES
    if hexagons is False or (hexagons is None and not hexagon_starts(n, ipr)):
        return None
    if hexagons is None and n in HEXAGON_START_CAGES:
        return HEXAGON_START_CAGES[n]
    return "search"


def _known_subtrees(n: int, spirals) -> list[tuple]:
    # each known spiral as a subtree of one face: the search re-checks that it closes and
    # is canonical (a few microseconds)
    nf = n // 2 + 2
    out = []
    for spiral in spirals:
        prefix = np.zeros(12, np.int64)
        pos = [p for p in spiral if p < nf]
        prefix[: len(pos)] = pos
        out.append((prefix, nf - 1, 1.0))
    return out


def _unsplit(n: int, ipr: bool, hexagons: bool | None) -> Iterator[np.ndarray]:
    # the whole search in one piece, batch by batch
    yield from _run(K.new_search_state(n), ipr)
    extra = _hexagon_part(n, ipr, hexagons)
    if extra == "search":
        yield from _run(K.new_search_state(n, 6), ipr)
    elif extra:
        yield from (_part(n, ipr, p, d) for p, d, _ in _known_subtrees(n, extra))


def plan_subtrees(n: int, ipr: bool = False, parts: int = SPLIT_PARTS,
                  hexagons: bool | None = None) -> list[tuple]:
    """The spiral tree of C_n cut into subtrees of about equal estimated work, in order.

    Returns ``(prefix, depth, weight)`` triples: every canonical spiral that
    begins with ``prefix`` (pentagon positions within the first ``depth``
    faces, padded with 0) belongs to that subtree, and the subtrees in list order
    hand over the spirals in canonical order.  The work of a subtree is
    estimated from the partial spirals it holds :data:`AHEAD` faces deeper, each
    weighted by :data:`WORK_PER_PENTAGON` to the power of the pentagons it has
    still to place; subtrees estimated at more than twice their share are cut
    again, :data:`REFINE_STEP` faces deeper, while the lookahead allows.  When
    the list also searches spirals from a hexagon (``hexagons``, default
    :func:`hexagon_starts`), their subtrees (prefixes without position 1) follow.

    Examples
    --------
    >>> plan = plan_subtrees(60, parts=16)
    >>> sum(len(_part(60, False, p, d)) for p, d, _ in plan)
    1812
    """
    n = check_n(n)
    extra = _hexagon_part(n, ipr, hexagons)
    trees = [_weighed(n, ipr, parts, first) for first in ((5, 6) if extra == "search" else (5,))]
    target = max(sum(float(t[3].sum()) for t in trees) / parts, 1e-300)
    plan: list[tuple] = []
    for rows, depth, deep, weight in trees:
        _cut(plan, (rows, weight, target, deep), 0, len(rows), depth)
    if extra and extra != "search":
        plan += _known_subtrees(n, extra)
    return plan


def _cut(plan: list, tree: tuple, lo: int, hi: int, d: int) -> None:
    # the subtrees of rows[lo:hi] at depth d onto `plan`, heavy ones cut deeper
    rows, weight, target, deep = tree
    for prefix, start, count in zip(*_groups(rows[lo:hi], d), strict=True):
        a, b = lo + int(start), lo + int(start) + int(count)
        w = float(weight[a:b].sum())
        if w > 2 * target and d + REFINE_STEP <= deep - REFINE_STEP:
            _cut(plan, tree, a, b, d + REFINE_STEP)
        else:
            plan.append((prefix, d, w))


def _weighed(n: int, ipr: bool, parts: int, first: int) -> tuple:
    # the partial spirals that estimate the work (rows, depth, their depth, weights)
    nf = n // 2 + 2
    depth = 6
    while True:  # deep enough for `parts` subtrees (listing them costs next to nothing)
        rows = _listing(n, ipr, depth, first)
        if len(rows) >= parts or depth >= nf - 6:
            break
        depth += 2
    deep = min(depth + AHEAD, nf - 2) if nf >= PLAN_MIN_FACES else depth
    rows = _listing(n, ipr, deep, first) if deep > depth else rows
    # each partial spiral ahead weighs WORK_PER_PENTAGON ** (pentagons it has still to place)
    weight = WORK_PER_PENTAGON ** (12 - np.count_nonzero(rows, axis=1)).astype(float)
    return rows, depth, deep, weight


def iter_spirals_work(n: int, ipr: bool = False, hexagons: bool | None = None
                      ) -> Iterator[tuple[np.ndarray, float]]:
    """:func:`iter_spirals` with the share of the estimated work done after each batch.

    The share (0 to 1) counts whole subtrees of :func:`plan_subtrees`, so it
    moves with the search's work rather than with the isomers found.
    ``hexagons``: also search spirals from a hexagon (default :func:`hexagon_starts`).

    Examples
    --------
    >>> [round(w, 2) for _, w in iter_spirals_work(40)][-1]
    1.0
    """
    n = check_n(n)
    nf = n // 2 + 2
    workers = _workers()
    if nf < (SPLIT_MIN_FACES_IPR if ipr else SPLIT_MIN_FACES) or (
        workers < 2 and nf < PLAN_MIN_FACES
    ):  # one piece: the work is known done only at the end
        yield from ((b, 0.0) for b in _unsplit(n, ipr, hexagons))
        yield np.zeros((0, 12), np.int64), 1.0
        return
    plan = plan_subtrees(n, ipr, hexagons=hexagons)
    total = sum(w for _, _, w in plan) or 1.0
    done = 0.0
    if workers < 2:
        for prefix, depth, w in plan:
            found = _part(n, ipr, prefix, depth)
            done += w
            yield found, min(1.0, done / total)
        return
    pool = ThreadPoolExecutor(max_workers=workers, thread_name_prefix="cageprint-search")
    try:
        pending: deque = deque()
        todo = iter(plan)
        for prefix, depth, w in itertools.islice(todo, 2 * workers):
            pending.append((pool.submit(_part, n, ipr, prefix, depth), w))
        while pending:
            fut, w = pending.popleft()
            found = fut.result()
            nxt = next(todo, None)
            if nxt is not None:
                pending.append((pool.submit(_part, n, ipr, nxt[0], nxt[1]), nxt[2]))
            done += w
            yield found, min(1.0, done / total)
    finally:  # also when the caller stops early
        pool.shutdown(wait=True, cancel_futures=True)


def iter_spirals(n: int, ipr: bool = False, hexagons: bool | None = None
                 ) -> Iterator[np.ndarray]:
    """Canonical spirals of C_n in lexicographic order, in batches.

    Yields (k, 12) int arrays of one-based pentagon positions.  This is the
    bare search behind :func:`~cageprint.cage.iter_isomers`, without building Cage objects.
    For larger cages the search is split into subtrees of about equal estimated
    work (:func:`plan_subtrees`) searched by :data:`WORKERS` threads at once;
    they are handed over in order, so the output is the same.  Spirals from a
    hexagon (``hexagons``, default :func:`hexagon_starts`) come last.

    Examples
    --------
    >>> sum(len(b) for b in iter_spirals(40))
    40
    """
    for batch, _ in iter_spirals_work(n, ipr, hexagons):
        if len(batch):
            yield batch


def count_isomers(n: int, ipr: bool = False, hexagons: bool | None = None) -> int:
    """Number of isomers of C_n (IPR isomers only with ``ipr=True``); ``hexagons`` as
    in :func:`iter_spirals`.

    Examples
    --------
    >>> count_isomers(60), count_isomers(60, ipr=True)
    (1812, 1)
    """
    return sum(len(b) for b in iter_spirals(n, ipr, hexagons))


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
