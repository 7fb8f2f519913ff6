"""Peaks and isotope envelopes of a mass spectrum: centroids, noise, 1/z chains.

Helpers of :mod:`cageprint.techniques.mass`; plain functions over numpy arrays.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: a peak must rise this many noise standard deviations above the local baseline
PEAK_SNR = 5.0
#: peaks smaller than this fraction of the tallest are ignored (dynamic-range floor)
MIN_RELATIVE_INTENSITY = 1e-4
#: isotope step (u, neutral mass) used to walk an envelope, and its tolerance
ISOTOPE_STEP = 1.0017
ISOTOPE_STEP_TOL = 0.006
#: a baseline block spans at least this many m/z units
BASELINE_BLOCK_MZ = 25.0
#: width of the smoothing Gaussian (FWHM) as a fraction of the typical peak FWHM
SMOOTH_FRACTION = 0.5
#: an envelope needs at least this many isotope peaks
MIN_ISOTOPE_PEAKS = 2
#: a peak's top part (centroid, width) starts at most this far up its height
TOP_LEVEL_MAX = 0.8


# ------------------------------------------------------------------ peaks


def _noise_and_baseline(y: np.ndarray, block: int = 512, span: float = np.inf
                        ) -> tuple[float, np.ndarray]:
    """Noise deviation (median of block MADs) and baseline (block medians, interpolated).

    Blocks hold at least ``block`` points and cover at least ``span`` / (number
    of blocks) of the axis, i.e. at least :data:`BASELINE_BLOCK_MZ`: a block
    must be mostly baseline even where a blended envelope at low resolving
    power spans a dozen m/z units.
    """
    n = y.size
    nb = max(1, min(n // block, int(span // BASELINE_BLOCK_MZ)))
    edges = np.linspace(0, n, nb + 1).astype(int)
    med = np.empty(nb)
    mad = np.empty(nb)
    centres = np.empty(nb)
    for i in range(nb):
        seg = y[edges[i] : edges[i + 1]]
        med[i] = np.median(seg)
        mad[i] = np.median(np.abs(seg - med[i]))
        centres[i] = 0.5 * (edges[i] + edges[i + 1] - 1)
    if nb > 2:
        # beyond the outer block centres, continue the slope of the two outer blocks (a
        # baseline that still falls at the spectrum's start); never below the lower of them
        idx = np.arange(n)
        baseline = np.interp(idx, centres, med)
        for a, b, part in ((0, 1, idx < centres[0]), (-1, -2, idx > centres[-1])):
            slope = (med[b] - med[a]) / (centres[b] - centres[a])
            line = med[a] + slope * (idx[part] - centres[a])
            baseline[part] = np.maximum(line, min(med[a], med[b]))
    else:
        baseline = np.interp(np.arange(n), centres, med) if nb > 1 else np.full(n, med[0])
    noise = 1.4826 * float(np.median(mad))
    return noise, baseline


def _smooth(y, find_peaks, peak_widths, gaussian_filter1d):
    """Light matched smoothing: a Gaussian of SMOOTH_FRACTION of the typical peak FWHM.

    The FWHM (in points) is the median over the 20 tallest local maxima; with
    fewer than 4 points per FWHM the data are left as they are.  Returns the
    data and the factor by which a peak apex was lowered.
    """
    idx, props = find_peaks(y, prominence=0.05 * float(y.max() - np.median(y)))
    if idx.size == 0:
        return y, 1.0
    top = idx[np.argsort(-props["prominences"])[:20]]
    fwhm_points = float(np.median(peak_widths(y, top, rel_height=0.5)[0]))
    if fwhm_points < 4:
        return y, 1.0
    # mirrored ends: repeating the last point would carry its noise, undamped, into the
    # smoothed edge and raise a false peak there
    smoothed = gaussian_filter1d(y, SMOOTH_FRACTION * fwhm_points / 2.3548200450309493,
                                 mode="mirror")
    # a Gaussian peak convolved with a Gaussian keeps its area; its apex drops by this factor
    return smoothed, 1.0 / np.sqrt(1.0 + SMOOTH_FRACTION**2)


@dataclass(frozen=True, eq=False)
class ProfilePeaks:
    """Peaks of a profile spectrum and what was used to find them.

    ``mz`` centroids, ``area`` (apex x FWHM x 1.0645), ``apex`` heights on the
    spectrum's own axis (baseline included), ``uncertainty`` the centroid
    uncertainty FWHM / (S/N), ``fwhm`` each peak's width; ``y`` the smoothed,
    baseline-corrected data the peaks were found on; ``smoothing`` the factor by
    which the smoothing widened a peak (1 when the data were left as they are).
    """

    mz: np.ndarray
    area: np.ndarray
    apex: np.ndarray
    noise: float
    threshold: float
    uncertainty: np.ndarray
    fwhm: np.ndarray
    y: np.ndarray
    smoothing: float


def _valleys(yc, idx):
    """Index of the lowest point between each peak and its neighbours (or the data ends)."""
    n = yc.size
    left = np.empty(idx.size, dtype=int)
    right = np.empty(idx.size, dtype=int)
    bounds = np.concatenate(([0], idx, [n - 1]))
    for k in range(idx.size):
        a, b, c = bounds[k], bounds[k + 1], bounds[k + 2]
        left[k] = a + int(np.argmin(yc[a : b + 1])) if b > a else b
        right[k] = b + int(np.argmin(yc[b : c + 1])) if c > b else b
    return left, right


def _cross(x, y, a, b, level) -> float:
    """x where the straight line between points ``a`` and ``b`` meets ``level``."""
    ya, yb = float(y[a]), float(y[b])
    return float(x[a] + (x[b] - x[a]) * (level - ya) / (yb - ya)) if yb != ya else float(x[a])


def _top_windows(x, yc, idx, height):
    """Centroid and FWHM of each peak from its top part, bounded by the valleys.

    The part of a peak above ``level = max(height / 2, higher valley)`` is used:
    its weighted centroid (weights ``y - level``) and the width at that level,
    scaled to a FWHM as for a Gaussian (``w * sqrt(ln 2 / ln(height / level))``).
    Neighbouring isotope peaks that are only partly resolved (valley above half
    height, as at R ~ 1500 near m/z 1000) thus keep separate centroids and
    widths instead of merging into one window across the valley.
    """
    vl, vr = _valleys(yc, idx)
    centre = np.empty(idx.size)
    fwhm = np.empty(idx.size)
    for k, i in enumerate(idx):
        h = float(height[k])
        level = max(0.5 * h, float(yc[vl[k]]), float(yc[vr[k]]))
        if level >= TOP_LEVEL_MAX * h:  # a shoulder: no top part to speak of
            level = TOP_LEVEL_MAX * h
        lo, hi = int(i), int(i)
        while lo > vl[k] and yc[lo - 1] > level:
            lo -= 1
        while hi < vr[k] and yc[hi + 1] > level:
            hi += 1
        xl = _cross(x, yc, lo - 1, lo, level) if lo > 0 and yc[lo - 1] <= level else float(x[lo])
        xr = (_cross(x, yc, hi + 1, hi, level) if hi < x.size - 1 and yc[hi + 1] <= level
              else float(x[hi]))
        ratio = np.log(h / level) if h > level > 0 else np.log(2.0)
        fwhm[k] = (xr - xl) * np.sqrt(np.log(2.0) / ratio)
        w = yc[lo : hi + 1] - level
        centre[k] = float(w @ x[lo : hi + 1] / w.sum()) if hi - lo + 1 >= 5 and w.sum() > 0 \
            else np.nan
    return centre, fwhm


def _centroid_profile(x, y, snr) -> ProfilePeaks:
    """Centroids, areas and apex heights (with baseline) of the peaks of a profile spectrum.

    Centroid: intensity-weighted mean of the top part of the peak (see
    :func:`_top_windows`); with fewer than 5 points there, the vertex of a
    parabola through ln y of the top 3 points (exact for a Gaussian).  Area:
    height x FWHM x 1.0645 (Gaussian).  Uncertainty: FWHM / (S/N), used to
    widen the mass tolerance of weak peaks.  Peaks are found after a light
    matched smoothing (:func:`_smooth`), so S/N refers to the smoothed data.
    """
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.ndimage import gaussian_filter1d
    from scipy.signal import find_peaks, peak_widths

    y, apex_factor = _smooth(y, find_peaks, peak_widths, gaussian_filter1d)
    noise, baseline = _noise_and_baseline(y, span=float(x[-1] - x[0]))
    yc = y - baseline
    floor = MIN_RELATIVE_INTENSITY * float(yc.max())
    thr = max(snr * noise, floor)
    smoothing = 1.0 / apex_factor
    idx, _ = find_peaks(yc, height=thr, prominence=thr)
    idx = idx[(idx > 0) & (idx < y.size - 1)]
    if idx.size == 0:
        e = np.empty(0)
        return ProfilePeaks(e, e, e, noise, thr, e, e, yc, smoothing)
    # three-point Gaussian vertex
    xl, x0, xr = x[idx - 1], x[idx], x[idx + 1]
    tiny = 1e-12 * float(yc.max())
    yl, y0, yr = (np.maximum(yc[idx + d], tiny) for d in (-1, 0, 1))
    ll, l0, lr = np.log(yl), np.log(y0), np.log(yr)
    dl, dr = xl - x0, xr - x0
    c = ((ll - l0) / dl - (lr - l0) / dr) / (dl - dr)
    b = (ll - l0) / dl - c * dl
    ok = c < 0
    shift = np.clip(np.where(ok, -b / (2 * np.where(ok, c, -1.0)), 0.0), dl, dr)
    centre = x0 + shift
    height = np.where(ok, np.exp(l0 + b * shift + c * shift**2), y0)
    top, fwhm = _top_windows(x, yc, idx, height)
    centre = np.where(np.isfinite(top), top, centre)
    area = height * fwhm * 1.0644670194312262
    # centroid uncertainty of a noisy Gaussian peak, of order FWHM / (S/N)
    uncertainty = fwhm * noise / np.maximum(height, 1e-300)
    apex = height / apex_factor + baseline[idx]
    return ProfilePeaks(centre, area, apex, noise, thr, uncertainty, fwhm, yc, smoothing)


# ------------------------------------------------------------------ envelopes (chains)


def _tol(mz, ppm: float, floor: float):
    return np.maximum(np.abs(mz) * ppm * 1e-6, floor)


def _chains(mz, inten, ppm, floor):
    n = mz.size
    free = np.ones(n, dtype=bool)
    chains: list[tuple[int, list[int]]] = []
    order = np.argsort(-inten, kind="stable")

    def nearest_free(target, tol):
        j = int(np.searchsorted(mz, target))
        best, bd = -1, tol
        for k in (j - 1, j, j + 1):
            if 0 <= k < n and free[k]:
                d = abs(mz[k] - target)
                if d <= bd:
                    best, bd = k, d
        return best

    for seed in order:
        if not free[seed]:
            continue
        best_z, best_members = 0, [int(seed)]
        for z in (1, 2, 3, 4):
            step = ISOTOPE_STEP / z
            members = [int(seed)]
            for direction in (1, -1):
                cur = int(seed)
                gaps = 0
                while True:
                    fl = floor[cur] if np.ndim(floor) else floor
                    tol = ISOTOPE_STEP_TOL / z + 2 * float(_tol(mz[cur], ppm, fl))
                    j = nearest_free(mz[cur] + direction * step, tol)
                    if j < 0 and len(members) >= 3 and gaps == 0:
                        j = nearest_free(mz[cur] + direction * 2 * step, tol * 1.5)
                        gaps = 1 if j >= 0 else 0
                    if j < 0 or j in members:
                        break
                    members.append(j)
                    cur = j
            if len(members) > len(best_members):
                best_z, best_members = z, members
        if best_z and len(best_members) >= MIN_ISOTOPE_PEAKS:
            best_members.sort()
            free[best_members] = False
            chains.append((best_z, best_members))
    return chains, free
