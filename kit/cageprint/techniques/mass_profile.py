"""Isotope envelopes compared as profiles: low-resolution mass spectra and the regions check.

Helpers of :mod:`cageprint.techniques.mass`.  Below a resolving power of about
4000 the isotope peaks of a heavy cage ion (C84 near m/z 1008, La@C82 near 1123)
blend: their centroids are pulled towards the taller neighbour by more than any
ppm tolerance, and at R ~ 1000 the envelope is one hump.  Here each candidate
formula's envelope is drawn as Gaussian lines of FWHM = m/R (R fitted to the
data) and compared with the measured profile, point by point, with a small
shift (the mass error) and the amount fitted by least squares.

The same machinery splits the spectrum into *regions* (runs of signal above the
noise) so that every envelope above the threshold is either explained by a
species or listed as unexplained with its m/z and relative height.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..isotopes import C13_NATURAL, isotope_envelope, neutral_mass
from .mass_match import (
    AMBIGUITY_MARGIN,
    CAGE_SIZES,
    _envelope_cached,
    _mono_index,
    candidate_formulas,
)

#: below this resolving power (estimated from the peak widths) species are identified from
#: the profile instead of from centroided isotope peaks
PROFILE_BELOW_R = 4000.0
#: a region is made of runs of signal above REGION_LEVEL noise deviations that reach the peak
#: threshold, joined across gaps of up to REGION_GAP m/z (plus two FWHM), widened by
#: REGION_PAD m/z (plus one FWHM)
REGION_LEVEL = 2.0
REGION_GAP = 1.5
REGION_PAD = 1.0
#: profile cosine needed to accept a species (one, or several together, in a region)
PROFILE_MIN_SCORE = 0.95
#: ... or leave a residual whose root-mean-square is at most this many noise deviations
NOISE_FIT_FACTOR = 1.5
#: each species' own envelope must match what the others leave with at least this cosine
OWN_MIN_SCORE = 0.85
#: a C_n profile must fit this well to calibrate the offset and the resolving power
PROFILE_CALIBRANT_MIN = 0.97
#: mass tolerance of a profile match, as a fraction of the FWHM (at least ppm and floor)
PROFILE_TOL_FWHM = 0.1
#: a profile match may be shifted by at most this many tolerances; its score is its cosine
#: minus PROFILE_SHIFT_PENALTY times (shift / tolerance) squared.  Blended envelopes hardly
#: differ in cosine between isobars, so the penalty ranks those; between envelopes of
#: different shape the cosine decides.
PROFILE_SHIFT_LIMIT = 2.0
PROFILE_SHIFT_PENALTY = 0.02
#: a fitted shift at this fraction of the limit or beyond is pinned there: no match
PINNED = 0.98
#: a second (third) species in a region must reach this fraction of the model nearby
PROFILE_RESIDUAL_FRACTION = 0.10
#: residual signal above this fraction of the model nearby (and above the peak threshold)
#: is listed as unexplained; nearby: within LOCAL_FWHM line widths
UNEXPLAINED_FRACTION = 0.25
LOCAL_FWHM = 3.0
#: an envelope's main lines (at least this fraction of its largest) must lie in the region
MAIN_LINE_FRACTION = 0.25
#: a charge z > 1 is considered only where 1/z spans at least this many FWHM
MIN_SPACING_FWHM = 1.0
#: profiles are fitted on about this many points per FWHM (finer data are thinned)
FIT_POINTS_PER_FWHM = 8.0
#: candidates kept for the full fit: within PREFILTER_MARGIN of the best unshifted cosine,
#: at most PREFILTER_KEEP
PREFILTER_MARGIN = 0.15
PREFILTER_KEEP = 25
#: lines weaker than this fraction of an envelope's largest are not drawn
LINE_FLOOR = 1e-4
#: resolving powers tried when fitting R to the C_n ladder
R_GRID = tuple(float(r) for r in np.geomspace(250.0, 16000.0, 31))

_SIGMA = 1.0 / 2.3548200450309493
_SQRT2PI = 2.5066282746310002
_KIND_ORDER = ("cage", "oxide", "endohedral", "heterofullerene", "hydride", "fragment")


@dataclass(frozen=True)
class Region:
    """A run of signal: points ``lo:hi`` of the spectrum, apex at index ``apex``."""

    lo: int
    hi: int
    apex: int
    height: float


@dataclass(frozen=True)
class ProfileMatch:
    """How one formula's drawn envelope fits a region of the profile.

    ``shift`` is the fitted m/z shift (the mass error, m/z units), ``amount``
    the fitted envelope total (area units), ``score`` the cosine less a
    mass-error penalty (:data:`PROFILE_SHIFT_PENALTY`), ``c13_err`` the uncertainty of a fitted 13C
    fraction (None when the fraction was not fitted).
    """

    formula: str
    kind: str
    charge: int
    score: float
    cosine: float
    shift: float
    mono_mz: float
    amount: float
    c13: float
    c13_err: float | None = None
    alternatives: tuple[str, ...] = ()


# ------------------------------------------------------------------ regions


def find_regions(x, y, noise, threshold, fwhm_coef) -> list[Region]:
    """Where the signal is: runs above ``REGION_LEVEL`` noise deviations that reach ``threshold``.

    Such runs closer than ``REGION_GAP`` m/z plus two FWHM (``fwhm_coef * m``)
    are joined, so the resolved isotope peaks of one envelope form one region;
    runs that never reach the threshold (noise, weak isotope lines) join none.
    Each region is widened by ``REGION_PAD`` m/z plus one FWHM on both sides,
    to take in the weak outer lines of its envelopes (neighbouring widened
    regions may overlap: a weak envelope next to a strong one keeps its own
    region, apex and listing level).

    Examples
    --------
    >>> x = np.linspace(0, 100, 1001)
    >>> y = np.exp(-0.5 * ((x - 30) / 0.5) ** 2) + np.exp(-0.5 * ((x - 31) / 0.5) ** 2)
    >>> [(round(x[r.lo]), round(x[r.hi - 1])) for r in find_regions(x, y, 0.01, 0.1, 0.01)]
    [(27, 34)]
    """
    above = y > REGION_LEVEL * noise
    if not above.any():
        return []
    edges = np.flatnonzero(np.diff(np.concatenate(([0], above.astype(np.int8), [0]))))
    runs = [[int(a), int(b)] for a, b in zip(edges[::2], edges[1::2], strict=True)
            if float(y[a:b].max()) >= threshold]
    if not runs:
        return []
    merged = [runs[0]]
    for a, b in runs[1:]:
        gap = x[a] - x[merged[-1][1] - 1]
        if gap <= REGION_GAP + 2 * fwhm_coef * x[a]:
            merged[-1][1] = b
        else:
            merged.append([a, b])
    out: list[Region] = []
    for a, b in merged:
        apex = a + int(np.argmax(y[a:b]))
        w = REGION_PAD + fwhm_coef * x[apex]
        lo = int(np.searchsorted(x, x[a] - w))
        hi = int(np.searchsorted(x, x[b - 1] + w, side="right"))
        # widened regions may overlap; they stay apart, each with its own apex and threshold
        out.append(Region(lo, hi, apex, float(y[apex])))
    return out


# ------------------------------------------------------------------ drawing and fitting


def _lines(text: str, z: int, c13: float):
    env = _envelope_cached(text, z, round(float(c13), 6))
    keep = env.abundance >= LINE_FLOOR * env.abundance.max()
    return env.mz[keep], env.abundance[keep]


def draw(x, mz, ab, fwhm_coef, shift=0.0, derivative=False):
    """Sum of unit-area Gaussian lines (FWHM = ``fwhm_coef * m``) weighted by ``ab``.

    With ``derivative`` also returns d(profile)/d(shift).

    Examples
    --------
    >>> x = np.linspace(700, 740, 40001)
    >>> y = draw(x, np.array([720.0]), np.array([2.0]), 1 / 1500)
    >>> round(float(np.trapezoid(y, x)), 4)
    2.0
    """
    s = (mz + shift) * fwhm_coef * _SIGMA
    d = (x[:, None] - mz[None, :] - shift) / s[None, :]
    g = np.exp(-0.5 * d * d) / (s[None, :] * _SQRT2PI)
    y = g @ ab
    if derivative:
        return y, (g * d / s[None, :]) @ ab
    return y


def _thin(xs, ys, fwhm_coef):
    """Every k-th point, so that about FIT_POINTS_PER_FWHM remain per FWHM (smoothed data)."""
    if xs.size < 2:
        return xs, ys
    k = int(fwhm_coef * float(xs.mean()) / float(np.median(np.diff(xs))) / FIT_POINTS_PER_FWHM)
    return (xs[::k], ys[::k]) if k > 1 else (xs, ys)


def _cos(a, b) -> float:
    den = float(np.linalg.norm(a) * np.linalg.norm(b))
    return float(a @ b) / den if den > 0 else 0.0


def fit_shift(x, y, mz, ab, fwhm_coef, *, start=0.0, limit=np.inf, steps=4):
    """Fit amount and m/z shift of one drawn envelope to ``y`` (Gauss-Newton from ``start``).

    Returns (cosine, shift, amount per unit abundance, model).
    """
    shift = float(start)
    for _ in range(steps):
        m0, m1 = draw(x, mz, ab, fwhm_coef, shift, derivative=True)
        a = np.column_stack([m0, m1])
        coef, *_ = np.linalg.lstsq(a, y, rcond=None)
        ratio = coef[1] / coef[0] if coef[0] > 0 and np.all(np.isfinite(coef)) else np.nan
        if not np.isfinite(ratio):
            break
        step = float(np.clip(ratio, -0.5 * fwhm_coef * mz.mean(), 0.5 * fwhm_coef * mz.mean()))
        shift = float(np.clip(shift + step, -limit, limit))
        if abs(step) < 1e-4 * fwhm_coef * mz.mean():
            break
    model = draw(x, mz, ab, fwhm_coef, shift)
    mm = float(model @ model)
    amount = max(float(model @ y) / mm, 0.0) if mm > 0 else 0.0
    return _cos(model, y), shift, amount, model


def _grid_shift(x, y, mz, ab, fwhm_coef, limit):
    """Best shift on a grid of FWHM/3 steps within +-limit, refined by Gauss-Newton."""
    fw = fwhm_coef * float(mz.mean())
    grid = np.arange(-limit, limit + 1e-12, max(fw / 3.0, 1e-4))
    best = max(grid, key=lambda s: _cos(draw(x, mz, ab, fwhm_coef, s), y))
    return fit_shift(x, y, mz, ab, fwhm_coef, start=float(best), limit=limit)


def _tol(m, ppm, floor, fwhm_coef):
    return max(m * ppm * 1e-6, floor, PROFILE_TOL_FWHM * fwhm_coef * m)


def _fit_c13(x, y, text, z, fwhm_coef, limit):
    """Fit the 13C fraction of one candidate to the profile (bounded golden search).

    Returns (cos, shift, amount, model, p, p_err).  The uncertainty comes from
    the curvature of the residual sum of squares at the optimum, scaled by the
    residual variance, with the points of one FWHM counted as one measurement
    (neighbouring profile points are not independent).
    """
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.optimize import minimize_scalar

    def rss(p):
        mz, ab = _lines_free(text, z, p)
        cos, shift, amount, model = fit_shift(x, y, mz, ab, fwhm_coef, limit=limit)
        return float(np.sum((y - amount * model) ** 2)), (cos, shift, amount, model)

    res = minimize_scalar(lambda p: rss(p)[0], bounds=(0.0, 0.5), method="bounded",
                          options={"xatol": 1e-5})
    p = float(res.x)
    r0, best = rss(p)
    h = 2e-3
    rp, rm = rss(min(p + h, 0.5))[0], rss(max(p - h, 0.0))[0]
    curv = (rp - 2 * r0 + rm) / (h * h)
    per_fwhm = fwhm_coef * float(x.mean()) / float(np.median(np.diff(x)))
    n_eff = max(x.size / max(per_fwhm, 1.0), 3.0)
    var = r0 / max(n_eff - 3.0, 1.0) * max(per_fwhm, 1.0)
    err = float(np.sqrt(2.0 * var / curv)) if curv > 0 else float("nan")
    return (*best, p, err)


def _lines_free(text, z, p):
    env = isotope_envelope(text, z, c13=float(p), threshold=1e-6)
    keep = env.abundance >= LINE_FLOOR * env.abundance.max()
    return env.mz[keep], env.abundance[keep]


# ------------------------------------------------------------------ calibration


def _best_cn(xs, ys, ns, zs, p, *, max_offset, r_grid):
    """Best (cosine, shift, R, n) over the C_n in ``ns`` and the resolving powers ``r_grid``."""
    best = None
    for n in ns:
        mz, ab = _lines_free(f"C{n}", zs, p)
        main = mz[ab >= MAIN_LINE_FRACTION * ab.max()]
        if main.min() < xs[0] - max_offset or main.max() > xs[-1] + max_offset:
            continue
        for r in r_grid:
            cos, shift, _, _ = _grid_shift(xs, ys, mz, ab, 1.0 / r, max_offset)
            if best is None or cos > best[0]:
                best = (cos, shift, float(r), n)
    if best is None:
        return None
    cos, shift, r, n = best  # refine R between its grid neighbours
    mz, ab = _lines_free(f"C{n}", zs, p)
    for r2 in np.geomspace(r / 1.15, r * 1.15, 9):
        c2, s2, _, _ = fit_shift(xs, ys, mz, ab, 1.0 / r2, start=shift, limit=max_offset)
        if c2 > cos:
            cos, shift, r = c2, s2, float(r2)
    return cos, shift, r, n


def calibrate(x, y, regions, sign, fwhm_coef0, *, max_offset, c13=C13_NATURAL,
              n_regions=4):
    """Resolving power (and m/z offset) from the C_n envelopes among the tallest regions.

    For each of the ``n_regions`` tallest regions, every C_n (n even) whose
    envelope could sit there is drawn at each R of :data:`R_GRID` with the
    best shift within ``max_offset``; the best (R, shift, n) is refined
    around its R.  With ``c13="fit"`` the 13C fraction of that C_n is then
    fitted and the search repeated once with it.  Fits with a cosine of at
    least :data:`PROFILE_CALIBRANT_MIN` are calibrants.  Returns (fwhm_coef,
    offset, calibrants): the medians over the calibrants, or ``fwhm_coef0``
    and 0 without any.
    """
    out = []
    p0 = c13 if c13 != "fit" else C13_NATURAL
    for reg in sorted(regions, key=lambda r: -r.height)[:n_regions]:
        xs, ys = _thin(x[reg.lo:reg.hi], y[reg.lo:reg.hi], fwhm_coef0 / 2)
        found = []
        for z in (1, 2):
            m_apex = neutral_mass(x[reg.apex], sign * z)
            ns = sorted(n for n in (2 * int(round(m_apex / 24.0)) + d for d in (-2, 0, 2))
                        if CAGE_SIZES[0] <= n <= CAGE_SIZES[-1])
            p = p0
            best = _best_cn(xs, ys, ns, sign * z, p, max_offset=max_offset, r_grid=R_GRID)
            if best is not None and c13 == "fit":
                p = _fit_c13(xs, ys, f"C{best[3]}", sign * z, 1.0 / best[2], max_offset)[4]
                best = _best_cn(xs, ys, ns, sign * z, p, max_offset=max_offset, r_grid=R_GRID)
            if best is not None and best[0] >= PROFILE_CALIBRANT_MIN:
                cos, shift, r, n = best
                found.append({"formula": f"C{n}", "charge": sign * z, "offset": shift,
                              "score": cos, "resolving_power": r, "c13": p,
                              "mz": float(x[reg.apex])})
        if found:  # the charge whose C_n fits best
            out.append(max(found, key=lambda c: c["score"]))
    if not out:
        return fwhm_coef0, 0.0, ()
    coef = 1.0 / float(np.median([c["resolving_power"] for c in out]))
    offset = float(np.median([c["offset"] for c in out]))
    return coef, offset, tuple(out)


# ------------------------------------------------------------------ identification


def _candidates(xs, sign, metals, fwhm_coef, charges=(1, 2, 3, 4)):
    """(formula, kind, z) whose envelope could lie inside the m/z span ``xs``.

    A charge above 1 is tried only where its isotope spacing 1/z is at least
    :data:`MIN_SPACING_FWHM` line widths: where the lines of an envelope merge,
    its charge cannot be read and the profile alone would let a huge cage at a
    high charge imitate a small one.
    """
    out = []
    for z in charges:
        if z > 1 and 1.0 / z < MIN_SPACING_FWHM * fwhm_coef * float(xs[-1]):
            continue
        zs = sign * z
        lo, hi = neutral_mass(float(xs[0]), zs), neutral_mass(float(xs[-1]), zs)
        for text, kind, _ in candidate_formulas(lo - 4.0, hi, metals):
            out.append((text, kind, zs))
    return out


def _score_one(xs, ys, text, kind, zs, fwhm_coef, *, ppm, floor, c13, limit_fwhm):
    """Fit one candidate; None when its envelope does not sit inside the region."""
    p = C13_NATURAL if c13 in (None, "fit") else float(c13)
    mz, ab = _lines(text, zs, p)
    if c13 == "fit":  # 13C moves the envelope up: checked once the fraction is fitted
        if mz.min() > xs[-1]:
            return None
    elif not _inside(mz, ab, xs):
        return None
    centre = float(mz @ ab / ab.sum())
    tol = _tol(centre, ppm, floor, fwhm_coef)
    limit = max(PROFILE_SHIFT_LIMIT * tol, limit_fwhm * fwhm_coef * centre)
    p_err = None
    if c13 == "fit":
        cos, shift, amount, model, p, p_err = _fit_c13(xs, ys, text, zs, fwhm_coef, limit)
        mz, ab = _lines_free(text, zs, p)
        if not _inside(mz, ab, xs):
            return None
    else:
        cos, shift, amount, model = fit_shift(xs, ys, mz, ab, fwhm_coef, limit=limit)
    if amount <= 0 or abs(shift) >= PINNED * limit:  # pinned: its best place lies further out
        return None
    score = cos - PROFILE_SHIFT_PENALTY * (shift / tol) ** 2
    env = _envelope_cached(text, zs, round(p, 6)) if c13 != "fit" else isotope_envelope(
        text, zs, c13=p, threshold=1e-6)
    mono = float(env.mz[_mono(env)])
    return ProfileMatch(text, kind, zs, score, cos, shift, mono + shift,
                        amount * float(ab.sum()), p, p_err), model * amount


def _inside(mz, ab, xs) -> bool:
    """The envelope's main lines (MAIN_LINE_FRACTION of its largest) lie within ``xs``."""
    big = mz[ab >= MAIN_LINE_FRACTION * ab.max()]
    return bool(big.min() >= xs[0] and big.max() <= xs[-1])


