"""Isomers as :class:`~cageprint.cage.Cage` objects: the numbered list, and one cage's number.

The search itself (canonical spirals in order, their ranks) lives in
:mod:`cageprint.cage.isomers`; this module turns its spirals into cages.
"""

from __future__ import annotations

import sys
from collections.abc import Iterator

from ..errors import CageError
from .isomers import isomer_rank, iter_spirals_work
from .model import Cage
from .spiral import check_n

__all__ = ["iter_isomers", "isomer_number"]


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
        # lazy: tqdm.auto probes for ipywidgets; only a progress bar needs it
        from tqdm.auto import tqdm

        # the bar follows the search's estimated work, not the isomers found so far
        bar = tqdm(desc=f"C{n} {'IPR ' if ipr else ''}isomers", total=100, unit="%",
                   bar_format="{desc} | {percentage:3.0f}% of the work |{bar}| "
                   "{elapsed} elapsed, ~{remaining} left", file=sys.stderr)
    rank = 0
    try:
        for batch, done in iter_spirals_work(n, ipr):
            for row in batch.tolist():
                rank += 1
                if ipr:
                    yield Cage._trusted(n, row, isomer_ipr=rank)
                else:
                    yield Cage._trusted(n, row, isomer_all=rank)
            if bar is not None:
                bar.set_description_str(
                    f"C{n} {'IPR ' if ipr else ''}isomers: {rank:,} found", refresh=False)
                bar.update(max(0.0, min(100.0, round(100 * done, 1)) - bar.n))
    finally:
        if bar is not None:
            bar.close()


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
    return isomer_rank(cage.n, cage.canonical_spiral, bool(ipr))
