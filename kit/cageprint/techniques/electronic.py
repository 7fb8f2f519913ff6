"""UV-vis: absorption onset and bands against the Hückel gap (a weak, qualitative criterion).

Caveats, stated in every verdict: Hückel energies are in units of the
resonance integral beta, and no single beta maps them onto measured
transition energies reliably; the lowest HOMO-LUMO excitation of a
symmetric cage is often dipole-forbidden and weak; solvent and
aggregation shift the onset.  The score is therefore capped (at most
:data:`UV_MAX_COST` lost) and the verdict is never worse than "possible".
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..candidate import Candidate, transition_energies
from ..errors import EvidenceError, SpectrumError
from ..plain import freeze_fields
from ..plain import plain as _plain
from ..symmetry import predict_electronic  # re-exported: one module per technique
from ..verdict import TechniqueVerdict
from .vibrational import find_bands

__all__ = [
    "HUCKEL_BETA_EV",
    "UV_REGION",
    "UV_TOL_EV",
    "HC_EV_NM",
    "UvVisObservation",
    "predict_electronic",
    "observe_uvvis",
    "compare_uvvis",
]

#: |beta| assumed to turn Hückel gaps into eV.  From memory: fits of Hückel gaps to
#: optical gaps of fullerenes use |beta| of roughly 2.5-3 eV; 2.7 eV is assumed here.
HUCKEL_BETA_EV = 2.7
#: h*c in eV nm (CODATA 2018: 1239.841984 eV nm)
HC_EV_NM = 1239.841984
#: default wavelength window, nm (common practice, no source)
UV_REGION: tuple[float, float] = (250.0, 1100.0)
#: one standard deviation of the gap-to-onset mismatch, eV (deliberately wide)
UV_TOL_EV = 0.5
#: the onset is the longest wavelength where absorbance exceeds this fraction of its maximum
#: (and UV_SNR times the noise); fullerene visible bands are weak, a few % of the UV maximum
UV_ONSET_FRACTION = 0.01
#: most score the UV-vis criterion can take away
UV_MAX_COST = 4.0
UV_SNR = 5.0

CAVEAT = (f"qualitative: Hückel gap turned into eV with |β| = {HUCKEL_BETA_EV} eV "
          "(assumed); the lowest excitation may be forbidden and solvent shifts the onset.")



@dataclass(frozen=True)
class UvVisObservation:
    """Absorption onset and band maxima of a UV-vis spectrum."""

    onset_nm: float | None
    bands_nm: tuple[float, ...] = ()
    region: tuple[float, float] = UV_REGION
    thresholds: Mapping[str, Any] = field(default_factory=dict)
    diagnostics: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "onset_nm",
                           None if self.onset_nm is None else float(self.onset_nm))
        object.__setattr__(self, "bands_nm", tuple(sorted(float(b) for b in self.bands_nm)))
        freeze_fields(self, "region", "thresholds", "diagnostics")

    @property
    def onset_ev(self) -> float | None:
        return None if self.onset_nm is None else HC_EV_NM / self.onset_nm

    def to_dict(self) -> dict[str, Any]:
        return _plain({"onset_nm": self.onset_nm, "bands_nm": self.bands_nm,
                       "region": self.region, "thresholds": self.thresholds,
                       "diagnostics": self.diagnostics})

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> UvVisObservation:
        return cls(onset_nm=d.get("onset_nm"), bands_nm=tuple(d.get("bands_nm", ())),
                   region=tuple(d.get("region", UV_REGION)),
                   thresholds=d.get("thresholds", {}), diagnostics=d.get("diagnostics", {}))


def observe_uvvis(
    spectrum: Any,
    *,
    region: tuple[float, float] = UV_REGION,
    onset_fraction: float = UV_ONSET_FRACTION,
    snr: float = UV_SNR,
    prominence: float | None = None,
) -> UvVisObservation:
    """Find the absorption onset and band maxima of a UV-vis spectrum.

    Parameters
    ----------
    spectrum : Spectrum
        Technique ``"uvvis"`` (x in nm).  A band list (``kind="peaks"``)
        gives its bands; its onset is the longest-wavelength band.
    region : (low, high) nm
    onset_fraction : float
        The onset is the longest wavelength whose absorbance (above the
        1st percentile in the region) reaches this fraction of the maximum
        and ``snr`` times the noise.
    snr, prominence : float
        Band-picking thresholds for profiles.

    Examples
    --------
    >>> from cageprint.spectra import Spectrum
    >>> x = np.arange(300.0, 900.0)
    >>> y = np.exp(-((x - 330) / 40) ** 2) + 0.1 * np.exp(-((x - 600) / 15) ** 2)
    >>> obs = observe_uvvis(Spectrum(x, y, technique="uvvis"))
    >>> 620 < obs.onset_nm < 660, [round(b) for b in obs.bands_nm]
    (True, [330, 600])
    """
    if getattr(spectrum, "technique", None) != "uvvis":
        raise SpectrumError("observe_uvvis needs a UV-vis spectrum (technique 'uvvis'); got "
                            f"technique {getattr(spectrum, 'technique', None)!r}")
    if not 0 < onset_fraction < 1:
        raise SpectrumError(f"onset_fraction must lie between 0 and 1; got {onset_fraction}")
    lo, hi = float(min(region)), float(max(region))
    x = np.asarray(spectrum.x, float)
    y = np.asarray(spectrum.y, float)
    m = (x >= lo) & (x <= hi)
    x, y = x[m], y[m]
    thresholds = {"region": [lo, hi], "onset_fraction": onset_fraction, "snr": snr,
                  "prominence": prominence}
    diagnostics: dict[str, Any] = {"kind": spectrum.kind}
    sha = dict(getattr(spectrum, "meta", {}) or {}).get("sha256")
    if sha:
        diagnostics["sha256"] = sha
    if x.size == 0:
        return UvVisObservation(None, (), (lo, hi), thresholds,
                                {**diagnostics, "note": f"no points in {lo:g}-{hi:g} nm"})
    if spectrum.kind == "peaks":
        bands = x[y > 0]
        onset = float(bands.max()) if bands.size else None
        return UvVisObservation(onset, tuple(bands), (lo, hi), thresholds, diagnostics)
    a = y - float(np.percentile(y, 1))
    top = float(a.max())
    bands, _h, noise = find_bands(x, a, snr, prominence, 2.0)
    diagnostics["noise"] = noise
    onset = None
    level = max(onset_fraction * top, snr * noise)
    diagnostics["onset_level"] = level
    if top > 0:
        above = np.nonzero(a >= level)[0]
        if above.size:
            onset = float(x[above.max()])
    return UvVisObservation(onset, tuple(bands), (lo, hi), thresholds, diagnostics)


def _gap_and_transitions(prediction: Any) -> tuple[float, tuple[float, ...]]:
    if isinstance(prediction, Candidate):
        if prediction.gap_beta is None:
            raise EvidenceError(f"compare_uvvis: candidate {prediction.label} has no Hückel gap")
        return prediction.gap_beta, prediction.transitions_beta
    if isinstance(prediction, (int, float)):
        return float(prediction), ()
    elec = getattr(prediction, "elec", prediction)
    gap = getattr(elec, "gap_beta", None)
    if gap is None:
        raise EvidenceError("compare_uvvis: the prediction has no gap_beta")
    return float(gap), transition_energies(elec)


def compare_uvvis(
    prediction: Any,
    observation: UvVisObservation,
    *,
    beta_ev: float = HUCKEL_BETA_EV,
    tol_ev: float = UV_TOL_EV,
    max_cost: float = UV_MAX_COST,
) -> TechniqueVerdict:
    """Compare the absorption onset with the Hückel gap (weak and qualitative).

    Parameters
    ----------
    prediction : Candidate, Fingerprint, ElectronicPrediction or float
        Anything carrying ``gap_beta`` (and optionally allowed transitions).
    observation : UvVisObservation
    beta_ev : float
        ``|beta|`` in eV used to turn the gap into an energy.
    tol_ev : float
        One standard deviation of the mismatch, eV.
    max_cost : float
        The most score this criterion can take away.

    Examples
    --------
    >>> obs = UvVisObservation(onset_nm=620.0)
    >>> v = compare_uvvis(0.757, obs)
    >>> v.verdict, v.score > -0.5
    ('consistent', True)
    >>> compare_uvvis(0.0, obs).verdict
    'possible'
    """
    if observation.onset_nm is None:
        return TechniqueVerdict("uvvis", 0.0, "no data",
                                ("no absorption onset found.",))
    if beta_ev <= 0 or tol_ev <= 0:
        raise EvidenceError(f"beta_ev and tol_ev must be > 0; got {beta_ev}, {tol_ev}")
    gap, transitions = _gap_and_transitions(prediction)
    e_obs = HC_EV_NM / observation.onset_nm
    e_gap = gap * beta_ev
    z = (e_obs - e_gap) / tol_ev
    cost = min(0.5 * z * z, max_cost)
    reasons = [
        f"onset {observation.onset_nm:.0f} nm ({e_obs:.2f} eV); Hückel gap {gap:.3f} |β| "
        f"= {e_gap:.2f} eV.",
    ]
    details: dict[str, Any] = {"onset_ev": e_obs, "gap_beta": gap, "gap_ev": e_gap,
                               "beta_ev": beta_ev, "tol_ev": tol_ev}
    if gap <= 1e-9:
        reasons.append("open shell in Hückel theory (gap 0): a neutral empty cage of this "
                       "kind is not expected to be stable.")
    if transitions:
        first = transitions[0] * beta_ev
        details["first_allowed_ev"] = first
        reasons.append(f"first dipole-allowed transition {first:.2f} eV "
                       f"({HC_EV_NM / first:.0f} nm) by the same conversion.")
    reasons.append(CAVEAT)
    # a weak criterion: it lowers the score but never calls a candidate worse than "possible"
    verdict = "consistent" if abs(z) <= 1 else "possible"
    return TechniqueVerdict("uvvis", -cost, verdict, tuple(reasons), details)
