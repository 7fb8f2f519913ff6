"""Isotope table, ion masses and isotope envelopes.

The table below is reviewed data.  Isotopic compositions are the IUPAC/CIAAW
representative compositions (J. Meija et al., "Isotopic compositions of the
elements 2013 (IUPAC Technical Report)", Pure Appl. Chem. 88, 293-306, 2016);
atomic masses are from the Atomic Mass Evaluation AME2020 (M. Wang, W.J. Huang,
F.G. Kondev, G. Audi, S. Naimi, "The AME 2020 atomic mass evaluation (II)",
Chin. Phys. C 45, 030003, 2021).  The electron mass is CODATA 2018.

Carbon-13: the kit uses the CIAAW representative value p(13C) = 0.0107
(:data:`C13_NATURAL`).  Natural carbon varies (the standard atomic weight of
carbon is an interval), and other tools use other values (one common isotope
library uses 0.010788), so every envelope function takes ``c13=`` and the
fraction can be fitted from a measured envelope with :func:`fit_c13`.

Envelopes are computed exactly: the binomial distribution for two-isotope
elements (C, H, N, Li, La, Lu), repeated convolution for the others, then
one convolution across elements.  *Aggregated* envelopes sum the isotopologues
of equal nucleon number and give each aggregate its abundance-weighted
centroid mass; *fine* envelopes keep every isotopologue above a threshold.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import gammaln

from .errors import FormulaError
from .formula import Formula, parse_formula
from .isotope_table import _TABLE, C13_NATURAL, ELECTRON_MASS, ISOTOPES, MAX_CHARGE

__all__ = [
    "ISOTOPES",
    "ELECTRON_MASS",
    "C13_NATURAL",
    "MAX_CHARGE",
    "Envelope",
    "C13Fit",
    "isotope_envelope",
    "envelope_profile",
    "monoisotopic_mass",
    "average_mass",
    "ion_mz",
    "neutral_mass",
    "fit_c13",
]

_PRUNE = 1e-16  # relative abundance below which tails are dropped during convolution


def _isotopes(element: str, c13: float) -> tuple[tuple[int, float, float], ...]:
    iso = _TABLE[element]
    if element == "C":
        return ((12, iso[0][1], 1.0 - c13), (13, iso[1][1], c13))
    return iso


def _check_c13(c13: float | None) -> float:
    if c13 is None:
        return C13_NATURAL
    c = float(c13)
    if not (0.0 <= c <= 1.0) or not np.isfinite(c):
        raise FormulaError(f"c13 must be an atom fraction in [0, 1], got {c13!r}")
    return c


def _principal(element: str, c13: float) -> tuple[int, float]:
    iso = _isotopes(element, c13)
    a, m, _ = max(iso, key=lambda t: t[2])
    return a, m


def monoisotopic_mass(formula: str | Formula) -> float:
    """Monoisotopic mass: the sum of the principal (most abundant) isotope masses.

    Examples
    --------
    >>> monoisotopic_mass("C60")
    720.0
    >>> round(monoisotopic_mass("Sc3N@C80"), 6)
    1108.870799
    """
    f = parse_formula(formula)
    return float(sum(n * _principal(e, C13_NATURAL)[1] for e, n in f.counts.items()))


def average_mass(formula: str | Formula, c13: float | None = None) -> float:
    """Abundance-weighted average mass in u.

    Examples
    --------
    >>> round(average_mass("C60"), 3)
    720.644
    """
    c = _check_c13(c13)
    f = parse_formula(formula)
    return float(
        sum(n * sum(m * p for _, m, p in _isotopes(e, c)) for e, n in f.counts.items())
    )


def _check_charge(charge) -> int:
    try:
        z = int(charge)
    except (TypeError, ValueError):
        raise FormulaError(f"charge must be an integer, got {charge!r}") from None
    if z != charge:
        raise FormulaError(f"charge must be an integer, got {charge!r}")
    if z == 0:
        raise FormulaError(
            "charge 0: a neutral species has no m/z; pass charge=+1..+4 or -1..-4"
        )
    if abs(z) > MAX_CHARGE:
        raise FormulaError(f"charge {z} is outside -{MAX_CHARGE}..+{MAX_CHARGE}")
    return z


def ion_mz(mass, charge: int):
    """m/z of an ion made by removing (z > 0) or adding (z < 0) electrons.

    ``mz = (mass - z * ELECTRON_MASS) / |z|``.

    Examples
    --------
    >>> round(ion_mz(720.0, 1), 9)
    719.99945142
    >>> ion_mz(720.0, 2) == (720.0 - 2 * ELECTRON_MASS) / 2
    True
    """
    z = _check_charge(charge)
    if np.ndim(mass):
        return (np.asarray(mass, dtype=float) - z * ELECTRON_MASS) / abs(z)
    return (float(mass) - z * ELECTRON_MASS) / abs(z)


def neutral_mass(mz, charge: int):
    """Inverse of :func:`ion_mz`: the neutral mass of an ion seen at ``mz``.

    Examples
    --------
    >>> round(neutral_mass(ion_mz(840.0, -2), -2), 9)
    840.0
    """
    z = _check_charge(charge)
    if np.ndim(mz):
        return np.asarray(mz, dtype=float) * abs(z) + z * ELECTRON_MASS
    return float(mz) * abs(z) + z * ELECTRON_MASS


# ---------------------------------------------------------------- aggregated


def _binomial_agg(n: int, m0: float, m1: float, p: float):
    """Probabilities and probability-weighted masses of k heavy atoms.

    Returns (prob, weighted mass, k of index 0); tails below 1e-16 of the
    largest term are dropped.
    """
    if p <= 0.0:
        return np.array([1.0]), np.array([n * m0]), 0
    if p >= 1.0:
        return np.array([1.0]), np.array([n * m1]), n
    q = 1.0 - p
    if n == 1:
        prob = np.array([q, p])
        return prob, prob * np.array([m0, m1]), 0
    kmax = min(n, int(n * p + 12.0 * math.sqrt(n * p * q) + 15))
    if kmax < 200 and n * math.log(q) > -600.0:
        # recurrence P(k+1) / P(k) = (n - k) / (k + 1) * p / q, in plain floats (short lists)
        r = p / q
        terms = [q**n]
        for j in range(kmax):
            terms.append(terms[-1] * (n - j) / (j + 1) * r)
        cut = _PRUNE * max(terms)
        s = 0
        while terms[s] <= cut:
            s += 1
        prob = np.array(terms[s:])
        k = np.arange(s, kmax + 1, dtype=float)
    else:
        k = np.arange(kmax + 1, dtype=float)
        prob = np.exp(gammaln(n + 1.0) - gammaln(k + 1.0) - gammaln(n - k + 1.0)
                      + k * np.log(p) + (n - k) * np.log(q))
        s = int(np.argmax(prob > _PRUNE * prob.max()))
        prob, k = prob[s:], k[s:]
    return prob, prob * (n * m0 + k * (m1 - m0)), s


def _conv2(a, b):
    pa, wa, oa = a
    pb, wb, ob = b
    p = np.convolve(pa, pb)
    w = np.convolve(wa, pb) + np.convolve(pa, wb)
    keep = np.flatnonzero(p > _PRUNE * p.max())
    s, e = keep[0], keep[-1] + 1
    return p[s:e], w[s:e], oa + ob + s


@lru_cache(maxsize=512)
def _element_agg(element: str, n: int, c13: float):
    """(prob, weighted mass, nominal offset of index 0) for n atoms of an element."""
    iso = _isotopes(element, c13)
    a0 = iso[0][0]
    if len(iso) == 1:
        return np.array([1.0]), np.array([n * iso[0][1]]), n * a0
    if len(iso) == 2 and iso[1][0] - a0 == 1:
        prob, w, s = _binomial_agg(n, iso[0][1], iso[1][1], iso[1][2])
        return prob, w, n * a0 + s
    span = iso[-1][0] - a0
    p1 = np.zeros(span + 1)
    w1 = np.zeros(span + 1)
    for a, m, f in iso:
        p1[a - a0] += f
        w1[a - a0] += f * m
    result = None
    base = (p1, w1, a0)
    k = n
    while k:
        if k & 1:
            result = base if result is None else _conv2(result, base)
        k >>= 1
        if k:
            base = _conv2(base, base)
    return result


# ---------------------------------------------------------------- fine structure


def _element_fine(element: str, n: int, c13: float, floor: float):
    iso = _isotopes(element, c13)
    masses = np.array([m for _, m, _ in iso])
    probs = np.array([f for _, _, f in iso])
    if len(iso) == 1:
        return np.array([n * masses[0]]), np.array([1.0])
    if len(iso) == 2:
        prob, _, s = _binomial_agg(n, masses[0], masses[1], probs[1])
        k = np.arange(prob.size) + s
        keep = prob > floor
        return ((n - k) * masses[0] + k * masses[1])[keep], prob[keep]

    def merge(m, p):
        key = np.round(m * 1e6).astype(np.int64)
        uniq, inv = np.unique(key, return_inverse=True)
        pm = np.bincount(inv, weights=p)
        mm = np.bincount(inv, weights=p * m) / pm
        keep = pm > floor * 1e-3
        return mm[keep], pm[keep]

    res_m, res_p = None, None
    bm, bp = masses, probs
    k = n
    while k:
        if k & 1:
            if res_m is None:
                res_m, res_p = bm, bp
            else:
                res_m, res_p = merge(
                    (res_m[:, None] + bm[None, :]).ravel(), (res_p[:, None] * bp[None, :]).ravel()
                )
        k >>= 1
        if k:
            bm, bp = merge((bm[:, None] + bm[None, :]).ravel(), (bp[:, None] * bp[None, :]).ravel())
    return res_m, res_p


# ---------------------------------------------------------------- public API


@dataclass(frozen=True, eq=False)
class Envelope:
    """An isotope envelope.

    Attributes
    ----------
    formula : str
        Canonical formula.
    charge : int
        0 for neutral masses, else the ion charge (``mz`` is then m/z).
    mz : ndarray
        Masses (charge 0) or m/z values, increasing.
    abundance : ndarray
        Fraction of all isotopologues (sums to 1 minus what fell below the
        threshold).
    nominal : ndarray or None
        Nucleon number of each aggregate (aggregated envelopes only).
    c13 : float
        13C atom fraction used.
    fine : bool
        True when each line is one isotopologue (fine structure).
    """

    formula: str
    charge: int
    mz: np.ndarray
    abundance: np.ndarray
    nominal: np.ndarray | None
    c13: float
    fine: bool

    @property
    def relative(self) -> np.ndarray:
        """Abundances scaled so the largest line is 1."""
        return self.abundance / self.abundance.max()

    @property
    def base_mz(self) -> float:
        """m/z (or mass) of the most abundant line."""
        return float(self.mz[int(np.argmax(self.abundance))])

    def __len__(self) -> int:
        return int(self.mz.size)

    def to_frame(self):
        """The envelope as a pandas DataFrame (mz, abundance, relative_abundance)."""
        # lazy: pandas takes ~0.5 s to import; only the table output needs it
        import pandas as pd

        return pd.DataFrame(
            {"mz": self.mz, "abundance": self.abundance, "relative_abundance": self.relative}
        )


def _ro(a: np.ndarray, dtype=float) -> np.ndarray:
    if a.dtype != dtype or not a.flags.c_contiguous:
        a = np.ascontiguousarray(a, dtype=dtype)
    a.setflags(write=False)
    return a


def isotope_envelope(
    formula: str | Formula,
    charge: int = 0,
    *,
    c13: float | None = None,
    fine: bool = False,
    threshold: float = 1e-9,
) -> Envelope:
    """Isotope envelope of a formula, neutral or as an ion.

    Parameters
    ----------
    formula : str or Formula
        e.g. ``"C60"``, ``"La@C82"``.
    charge : int
        0 (neutral masses) or +-1..+-4; ions are made by electron loss or gain.
    c13 : float, optional
        13C atom fraction; default :data:`C13_NATURAL` (0.0107).
    fine : bool
        Keep every isotopologue (fine structure) instead of aggregating at
        nominal-mass spacing.
    threshold : float
        Lines with an abundance below this fraction of the total are dropped.

    Returns
    -------
    Envelope

    Examples
    --------
    >>> env = isotope_envelope("C60")
    >>> env.mz[:2].round(6).tolist(), env.abundance[:2].round(5).tolist()
    ([720.0, 721.003355], [0.52442, 0.34032])
    >>> round(float(isotope_envelope("C60", charge=1).mz[0]), 6)
    719.999451
    """
    f = parse_formula(formula)
    c = _check_c13(c13)
    z = 0 if charge == 0 else _check_charge(charge)
    counts = f.counts
    if fine:
        floor = threshold * 1e-3
        m, p = np.array([0.0]), np.array([1.0])
        for e in sorted(counts, key=lambda e: -counts[e]):
            em, ep = _element_fine(e, counts[e], c, floor)
            m = (m[:, None] + em[None, :]).ravel()
            p = (p[:, None] * ep[None, :]).ravel()
            keep = p > floor
            m, p = m[keep], p[keep]
        keep = p >= threshold
        m, p = m[keep], p[keep]
        order = np.argsort(m)
        m, p, nominal = m[order], p[order], None
    else:
        acc = None
        for e in sorted(counts):
            part = _element_agg(e, counts[e], c)
            acc = part if acc is None else _conv2(acc, part)
        prob, w, off = acc
        keep = prob >= max(threshold, 1e-300)
        if keep.all():
            m, p = w / prob, prob.copy()
            nominal = np.arange(off, off + prob.size, dtype=np.int64)
        else:
            m, p = w[keep] / prob[keep], prob[keep]
            nominal = np.flatnonzero(keep) + off
    if z:
        m = (m - z * ELECTRON_MASS) / abs(z)
    return Envelope(
        formula=f.text,
        charge=z,
        mz=_ro(m),
        abundance=_ro(p),
        nominal=None if nominal is None else _ro(nominal, np.int64),
        c13=c,
        fine=fine,
    )


def envelope_profile(
    envelope: Envelope,
    resolving_power: float,
    mz=None,
    *,
    points_per_fwhm: float = 10.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Profile of an envelope at a resolving power (Gaussian lines, FWHM = m/R).

    Each line contributes a Gaussian of unit area times its abundance, so the
    integral of the profile equals the summed abundance.

    Parameters
    ----------
    envelope : Envelope
    resolving_power : float
        R = m / FWHM.
    mz : array_like, optional
        Where to evaluate; default a grid covering the envelope with
        ``points_per_fwhm`` points per FWHM.

    Returns
    -------
    (mz, intensity) : tuple of ndarray

    Examples
    --------
    >>> x, y = envelope_profile(isotope_envelope("C60", 1), 5000)
    >>> bool(abs(x[int(y.argmax())] - 719.99945) < 0.02)
    True
    """
    if not resolving_power > 0:
        raise FormulaError(f"resolving_power must be > 0, got {resolving_power!r}")
    centres, amps = envelope.mz, envelope.abundance
    fwhm_max = centres.max() / resolving_power
    if mz is None:
        step = centres.min() / resolving_power / points_per_fwhm
        x = np.arange(centres.min() - 4 * fwhm_max, centres.max() + 4 * fwhm_max, step)
    else:
        x = np.asarray(mz, dtype=float)
    y = np.zeros_like(x)
    for c, a in zip(centres, amps, strict=False):
        sigma = c / resolving_power / 2.3548200450309493
        lo, hi = np.searchsorted(x, [c - 6 * sigma, c + 6 * sigma])
        xs = x[lo:hi]
        y[lo:hi] += a / (sigma * 2.5066282746310002) * np.exp(-0.5 * ((xs - c) / sigma) ** 2)
    return x, y


