"""``cageprint warm-up``: compile and cache every compiled kernel once, ahead of work.

The cage search, the spiral kernels, the symmetry kernels and the 13C matching kernels
are compiled by numba on first use and cached on disk; a fresh install (or a Binder
image) pays that once, here, instead of in the middle of the first screen.
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Callable

from ..cage import Cage, iter_isomers
from ..symmetry import fingerprint
from ..techniques.nmr import NmrObservation, compare_nmr

#: the C60 Ih spiral (pentagon positions), a fixed cage to run every kernel on
_C60_IH = (1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32)


def _steps() -> list[tuple[str, Callable[[], object]]]:
    def canonical():
        cage = Cage.from_spiral(60, _C60_IH)
        return cage.canonical_spiral

    return [
        ("isomer search, all isomers (C40)", lambda: sum(1 for _ in iter_isomers(40))),
        ("isomer search, IPR (C80)", lambda: sum(1 for _ in iter_isomers(80, ipr=True))),
        ("spiral wind-up and canonical spiral (C60)", canonical),
        ("symmetry and fingerprint (C60)",
         lambda: fingerprint(Cage.from_spiral(60, _C60_IH)).point_group),
        ("13C line matching (C70 pattern)", _nmr_match),
    ]


def _nmr_match():
    obs = NmrObservation((130.3, 144.8, 146.8, 147.5, 150.1), (10.5, 19.0, 21.0, 9.5, 10.2))
    return compare_nmr((10, 10, 10, 20, 20), obs).verdict


def warm_up() -> list[tuple[str, float]]:
    """Run each kernel once; returns (step, seconds) pairs (long only the first time)."""
    out = []
    for name, fn in _steps():
        t = time.perf_counter()
        fn()
        out.append((name, time.perf_counter() - t))
    return out


def add_parser(sub) -> argparse.ArgumentParser:
    return sub.add_parser(
        "warm-up",
        help="compile and cache the compiled kernels once (after installing)",
        description="Compile and cache every compiled kernel (cage search, spirals, "
        "symmetry, 13C matching) so that later runs start at full speed.",
    )


def run(args) -> int:
    total = 0.0
    for name, seconds in warm_up():
        total += seconds
        print(f"{name}: {seconds:.2f} s")
    print(f"ready ({total:.1f} s)")
    return 0
