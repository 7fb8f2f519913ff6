"""The cage model: face spiral -> Cage; isomer enumeration; canonical spiral; isomer numbers.

Examples
--------
>>> from cageprint.cage import Cage, count_isomers
>>> Cage.from_spiral(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32]).is_ipr
True
>>> count_isomers(84, ipr=True)
24
"""

from __future__ import annotations

from .isomers import count_isomers, isomer_rank, iter_spirals
from .listing import isomer_number, iter_isomers
from .model import Cage
from .spiral import check_n, check_spiral

__all__ = [
    "Cage",
    "iter_isomers",
    "iter_spirals",
    "count_isomers",
    "isomer_number",
    "isomer_rank",
    "check_n",
    "check_spiral",
]
