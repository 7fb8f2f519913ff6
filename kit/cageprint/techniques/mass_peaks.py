"""Peaks and isotope envelopes of a mass spectrum: centroids, noise, 1/z chains.

Helpers of :mod:`cageprint.techniques.mass`; plain functions over numpy arrays.
"""

from __future__ import annotations

import numpy as np

#: a peak must rise this many noise standard deviations above the local baseline
PEAK_SNR = 5.0
#: peaks smaller than this fraction of the tallest are ignored (dynamic-range floor)
MIN_RELATIVE_INTENSITY = 1e-4
#: isotope step (u, neutral mass) used to walk an envelope, and its tolerance
ISOTOPE_STEP = 1.0017
ISOTOPE_STEP_TOL = 0.006
#: width of the smoothing Gaussian (FWHM) as a fraction of the typical peak FWHM
SMOOTH_FRACTION = 0.5
#: an envelope needs at least this many isotope peaks
MIN_ISOTOPE_PEAKS = 2


# ------------------------------------------------------------------ peaks


def _noise_and_baseline(y: np.ndarray, block: int = 512) -> tuple[float, np.ndarray]:
    n = y.size
    nb = max(1, n // block)
    edges = np.linspace(0, n, nb + 1).astype(int)
    med = np.empty(nb)
    mad = np.empty(nb)
    centres = np.empty(nb)
    for i in range(nb):
        seg = y[edges[i] : edges[i + 1]]
        med[i] = np.median(seg)
        mad[i] = np.median(np.abs(seg - med[i]))
        centres[i] = 0.5 * (edges[i] + edges[i + 1] - 1)
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
    smoothed = gaussian_filter1d(y, SMOOTH_FRACTION * fwhm_points / 2.3548200450309493,
                                 mode="nearest")
    # a Gaussian peak convolved with a Gaussian keeps its area; its apex drops by this factor
    return smoothed, 1.0 / np.sqrt(1.0 + SMOOTH_FRACTION**2)


def _centroid_profile(x, y, snr):
    """Centroids, areas and apex heights (with baseline) of the peaks of a profile spectrum.

    Centroid: intensity-weighted mean of the points above half height (weights
    y - half, so the window edges carry no weight); with fewer than 5 such
    points, the vertex of a parabola through ln y of the top 3 points (exact
    for a Gaussian).  Area: height x FWHM x 1.0645 (Gaussian).  Uncertainty:
    FWHM / (S/N), used to widen the mass tolerance of weak peaks.  Peaks are
    found after a light matched smoothing (:func:`_smooth`), so S/N refers to
    the smoothed data.
    """
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.ndimage import gaussian_filter1d
    from scipy.signal import find_peaks, peak_widths

    y, apex_factor = _smooth(y, find_peaks, peak_widths, gaussian_filter1d)
    noise, baseline = _noise_and_baseline(y)
    yc = y - baseline
    floor = MIN_RELATIVE_INTENSITY * float(yc.max())
    thr = max(snr * noise, floor)
    idx, _ = find_peaks(yc, height=thr, prominence=thr)
    idx = idx[(idx > 0) & (idx < y.size - 1)]
    if idx.size == 0:
        return np.empty(0), np.empty(0), np.empty(0), noise, thr, np.empty(0)
    widths, half, left, right = peak_widths(yc, idx, rel_height=0.5)
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
    # weighted centroid over the points above half height
    lo = np.ceil(left).astype(int)
    hi = np.floor(right).astype(int)
    many = (hi - lo + 1) >= 5
    if np.any(many):
        cw = np.concatenate(([0.0], np.cumsum(np.maximum(yc, 0.0))))
        cwx = np.concatenate(([0.0], np.cumsum(np.maximum(yc, 0.0) * x)))
        lo_m, hi_m, half_m = lo[many], hi[many] + 1, half[many]
        cnt = hi_m - lo_m
        # sum of (y - half) * x and of (y - half) over the window (all points there are >= half)
        sw = cw[hi_m] - cw[lo_m] - half_m * cnt
        cx_ = np.concatenate(([0.0], np.cumsum(x)))
        swx = cwx[hi_m] - cwx[lo_m] - half_m * (cx_[hi_m] - cx_[lo_m])
        good = sw > 0
        cm = centre[many]
        cm[good] = swx[good] / sw[good]
        centre[many] = cm
    step = np.interp(idx, np.arange(x.size - 1) + 0.5, np.diff(x))
    fwhm = widths * step
    area = height * fwhm * 1.0644670194312262
    # centroid uncertainty of a noisy Gaussian peak, of order FWHM / (S/N)
    uncertainty = fwhm * noise / np.maximum(height, 1e-300)
    apex = height / apex_factor + baseline[idx]
    return centre, area, apex, noise, thr, uncertainty


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