@dataclass(frozen=True)
class C13Fit:
    """Result of :func:`fit_c13`.

    Attributes
    ----------
    c13 : float
        Fitted 13C atom fraction.
    scale : float
        Fitted total intensity of the envelope.
    cosine : float
        Cosine similarity of fitted and measured intensities (1 = same shape).
    rms : float
        Root-mean-square residual, in the units of the intensities.
    n_peaks : int
        Number of measured peaks used.
    c13_err : float
        Standard uncertainty of ``c13`` (NaN with fewer than 3 peaks): see
        :func:`fit_c13`.
    """

    c13: float
    scale: float
    cosine: float
    rms: float
    n_peaks: int
    c13_err: float = float("nan")


def _agg_on_nominal(f: Formula, c: float, nominals: np.ndarray) -> np.ndarray:
    env = isotope_envelope(f, 0, c13=c, threshold=1e-12)
    out = np.zeros(nominals.size)
    idx = np.searchsorted(env.nominal, nominals)
    ok = (idx < env.nominal.size) & (env.nominal[np.minimum(idx, env.nominal.size - 1)] == nominals)
    out[ok] = env.abundance[idx[ok]]
    return out


def fit_c13(
    formula: str | Formula,
    mz,
    intensity,
    charge: int = 1,
    *,
    bounds: tuple[float, float] = (0.0, 0.5),
) -> C13Fit:
    """Fit the 13C atom fraction to a measured (centroided) envelope.

    Each measured peak is put on the nominal mass nearest to its neutral mass;
    the theoretical aggregated envelope at fraction p, times a scale solved
    by linear least squares, is fitted to the intensities by a bounded scalar
    least-squares search over p.

    The uncertainty ``c13_err`` is the least-squares standard error: the
    covariance ``s2 * inv(J.T @ J)`` of the two parameters (p, scale), with
    ``J`` the Jacobian of the model at the optimum (p by central differences)
    and ``s2 = RSS / (n - 2)`` the residual variance, so it grows with the
    misfit of the envelope (noise, blended or clipped peaks).

    Parameters
    ----------
    formula : str or Formula
    mz, intensity : array_like
        Centroid m/z values and intensities (areas or heights) of the peaks.
    charge : int
        Charge of the ion (+-1..+-4).
    bounds : (float, float)
        Search interval for the fraction.

    Examples
    --------
    >>> env = isotope_envelope("C60", 1, c13=0.05)
    >>> round(fit_c13("C60", env.mz, env.abundance, 1).c13, 4)
    0.05
    """
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.optimize import minimize_scalar

    f = parse_formula(formula)
    z = _check_charge(charge)
    x = np.asarray(mz, dtype=float)
    y = np.asarray(intensity, dtype=float)
    if x.size < 2 or x.shape != y.shape:
        raise FormulaError(
            f"fit_c13 needs at least 2 peaks with matching mz and intensity, got {x.size} and "
            f"{y.size}"
        )
    masses = neutral_mass(x, z)
    mono = monoisotopic_mass(f)
    # nominal number of each peak: principal-isotope nominal mass plus the nearest whole shift
    nominal0 = sum(n * _principal(e, C13_NATURAL)[0] for e, n in f.counts.items())
    nominals = nominal0 + np.round((masses - mono) / 1.0017).astype(int)
    # include neighbours where the theory is large but nothing was measured
    lo, hi = bounds

    def resid(p):
        t = _agg_on_nominal(f, p, nominals)
        tt = float(t @ t)
        s = float(t @ y) / tt if tt > 0 else 0.0
        return y - s * t, s, t

    res = minimize_scalar(
        lambda p: float(np.sum(resid(p)[0] ** 2)),
        bounds=(lo, hi),
        method="bounded",
        options={"xatol": 1e-6},
    )
    p = float(res.x)
    r, s, t = resid(p)
    cos = float(t @ y / (np.linalg.norm(t) * np.linalg.norm(y) + 1e-300))
    return C13Fit(
        c13=p, scale=s, cosine=cos, rms=float(np.sqrt(np.mean(r**2))), n_peaks=x.size,
        c13_err=_c13_error(f, nominals, p, s=s, t=t, r=r, bounds=bounds),
    )


def _c13_error(f: Formula, nominals, p, *, s, t, r, bounds) -> float:
    """Least-squares standard error of the fitted fraction (see :func:`fit_c13`)."""
    n = nominals.size
    if n < 3 or s <= 0:
        return float("nan")
    h = max(1e-5, 1e-3 * p)
    lo, hi = max(bounds[0], p - h), min(bounds[1], p + h)
    dt = (_agg_on_nominal(f, hi, nominals) - _agg_on_nominal(f, lo, nominals)) / (hi - lo)
    jac = np.column_stack([s * dt, t])
    s2 = float(r @ r) / (n - 2)
    try:
        cov = s2 * np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        return float("nan")
    return float(np.sqrt(max(cov[0, 0], 0.0)))
