"""Integrals over regions around peaks (NMR integration)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from ..errors import SpectrumError
from .filters import _baseline_of, _frozen, _need_profile, _region_integrals
from .model import Spectrum, _plain
from .peaks import PeakResult

__all__ = ["INTEGRAL_FWHM", "IntegralResult", "integrate"]

#: integrate(): default half width of a region, in multiples of the median FWHM
INTEGRAL_FWHM = 5.0


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
        # lazy: pandas takes ~0.5 s to import; only the table output needs it
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
