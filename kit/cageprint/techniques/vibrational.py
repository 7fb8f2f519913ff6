"""IR and Raman: observed band counts against each candidate's active-mode counts.

A cage cannot show more fundamentals than its point group allows, so more
bands than allowed (beyond :data:`EXTRA_BAND_ALLOWANCE` for overtones,
combination bands and impurities) is strong evidence against a candidate.
Fewer bands than allowed is weak evidence: modes may be weak or overlap.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..candidate import Candidate
from ..errors import EvidenceError, SpectrumError
from ..plain import freeze_fields
from ..plain import plain as _plain
from ..spectra import pick_peaks
from ..spectra.references import IR_ARTEFACTS
from ..symmetry import predict_vibrational  # re-exported: one module per technique
from ..verdict import RULED_OUT_SCORE, TechniqueVerdict

__all__ = [
    "IR_REGION",
    "RAMAN_REGION",
    "BAND_SNR",
    "EXTRA_BAND_ALLOWANCE",
    "IR_DEFAULT_EXCLUDE",
    "VibrationalObservation",
    "predict_vibrational",
    "observe_vibrational",
    "observe_ir",
    "observe_raman",
    "compare_vibrational",
    "compare_ir",
    "compare_raman",
]

#: default fingerprint windows, cm-1 (common practice, no source: the cage modes of
#: fullerenes lie below ~1650 cm-1; C-H and C=O stretches of impurities lie above)
IR_REGION: tuple[float, float] = (400.0, 1650.0)
RAMAN_REGION: tuple[float, float] = (150.0, 1700.0)
#: minimum signal-to-noise of a band in a profile
BAND_SNR = 5.0
#: bands closer than this (cm-1) count as one
BAND_MIN_SEPARATION = 4.0
#: windows excluded by default: only the sharp Q branch of the CO2 bend (667 cm-1, from
#: memory), which imperfect background compensation leaves in many IR spectra.  The wider
#: atmospheric windows of cageprint.spectra.references overlap real cage bands.
IR_DEFAULT_EXCLUDE: tuple[tuple[float, float, str], ...] = (
    (664.0, 671.0, "atmospheric CO2 bend, Q branch"),
)
#: extra bands tolerated beyond the allowed fundamentals (overtones, impurities)
EXTRA_BAND_ALLOWANCE = 2
#: cost per extra band inside the allowance, and weight of the "fewer bands" penalty
EXTRA_BAND_COST = 1.5
FEWER_BAND_WEIGHT = 1.0



@dataclass(frozen=True)
class VibrationalObservation:
    """Bands found in an IR or Raman spectrum (inside the region, artefacts removed)."""

    technique: str
    positions: tuple[float, ...]
    heights: tuple[float, ...] = ()
    excluded: tuple[Mapping[str, Any], ...] = ()
    region: tuple[float, float] = IR_REGION
    thresholds: Mapping[str, Any] = field(default_factory=dict)
    diagnostics: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if self.technique not in ("ir", "raman"):
            raise EvidenceError(f"technique must be 'ir' or 'raman'; got {self.technique!r}")
        object.__setattr__(self, "positions", tuple(float(p) for p in self.positions))
        object.__setattr__(self, "heights", tuple(float(h) for h in self.heights))
        freeze_fields(self, "excluded", "region", "thresholds", "diagnostics")

    @property
    def n_bands(self) -> int:
        return len(self.positions)

    def to_dict(self) -> dict[str, Any]:
        return _plain({
            "technique": self.technique, "positions": self.positions, "heights": self.heights,
            "excluded": self.excluded, "region": self.region, "thresholds": self.thresholds,
            "diagnostics": self.diagnostics,
        })

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> VibrationalObservation:
        return cls(technique=d["technique"], positions=tuple(d["positions"]),
                   heights=tuple(d.get("heights", ())), excluded=tuple(d.get("excluded", ())),
                   region=tuple(d.get("region", IR_REGION)),
                   thresholds=d.get("thresholds", {}), diagnostics=d.get("diagnostics", {}))


def _artefact_regions(technique: str) -> tuple[tuple[float, float, str], ...]:
    """The atmospheric windows of :data:`cageprint.spectra.references.IR_ARTEFACTS`."""
    if technique != "ir":
        return ()
    return tuple(_region_tuple(r) for r in IR_ARTEFACTS)


def _region_tuple(r: Any) -> tuple[float, float, str]:
    if isinstance(r, Mapping):
        return (float(r["low"]), float(r["high"]), str(r.get("reason", r.get("label", ""))))
    lo = getattr(r, "low", None)
    if lo is not None:
        return (float(lo), float(r.high), str(getattr(r, "label", getattr(r, "reason", ""))))
    r = tuple(r)
    return (float(r[0]), float(r[1]), str(r[2]) if len(r) > 2 else "artefact")


def find_bands(x: np.ndarray, y: np.ndarray, snr: float, prominence: float | None,
               min_separation: float) -> tuple[np.ndarray, np.ndarray, float]:
    """Maxima of a profile above ``snr`` x noise (noise from first differences)."""
    from scipy.signal import find_peaks  # lazy: scipy.signal takes ~0.3 s to import

    base = float(np.median(y))
    yy = y - base
    if yy.size >= 3:
        d = np.diff(yy)
        noise = float(1.4826 * np.median(np.abs(d - np.median(d))) / math.sqrt(2.0))
    else:
        noise = 0.0
    noise = noise or 1e-12 * (float(np.ptp(yy)) or 1.0)
    prom = snr * noise if prominence is None else float(prominence)
    step = float(np.median(np.diff(x))) if x.size > 1 else 1.0
    dist = max(1, int(round(min_separation / step))) if step > 0 else 1
    idx, _ = find_peaks(yy, prominence=prom, distance=dist)
    return x[idx], yy[idx], noise


def observe_vibrational(
    spectrum: Any,
    *,
    region: tuple[float, float] | None = None,
    exclude: Sequence[Sequence[Any]] | str | None = None,
    snr: float = BAND_SNR,
    prominence: float | None = None,
    min_separation: float = BAND_MIN_SEPARATION,
) -> VibrationalObservation:
    """Count the bands of an IR or Raman spectrum in the fingerprint region.

    Parameters
    ----------
    spectrum : Spectrum
        Technique ``"ir"`` or ``"raman"``; a profile (bands are picked; a
        transmittance trace is turned upside down first) or a band list.
    region : (low, high) cm-1, optional
        Defaults to :data:`IR_REGION` or :data:`RAMAN_REGION`.
    exclude : sequence of (low, high[, reason]), "atmospheric" or None
        Artefact windows whose bands are ignored.  None (default): for IR
        :data:`IR_DEFAULT_EXCLUDE` (the CO2 Q branch), for Raman nothing.
        ``"atmospheric"`` takes every window of
        :data:`cageprint.spectra.references.IR_ARTEFACTS` -- wide ones that
        overlap real cage bands (the water-vapour window covers the C60 band
        at 1429 cm-1); ``[]`` excludes nothing.
    snr, prominence, min_separation : float
        Band-picking thresholds for profiles.

    Returns
    -------
    VibrationalObservation

    Examples
    --------
    >>> from cageprint.spectra import Spectrum
    >>> s = Spectrum([527, 577, 1183, 1429, 2350], [1, .4, .3, .35, .2], technique="ir",
    ...              kind="peaks")
    >>> obs = observe_vibrational(s)
    >>> obs.n_bands, obs.excluded[0]["reason"]
    (4, 'outside the region 400-1650 cm-1')
    """
    tech = getattr(spectrum, "technique", None)
    if tech not in ("ir", "raman"):
        raise SpectrumError(f"observe_vibrational needs an IR or Raman spectrum; got "
                            f"technique {tech!r}")
    if region is None:
        region = IR_REGION if tech == "ir" else RAMAN_REGION
    lo, hi = float(min(region)), float(max(region))
    if not hi > lo:
        raise SpectrumError(f"region must span a range of cm-1; got {region!r}")
    if exclude is None:
        windows = IR_DEFAULT_EXCLUDE if tech == "ir" else ()
    elif isinstance(exclude, str):
        if exclude != "atmospheric":
            raise SpectrumError(f"exclude must be 'atmospheric' or a list of (low, high) "
                                f"windows; got {exclude!r}")
        windows = _artefact_regions(tech)
    else:
        windows = tuple(_region_tuple(r) for r in exclude)
    x = np.asarray(spectrum.x, float)
    y = np.asarray(spectrum.y, float)
    diagnostics: dict[str, Any] = {"kind": spectrum.kind}
    sha = dict(getattr(spectrum, "meta", {}) or {}).get("sha256")
    if sha:
        diagnostics["sha256"] = sha
    if spectrum.kind == "peaks":
        pos, hts = x, y
    else:
        spec = spectrum
        if "trans" in str(getattr(spectrum, "y_unit", "")).lower():
            spec = spectrum.replace(y=float(np.max(y)) - y, y_unit="absorption-like")
            diagnostics["inverted"] = "transmittance turned into absorption-like bands"
        pad = 2.0 * min_separation
        window = (max(float(x.min()), lo - pad), min(float(x.max()), hi + pad))
        if window[1] > window[0]:
            peaks = pick_peaks(spec, snr=snr, prominence=prominence,
                               min_separation=min_separation, region=window)
            pos, hts = np.asarray(peaks.positions), np.asarray(peaks.heights)
            diagnostics["noise"] = peaks.diagnostics.get("noise")
        else:
            pos, hts = np.array([]), np.array([])
    keep_p, keep_h, excluded = [], [], []
    for p, h in zip(pos, hts, strict=False):
        if not lo <= p <= hi:
            excluded.append({"position": float(p),
                             "reason": f"outside the region {lo:g}-{hi:g} cm-1"})
            continue
        hit = [w for w in windows if w[0] <= p <= w[1]]
        if hit:
            excluded.append({"position": float(p), "reason":
                             f"artefact region {hit[0][0]:g}-{hit[0][1]:g} cm-1"
                             + (f" ({hit[0][2]})" if hit[0][2] else "")})
            continue
        keep_p.append(float(p))
        keep_h.append(float(h))
    thresholds = {"region": [lo, hi], "exclude": [list(w) for w in windows], "snr": snr,
                  "prominence": prominence, "min_separation": min_separation}
    return VibrationalObservation(tech, tuple(keep_p), tuple(keep_h), tuple(excluded),
                                  (lo, hi), thresholds, diagnostics)


def observe_ir(spectrum: Any, **thresholds: Any) -> VibrationalObservation:
    """:func:`observe_vibrational` for an IR spectrum."""
    return observe_vibrational(spectrum, **thresholds)


def observe_raman(spectrum: Any, **thresholds: Any) -> VibrationalObservation:
    """:func:`observe_vibrational` for a Raman spectrum."""
    return observe_vibrational(spectrum, **thresholds)


def _allowed(prediction: Any, technique: str) -> int:
    if isinstance(prediction, (int, np.integer)):
        return int(prediction)
    attr = "ir_count" if technique == "ir" else "raman_count"
    if isinstance(prediction, Candidate):
        val = getattr(prediction, attr)
    else:
        vib = getattr(prediction, "vib", prediction)
        val = getattr(vib, attr, None)
    if val is None:
        raise EvidenceError(f"compare_{technique}: the prediction has no {attr}")
    return int(val)


def compare_vibrational(
    prediction: Any,
    observation: VibrationalObservation,
    *,
    allowance: int = EXTRA_BAND_ALLOWANCE,
    extra_cost: float = EXTRA_BAND_COST,
    fewer_weight: float = FEWER_BAND_WEIGHT,
) -> TechniqueVerdict:
    """Compare the observed band count with the allowed fundamentals.

    Parameters
    ----------
    prediction : Candidate, Fingerprint, VibrationalPrediction or int
        Anything carrying ``ir_count`` / ``raman_count`` (or the count itself).
    observation : VibrationalObservation
    allowance : int
        Extra bands (overtones, combinations, impurities) tolerated.
    extra_cost : float
        Score lost per extra band within the allowance.
    fewer_weight : float
        Score lost is ``fewer_weight * ln(allowed / observed)`` when fewer
        bands are seen than allowed (weak evidence).

    Examples
    --------
    >>> obs = VibrationalObservation("ir", (527, 577, 1183, 1429))
    >>> compare_vibrational(4, obs).verdict, compare_vibrational(1, obs).verdict
    ('consistent', 'ruled out')
    >>> round(compare_vibrational(16, obs).score, 3)
    -1.386
    """
    tech = observation.technique
    name = "IR" if tech == "ir" else "Raman"
    allowed = _allowed(prediction, tech)
    k = observation.n_bands
    details = {"observed": k, "allowed": allowed, "allowance": allowance}
    if k == 0:
        return TechniqueVerdict(tech, 0.0, "no data",
                                (f"no {name} bands found in the region.",), details)
    head = f"{k} band{'s' if k != 1 else ''} observed, {allowed} {name}-active fundamentals allowed"
    if k > allowed + allowance:
        score = RULED_OUT_SCORE + -extra_cost * (k - allowed)
        return TechniqueVerdict(tech, score, "ruled out", (
            f"{head}: {k - allowed} more than allowed, beyond the allowance of {allowance} "
            "for overtones and impurities.",), details)
    if k > allowed:
        return TechniqueVerdict(tech, -extra_cost * (k - allowed), "possible", (
            f"{head}: {k - allowed} extra band{'s' if k - allowed != 1 else ''}, within the "
            f"allowance of {allowance} for overtones and impurities.",), details)
    score = -fewer_weight * math.log(allowed / k)
    if k == allowed:
        return TechniqueVerdict(tech, 0.0, "consistent", (f"{head}: all seen.",), details)
    verdict = "consistent" if allowed <= 2 * k else "possible"
    return TechniqueVerdict(tech, score, verdict, (
        f"{head}: {allowed - k} not seen (weak or overlapping modes; weak evidence).",),
        details)


def compare_ir(prediction: Any, observation: VibrationalObservation,
               **options: Any) -> TechniqueVerdict:
    """:func:`compare_vibrational` for IR."""
    if observation.technique != "ir":
        raise EvidenceError(f"compare_ir needs an IR observation; got {observation.technique!r}")
    return compare_vibrational(prediction, observation, **options)


def compare_raman(prediction: Any, observation: VibrationalObservation,
                  **options: Any) -> TechniqueVerdict:
    """:func:`compare_vibrational` for Raman."""
    if observation.technique != "raman":
        raise EvidenceError("compare_raman needs a Raman observation; got "
                            f"{observation.technique!r}")
    return compare_vibrational(prediction, observation, **options)
