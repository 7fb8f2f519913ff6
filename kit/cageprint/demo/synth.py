"""Seeded synthetic spectra and the small writers the demo needs.

Line shapes, noise and baselines for invented data, a nominal-mass isotope
envelope for carbon cages (binomial in 13C, convolved with 15N), and plain
writers for JCAMP-DX 5.01 (AFFN ``(X++(Y..Y))``) and comment-headed CSV.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np

from ..fileio import atomic_write_text

# Isotope data (from memory; IUPAC/CIAAW representative compositions and AME atomic masses):
P13C = 0.0107             # 13C abundance (IUPAC representative value, as in the NIST tables)
P15N = 0.00364            # 15N abundance
M13C_SHIFT = 1.00335484   # 13C - 12C mass difference, u
MASS = {"C": 12.0, "N": 14.00307401, "Sc": 44.95590828}  # monoisotopic masses, u
ELECTRON = 0.000548580    # electron mass, u


def lorentz(x: np.ndarray, centre: float, fwhm: float) -> np.ndarray:
    """Unit-height Lorentzian.

    Examples
    --------
    >>> float(lorentz(np.array([1.0]), 1.0, 0.2)[0])
    1.0
    """
    g = fwhm / 2.0
    return g * g / ((x - centre) ** 2 + g * g)


def gauss(x: np.ndarray, centre: float, fwhm: float) -> np.ndarray:
    """Unit-height Gaussian."""
    s = fwhm / 2.3548200450309493
    return np.exp(-0.5 * ((x - centre) / s) ** 2)


def lines(x: np.ndarray, centres: Sequence[float], heights: Sequence[float], fwhm,
          shape: str = "lorentz") -> np.ndarray:
    """Sum of line shapes; ``fwhm`` a number or one per line."""
    f = lorentz if shape == "lorentz" else gauss
    w = np.broadcast_to(np.asarray(fwhm, float), (len(centres),))
    y = np.zeros_like(x, dtype=float)
    for c, h, wi in zip(centres, heights, w, strict=True):
        y += h * f(x, c, wi)
    return y


def cage_envelope(n_carbon: int, n_nitrogen: int = 0, kmax: int = 6) -> np.ndarray:
    """Relative abundances of M, M+1, ... M+kmax (13C binomial convolved with 15N).

    Examples
    --------
    >>> env = cage_envelope(60)
    >>> round(float(env[1] / env[0]), 3)  # 60 p / (1 - p)
    0.649
    """
    k = np.arange(kmax + 1)
    c = np.array([math.comb(n_carbon, int(i)) * P13C**i * (1 - P13C) ** (n_carbon - i)
                  for i in k])
    if n_nitrogen:
        nn = np.array([math.comb(n_nitrogen, int(i)) * P15N**i * (1 - P15N) ** (n_nitrogen - i)
                       if i <= n_nitrogen else 0.0 for i in k])
        c = np.convolve(c, nn)[: kmax + 1]
    return c


def noise(rng: np.random.Generator, size: int, sigma: float) -> np.ndarray:
    """White Gaussian noise."""
    return rng.normal(0.0, sigma, size)


def write_jcamp(path, x: np.ndarray, y: np.ndarray, header: Mapping[str, object],
                per_line: int = 8) -> None:
    """Write an evenly spaced spectrum as JCAMP-DX 5.01 with AFFN ``(X++(Y..Y))`` data.

    ``header`` supplies labels without the ``##`` (TITLE, DATA TYPE, XUNITS,
    YUNITS and any others); FIRSTX, LASTX, DELTAX, NPOINTS, factors and the
    data table are added here.  Y is stored as integers with a YFACTOR.
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    ymax = float(np.max(np.abs(y))) or 1.0
    yfactor = ymax / 2.0e7
    yi = np.rint(y / yfactor).astype(np.int64)
    dx = (x[-1] - x[0]) / (x.size - 1)
    out = [f"##TITLE={header.get('TITLE', 'spectrum')}", "##JCAMP-DX=5.01"]
    for k, v in header.items():
        if k != "TITLE":
            out.append(f"##{k}={v}")
    out += [f"##FIRSTX={x[0]:.10g}", f"##LASTX={x[-1]:.10g}", f"##DELTAX={dx:.10g}",
            "##XFACTOR=1", f"##YFACTOR={yfactor:.10g}", f"##FIRSTY={yi[0] * yfactor:.10g}",
            f"##NPOINTS={x.size}", "##XYDATA=(X++(Y..Y))"]
    for i in range(0, x.size, per_line):
        xv = x[0] + i * dx
        out.append(f"{xv:.6f} " + " ".join(str(int(v)) for v in yi[i:i + per_line]))
    out.append("##END=")
    atomic_write_text(path, "\n".join(out) + "\n", encoding="ascii")


def write_csv(path, x: np.ndarray, y: np.ndarray, comments: Sequence[str],
              names: tuple[str, str] = ("m/z", "intensity")) -> None:
    """Write two columns as CSV with ``#`` comment lines on top."""
    lines = [f"# {c}" for c in comments] + [f"{names[0]},{names[1]}"]
    lines += [f"{a:.4f},{b:.2f}" for a, b in zip(x, y, strict=True)]
    atomic_write_text(path, "\n".join(lines) + "\n", encoding="ascii")
