"""Processing of measured spectra: pure functions, each returning its result and diagnostics.

crop, smooth (Savitzky-Golay), baseline estimation and removal (pybaselines),
a robust noise estimate, peak picking with fitted centres, merging of peaks
closer than a resolution, and integrals over regions around peaks.

Notes
-----
Savitzky-Golay smoothing: A. Savitzky, M. J. E. Golay, "Smoothing and
differentiation of data by simplified least squares procedures", Anal. Chem.
36, 1627 (1964).  The default baseline is asymmetrically reweighted penalised
least squares: S.-J. Baek, A. Park, Y.-J. Ahn, J. Choo, "Baseline correction
using asymmetrically reweighted penalized least squares smoothing", Analyst
140, 250 (2015), as implemented by pybaselines.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np
from scipy.signal import find_peaks, peak_widths, savgol_filter

from ..errors import SpectrumError
from .model import Spectrum

__all__ = [
    "PEAK_SNR",
    "SMOOTH_WINDOW",
    "SMOOTH_ORDER",
    "BASELINE_LAM",
    "BASELINE_METHODS",
    "FIT_MAX_HALF_POINTS",
    "AREA_FWHM",
    "INTEGRAL_FWHM",
    "crop",
    "smooth",
    "estimate_baseline",
    "remove_baseline",
    "estimate_noise",
    "PeakResult",
    "pick_peaks",
    "merge_peaks",
    "IntegralResult",
    "integrate",
]

#: default signal-to-noise threshold: peak height above baseline / noise sigma
PEAK_SNR = 5.0
#: default Savitzky-Golay window (points, odd) when ``smooth=True``
SMOOTH_WINDOW = 9
#: default Savitzky-Golay polynomial order
SMOOTH_ORDER = 3
#: arPLS smoothness for 1000 points; scaled by (n/1000)**4 and capped at BASELINE_LAM_MAX
BASELINE_LAM = 1e6
#: cap of the scaled smoothness (larger values lose numerical precision)
BASELINE_LAM_MAX = 1e11
#: longer spectra are bin-averaged to at most this many points for the baseline fit, and the
#: baseline interpolated back (baselines are smooth; this keeps 10^5-10^6 points fast)
BASELINE_MAX_POINTS = 20_000
#: pybaselines methods accepted by name
BASELINE_METHODS = ("arpls", "asls", "airpls", "iarpls", "drpls", "modpoly", "imodpoly", "snip")
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
#: integrate(): default half width of a region, in multiples of the median FWHM
INTEGRAL_FWHM = 5.0
_FITS = ("parabola", "gaussian", "lorentzian", "none")


def _frozen(a) -> np.ndarray:
    arr = np.array(a, dtype=float, copy=True)
    arr.setflags(write=False)
    return arr


# --------------------------------------------------------------------------- crop, smooth


def crop(spectrum: Spectrum, lo: float, hi: float) -> tuple[Spectrum, dict]:
    """Keep the points with ``lo <= x <= hi`` (bounds in either order).

    Returns
    -------
    (Spectrum, dict)
        The cropped spectrum and diagnostics (bounds, points kept and dropped).

    Examples
    --------
    >>> s = Spectrum([1, 2, 3, 4], [0, 1, 0, 2], technique="ir")
    >>> c, d = crop(s, 3.5, 1.5)
    >>> c.x.tolist(), d["kept"]
    ([2.0, 3.0], 2)
    """
    lo, hi = sorted((float(lo), float(hi)))
    keep = (spectrum.x >= lo) & (spectrum.x <= hi)
    n = int(keep.sum())
    need = 1 if spectrum.kind == "peaks" else 2
    if n < need:
        raise SpectrumError(
            f"crop to [{lo}, {hi}] {spectrum.x_unit} keeps {n} points; the spectrum spans "
            f"{spectrum.x[0]}..{spectrum.x[-1]}"
        )
    w = spectrum.widths[keep] if spectrum.widths is not None else None
    out = spectrum.replace(x=spectrum.x[keep], y=spectrum.y[keep], widths=w)
    return out, {"lo": lo, "hi": hi, "kept": n, "dropped": len(spectrum) - n}


def smooth(
    spectrum: Spectrum, window: int = SMOOTH_WINDOW, order: int = SMOOTH_ORDER
) -> tuple[Spectrum, dict]:
    """Savitzky-Golay smoothing (Savitzky and Golay 1964) of a profile spectrum.

    ``window`` is the number of points (odd; an even value is raised by one).

    Examples
    --------
    >>> s = Spectrum(range(9), [0, 0, 1, 0, 0, 0, 1, 0, 0], technique="ir")
    >>> sm, d = smooth(s, window=5, order=2)
    >>> d["window"], round(float(sm.y.sum()), 6)
    (5, 2.0)
    """
    _need_profile(spectrum, "smooth")
    window = int(window)
    if window % 2 == 0:
        window += 1
    if window > len(spectrum):
        raise SpectrumError(
            f"smoothing window of {window} points is longer than the spectrum ({len(spectrum)})"
        )
    if not 0 <= order < window:
        raise SpectrumError(f"order={order} must be >= 0 and < window={window}")
    y = savgol_filter(spectrum.y, window, order, mode="interp")
    return spectrum.replace(y=y), {"method": "savitzky-golay", "window": window, "order": order}


def _need_profile(spectrum: Spectrum, what: str) -> None:
    if spectrum.kind != "profile":
        raise SpectrumError(f"{what} needs a profile spectrum; this one is a peak list")


# --------------------------------------------------------------------------- baseline, noise


def _default_lam(n: int) -> float:
    return float(min(BASELINE_LAM * (n / 1000.0) ** 4, BASELINE_LAM_MAX))


def estimate_baseline(
    spectrum: Spectrum, method: str = "arpls", **params: Any
) -> tuple[np.ndarray, dict]:
    """Estimate the baseline of a profile spectrum with a pybaselines method.

    Parameters
    ----------
    method : str
        One of ``BASELINE_METHODS``.  Penalised least-squares methods get
        ``lam`` scaled with the number of points unless given.
    **params
        Passed to the pybaselines method (``lam=``, ``poly_order=``, ...).

    Returns
    -------
    (ndarray, dict)
        Baseline on the spectrum's x, and diagnostics (method, parameters,
        iterations).

    Examples
    --------
    >>> x = np.linspace(0, 100, 501)
    >>> s = Spectrum(x, 0.01 * x + np.exp(-((x - 50) / 2) ** 2), technique="ir")
    >>> b, d = estimate_baseline(s)
    >>> d["method"], bool(abs(b[250] - 0.5) < 0.05)
    ('arpls', True)
    """
    _need_profile(spectrum, "estimate_baseline")
    if method not in BASELINE_METHODS:
        raise SpectrumError(
            f"baseline method {method!r} is not one of {', '.join(BASELINE_METHODS)}"
        )
    from pybaselines import Baseline

    params = dict(params)
    x, y = spectrum.x, spectrum.y
    factor = -(-x.size // BASELINE_MAX_POINTS)
    if factor > 1:
        m = x.size // factor
        xb = x[: m * factor].reshape(m, factor).mean(axis=1)
        yb = y[: m * factor].reshape(m, factor).mean(axis=1)
    else:
        xb, yb = x, y
    if method in ("arpls", "asls", "airpls", "iarpls", "drpls") and "lam" not in params:
        params["lam"] = _default_lam(xb.size)
    fitter = Baseline(x_data=xb)
    try:
        base, info = getattr(fitter, method)(yb, **params)
    except (TypeError, ValueError) as exc:
        raise SpectrumError(f"baseline method {method!r} failed with {params}: {exc}") from None
    base = np.asarray(base, dtype=float)
    if factor > 1:
        base = np.interp(x, xb, base)
    diag = {"method": method, "params": {k: v for k, v in params.items()},
            "bin_factor": int(factor)}
    if "tol_history" in info:
        diag["iterations"] = int(len(info["tol_history"]))
    return base, diag


def remove_baseline(
    spectrum: Spectrum, method: str = "arpls", **params: Any
) -> tuple[Spectrum, dict]:
    """Subtract :func:`estimate_baseline` from a profile spectrum.

    Examples
    --------
    >>> x = np.linspace(0, 100, 501)
    >>> s = Spectrum(x, 2.0 + np.exp(-((x - 50) / 2) ** 2), technique="ir")
    >>> flat, d = remove_baseline(s)
    >>> bool(abs(flat.y[0]) < 0.01), bool(abs(flat.y[250] - 1) < 0.05)
    (True, True)
    """
    base, diag = estimate_baseline(spectrum, method, **params)
    meta = dict(spectrum.meta)
    meta["baseline"] = method
    return spectrum.replace(y=spectrum.y - base, meta=meta), {**diag, "baseline": base}


#: second differences beyond this many sigma (and NOISE_DILATE points around them) are
#: left out of the noise estimate in a second and third pass (peaks, spikes)
NOISE_CLIP = 3.5
NOISE_DILATE = 3


def _noise_sigma(y: np.ndarray) -> float:
    if y.size < 5:
        return float("nan")
    d2 = y[:-2] - 2.0 * y[1:-1] + y[2:]
    med = np.median(d2)
    s = 1.4826 * np.median(np.abs(d2 - med))
    for _ in range(3):
        if s == 0:
            break
        bad = np.abs(d2 - med) > NOISE_CLIP * s
        if not bad.any():
            break
        bad = np.convolve(bad, np.ones(2 * NOISE_DILATE + 1), mode="same") > 0
        keep = d2[~bad]
        if keep.size < max(5, d2.size // 4):
            break
        med = np.median(keep)
        s_new = 1.4826 * np.median(np.abs(keep - med))
        if abs(s_new - s) <= 1e-3 * s:
            s = s_new
            break
        s = s_new
    return float(s / np.sqrt(6.0))


def estimate_noise(spectrum: Spectrum, region: tuple[float, float] | None = None) -> tuple[
    float, dict
]:
    """Robust noise sigma of a profile spectrum.

    The median absolute deviation of the second differences, scaled to a
    Gaussian sigma (1.4826 MAD / sqrt(6)); slow curvature (baseline, broad
    bands) barely enters and narrow peaks are outvoted by the median.  Noise
    that was smoothed before (correlated between points) comes out too small.

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> s = Spectrum(np.arange(20000.0), 5 + rng.normal(0, 0.2, 20000), technique="ir")
    >>> sigma, d = estimate_noise(s)
    >>> round(sigma, 1), d["method"]
    (0.2, 'mad-second-difference')
    """
    _need_profile(spectrum, "estimate_noise")
    y = spectrum.y
    if region is not None:
        lo, hi = sorted(region)
        y = y[(spectrum.x >= lo) & (spectrum.x <= hi)]
    sigma = _noise_sigma(y)
    if not np.isfinite(sigma):
        raise SpectrumError(f"noise needs at least 5 points; the region has {y.size}")
    return sigma, {"method": "mad-second-difference", "points": int(y.size), "region": region}


# --------------------------------------------------------------------------- peaks


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


def _plain(obj):
    if isinstance(obj, Mapping):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, np.generic):
        return obj.item()
    return obj


def _baseline_of(spectrum: Spectrum, baseline) -> tuple[np.ndarray, Any]:
    if baseline is None or baseline is False or (isinstance(baseline, str) and
                                                 baseline == "none"):
        return np.zeros(len(spectrum)), "none"
    if isinstance(baseline, str):
        base, diag = estimate_baseline(spectrum, baseline)
        return base, diag
    if np.isscalar(baseline):
        return np.full(len(spectrum), float(baseline)), {"method": "constant",
                                                        "value": float(baseline)}
    base = np.asarray(baseline, dtype=float)
    if base.shape != spectrum.y.shape:
        raise SpectrumError(
            f"baseline array has {base.size} values but the spectrum (after region) has "
            f"{len(spectrum)}"
        )
    return base, {"method": "given"}


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
        a, b, c = np.polyfit(t[pos], np.log(ys[pos]), 2)
    else:
        a, b, c = np.polyfit(t, ys, 2)
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
        i2 = int(np.clip(np.searchsorted(x, centre), 1, x.size - 1))
        i2 = i2 - 1 if abs(x[i2 - 1] - centre) < abs(x[i2] - centre) else i2
        lo2, hi2 = max(0, i2 - kh), min(x.size, i2 + kh + 1)
        if hi2 - lo2 >= 3:
            t2 = (x[lo2:hi2] - centre) / scale
            a2, b2, c2 = np.polyfit(t2, y[lo2:hi2], 2)
            if a2 < 0:
                h = c2
    return centre, h, True


def _valley_level(y: np.ndarray, v: int) -> float:
    return float(np.mean(y[max(0, v - VALLEY_HALF_POINTS): v + VALLEY_HALF_POINTS + 1]))


def _lorentz(x, x0, h, w):
    return h / (1.0 + ((x - x0) / (w / 2.0)) ** 2)


def _fit_lorentzian(x, y, i, centre, height, fwhm):
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
    s = spectrum
    diag: dict[str, Any] = {"region": tuple(region) if region is not None else None}
    if region is not None:
        s, _ = crop(s, *region)
    if s.kind == "peaks":
        return _filter_peak_list(s, prominence, snr, min_separation, noise, min_height, diag)

    x = s.x
    base, bdiag = _baseline_of(s, baseline)
    yc = s.y - base
    diag["baseline"] = bdiag
    sigma = float(noise) if noise is not None else _noise_sigma(yc)
    diag["noise"] = sigma
    diag["noise_method"] = "given" if noise is not None else "mad-second-difference"
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
    idx, props = find_peaks(ys, prominence=prom if prom > 0 else None,
                            height=max(floor) if floor else None)
    diag["below_height_prefilter"] = int(
        find_peaks(ys, prominence=prom if prom > 0 else None)[0].size - idx.size
    ) if floor else 0
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
        return _result([], [], [], [], [], s, diag)

    # valleys between neighbouring candidates bound each width measurement
    valleys = [int(a + np.argmin(ys[a:b + 1])) for a, b in zip(idx[:-1], idx[1:], strict=True)]
    lb = np.array([0] + valleys)
    rb = np.array(valleys + [n - 1])
    # outer valleys: the lowest point between the spectrum's ends and the first/last candidate
    outer = np.array([int(np.argmin(ys[: idx[0] + 1]))] + valleys
                     + [int(idx[-1] + np.argmin(ys[idx[-1]:]))])
    apex = ys[idx]
    good = apex > 0
    wid = np.full(idx.size, np.nan)
    lpos = np.full(idx.size, np.nan)
    rpos = np.full(idx.size, np.nan)
    if good.any():
        w, _, li, ri = peak_widths(
            ys, idx[good], rel_height=0.5, prominence_data=(apex[good], lb[good], rb[good])
        )
        ar = np.arange(n, dtype=float)
        lpos[good] = np.interp(li, ar, x)
        rpos[good] = np.interp(ri, ar, x)
        wid[good] = rpos[good] - lpos[good]
        wpts = w
    positions, heights, widths, areas, snrs = [], [], [], [], []
    gi = 0
    for j, i in enumerate(idx):
        if not good[j]:
            rejected.append({"position": float(x[i]), "reason": "apex at or below the baseline"})
            continue
        k = int(np.clip(round(wpts[gi] / 2.0), 1, FIT_MAX_HALF_POINTS))
        gi += 1
        if snr is not None and sigma > 0:
            back = max(_valley_level(yc, int(outer[j])), _valley_level(yc, int(outer[j + 1])))
            if (ys[i] - max(back, 0.0)) / sigma < HEIGHT_PREFILTER * snr:
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
            back = max(_valley_level(yc, int(outer[j])), _valley_level(yc, int(outer[j + 1])))
            contrast = (height - max(back, 0.0)) / sigma
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
    res = _result(positions, heights, widths, areas, snrs, s, diag)
    if min_separation is not None and len(res) > 1:
        res = merge_peaks(res, min_separation)
    return res


def smooth_array(y: np.ndarray, window: int, order: int = SMOOTH_ORDER) -> np.ndarray:
    """Savitzky-Golay smoothing of a bare array (window shrunk to fit short arrays)."""
    window = int(window) | 1
    if window > y.size:
        window = y.size if y.size % 2 else y.size - 1
    if window <= order:
        return np.asarray(y, dtype=float)
    return savgol_filter(y, window, order, mode="interp")


def _result(positions, heights, widths, areas, snrs, s: Spectrum, diag) -> PeakResult:
    return PeakResult(
        positions=np.asarray(positions, dtype=float), heights=np.asarray(heights, dtype=float),
        widths=np.asarray(widths, dtype=float), areas=np.asarray(areas, dtype=float),
        snr=np.asarray(snrs, dtype=float), technique=s.technique, x_unit=s.x_unit,
        diagnostics=diag,
    )


def _filter_peak_list(s, prominence, snr, min_separation, noise, min_height, diag):
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


# --------------------------------------------------------------------------- integrals


def _region_integrals(x, y, lo, hi) -> np.ndarray:
    """Trapezoid integrals of the piecewise-linear y over [lo_k, hi_k] (vectorised)."""
    cum = np.concatenate([[0.0], np.cumsum(np.diff(x) * (y[:-1] + y[1:]) / 2.0)])

    def at(b):
        b = np.clip(b, x[0], x[-1])
        j = np.clip(np.searchsorted(x, b, side="right") - 1, 0, x.size - 2)
        yb = y[j] + (y[j + 1] - y[j]) * (b - x[j]) / (x[j + 1] - x[j])
        return cum[j] + (b - x[j]) * (y[j] + yb) / 2.0

    return at(np.asarray(hi, dtype=float)) - at(np.asarray(lo, dtype=float))


@dataclass(frozen=True, eq=False)
class IntegralResult:
    """Integrals over regions around peaks.

    ``lo``/``hi`` are the region bounds; ``integrals`` the areas (y units x
    x units); ``relative`` the integrals divided by the smallest positive one.
    """

    positions: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    integrals: np.ndarray
    relative: np.ndarray
    diagnostics: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        for name in ("positions", "lo", "hi", "integrals", "relative"):
            object.__setattr__(self, name, _frozen(getattr(self, name)))
        object.__setattr__(self, "diagnostics", MappingProxyType(dict(self.diagnostics)))

    def __len__(self) -> int:
        return int(self.positions.size)

    def ratios(self, reference: int | None = None) -> np.ndarray:
        """Integrals relative to peak ``reference`` (index), or to the smallest positive one."""
        if reference is None:
            return self.relative
        return self.integrals / self.integrals[int(reference)]

    def to_frame(self):
        """The regions as a pandas DataFrame."""
        import pandas as pd

        return pd.DataFrame({"position": self.positions, "lo": self.lo, "hi": self.hi,
                             "integral": self.integrals, "relative": self.relative})

    def to_dict(self) -> dict:
        return {k: getattr(self, k).tolist() for k in
                ("positions", "lo", "hi", "integrals", "relative")} | {
            "diagnostics": _plain(self.diagnostics)}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> IntegralResult:
        return cls(d["positions"], d["lo"], d["hi"], d["integrals"], d["relative"],
                   d.get("diagnostics", {}))


def integrate(
    spectrum: Spectrum,
    peaks: PeakResult | Sequence[float],
    half_width: float | None = None,
    *,
    baseline: Any = None,
) -> IntegralResult:
    """Integrate a profile spectrum over a region around each peak (NMR integration).

    Each region is ``position +- half_width``; where two regions overlap they
    are split at the midpoint between the two peaks.  Integrals use the
    trapezoid rule with linear interpolation at the region bounds.

    Parameters
    ----------
    peaks : PeakResult or sequence of positions
    half_width : float, optional
        In x units; default ``INTEGRAL_FWHM`` x the median FWHM of ``peaks``.
    baseline : str, float, array or None
        Subtracted first, as in :func:`pick_peaks` (default: none).

    Examples
    --------
    >>> x = np.linspace(120, 160, 8001)
    >>> y = 1 / (1 + ((x - 140) / 0.02) ** 2) + 2 / (1 + ((x - 145) / 0.02) ** 2)
    >>> r = integrate(Spectrum(x, y, technique="nmr"), [140.0, 145.0], half_width=1.0)
    >>> np.round(r.relative, 2).tolist()
    [1.0, 2.0]
    """
    _need_profile(spectrum, "integrate")
    if isinstance(peaks, PeakResult):
        pos = peaks.positions
        widths = peaks.widths
    else:
        pos = np.sort(np.asarray(peaks, dtype=float).ravel())
        widths = np.full(pos.size, np.nan)
    if pos.size == 0:
        raise SpectrumError("integrate needs at least one peak position")
    if half_width is None:
        w = widths[np.isfinite(widths)]
        if w.size == 0:
            raise SpectrumError("no peak widths known; pass half_width= (x units)")
        half_width = INTEGRAL_FWHM * float(np.median(w))
        rule = f"{INTEGRAL_FWHM} x median FWHM"
    else:
        rule = "given"
    if not half_width > 0:
        raise SpectrumError(f"half_width must be > 0, got {half_width!r}")
    base, bdiag = _baseline_of(spectrum, baseline)
    y = spectrum.y - base
    mids = (pos[:-1] + pos[1:]) / 2
    lo = np.maximum(pos - half_width, np.r_[-np.inf, mids])
    hi = np.minimum(pos + half_width, np.r_[mids, np.inf])
    lo = np.maximum(lo, spectrum.x[0])
    hi = np.minimum(hi, spectrum.x[-1])
    vals = _region_integrals(spectrum.x, y, lo, hi)
    posv = vals[vals > 0]
    rel = vals / posv.min() if posv.size else np.full(vals.size, np.nan)
    diag = {"half_width": float(half_width), "half_width_rule": rule, "baseline": bdiag,
            "split_at_midpoints": int(np.sum(pos[1:] - pos[:-1] < 2 * half_width))}
    return IntegralResult(pos, lo, hi, vals, rel, diag)
