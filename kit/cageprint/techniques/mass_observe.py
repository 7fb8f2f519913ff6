"""The steps of :func:`cageprint.techniques.mass.observe_mass` between peaks and species.

Two routes share one accounting:

* resolved isotope peaks (resolving power above
  :data:`~cageprint.techniques.mass_profile.PROFILE_BELOW_R`, and peak lists):
  calibration from the C_n ladder of centroided envelopes, then formulas per
  envelope (:mod:`~cageprint.techniques.mass_match`);
* blended ones (lower resolving power): calibration of offset and resolving
  power from C_n profiles, then formulas per region of the profile
  (:mod:`~cageprint.techniques.mass_profile`).

Afterwards every region of signal above the noise is checked against the
species found (:func:`account_regions`): a region that no species explains is
searched from its profile, and what is still left is listed as unexplained.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..isotopes import C13_NATURAL, neutral_mass
from .mass_match import (
    CAGE_SIZES,
    ENVELOPE_MIN_SCORE,
    PEEL_TRY_BELOW,
    MassMatch,
    ObservedEnvelope,
    _envelope_cached,
    _explained,
    _greedy,
    _peel,
)
from .mass_profile import (
    REGION_GAP,
    ProfileMatch,
    Region,
    _lines,
    draw,
    identify_region,
    residual_runs,
)

#: a C_n ladder member used for calibration must fit this well
CALIBRANT_MIN_SCORE = 0.97
#: largest calibration offset searched for, in m/z units
MAX_CALIBRATION_OFFSET = 0.5
#: calibrants spanning at least this many m/z units also give a slope, if within
#: MAX_SLOPE_PPM
SLOPE_MIN_SPAN = 100.0
MAX_SLOPE_PPM = 300.0
#: peaks at least this fraction of the tallest set the resolving-power estimate
WIDTH_PEAKS_FRACTION = 0.05


@dataclass(frozen=True)
class Unexplained:
    """An envelope above the noise threshold that no species explains.

    Attributes
    ----------
    mz : float
        m/z of its apex (after the calibration correction).
    relative_height : float
        Apex height over the tallest point of the spectrum (both above baseline).
    height : float
        Apex height above the baseline, in the spectrum's intensity units.
    mz_lo, mz_hi : float
        m/z span of the region it lies in.
    charge : int
        Charge read from the isotope spacing (0 where the peaks are not resolved).
    reason : str
        Why it is listed, in words.
    """

    mz: float
    relative_height: float
    height: float
    mz_lo: float
    mz_hi: float
    charge: int = 0
    reason: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"mz": self.mz, "relative_height": self.relative_height, "height": self.height,
                "mz_lo": self.mz_lo, "mz_hi": self.mz_hi, "charge": self.charge,
                "reason": self.reason}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Unexplained:
        return cls(**d)


# ------------------------------------------------------------------ resolving power


def fwhm_coefficient(peaks) -> float:
    """Median FWHM / m of the peaks taller than :data:`WIDTH_PEAKS_FRACTION` of the tallest.

    Blended isotope peaks make it too large (a hump is wider than one line);
    it decides the route and is the starting point of the profile calibration.
    """
    h = peaks.area / np.maximum(peaks.fwhm, 1e-300)
    ok = (h >= WIDTH_PEAKS_FRACTION * h.max()) & (peaks.fwhm > 0) & np.isfinite(peaks.fwhm)
    if not ok.any():
        return float("nan")
    return float(np.median(peaks.fwhm[ok] / peaks.mz[ok]))


# ------------------------------------------------------------------ centroided route


def _ladder_residual(z, mz, inten, c13=C13_NATURAL):
    """Fit the best C_n (n even) to an envelope without a mass tolerance.

    ``c13`` is the 13C fraction, or ``"fit"`` to take, for each alignment, the
    fraction that fits the envelope best.  Returns (cosine, residual in m/z, n)
    of the best alignment, or None.
    """
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.optimize import minimize_scalar

    masses = neutral_mass(mz, z)
    b = int(np.argmax(inten))
    norm_i = float(np.linalg.norm(inten))

    def fit(n_try, nominals, p):
        env = _envelope_cached(f"C{n_try}", 0, round(float(p), 5))
        k = nominals - env.nominal[0]
        t = np.zeros(k.size)
        ok = (k >= 0) & (k < env.nominal.size)
        t[ok] = env.abundance[k[ok]]
        if t.sum() <= 0:
            return None
        cos = float(t @ inten) / float(np.linalg.norm(env.abundance) * norm_i)
        w = t * inten
        resid = float(np.sum(w[ok] * (masses[ok] - env.mz[k[ok]])) / np.sum(w[ok])) / abs(z)
        return cos, resid, n_try

    best = None
    for s in (-1, 0, 1):
        nb = int(np.round(masses[b])) + s
        nominals = np.round(masses - masses[b]).astype(int) + nb
        n = (nb // 24) * 2
        for n_try in (n, n - 2):
            if n_try < CAGE_SIZES[0] or n_try > CAGE_SIZES[-1]:
                continue
            p = c13
            if c13 == "fit":
                res = minimize_scalar(
                    lambda q, n_try=n_try, nominals=nominals: -(
                        (fit(n_try, nominals, q) or (0.0,))[0]),
                    bounds=(0.0, 0.5), method="bounded", options={"xatol": 1e-4})
                p = float(res.x)
            r = fit(n_try, nominals, p)
            if r is not None and (best is None or r[0] > best[0] + 1e-9):
                best = r
    return best


def stick_calibration(chains, pmz, parea, sign, c13):
    """The C_n ladder members among the centroided envelopes, as calibrants."""
    calib = []
    for z, members in chains:
        r = _ladder_residual(sign * z, pmz[members], parea[members], c13)
        if r and r[0] >= CALIBRANT_MIN_SCORE and abs(r[1]) <= MAX_CALIBRATION_OFFSET:
            calib.append({"formula": f"C{r[2]}", "charge": sign * z, "offset": r[1],
                          "score": r[0], "mz": float(np.average(pmz[members],
                                                                weights=parea[members]))})
    return calib


def calibration_line(calib) -> tuple[float, float, float]:
    """Offset, slope (ppm) and reference m/z of the calibration from the C_n calibrants.

    ``offset`` is the median calibrant offset, at ``mz_ref``, the median
    calibrant m/z.  With calibrants spanning at least :data:`SLOPE_MIN_SPAN`
    m/z, the slope is the median of the pairwise slopes (Theil-Sen; one bad
    calibrant does not tilt it), kept when within :data:`MAX_SLOPE_PPM`: it
    takes up a scale error of the m/z axis and, at low resolving power, the
    shift of a tailing line's centroid, which grows with the line width (m/R).
    The correction at m/z ``m`` is ``offset + slope * 1e-6 * (m - mz_ref)``.
    """
    if not calib:
        return 0.0, 0.0, 0.0
    off = np.array([c["offset"] for c in calib])
    mz = np.array([c.get("mz", 0.0) for c in calib])
    offset, mz_ref = float(np.median(off)), float(np.median(mz))
    slope = 0.0
    if len(calib) > 1 and np.ptp(mz) >= SLOPE_MIN_SPAN:
        i, j = np.triu_indices(len(calib), k=1)
        keep = np.abs(mz[j] - mz[i]) >= SLOPE_MIN_SPAN / 2
        if keep.any():
            s = float(np.median((off[j] - off[i])[keep] / (mz[j] - mz[i])[keep])) * 1e6
            slope = s if abs(s) <= MAX_SLOPE_PPM else 0.0
    if slope:
        offset = float(np.median(off - slope * 1e-6 * (mz - mz_ref)))
    return offset, slope, mz_ref


def stick_species(chains, cmz, parea, pfloor, sign, *, ppm, floor, c13, metals, snr, noise):
    """Formulas for each centroided envelope; returns (found, envelopes, unexplained chains)."""
    c13_fixed = C13_NATURAL if c13 is None else c13
    found, envelopes, left = [], [], []
    for z, members in chains:
        zs = sign * z
        emz, eint, efl = cmz[members], parea[members], pfloor[members]
        envelopes.append(ObservedEnvelope(zs, emz, eint, efl))
        chosen = _greedy(zs, emz, eint, ppm, efl, c13_fixed if c13 != "fit" else c13,
                         metals=metals, snr=snr, noise=noise)
        fit_greedy = _explained(chosen, emz, eint, ppm, efl)
        if c13 != "fit" and fit_greedy < PEEL_TRY_BELOW:
            peeled = _peel(zs, emz, eint, ppm, efl, c13_fixed, metals=metals)
            if peeled and _explained(peeled, emz, eint, ppm, efl) > fit_greedy + 0.005:
                chosen = peeled
        if not chosen:
            left.append((zs, emz, eint))
        found.extend(chosen)
    return found, envelopes, left


def chain_unexplained(left, top, *, ppm, floor) -> list[Unexplained]:
    """Unexplained records for centroided envelopes no formula explains (peak lists)."""
    out = []
    for zs, emz, eint in left:
        b = int(np.argmax(eint))
        out.append(Unexplained(
            mz=round(float(emz[b]), 5), relative_height=float(eint[b] / top),
            height=float(eint[b]), mz_lo=float(emz.min()), mz_hi=float(emz.max()), charge=zs,
            reason=f"no candidate formula within tolerance ({ppm} ppm, floor {floor}) and "
            f"envelope score >= {ENVELOPE_MIN_SCORE}; raise ppm/floor for low-resolution "
            "data, pass c13='fit' for enriched samples"))
    return out


# ------------------------------------------------------------------ profile accounting


def _as_found(m: ProfileMatch) -> dict[str, Any]:
    mono = m.mono_mz
    match = MassMatch(
        formula=m.formula, charge=m.charge, score=m.score, envelope_score=m.cosine,
        error_ppm=m.shift / mono * 1e6, mono_mz=mono, scale=m.amount,
        n_matched=int(np.count_nonzero(_lines(m.formula, m.charge, m.c13)[1] >= 0.01 * max(
            _lines(m.formula, m.charge, m.c13)[1]))),
        c13=m.c13, c13_err=m.c13_err,
    )
    return {"match": match, "kind": m.kind, "alts": list(m.alternatives), "shared": False,
            "route": "profile"}


def _in_region(match: MassMatch, lo: float, hi: float) -> bool:
    mz, ab = _lines(match.formula, match.charge, match.c13)
    base = float(mz[int(np.argmax(ab))]) * (1 + match.error_ppm * 1e-6)
    return lo <= base <= hi


def account_regions(cx, y, regions: list[Region], found, *, sign, fwhm_coef, threshold, ppm,
                    floor, c13, metals, noise, c13_hint=None, search=True):
    """Check every region against the species found; search and list what is left.

    Regions are taken tallest first.  A region without a species is searched
    from its profile (when ``search``); with fitted 13C fractions, the fractions
    of the empty cages found so far replace ``c13_hint`` (they are fitted to the
    strongest envelopes, so they are the sample's best estimate).  Residual
    signal above the listing level is an :class:`Unexplained` record.  Returns
    (found, unexplained).
    """
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.optimize import nnls

    found = list(found)
    top = max((r.height for r in regions), default=1.0) or 1.0
    out: list[Unexplained] = []
    for reg in sorted(regions, key=lambda r: -r.height):
        xs, ys = cx[reg.lo:reg.hi], y[reg.lo:reg.hi]
        cages = [f["match"].c13 for f in found if f["kind"] == "cage"]
        if c13 == "fit" and cages:
            c13_hint = float(np.median(cages))
        members = [f for f in found if _in_region(f["match"], xs[0], xs[-1])]
        if members:
            cols = []
            for f in members:
                m = f["match"]
                mz, ab = _lines(m.formula, m.charge, m.c13)
                cols.append(draw(xs, mz * (1 + m.error_ppm * 1e-6), ab, fwhm_coef))
            a = np.column_stack(cols)
            amounts, _ = nnls(a, ys)
            model = a @ amounts
        elif search:
            matches, joint = identify_region(cx, y, reg, sign, fwhm_coef, threshold, ppm=ppm,
                                             floor=floor, c13=c13, metals=metals, noise=noise,
                                             c13_hint=c13_hint)
            found.extend(_as_found(m) for m in matches)
            model = joint
            if not matches:
                out.append(_region_record(cx, reg, top, "no formula's envelope fits this "
                                          "region's profile"))
                continue
        else:
            out.append(_region_record(cx, reg, top, "no species explains this region"))
            continue
        runs = residual_runs(xs, ys - model, model, threshold, fwhm_coef)
        for i, h in _merge_runs(xs, runs):
            out.append(Unexplained(
                mz=round(float(xs[i]), 5), relative_height=h / top, height=h,
                mz_lo=float(xs[0]), mz_hi=float(xs[-1]),
                reason="signal left over after the species of this region are subtracted"))
    return found, out


def _region_record(cx, reg: Region, top: float, reason: str) -> Unexplained:
    return Unexplained(mz=round(float(cx[reg.apex]), 5), relative_height=reg.height / top,
                       height=reg.height, mz_lo=float(cx[reg.lo]),
                       mz_hi=float(cx[reg.hi - 1]), reason=reason)


def _merge_runs(cx, runs):
    """Residual runs closer than REGION_GAP m/z are one envelope (its tallest run)."""
    merged: list[tuple[int, float]] = []
    for i, h in runs:
        if merged and cx[i] - cx[merged[-1][0]] <= REGION_GAP:
            if h > merged[-1][1]:
                merged[-1] = (i, h)
        else:
            merged.append((i, h))
    return merged
