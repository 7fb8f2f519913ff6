"""Peak picking with fitted centres, and merging of peaks closer than a resolution."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from ..errors import SpectrumError
from .filters import (
    SMOOTH_ORDER,
    SMOOTH_WINDOW,
    _baseline_of,
    _frozen,
    _noise_sigma_correlated,
    _region_integrals,
    crop,
    smooth_array,
)
from .model import Spectrum, _plain
from .shoulders import find_shoulders, fit_clusters

__all__ = [
    "PEAK_SNR",
    "FIT_MAX_HALF_POINTS",
    "HEIGHT_PREFILTER",
    "MAX_CANDIDATES",
    "VALLEY_HALF_POINTS",
    "AREA_FWHM",
    "PeakResult",
    "pick_peaks",
    "merge_peaks",
]

#: default signal-to-noise threshold: peak height above baseline / noise sigma
PEAK_SNR = 5.0
#: at most this many points either side of the apex enter a centre fit
FIT_MAX_HALF_POINTS = 50
#: candidates whose apex is below this fraction of the S/N (or min_height) level are not fitted
HEIGHT_PREFILTER = 0.7
#: pick_peaks refuses to fit more candidate maxima than this (thresholds far too low)
MAX_CANDIDATES = 20_000
#: valley levels for the local-contrast test are averaged over +-this many points
VALLEY_HALF_POINTS = 2
#: a picked peak's area is integrated over +-AREA_FWHM x FWHM (cut at neighbouring peaks)
AREA_FWHM = 3.0
_FITS = ("parabola", "gaussian", "lorentzian", "none")




@dataclass(frozen=True, eq=False)
class PeakResult:
    """Peaks found in a spectrum, with what was used to find them.

    Attributes
    ----------
    positions, heights, widths, areas, snr : ndarray
        One entry per peak, sorted by position.  ``heights`` are above the
        baseline; ``widths`` are FWHM in x units (NaN where unknown);
        ``snr`` is height / noise sigma (NaN where the noise is unknown).
    technique, x_unit : str
    diagnostics : mapping
        noise, thresholds, baseline and smoothing used, fit method, and
        ``rejected``: a list of ``{"position", "reason"}``.
    """

    positions: np.ndarray
    heights: np.ndarray
    widths: np.ndarray
    areas: np.ndarray
    snr: np.ndarray
    technique: str = "ir"
    x_unit: str = ""
    diagnostics: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        pos = _frozen(self.positions)
        n = pos.size
        for name in ("heights", "widths", "areas", "snr"):
            arr = _frozen(getattr(self, name))
            if arr.shape != (n,):
                raise SpectrumError(f"PeakResult.{name} has {arr.size} values for {n} peaks")
            object.__setattr__(self, name, arr)
        object.__setattr__(self, "positions", pos)
        object.__setattr__(self, "diagnostics", MappingProxyType(dict(self.diagnostics)))

    def __len__(self) -> int:
        return int(self.positions.size)

    def to_frame(self):
        """The peaks as a pandas DataFrame (one row per peak)."""
        # lazy: pandas takes ~0.5 s to import; only the table output needs it
        import pandas as pd

        return pd.DataFrame(
            {"position": self.positions, "height": self.heights, "fwhm": self.widths,
             "area": self.areas, "snr": self.snr}
        )

    def to_dict(self) -> dict:
        """Plain, JSON-ready dict (NaN kept as float NaN)."""
        return {
            "positions": self.positions.tolist(), "heights": self.heights.tolist(),
            "widths": self.widths.tolist(), "areas": self.areas.tolist(),
            "snr": self.snr.tolist(), "technique": self.technique, "x_unit": self.x_unit,
            "diagnostics": _plain(self.diagnostics),
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> PeakResult:
        """Inverse of :meth:`to_dict`."""
        return cls(
            positions=d["positions"], heights=d["heights"], widths=d["widths"],
            areas=d["areas"], snr=d["snr"], technique=d.get("technique", "ir"),
            x_unit=d.get("x_unit", ""), diagnostics=d.get("diagnostics", {}),
        )

    def select(self, mask) -> PeakResult:
        """A PeakResult with only the peaks where ``mask`` is true (diagnostics kept)."""
        m = np.asarray(mask, dtype=bool)
        return PeakResult(self.positions[m], self.heights[m], self.widths[m], self.areas[m],
                          self.snr[m], self.technique, self.x_unit, self.diagnostics)


def _quadratic(t, y) -> tuple[float, float, float]:
    """Least-squares ``a t^2 + b t + c`` through a few points with ``t`` in about [-1, 1]
    (the normal equations in plain floats: a fraction of :func:`numpy.polyfit`'s time,
    which the picking of a 100-line spectrum would call hundreds of times).

    Examples
    --------
    >>> t = np.linspace(-1, 1, 7)
    >>> [round(v, 9) for v in _quadratic(t, -2 * t ** 2 + 0.5 * t + 3)]
    [-2.0, 0.5, 3.0]
    """
    s0 = s1 = s2 = s3 = s4 = r0 = r1 = r2 = 0.0
    for tv, yv in zip(t.tolist(), y.tolist(), strict=True):  # plain floats: few points
        tt = tv * tv
        s0 += 1.0
        s1 += tv
        s2 += tt
        s3 += tt * tv
        s4 += tt * tt
        r0 += yv
        r1 += tv * yv
        r2 += tt * yv
    # Cramer's rule on [[s4, s3, s2], [s3, s2, s1], [s2, s1, s0]] (a, b, c) = (r2, r1, r0)
    det = s4 * (s2 * s0 - s1 * s1) - s3 * (s3 * s0 - s1 * s2) + s2 * (s3 * s1 - s2 * s2)
    if det == 0.0:
        return 0.0, 0.0, r0 / s0 if s0 else 0.0
    a = (r2 * (s2 * s0 - s1 * s1) - s3 * (r1 * s0 - s1 * r0) + s2 * (r1 * s1 - s2 * r0)) / det
    b = (s4 * (r1 * s0 - s1 * r0) - r2 * (s3 * s0 - s1 * s2) + s2 * (s3 * r0 - r1 * s2)) / det
    c = (s4 * (s2 * r0 - r1 * s1) - s3 * (s3 * r0 - r1 * s2) + r2 * (s3 * s1 - s2 * s2)) / det
    return a, b, c


def _fit_centre(x, y, i, k, how):
    """Refine one apex at index i using +-k points; returns (centre, height, ok)."""
    lo, hi = max(0, i - k), min(x.size, i + k + 1)
    xs, ys = x[lo:hi], y[lo:hi]
    if how == "none" or xs.size < 3:
        return x[i], y[i], how == "none"
    x0, scale = x[i], (xs[-1] - xs[0]) / 2 or 1.0
    t = (xs - x0) / scale
    if how == "gaussian":
        pos = ys > 0
        if pos.sum() < 3:
            return x[i], y[i], False
        a, b, c = _quadratic(t[pos], np.log(ys[pos]))
    else:
        a, b, c = _quadratic(t, ys)
    if not a < 0:
        return x[i], y[i], False
    tv = -b / (2 * a)
    if abs(tv) > 1.0:
        return x[i], y[i], False
    h = c - b * b / (4 * a)
    if how == "gaussian":
        h = np.exp(h)
    centre = x0 + tv * scale
    kh = max(1, k // 2)
    if how == "parabola":
        # the height from a parabola over half the window (a wide parabola sits below a
        # Lorentzian apex), around the sample nearest the centre and evaluated at the centre
        i2 = min(max(int(np.searchsorted(x, centre)), 1), x.size - 1)
        i2 = i2 - 1 if abs(x[i2 - 1] - centre) < abs(x[i2] - centre) else i2
        lo2, hi2 = max(0, i2 - kh), min(x.size, i2 + kh + 1)
        if hi2 - lo2 >= 3:
            t2 = (x[lo2:hi2] - centre) / scale
            a2, b2, c2 = _quadratic(t2, y[lo2:hi2])
            if a2 < 0:
                h = c2
    return centre, h, True


def _lorentz(x, x0, h, w):
    return h / (1.0 + ((x - x0) / (w / 2.0)) ** 2)


def _fit_lorentzian(x, y, i, centre, height, fwhm):
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.optimize import curve_fit

    half = 1.5 * fwhm
    sel = (x >= centre - half) & (x <= centre + half)
    if sel.sum() < 4 or not np.isfinite(fwhm) or fwhm <= 0:
        return centre, height, fwhm, False
    try:
        p, _ = curve_fit(_lorentz, x[sel], y[sel], p0=(centre, height, fwhm), maxfev=400)
    except (RuntimeError, ValueError):
        return centre, height, fwhm, False
    x0, h, w = p
    if not (x[sel][0] <= x0 <= x[sel][-1]) or h <= 0 or w <= 0:
        return centre, height, fwhm, False
    return float(x0), float(h), float(abs(w)), True


def pick_peaks(
    spectrum: Spectrum,
    *,
    prominence: float | None = None,
    snr: float | None = PEAK_SNR,
    min_separation: float | None = None,
    region: tuple[float, float] | None = None,
    baseline: Any = "arpls",
    smooth: int | bool | None = None,
    fit: str = "parabola",
    noise: float | None = None,
    min_height: float | None = None,
    shoulders: bool = False,
) -> PeakResult:
    """Find peaks, refine their centres by a local fit, and measure them.

    Parameters
    ----------
    spectrum : Spectrum
        A profile spectrum, or a peak list (``kind="peaks"``), whose peaks
        are then only filtered by the thresholds (no fitting, no baseline).
    prominence : float, optional
        Least prominence (y units) a candidate needs; default ``snr x noise``.
    snr : float or None
        Least height above baseline / noise sigma (default ``PEAK_SNR``); a
        peak must also stand this many sigma above the higher of its two
        neighbouring valleys (averaged over +-``VALLEY_HALF_POINTS``), so
        noise on the flank of a strong line is not taken for a line.  None
        switches both tests off.
    min_separation : float, optional
        Peaks closer than this (x units) are merged (see :func:`merge_peaks`).
    region : (lo, hi), optional
        Only look in this x range.
    baseline : str, float, array or None
        A pybaselines method name (default ``"arpls"``), a constant, an
        array on the (region's) x, or None for none.
    smooth : int, bool or None
        Savitzky-Golay window used for *finding* candidates (True:
        ``SMOOTH_WINDOW``); centres and heights are fitted on unsmoothed data.
    fit : {"parabola", "gaussian", "lorentzian", "none"}
        How centres (and heights) are refined: least-squares parabola (or
        parabola of log y for "gaussian") over the points within half a FWHM
        of the apex (at least one either side), the parabola's height taken
        from half that window around the centre; "lorentzian" adds a
        non-linear fit that also gives the width; "none" keeps the apex
        sample.
    noise : float, optional
        Noise sigma, if known; else :func:`estimate_noise` of the
        baseline-corrected data.
    min_height : float, optional
        Least height above baseline (y units).
    shoulders : bool
        Also look for lines that stand only as shoulders of a picked one
        (:func:`cageprint.spectra.shoulders.find_shoulders`; needs ``snr``); they are
        listed in ``diagnostics["shoulders"]``, and lines standing close together are
        fitted jointly for their areas (``diagnostics["clusters"]``, see
        :func:`~cageprint.spectra.shoulders.split_areas`).

    Returns
    -------
    PeakResult

    Examples
    --------
    >>> x = np.linspace(0, 100, 2001)
    >>> y = 10 / (1 + ((x - 40.02) / 0.5) ** 2) + 5 / (1 + ((x - 70) / 0.5) ** 2)
    >>> y = y + np.random.default_rng(0).normal(0, 0.05, x.size)
    >>> p = pick_peaks(Spectrum(x, y, technique="nmr"), baseline=None)
    >>> np.round(p.positions, 1).tolist(), np.round(p.widths, 1).tolist()
    ([40.0, 70.0], [1.0, 1.0])
    """
    if fit not in _FITS:
        raise SpectrumError(f"fit={fit!r} is not one of {', '.join(_FITS)}")
    from scipy.signal import find_peaks, peak_widths  # slow to import: only when used

    s = spectrum
    diag: dict[str, Any] = {"region": tuple(region) if region is not None else None}
    if region is not None:
        s, _ = crop(s, *region)
    if s.kind == "peaks":
        return _filter_peak_list(s, prominence, snr, min_separation, noise, min_height=min_height,
                                 diag=diag)

    x = s.x
    base, bdiag = _baseline_of(s, baseline)
    yc = s.y - base
    diag["baseline"] = bdiag
    lag = 0
    if noise is not None:
        sigma = float(noise)
    else:
        sigma, lag = _noise_sigma_correlated(yc)
    diag["noise"] = sigma
    diag["noise_method"] = ("given" if noise is not None else "mad-second-difference"
                            if lag <= 1 else f"mad-lag-{lag}-difference (correlated noise)")
    if smooth:
        window = SMOOTH_WINDOW if smooth is True else int(smooth)
        ys = smooth_array(yc, window, SMOOTH_ORDER)
        diag["smooth"] = {"method": "savitzky-golay", "window": window, "order": SMOOTH_ORDER}
    else:
        ys = yc
        diag["smooth"] = None
    prom = prominence
    if prom is None:
        prom = (snr or 0.0) * sigma if np.isfinite(sigma) and sigma > 0 else 0.0
    diag.update({"prominence": float(prom), "snr": snr, "fit": fit,
                 "min_separation": min_separation, "min_height": min_height})

    # cheap pre-filter on the apex sample before any fitting (fits rarely exceed the apex
    # by much): candidates below HEIGHT_PREFILTER x the S/N (or min_height) level are counted
    floor = [v for v in ((snr or 0.0) * sigma * HEIGHT_PREFILTER if np.isfinite(sigma) else 0.0,
                         (min_height or 0.0) * HEIGHT_PREFILTER) if v > 0]
    idx, _ = find_peaks(ys, prominence=prom if prom > 0 else None)
    if floor:
        n_all = idx.size
        idx = idx[ys[idx] >= max(floor)]
        diag["below_height_prefilter"] = int(n_all - idx.size)
    else:
        diag["below_height_prefilter"] = 0
    if idx.size > MAX_CANDIDATES:
        raise SpectrumError(
            f"{idx.size} candidate maxima pass prominence={prom:.4g} and the height pre-filter "
            f"(more than MAX_CANDIDATES={MAX_CANDIDATES}); raise snr=, prominence= or "
            "min_height=, or subtract the baseline"
        )
    rejected: list[dict] = []
    low_contrast = 0
    n = x.size
    if idx.size == 0:
        diag["candidates"] = 0
        diag["rejected"] = rejected
        return _result([], [], [], [], [], s=s, diag=diag)

    # valleys between neighbouring candidates bound each width measurement
    valleys = [int(a + np.argmin(ys[a:b + 1])) for a, b in zip(idx[:-1], idx[1:], strict=True)]
    lb = np.array([0] + valleys)
    rb = np.array(valleys + [n - 1])
    # outer valleys: the lowest point between the spectrum's ends and the first/last candidate
    outer = np.array([int(np.argmin(ys[: idx[0] + 1]))] + valleys
                     + [int(idx[-1] + np.argmin(ys[idx[-1]:]))])
    # local background of each candidate: the higher of its two neighbouring valleys, each
    # averaged over +-VALLEY_HALF_POINTS (vectorised through a cumulative sum)
    cs = np.concatenate([[0.0], np.cumsum(yc)])
    v_lo = np.maximum(outer - VALLEY_HALF_POINTS, 0)
    v_hi = np.minimum(outer + VALLEY_HALF_POINTS + 1, n)
    levels = (cs[v_hi] - cs[v_lo]) / (v_hi - v_lo)
    background = np.maximum(np.maximum(levels[:-1], levels[1:]), 0.0)
    apex = ys[idx]
    good = apex > 0
    wid = np.full(idx.size, np.nan)
    wpts = np.array([])
    if good.any():
        wpts, _, li, ri = peak_widths(
            ys, idx[good], rel_height=0.5, prominence_data=(apex[good], lb[good], rb[good])
        )
        ar = np.arange(n, dtype=float)
        wid[good] = np.interp(ri, ar, x) - np.interp(li, ar, x)
    positions, heights, widths, areas, snrs = [], [], [], [], []
    gi = 0
    for j, i in enumerate(idx):
        if not good[j]:
            rejected.append({"position": float(x[i]), "reason": "apex at or below the baseline"})
            continue
        k = int(np.clip(round(wpts[gi] / 2.0), 1, FIT_MAX_HALF_POINTS))
        gi += 1
        if snr is not None and sigma > 0 and \
                (ys[i] - background[j]) / sigma < HEIGHT_PREFILTER * snr:
            low_contrast += 1  # far below the contrast test: not worth a fit
            continue
        centre, height, ok = _fit_centre(x, yc, int(i), k, "parabola" if fit == "lorentzian"
                                         else fit)
        fwhm = wid[j]
        if fit == "lorentzian":
            centre, height, fwhm, ok = _fit_lorentzian(x, yc, int(i), centre, height, fwhm)
        if not ok and fit != "none":
            centre, height = float(x[i]), float(yc[i])
        ratio = height / sigma if sigma > 0 else np.inf
        if snr is not None and ratio < snr:
            rejected.append({"position": float(centre),
                             "reason": f"S/N {ratio:.2f} below snr={snr}"})
            continue
        if snr is not None and sigma > 0:
            # contrast over the local background: the higher of the two neighbouring valleys,
            # each averaged over +-VALLEY_HALF_POINTS (a noise bump on the flank of a strong
            # line stands high above the baseline but not above that line's tail)
            contrast = (height - background[j]) / sigma
            if contrast < snr:
                rejected.append({"position": float(centre),
                                 "reason": f"local contrast {contrast:.2f} (over the "
                                           f"neighbouring valley) below snr={snr}"})
                continue
        if min_height is not None and height < min_height:
            rejected.append({"position": float(centre),
                             "reason": f"height {height:.4g} below min_height={min_height}"})
            continue
        positions.append(float(centre))
        heights.append(float(height))
        widths.append(float(fwhm))
        snrs.append(float(ratio))
    if shoulders and snr is not None and positions:
        extra = find_shoulders(x, yc, sigma, positions, heights, widths, snr=snr)
        diag["shoulders"] = extra
        for f in extra:
            positions.append(f["position"])
            heights.append(f["height"])
            widths.append(f["width"])
            snrs.append(f["height"] / sigma)
        order = np.argsort(positions, kind="stable")
        positions, heights, widths, snrs = ([v[i] for i in order]
                                            for v in (positions, heights, widths, snrs))
        diag["clusters"] = fit_clusters(x, yc, positions, heights, widths)
        for members, _areas, centres in diag["clusters"]:  # the fitted centres of close lines
            for k, c in zip(members, centres, strict=True):
                positions[k] = c
    positions_a = np.array(positions)
    widths_a = np.array(widths)
    areas = np.array([])
    # areas: +-AREA_FWHM x FWHM, cut at the midpoints to neighbouring kept peaks
    if positions_a.size:
        mids = (positions_a[:-1] + positions_a[1:]) / 2
        lo = np.maximum(positions_a - AREA_FWHM * widths_a, np.r_[-np.inf, mids])
        hi = np.minimum(positions_a + AREA_FWHM * widths_a, np.r_[mids, np.inf])
        areas = _region_integrals(x, yc, lo, hi)
    diag["candidates"] = int(idx.size)
    diag["rejected"] = rejected
    diag["below_contrast_prefilter"] = low_contrast
    diag["area_rule"] = f"integral over +-{AREA_FWHM} FWHM, cut at midpoints to neighbours"
    res = _result(positions, heights, widths, areas, snrs, s=s, diag=diag)
    if min_separation is not None and len(res) > 1:
        res = merge_peaks(res, min_separation)
    return res


def _result(positions, heights, widths, areas, snrs, *, s: Spectrum, diag) -> PeakResult:
    return PeakResult(
        positions=np.asarray(positions, dtype=float), heights=np.asarray(heights, dtype=float),
        widths=np.asarray(widths, dtype=float), areas=np.asarray(areas, dtype=float),
        snr=np.asarray(snrs, dtype=float), technique=s.technique, x_unit=s.x_unit,
        diagnostics=diag,
    )


def _filter_peak_list(s, prominence, snr, min_separation, noise, *, min_height, diag):
    x, y = s.x, s.y
    w = s.widths if s.widths is not None else np.full(x.size, np.nan)
    keep = np.ones(x.size, dtype=bool)
    rejected = []
    floor = max(v for v in (prominence, min_height, -np.inf) if v is not None)
    ratio = y / noise if noise else np.full(x.size, np.nan)
    for i in range(x.size):
        if y[i] < floor:
            keep[i] = False
            rejected.append({"position": float(x[i]),
                             "reason": f"intensity {y[i]:.4g} below {floor:.4g}"})
        elif noise and snr is not None and ratio[i] < snr:
            keep[i] = False
            rejected.append({"position": float(x[i]),
                             "reason": f"S/N {ratio[i]:.2f} below snr={snr}"})
    diag.update({
        "noise": float(noise) if noise else float("nan"),
        "noise_method": "given" if noise else "unknown for a peak list (snr not applied)",
        "prominence": prominence, "min_height": min_height, "snr": snr, "fit": "none",
        "baseline": "none", "smooth": None, "candidates": int(x.size), "rejected": rejected,
        "min_separation": min_separation,
        "area_rule": "the listed intensity (a peak list has no profile to integrate)",
    })
    res = PeakResult(x[keep], y[keep], w[keep], y[keep], ratio[keep], s.technique, s.x_unit, diag)
    if min_separation is not None and len(res) > 1:
        res = merge_peaks(res, min_separation, heights="sum")
    return res


def merge_peaks(peaks: PeakResult, resolution: float, heights: str = "max") -> PeakResult:
    """Merge runs of peaks whose neighbours are closer than ``resolution`` (x units).

    Each run becomes one peak at the height-weighted mean position; areas add
    up; the width spans the run (outer half-widths included); S/N is the
    largest.  ``heights="max"`` (profile peaks) keeps the tallest height,
    ``"sum"`` (centroid lists) adds them.

    Examples
    --------
    >>> p = PeakResult([10.0, 10.2, 15.0], [1.0, 3.0, 2.0], [0.1, 0.1, 0.1],
    ...                [1.0, 3.0, 2.0], [10.0, 30.0, 20.0], "mass", "m/z")
    >>> m = merge_peaks(p, 0.5, heights="sum")
    >>> m.positions.round(3).tolist(), m.heights.tolist()
    ([10.15, 15.0], [4.0, 2.0])
    """
    if heights not in ("max", "sum"):
        raise SpectrumError(f"heights={heights!r} must be 'max' or 'sum'")
    if not resolution > 0:
        raise SpectrumError(f"resolution must be > 0, got {resolution!r}")
    p = peaks.positions
    if p.size < 2:
        return peaks
    cut = np.flatnonzero(np.diff(p) >= resolution) + 1
    groups = np.split(np.arange(p.size), cut)
    out = {k: [] for k in ("pos", "h", "w", "a", "snr")}
    merged = []
    for g in groups:
        h = peaks.heights[g]
        wts = np.abs(h) if np.abs(h).sum() > 0 else np.ones(g.size)
        out["pos"].append(float(np.sum(p[g] * wts) / wts.sum()))
        out["h"].append(float(h.sum() if heights == "sum" else h.max()))
        ww = peaks.widths[g]
        if g.size == 1:
            out["w"].append(float(ww[0]))
        else:
            out["w"].append(float((p[g[-1]] + ww[-1] / 2) - (p[g[0]] - ww[0] / 2)))
            merged.append([float(v) for v in p[g]])
        out["a"].append(float(np.sum(peaks.areas[g])))
        out["snr"].append(float(np.max(peaks.snr[g])) if g.size else float("nan"))
    diag = dict(peaks.diagnostics)
    diag["merged"] = merged
    diag["merge_resolution"] = float(resolution)
    return PeakResult(out["pos"], out["h"], out["w"], out["a"], out["snr"], peaks.technique,
                      peaks.x_unit, diag)
