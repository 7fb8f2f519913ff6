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
from ..cage import _kernels as _K
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
        the first ``depth`` faces; ``((),)`` with ``depth == 0`` for a search
        that is not split.
    depth : int
    """

    n: int
    ipr: bool
    index: int
    prefixes: tuple[tuple[int, ...], ...]
    depth: int

    @property
    def key(self) -> str:
        """A stable text key: ``"d8:1,7|1,8"`` (depth, then each subtree's prefix)."""
        return f"d{self.depth}:" + "|".join(",".join(map(str, p)) for p in self.prefixes)


def _subtrees(n: int, ipr: bool, want: int) -> tuple[np.ndarray, int]:
    nf = n // 2 + 2
    depth = 6
    while True:
        st = _K.new_search_state(n)
        st["ctl"][6] = depth
        found = list(_iso._run(st, ipr, _iso.BATCH))
        prefixes = np.concatenate(found) if found else np.zeros((0, 12), np.int64)
        if len(prefixes) >= want or depth >= nf - 6:
            return prefixes, depth
        depth += 2


def plan_pieces(n: int, ipr: bool = False, parts: int = PIECE_PARTS) -> list[Piece]:
    """Cut the spiral search of C_n into about ``parts`` pieces, in canonical order.

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
    prefixes, depth = _subtrees(n, ipr, SUBTREES_PER_PIECE * int(parts))
    rows = [tuple(int(v) for v in row if v > 0) for row in prefixes.tolist()]
    groups = [g for g in np.array_split(np.arange(len(rows)), min(int(parts), len(rows)))
              if len(g)]
    return [Piece(n, bool(ipr), k, tuple(rows[i] for i in g), depth)
            for k, g in enumerate(groups)]


def piece_spirals(piece: Piece) -> np.ndarray:
    """Canonical spirals (k, 12) of one piece, in canonical order."""
    if piece.depth == 0:
        found = list(_iso._run(_K.new_search_state(piece.n), piece.ipr))
        return np.concatenate(found) if found else np.zeros((0, 12), np.int64)
    out = []
    for pre in piece.prefixes:
        prefix = np.zeros(12, np.int64)
        prefix[: len(pre)] = pre
        out.append(_iso._part(piece.n, piece.ipr, prefix, piece.depth))
    return np.concatenate(out) if out else np.zeros((0, 12), np.int64)


def cage_of(n: int, spiral) -> Cage:
    """The cage of a canonical spiral from the search (no re-check of the spiral)."""
    return Cage._trusted(int(n), [int(v) for v in spiral])
