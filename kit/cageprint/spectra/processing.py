"""Processing of measured spectra: one import for the filters, peaks and integrals.

:mod:`.filters` (crop, Savitzky-Golay smoothing, baseline, noise),
:mod:`.peaks` (peak picking with fitted centres, merging) and
:mod:`.integrals` (integration regions) hold the code; this module gathers
their public names.
"""

from __future__ import annotations

from . import filters, integrals, peaks
from .filters import (
    BASELINE_LAM,
    BASELINE_LAM_MAX,
    BASELINE_MAX_POINTS,
    BASELINE_METHODS,
    NOISE_CLIP,
    NOISE_DILATE,
    SMOOTH_ORDER,
    SMOOTH_WINDOW,
    _noise_sigma,
    _region_integrals,
    as_absorbance,
    crop,
    estimate_baseline,
    estimate_noise,
    remove_baseline,
    smooth,
    smooth_array,
)
from .integrals import INTEGRAL_FWHM, IntegralResult, integrate
from .peaks import (
    AREA_FWHM,
    FIT_MAX_HALF_POINTS,
    HEIGHT_PREFILTER,
    MAX_CANDIDATES,
    PEAK_SNR,
    VALLEY_HALF_POINTS,
    PeakResult,
    merge_peaks,
    pick_peaks,
)

__all__ = [*filters.__all__, *peaks.__all__, *integrals.__all__,
           "_noise_sigma", "_region_integrals"]
