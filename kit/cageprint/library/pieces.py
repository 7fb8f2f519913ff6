"""Adapter to the isomer search: the spiral tree cut into pieces for a distributed build.

A *piece* is every canonical spiral of C_n that begins with one partial
spiral (a prefix of ``depth`` faces); pieces in plan order hand over the
spirals in canonical order, so isomer numbers are running counts over the
pieces.  This module is the only place of the library that touches the
search internals (:mod:`cageprint.cage.isomers`); when the enumeration
offers a public pieces API, only this adapter changes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..cage import Cage, check_n
from ..cage import isomers as _iso

__all__ = ["PIECE_PARTS", "Piece", "plan_pieces", "piece_spirals", "cage_of"]

#: about how many pieces a large search is cut into (each a run of consecutive subtrees)
PIECE_PARTS = 96
#: the tree is cut into at least this many subtrees per piece before they are grouped
SUBTREES_PER_PIECE = 4


@dataclass(frozen=True)
class Piece:
    """One piece of the spiral tree of C_n: a run of consecutive subtrees.

    Attributes
    ----------
    n : int
    ipr : bool
    index : int
        Position in plan order (0-based).
    prefixes : tuple of tuple of int
        Each subtree's partial spiral: its pentagon positions (1-based) within
        its first faces; ``((),)`` with ``depth == 0`` for a search that is not split.
    depth : int
        Faces in each prefix (the first subtree's, when ``depths`` is given).
    depths : tuple of int
        Faces in each prefix when they differ (subtrees of heavy work are cut
        deeper); empty when all are ``depth``.
    """

    n: int
    ipr: bool
    index: int
    prefixes: tuple[tuple[int, ...], ...]
    depth: int
    depths: tuple[int, ...] = ()

    def prefix_depths(self) -> tuple[int, ...]:
        """The number of faces of each prefix."""
        return self.depths or (self.depth,) * len(self.prefixes)

    @property
    def key(self) -> str:
        """A stable text key: ``"d8:1,7|1,8"`` (depth, then each subtree's prefix, with
        ``@depth`` after a prefix cut deeper than the first)."""
        return f"d{self.depth}:" + "|".join(
            ",".join(map(str, p)) + ("" if d == self.depth else f"@{d}")
            for p, d in zip(self.prefixes, self.prefix_depths(), strict=True))


def plan_pieces(n: int, ipr: bool = False, parts: int = PIECE_PARTS) -> list[Piece]:
    """Cut the spiral search of C_n into about ``parts`` pieces of about equal estimated
    work, in canonical order: the subtrees of :func:`cageprint.cage.isomers.plan_subtrees`
    (those the local search uses), grouped by their estimated work.

    Small searches come back as one piece (``depth == 0``).

    Examples
    --------
    >>> [p.key for p in plan_pieces(40)]
    ['d0:']
    >>> ps = plan_pieces(56, parts=8)
    >>> len(ps), sum(len(piece_spirals(p)) for p in ps)
    (8, 924)
    """
    n = check_n(n)
    nf = n // 2 + 2
    if nf < (_iso.SPLIT_MIN_FACES_IPR if ipr else _iso.SPLIT_MIN_FACES) or parts <= 1:
        return [Piece(n, bool(ipr), 0, ((),), 0)]
    plan = _iso.plan_subtrees(n, ipr, SUBTREES_PER_PIECE * int(parts))
    k = min(int(parts), len(plan))
    share = np.cumsum([w for _, _, w in plan]) / sum(w for _, _, w in plan)
    # a piece ends where the running work passes its share; every piece keeps a subtree
    bounds = [0]
    for i in range(1, k):
        end = int(np.searchsorted(share, i / k)) + 1
        bounds.append(min(max(end, bounds[-1] + 1), len(plan) - (k - i)))
    bounds.append(len(plan))
    pieces = []
    for i in range(k):
        sub = plan[bounds[i]:bounds[i + 1]]
        rows = tuple(tuple(int(v) for v in pre if v > 0) for pre, _, _ in sub)
        ds = tuple(int(d) for _, d, _ in sub)
        pieces.append(Piece(n, bool(ipr), i, rows, ds[0], () if len(set(ds)) == 1 else ds))
    return pieces


def piece_spirals(piece: Piece) -> np.ndarray:
    """Canonical spirals (k, 12) of one piece, in canonical order."""
    if piece.depth == 0:
        found = list(_iso._unsplit(piece.n, piece.ipr, None))
        return np.concatenate(found) if found else np.zeros((0, 12), np.int64)
    out = []
    for pre, depth in zip(piece.prefixes, piece.prefix_depths(), strict=True):
        prefix = np.zeros(12, np.int64)
        prefix[: len(pre)] = pre
        out.append(_iso._part(piece.n, piece.ipr, prefix, depth))
    return np.concatenate(out) if out else np.zeros((0, 12), np.int64)


def cage_of(n: int, spiral) -> Cage:
    """The cage of a canonical spiral from the search (no re-check of the spiral)."""
    return Cage._trusted(int(n), [int(v) for v in spiral])
