"""Measured spectra: one model, readers behind one loader, processing, reference lines."""

from .model import TECHNIQUES, Spectrum
from .processing import (
    PEAK_SNR,
    IntegralResult,
    PeakResult,
    crop,
    estimate_baseline,
    estimate_noise,
    integrate,
    merge_peaks,
    pick_peaks,
    remove_baseline,
    smooth,
)
from .readers import (
    MAX_POINTS,
    READERS,
    list_blocks,
    load_spectrum,
    parse_csv,
    parse_delimited,
    parse_peaklist,
    read_csv,
    read_peaklist,
    register_reader,
)

__all__ = [
    "Spectrum",
    "TECHNIQUES",
    "load_spectrum",
    "list_blocks",
    "READERS",
    "register_reader",
    "MAX_POINTS",
    "parse_csv",
    "parse_delimited",
    "parse_peaklist",
    "read_csv",
    "read_peaklist",
    "PEAK_SNR",
    "PeakResult",
    "IntegralResult",
    "crop",
    "smooth",
    "estimate_baseline",
    "remove_baseline",
    "estimate_noise",
    "pick_peaks",
    "merge_peaks",
    "integrate",
]