def _mono(env) -> int:
    return _mono_index(env, env.formula)


def _prefer(results, c13_hint=None):
    """Best result; among those within AMBIGUITY_MARGIN of it the simpler kind, lower charge.

    With fitted 13C fractions, ``c13_hint`` (the fraction of the C_n ladder) then
    decides: one sample has one enrichment, and once the monoisotopic line is lost
    an envelope one or two mass units heavier with less 13C looks alike.
    """
    top = max(r[0].score for r in results)
    near = [r for r in results if r[0].score >= top - AMBIGUITY_MARGIN]
    hint = c13_hint if c13_hint is not None else 0.0
    near.sort(key=lambda r: (_KIND_ORDER.index(r[0].kind), abs(r[0].charge),
                             round(abs(r[0].c13 - hint), 3) if c13_hint is not None else 0,
                             -r[0].score))
    return near[0], [r[0].formula for r in near[1:]
                     if r[0].charge == near[0][0].charge][:6]


def identify_region(x, y, region, sign, fwhm_coef, threshold, *, ppm, floor, c13=None,
                    metals=None, max_species=3, noise=0.0, c13_hint=None):
    """Explain one region by up to ``max_species`` drawn envelopes (greedy, then joint fit).

    The best single candidate (profile score; near ties go to the simpler kind
    and the lower charge) is taken, subtracted, and the residual searched again
    while it keeps a peak above ``threshold`` and :data:`PROFILE_RESIDUAL_FRACTION`
    of the model nearby (:func:`local_level`).  Amounts are refined together by
    non-negative least squares; the set is kept when the joint model's cosine reaches
    :data:`PROFILE_MIN_SCORE` or its residual is no larger than the noise
    (root-mean-square at most :data:`NOISE_FIT_FACTOR` times ``noise``: a weak
    envelope cannot fit better than its noise allows).  A species is kept when
    its drawn apex reaches ``threshold`` and its own envelope matches what the
    others leave with a cosine of :data:`OWN_MIN_SCORE`.  Returns (matches,
    joint model of the kept species on the region).
    """
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.optimize import nnls

    full_xs = x[region.lo:region.hi]
    xs, ys = _thin(full_xs, y[region.lo:region.hi], fwhm_coef)
    cands = _candidates(xs, sign, metals, fwhm_coef)
    chosen: list[tuple[ProfileMatch, np.ndarray]] = []
    resid = ys.copy()
    p_quick = (c13_hint if c13_hint is not None else C13_NATURAL) if c13 == "fit" else (
        C13_NATURAL if c13 is None else float(c13))
    level = np.full(xs.size, float(threshold))
    for _ in range(max_species):
        results = []
        for text, kind, zs in _prefilter(xs, resid, cands, fwhm_coef, p_quick):
            r = _score_one(xs, resid, text, kind, zs, fwhm_coef, ppm=ppm, floor=floor, c13=c13,
                           limit_fwhm=0.0)
            if r is not None:
                results.append(r)
        if not results:
            break
        (match, model), alts = _prefer(results, c13_hint)
        if chosen:
            k = int(np.argmax(model))
            if model[k] < level[k] or match.cosine < PROFILE_MIN_SCORE - 0.1:
                break
        chosen.append((_with_alts(match, alts), model))
        cols = np.column_stack([m / max(float(m.max()), 1e-300) for _, m in chosen])
        amounts, _ = nnls(cols, ys)
        resid = ys - cols @ amounts
        level = local_level(xs, cols @ amounts, threshold, PROFILE_RESIDUAL_FRACTION, fwhm_coef)
        if not np.any(resid > level):
            break
    if not chosen:
        return [], np.zeros_like(full_xs)
    cols = np.column_stack([m / max(float(m.max()), 1e-300) for _, m in chosen])
    amounts, _ = nnls(cols, ys)
    joint = cols @ amounts
    rms = float(np.sqrt(np.mean((ys - joint) ** 2)))
    if _cos(joint, ys) < PROFILE_MIN_SCORE and not rms <= NOISE_FIT_FACTOR * noise:
        return [], np.zeros_like(full_xs)
    out = []
    for j, (m, model) in enumerate(chosen):
        if amounts[j] < threshold:  # its own apex (columns peak at 1) must clear the threshold
            continue
        scale = amounts[j] / max(float(model.max()), 1e-300)
        others = joint - cols[:, j] * amounts[j]
        own = _cos(cols[:, j], np.maximum(ys - others, 0.0))
        if own >= OWN_MIN_SCORE:
            out.append(_rescaled(m, scale, own))
    return out, sum((model_of(m, full_xs, fwhm_coef) for m in out), np.zeros_like(full_xs))


