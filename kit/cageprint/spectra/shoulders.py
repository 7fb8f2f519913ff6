"""Lines hidden in the flank of a stronger neighbour: found in the residual, kept by a fit.

A line closer to a stronger one than about two line widths often makes no maximum of its
own, only a shoulder, and a picker of local maxima misses it.  :func:`find_shoulders` models
the picked lines, looks for what the model leaves (the residual, lightly smoothed) near a
picked line, and keeps a shoulder only where a joint fit of the two lines beats the single
line by the S/N threshold squared (a likelihood-ratio test in units of the noise; common
practice, no source).  Both hypotheses use the same pseudo-Voigt shape with a free mixing
parameter, so a Gaussian or Voigt line is not taken for a Lorentzian plus a shoulder.

Lines that stand close together (with or without maxima of their own) are then fitted
jointly (:func:`fit_clusters`): their centres come from the fit, and their integrals from
the cluster's summed integral shared out in the ratio of the fitted areas
(:func:`split_areas`), since regions cut at the midpoint give the weaker line part of the
stronger one's flank (a 2:1 pair one line width apart integrates as about 1.4:1).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "SHOULDER_REACH",
    "SHOULDER_MIN_SEPARATION",
    "SHOULDER_WINDOW",
    "CLUSTER_GAP",
    "find_shoulders",
    "fit_clusters",
    "split_areas",
]

#: a shoulder is looked for within this many line widths (FWHM) of a picked line
SHOULDER_REACH = 4.0
#: and at least this many line widths from every picked line (closer: one line)
SHOULDER_MIN_SEPARATION = 0.5
#: the joint fit uses the points within this many line widths of either line
SHOULDER_WINDOW = 3.0
#: at most this many shoulders are fitted per spectrum (the strongest residuals first)
SHOULDER_MAX = 200


def _lorentzians(x, pos, hts, wds, w0, skip=()):
    """Sum of the picked lines at ``x`` as Lorentzians, except those indexed in ``skip``;
    each width capped at 1.5 ``w0`` (a blend measures wide) or ``w0`` where unknown, each
    line drawn out to 30 widths."""
    out = np.zeros(len(x))
    for k, (c, h, w) in enumerate(zip(pos, hts, wds, strict=True)):
        if k in skip:
            continue
        w = min(w, 1.5 * w0) if np.isfinite(w) and w > 0 else w0
        lo, hi = np.searchsorted(x, [c - 30 * w, c + 30 * w])
        out[lo:hi] += h / (1.0 + ((x[lo:hi] - c) / (w / 2.0)) ** 2)
    return out


def _fit(xw, yw, lines, w0):
    """Least-squares pseudo-Voigt lines (shared ``eta``) from starts ``lines`` = [(c, h)];
    returns (residual sum of squares, [(c, h, w)]) or None when the fit fails or leaves the
    window, a height below zero or a width outside 0.3-3 ``w0``.  Fitted in units of ``w0``
    and of the largest start height (Levenberg-Marquardt, analytic Jacobian; widths as
    logarithms and ``eta`` as a logit, so no bounds are needed)."""
    from scipy.optimize import least_squares  # slow to import: only when a shoulder is tried

    x0, hs = float(xw[0]), max(max(h for _c, h in lines), 1e-300)
    u, v = (np.asarray(xw) - x0) / w0, np.asarray(yw) / hs
    k, ln2 = len(lines), math.log(2.0)
    if u.size <= 3 * k + 1:
        return None
    p0 = []
    for c, h in lines:
        p0 += [(c - x0) / w0, max(h / hs, 1e-6), 0.0]
    p0 = np.array(p0 + [0.0])

    def parts(p):
        c, h = p[0:3 * k:3, None], p[1:3 * k:3, None]
        w = np.exp(np.clip(p[2:3 * k:3, None], -5.0, 5.0))
        t = (u[None, :] - c) / (w / 2.0)
        lor, gau = 1.0 / (1.0 + t * t), np.exp(-ln2 * t * t)
        return h, w, t, lor, gau, 1.0 / (1.0 + math.exp(-min(max(p[-1], -50.0), 50.0)))

    def resid(p):
        h, _w, _t, lor, gau, eta = parts(p)
        return (h * (eta * lor + (1.0 - eta) * gau)).sum(axis=0) - v

    def jac(p):
        h, w, t, lor, gau, eta = parts(p)
        slope = h * (eta * (-2.0 * t * lor * lor) + (1.0 - eta) * (-2.0 * ln2 * t * gau))
        out = np.empty((u.size, 3 * k + 1))
        out[:, 0:3 * k:3] = (slope * (-2.0 / w)).T
        out[:, 1:3 * k:3] = (eta * lor + (1.0 - eta) * gau).T
        out[:, 2:3 * k:3] = (-slope * t).T  # d/d ln w = w d/dw
        out[:, -1] = (h * (lor - gau)).sum(axis=0) * eta * (1.0 - eta)
        return out

    try:
        res = least_squares(resid, p0, jac=jac, method="lm", max_nfev=100 * len(p0))
    except (ValueError, np.linalg.LinAlgError):
        return None
    p = res.x
    out = [(x0 + float(p[3 * i]) * w0, float(p[3 * i + 1]) * hs,
            float(math.exp(min(max(p[3 * i + 2], -5.0), 5.0))) * w0) for i in range(k)]
    if not all(xw[0] <= c <= xw[-1] and h > 0 and 0.3 * w0 <= w <= 3.0 * w0
               for c, h, w in out):
        return None
    return float(np.sum(res.fun ** 2)) * hs * hs, out


def find_shoulders(x, y, sigma: float, positions, heights, widths, *,
                   snr: float) -> list[dict]:
    """Lines standing as shoulders beside the picked ones.

    Parameters
    ----------
    x, y : ndarray
        The baseline-corrected trace, ``x`` increasing.
    sigma : float
        Noise sigma of ``y``.
    positions, heights, widths : sequence of float
        The picked lines (widths: FWHM, ``x`` units).
    snr : float
        The picking threshold: a shoulder's fitted height must reach ``snr * sigma`` and the
        joint fit must lower the residual sum of squares by ``snr**2 * sigma**2``.

    Returns
    -------
    list of dict
        ``position``, ``height``, ``width`` of each shoulder, ``beside`` the picked line it
        leans on and ``gain`` (the drop of the residual sum of squares in noise units).

    Examples
    --------
    >>> x = np.linspace(0.0, 10.0, 4001)
    >>> line = lambda c, h: h / (1 + ((x - c) / 0.05) ** 2)
    >>> y = line(5.0, 100.0) + line(5.13, 40.0)
    >>> y = y + np.random.default_rng(1).normal(0, 1.0, x.size)
    >>> found = find_shoulders(x, y, 1.0, [5.0], [100.0], [0.14], snr=5.0)
    >>> [round(f["position"], 2) for f in found]
    [5.13]
    >>> find_shoulders(x, line(5.0, 100.0), 1.0, [5.0], [100.0], [0.1], snr=5.0)
    []
    """
    # scipy submodules take 0.1-0.3 s each to import: only when shoulders are looked for
    from scipy.ndimage import uniform_filter1d
    from scipy.signal import find_peaks

    pos = np.asarray(positions, float)
    hts = np.asarray(heights, float)
    wds = np.asarray(widths, float)
    good = np.isfinite(wds) & (wds > 0)
    if not (sigma > 0 and np.isfinite(sigma)) or pos.size == 0 or not good.any() or x.size < 8:
        return []
    w0 = float(np.median(wds[good]))
    dx = float(np.median(np.diff(x)))
    if not dx > 0 or w0 < 4 * dx:
        return []  # lines a few points wide: no shape to fit
    model = _lorentzians(x, pos, hts, wds, w0)
    half = max(1, int(round(w0 / 3.0 / dx)))
    smooth = uniform_filter1d(y - model, 2 * half + 1)
    idx, _ = find_peaks(smooth, height=snr * sigma, distance=max(1, int(w0 / dx / 2)))
    if idx.size == 0:
        return []
    near = np.abs(x[idx][:, None] - pos[None, :])
    nearest = np.argmin(near, axis=1)
    gap = near[np.arange(idx.size), nearest]
    keep = (gap >= SHOULDER_MIN_SEPARATION * w0) & (gap <= SHOULDER_REACH * w0)
    order = np.argsort(-smooth[idx[keep]])[:SHOULDER_MAX]
    found: list[dict] = []
    for i, j in zip(idx[keep][order], nearest[keep][order], strict=True):
        c1, c2 = float(pos[j]), float(x[i])
        if any(abs(f["position"] - c2) < SHOULDER_MIN_SEPARATION * w0 for f in found):
            continue
        lo, hi = np.searchsorted(x, [min(c1, c2) - SHOULDER_WINDOW * w0,
                                     max(c1, c2) + SHOULDER_WINDOW * w0])
        xw = x[lo:hi]
        yw = y[lo:hi] - _lorentzians(xw, pos, hts, wds, w0, skip=(j,))
        one = _fit(xw, yw, [(c1, float(hts[j]))], w0)
        two = _fit(xw, yw, [(c1, float(hts[j])), (c2, float(smooth[i]))], w0)
        if one is None or two is None:
            continue
        gain = (one[0] - two[0]) / sigma ** 2
        (p1, _h1, _w1), (p2, h2, w2) = two[1]
        if gain < snr ** 2 or h2 < snr * sigma or abs(p2 - p1) < SHOULDER_MIN_SEPARATION * w0:
            continue
        if np.min(np.abs(pos - p2)) < SHOULDER_MIN_SEPARATION * w0:
            continue
        found.append({"position": p2, "height": h2, "width": w2, "beside": c1,
                      "gain": float(gain)})
    return sorted(found, key=lambda f: f["position"])


#: lines closer than this many line widths are fitted together for their areas
CLUSTER_GAP = 3.0


def fit_clusters(x, y, positions, heights, widths) -> list[tuple[list[int], list, list]]:
    """Fitted areas of the lines that stand close together.

    Lines whose neighbours are closer than :data:`CLUSTER_GAP` line widths form a cluster;
    each cluster is fitted as pseudo-Voigt lines of one shape over the points within
    :data:`SHOULDER_WINDOW` widths of its ends (the lines outside it subtracted as
    Lorentzians).  Returns ``(indices, areas, centres)`` per cluster, ``areas`` as height x
    width, ``centres`` the fitted ones (the picked one where the fit moved it by half a line
    width or more).

    Examples
    --------
    >>> x = np.linspace(0.0, 10.0, 4001)
    >>> line = lambda c, h: h / (1 + ((x - c) / 0.05) ** 2)
    >>> y = line(5.0, 100.0) + line(5.12, 50.0) + line(8.0, 70.0)
    >>> [(i, round(float(a[0] / a[1]), 2), np.round(c, 3).tolist()) for i, a, c in fit_clusters(
    ...     x, y, [5.0, 5.11, 8.0], [100.0, 50.0, 70.0], [0.1] * 3)]
    [([0, 1], 2.0, [5.0, 5.12])]
    """
    pos = np.asarray(positions, float)
    hts = np.asarray(heights, float)
    wds = np.asarray(widths, float)
    good = np.isfinite(wds) & (wds > 0)
    if pos.size < 2 or not good.any():
        return []
    w0 = float(np.median(wds[good]))
    out = []
    start = 0
    for end in range(1, pos.size + 1):
        if end < pos.size and pos[end] - pos[end - 1] < CLUSTER_GAP * w0:
            continue
        members = list(range(start, end))
        start = end
        if len(members) < 2:
            continue
        lo, hi = np.searchsorted(x, [pos[members[0]] - SHOULDER_WINDOW * w0,
                                     pos[members[-1]] + SHOULDER_WINDOW * w0])
        xw = x[lo:hi]
        fit = _fit(xw, y[lo:hi] - _lorentzians(xw, pos, hts, wds, w0, skip=members),
                   [(pos[k], hts[k]) for k in members], w0)
        if fit is None:
            continue
        areas = [h * w for _c, h, w in fit[1]]
        # a fitted centre more than half a line width from the picked one is not taken
        centres = [c if abs(c - pos[k]) < 0.5 * w0 else float(pos[k])
                   for k, (c, _h, _w) in zip(members, fit[1], strict=True)]
        if all(a > 0 for a in areas):
            out.append((members, areas, centres))
    return out


def split_areas(areas, clusters) -> np.ndarray:
    """Integrals of lines that stand close together, shared out by their joint fit.

    Integration regions split at the midpoint between close lines give the weaker one part
    of the stronger one's flank; here the cluster's summed integral is kept and divided in
    the ratio of the fitted areas (:func:`fit_clusters`).

    Examples
    --------
    >>> split_areas([90.0, 60.0, 5.0], [([0, 1], [2.0, 1.0], [1.0, 1.1])]).tolist()
    [100.0, 50.0, 5.0]
    """
    out = np.array(areas, float)
    for members, fitted, *_centres in clusters:
        total = float(out[members].sum())
        out[members] = total * np.asarray(fitted) / float(np.sum(fitted))
    return out
