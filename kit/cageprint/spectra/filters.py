"""Filters and estimates on one spectrum: crop, smooth, baseline, noise.

Pure functions, each returning its result and diagnostics.

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

import collections
import hashlib
from typing import Any

import numpy as np

from ..errors import SpectrumError
from .model import Spectrum
from .units import transmittance_to_absorbance

__all__ = [
    "SMOOTH_WINDOW",
    "SMOOTH_ORDER",
    "BASELINE_LAM",
    "BASELINE_LAM_MAX",
    "BASELINE_MAX_POINTS",
    "BASELINE_METHODS",
    "NOISE_CLIP",
    "NOISE_DILATE",
    "crop",
    "as_absorbance",
    "smooth",
    "smooth_array",
    "estimate_baseline",
    "remove_baseline",
    "estimate_noise",
]

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
    from scipy.signal import savgol_filter  # scipy.signal is slow to import: only when used

    y = savgol_filter(spectrum.y, window, order, mode="interp")
    return spectrum.replace(y=y), {"method": "savitzky-golay", "window": window, "order": order}


def as_absorbance(spectrum: Spectrum) -> tuple[Spectrum, dict]:
    """Turn a transmittance (or %T) spectrum into decadic absorbance, A = -log10(T).

    An absorbance spectrum is returned unchanged; other y meanings are refused.

    Examples
    --------
    >>> s = Spectrum([500.0, 600.0], [10.0, 1.0], technique="ir",
    ...              y_unit="percent transmittance")
    >>> a, d = as_absorbance(s)
    >>> a.y.tolist(), a.y_unit, d["from"]
    ([1.0, 2.0], 'absorbance', 'percent transmittance')
    """
    unit = spectrum.y_unit
    if unit == "absorbance":
        return spectrum, {"from": unit, "converted": False}
    if unit not in ("transmittance", "percent transmittance"):
        raise SpectrumError(
            f"as_absorbance needs transmittance or percent transmittance, not y_unit={unit!r}"
        )
    try:
        a = transmittance_to_absorbance(spectrum.y, percent=unit == "percent transmittance")
    except SpectrumError as exc:
        raise SpectrumError(f"as_absorbance: {exc}") from None
    return spectrum.replace(y=a, y_unit="absorbance"), {"from": unit, "converted": True}


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
    params = dict(params)
    x, y = spectrum.x, spectrum.y
    key = _baseline_key(x, y, method, params)
    if key is not None and key in _BASELINES:
        _BASELINES.move_to_end(key)
        base, diag = _BASELINES[key]
        return base.copy(), dict(diag)
    base, diag = _fit_baseline(x, y, method, params)
    if key is not None:
        _BASELINES[key] = (base.copy(), dict(diag))
        while len(_BASELINES) > BASELINE_MEMO:
            _BASELINES.popitem(last=False)
    return base, diag


#: baselines kept (a live panel re-picks the same spectrum at each new threshold)
BASELINE_MEMO = 8
_BASELINES: collections.OrderedDict = collections.OrderedDict()


def _baseline_key(x, y, method, params):
    """The data and settings a baseline depends on, hashed; None if a setting is unhashable."""
    try:
        settings = (method, tuple(sorted(params.items())))
        hash(settings)
    except TypeError:
        return None
    digest = hashlib.blake2b(digest_size=16)
    for a in (x, y):
        a = np.ascontiguousarray(a, dtype=float)
        digest.update(str(a.shape).encode())
        digest.update(a.tobytes())
    return settings + (digest.hexdigest(),)


def _fit_baseline(x, y, method, params):
    # lazy: pybaselines is a heavy import; only the arPLS baseline needs it
    from pybaselines import Baseline

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


#: lags (points) tried when noise is correlated between neighbouring points
NOISE_LAGS = (1, 2, 4, 8, 16)
#: the lag-difference spread counts as levelled off when doubling the lag raises it by less
NOISE_PLATEAU = 1.15


def _noise_sigma_correlated(y: np.ndarray) -> tuple[float, int]:
    """Noise sigma that also holds when neighbouring points are correlated.

    Zero filling and line broadening (what every processed NMR spectrum has) make
    neighbouring noise points alike, so differences of neighbours understate the noise.
    The robust spread of ``y[i + L] - y[i]`` grows with the lag ``L`` until ``L`` passes
    the correlation length and then levels off at sqrt(2) sigma; the first level lag is
    used (white noise levels off at once).  Never below :func:`_noise_sigma`.
    Returns (sigma, lag).
    """
    base = _noise_sigma(y)
    if y.size < 8 * NOISE_LAGS[-1] or not np.isfinite(base):
        return base, 0
    spread = [1.4826 * float(np.median(np.abs(np.diff(y[: y.size - y.size % lag]
                                                      .reshape(-1, lag)[:, 0]))))
              for lag in NOISE_LAGS]
    for k in range(len(NOISE_LAGS) - 1):
        if spread[k + 1] < NOISE_PLATEAU * spread[k]:
            return max(base, spread[k] / np.sqrt(2.0)), NOISE_LAGS[k]
    return base, 0


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


def smooth_array(y: np.ndarray, window: int, order: int = SMOOTH_ORDER) -> np.ndarray:
    """Savitzky-Golay smoothing of a bare array (window shrunk to fit short arrays)."""
    window = int(window) | 1
    if window > y.size:
        window = y.size if y.size % 2 else y.size - 1
    if window <= order:
        return np.asarray(y, dtype=float)
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
    from scipy.signal import savgol_filter

    return savgol_filter(y, window, order, mode="interp")


def _region_integrals(x, y, lo, hi) -> np.ndarray:
    """Trapezoid integrals of the piecewise-linear y over [lo_k, hi_k] (vectorised)."""
    cum = np.concatenate([[0.0], np.cumsum(np.diff(x) * (y[:-1] + y[1:]) / 2.0)])

    def at(b):
        b = np.clip(b, x[0], x[-1])
        j = np.clip(np.searchsorted(x, b, side="right") - 1, 0, x.size - 2)
        yb = y[j] + (y[j + 1] - y[j]) * (b - x[j]) / (x[j + 1] - x[j])
        return cum[j] + (b - x[j]) * (y[j] + yb) / 2.0

    return at(np.asarray(hi, dtype=float)) - at(np.asarray(lo, dtype=float))