def model_of(m: ProfileMatch, x, fwhm_coef):
    """The drawn envelope of a profile match on ``x`` (its amount, shift and 13C fraction)."""
    mz, ab = _lines_free(m.formula, m.charge, m.c13)
    return draw(x, mz, ab, fwhm_coef, m.shift) * (m.amount / float(ab.sum()))


def _prefilter(xs, ys, cands, fwhm_coef, p):
    """Candidates worth a full fit: one drawing each, unshifted, at 13C fraction ``p``.

    Keeps those whose cosine is within PREFILTER_MARGIN of the best, at most
    PREFILTER_KEEP of them (isobars keep their order by mass: closest first).
    """
    quick = []
    for text, kind, zs in cands:
        mz, ab = _lines(text, zs, p)
        if mz.min() > xs[-1] or mz.max() < xs[0]:
            continue
        quick.append((_cos(draw(xs, mz, ab, fwhm_coef), ys), text, kind, zs))
    if not quick:
        return []
    quick.sort(key=lambda q: -q[0])
    top = quick[0][0]
    return [(t, k, z) for c, t, k, z in quick[:PREFILTER_KEEP] if c >= top - PREFILTER_MARGIN]


def _with_alts(m: ProfileMatch, alts) -> ProfileMatch:
    return replace(m, alternatives=tuple(alts))


