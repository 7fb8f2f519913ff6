"""Seeded synthetic mass spectra with known truth (invented data for tests and demos)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping

import numpy as np

from ..errors import FormulaError
from ..isotopes import C13_NATURAL, isotope_envelope
from ..spectra.model import Spectrum

__all__ = ["synthetic_mass_spectrum", "MAX_POINTS"]

#: default cap on the number of grid points of a generated profile
MAX_POINTS = 200_000

_FWHM_TO_SIGMA = 1.0 / 2.3548200450309493


def _species_list(species) -> list[tuple[str, int, float]]:
    if isinstance(species, Mapping):
        species = [(f, 1, a) for f, a in species.items()]
    out = []
    for i, item in enumerate(species):
        if isinstance(item, str):
            item = (item, 1, 1.0)
        if len(item) == 2:
            item = (item[0], 1, item[1])
        if len(item) != 3:
            raise FormulaError(
                f"species[{i}] must be (formula, charge, abundance) or (formula, abundance), "
                f"got {item!r}"
            )
        f, z, a = item
        if not float(a) > 0:
            raise FormulaError(f"species[{i}] {f!r}: abundance must be > 0, got {a!r}")
        out.append((str(f), int(z), float(a)))
    if not out:
        raise FormulaError("species is empty; give at least one (formula, charge, abundance)")
    return out


def synthetic_mass_spectrum(
    species: Iterable | Mapping,
    *,
    resolving_power: float = 10000.0,
    noise: float = 0.002,
    offset: float = 0.0,
    seed: int = 0,
    c13: float | None = None,
    mz_range: tuple[float, float] | None = None,
    points: int | None = None,
    kind: str = "profile",
    polarity: str = "positive",
) -> Spectrum:
    """An invented mass spectrum of the given species, with seeded noise.

    Parameters
    ----------
    species : iterable or mapping
        ``(formula, charge, abundance)`` tuples (or ``{formula: abundance}``
        for singly charged ions).  Abundance is the integrated intensity of the
        whole isotope envelope, in arbitrary units.
    resolving_power : float
        R = m / FWHM of the Gaussian lines.
    noise : float
        Standard deviation of the Gaussian noise as a fraction of the tallest
        line.  A flat baseline of 4 noise deviations is added and the result
        clipped at zero, so intensities are never negative.
    offset : float
        Calibration error added to every m/z (measured minus true).
    seed : int
        Seed of the noise generator.
    c13 : float, optional
        13C fraction of every envelope (default natural, 0.0107).
    mz_range : (float, float), optional
        Default: 5 m/z beyond the outermost lines.
    points : int, optional
        Grid size; default about 6 points per FWHM at the low end, at most
        :data:`MAX_POINTS`.
    kind : {"profile", "peaks"}
        ``"peaks"`` returns the centroid lines (m/z, area) without noise.
    polarity : {"positive", "negative"}
        Sign applied to every charge; stored in ``meta["polarity"]``.

    Returns
    -------
    Spectrum
        ``technique="mass"``; ``meta`` holds the truth (species, offset, seed).

    Examples
    --------
    >>> s = synthetic_mass_spectrum([("C60", 1, 1.0)], seed=0)
    >>> s.technique, round(float(s.x[s.y.argmax()]), 1)
    ('mass', 720.0)
    """
    items = _species_list(species)
    sign = -1 if str(polarity).lower().startswith("neg") else 1
    c = C13_NATURAL if c13 is None else float(c13)
    lines_mz, lines_a = [], []
    for f, z, a in items:
        env = isotope_envelope(f, sign * abs(z), c13=c, threshold=1e-7)
        lines_mz.append(env.mz + offset)
        lines_a.append(env.abundance * a)
    lmz = np.concatenate(lines_mz)
    la = np.concatenate(lines_a)
    truth = {
        "synthetic": True,
        "title": "synthetic mass spectrum (invented)",
        "polarity": "positive" if sign > 0 else "negative",
        "resolving_power": float(resolving_power),
        "noise": float(noise),
        "offset": float(offset),
        "seed": int(seed),
        "c13": c,
        "species": tuple((f, sign * abs(z), a) for f, z, a in items),
    }
    if kind == "peaks":
        order = np.argsort(lmz)
        keep = la[order] >= 1e-4 * la.max()
        return Spectrum(lmz[order][keep], la[order][keep], technique="mass", kind="peaks",
                        meta=truth)
    if kind != "profile":
        raise FormulaError(f"kind must be 'profile' or 'peaks', got {kind!r}")
    lo, hi = mz_range if mz_range is not None else (float(lmz.min()) - 5, float(lmz.max()) + 5)
    if points is None:
        step = max(lo, 1.0) / resolving_power / 6.0
        points = int(min(MAX_POINTS, max(1000, (hi - lo) / step)))
    x = np.linspace(lo, hi, int(points))
    y = np.zeros_like(x)
    for m, a in zip(lmz, la, strict=False):
        sigma = m / resolving_power * _FWHM_TO_SIGMA
        i0, i1 = np.searchsorted(x, [m - 7 * sigma, m + 7 * sigma])
        xs = x[i0:i1]
        y[i0:i1] += a / (sigma * 2.5066282746310002) * np.exp(-0.5 * ((xs - m) / sigma) ** 2)
    if noise > 0:
        rng = np.random.default_rng(seed)
        sd = noise * float(y.max())
        y = np.maximum(y + 4.0 * sd + rng.normal(0.0, sd, size=y.size), 0.0)
    return Spectrum(x, y, technique="mass", kind="profile", meta=truth)
