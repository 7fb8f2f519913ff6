"""Cages the symmetry tests share (imported by the test modules beside it)."""

from __future__ import annotations

import functools

from cageprint.cage import Cage, iter_isomers

#: canonical spiral of icosahedral C60 (Fowler & Manolopoulos, An Atlas of Fullerenes, 1995;
#: from memory)
C60_IH = [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32]


@functools.cache
def ipr_isomers(n: int) -> tuple[Cage, ...]:
    """Every IPR isomer of C_n, numbered, computed once per test session."""
    return tuple(iter_isomers(n, ipr=True))


def ipr(n: int, isomer: int) -> Cage:
    """IPR isomer number ``isomer`` of C_n."""
    for c in ipr_isomers(n):
        if c.isomer == isomer:
            return c
    raise AssertionError(f"C{n} IPR isomer {isomer} not found")