def _rescaled(m: ProfileMatch, scale: float, own_cos: float) -> ProfileMatch:
    return replace(m, amount=m.amount * scale, cosine=own_cos,
                   score=own_cos - (m.cosine - m.score))


# ------------------------------------------------------------------ what is left


def local_level(x, model, threshold, fraction, fwhm_coef):
    """``max(threshold, fraction * model nearby)``, nearby = within LOCAL_FWHM line widths.

    Where a drawn envelope does not quite have the measured line shape (tails,
    asymmetry) the residual scales with the model around it; a weak envelope
    away from the strong ones is judged against the threshold alone, however
    tall the strongest envelope of its region.
    """
    if x.size < 2:
        return np.full(x.size, float(threshold))
    half = int(np.ceil(LOCAL_FWHM * fwhm_coef * float(x.mean()) / float(np.median(np.diff(x)))))
    padded = np.pad(model, half, mode="edge")
    near = np.lib.stride_tricks.sliding_window_view(padded, 2 * half + 1).max(axis=1)
    return np.maximum(threshold, fraction * near)


def residual_runs(x, resid, model, threshold, fwhm_coef):
    """Runs of the residual above :func:`local_level` (UNEXPLAINED_FRACTION): (index, height)."""
    r = resid
    above = r > local_level(x, model, threshold, UNEXPLAINED_FRACTION, fwhm_coef)
    if not above.any():
        return []
    edges = np.flatnonzero(np.diff(np.concatenate(([0], above.astype(np.int8), [0]))))
    out = []
    for a, b in zip(edges[::2], edges[1::2], strict=True):
        i = a + int(np.argmax(r[a:b]))
        out.append((i, float(r[i])))
    return out
