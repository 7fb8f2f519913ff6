"""Mass spectrum step: which cage formulas, charge states and abundances a spectrum shows.

``observe_mass`` runs peaks -> isotope envelopes -> charge (from the 1/z
spacing) -> calibration offset (from the C_n ladder) -> candidate formulas
within a ppm tolerance -> envelope-shape scores -> fragments and ambiguities.
``compare_mass`` scores given formulas (or cages) against an observation.
``predict_mass`` gives the expected ion envelope of a formula or cage.

Candidate families searched: empty cages C_n (n even, 20..400); endohedral
M@C_n, M2@C_n, M3N@C_n, M2C2@C_n for the metals of the isotope table; oxides
C_nO and C_nO2; hydrides C_nH_2k; heterofullerenes C_(n-1)N.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from functools import lru_cache
from types import MappingProxyType
from typing import Any

import numpy as np

from ..errors import FormulaError, SpectrumError
from ..formula import NONMETALS, Formula, parse_formula
from ..isotopes import (
    C13_NATURAL,
    ISOTOPES,
    Envelope,
    _check_charge,
    _principal,
    fit_c13,
    isotope_envelope,
    neutral_mass,
)
from ..spectra.model import Spectrum

__all__ = [
    "MASS_TOL_PPM",
    "MASS_TOL_FLOOR",
    "PEAK_SNR",
    "ENVELOPE_MIN_SCORE",
    "FRAGMENT_MAX_RATIO",
    "MAX_CALIBRATION_OFFSET",
    "CLUSTER_CHARGES",
    "MassSpecies",
    "ObservedEnvelope",
    "MassObservation",
    "MassMatch",
    "observe_mass",
    "compare_mass",
    "predict_mass",
    "score_formula",
    "cage_charge",
    "candidate_formulas",
]

#: mass tolerance for a formula match, ppm of m/z
MASS_TOL_PPM = 10.0
#: absolute floor of the mass tolerance, in m/z units (raise it for low-resolution data)
MASS_TOL_FLOOR = 0.005
#: a peak must rise this many noise standard deviations above the local baseline
PEAK_SNR = 5.0
#: peaks smaller than this fraction of the tallest are ignored (dynamic-range floor)
MIN_RELATIVE_INTENSITY = 1e-4
#: isotope step (u, neutral mass) used to walk an envelope, and its tolerance
ISOTOPE_STEP = 1.0017
ISOTOPE_STEP_TOL = 0.006
#: an envelope needs at least this many isotope peaks
MIN_ISOTOPE_PEAKS = 2
#: cosine between measured and theoretical envelope needed to accept a formula
ENVELOPE_MIN_SCORE = 0.90
#: candidates whose combined score is within this margin of the best are reported as alternatives
AMBIGUITY_MARGIN = 0.02
#: a C_n ladder member used for calibration must fit this well
CALIBRANT_MIN_SCORE = 0.97
#: largest calibration offset searched for, in m/z units
MAX_CALIBRATION_OFFSET = 0.5
#: a species is a C2-loss fragment when at most this fraction of its C2-richer neighbour
FRAGMENT_MAX_RATIO = 0.25
#: a second species in one envelope needs residual peaks above this fraction of the envelope
RESIDUAL_MIN_FRACTION = 0.10
#: overlapping envelopes (hydride series, C_(n-1)N next to C_n) are peeled from the low-m/z
#: side down to this fraction of the largest peak; a peeled species may overshoot the
#: measured peaks by at most PEEL_MAX_OVERSHOOT of its own intensity
PEEL_MIN_FRACTION = 0.03
PEEL_MAX_OVERSHOOT = 0.25
#: peeling is tried when the usual search explains an envelope with a cosine below this
PEEL_TRY_BELOW = 0.995
#: when summing or subtracting envelopes, a line is put on the nearest peak within this many
#: m/z units times 1/|z| (blended lines move centroids by more than the mass tolerance)
PEAK_ASSIGN_TOL = 0.1
#: cage sizes searched, and the largest hydrogen count of a hydride
CAGE_SIZES = tuple(range(20, 402, 2))
MAX_HYDROGENS = 36

# Formal charges of encapsulated atoms and cluster anions, used for the charge the
# cluster donates to the cage (Sc3N@C80 -> (Sc3+)3 N3- -> cage 6-; La@C82 -> cage 3-).
# From memory / common practice, no source: trivalent rare earths, Sc and Y; divalent
# Sm, Tm (in mono-metallofullerenes), alkaline earths and Ti; monovalent alkali metals.
CLUSTER_CHARGES = MappingProxyType({
    "Sc": 3, "Y": 3, "La": 3, "Ce": 3, "Pr": 3, "Nd": 3, "Gd": 3, "Tb": 3, "Dy": 3,
    "Ho": 3, "Er": 3, "Lu": 3, "Sm": 2, "Tm": 2, "Ca": 2, "Sr": 2, "Ba": 2, "Ti": 2,
    "Li": 1, "K": 1, "N": -3, "C": -1, "O": -2, "S": -2, "H": 1,
})

METALS = tuple(e for e in ISOTOPES if e not in NONMETALS)
_KIND_ORDER = ("cage", "endohedral", "oxide", "hydride", "heterofullerene", "fragment")


def cage_charge(formula: str | Formula) -> int:
    """Formal charge on the cage of an endohedral formula (0 for a plain one).

    The cluster's formal charge is the sum of :data:`CLUSTER_CHARGES` over its
    atoms; a C2 unit counts as C2(2-).

    Examples
    --------
    >>> cage_charge("Sc3N@C80"), cage_charge("La@C82"), cage_charge("Y2C2@C82"), cage_charge("C60")
    (-6, -3, -4, 0)
    """
    f = parse_formula(formula)
    total = 0
    for e, n in f.inner:
        total += CLUSTER_CHARGES.get(e, 0) * n
    return -total


# ------------------------------------------------------------------ result types


@dataclass(frozen=True)
class MassSpecies:
    """One species found in a mass spectrum.

    Attributes
    ----------
    formula : str
        Canonical formula (``C60``, ``La@C82``, ``Sc3N@C80``, ``C60O``).
    charge : int
        Ion charge (signed).
    mz : float
        Monoisotopic m/z as observed, after calibration correction.
    relative_abundance : float
        Envelope total relative to the most abundant species (1.0).
    error_ppm : float
        Abundance-weighted mass error of the matched lines, ppm.
    envelope_score : float
        Cosine between measured and theoretical envelope (1 = identical shape).
    cage_n : int
        Atoms in the cage: its carbons (plus the N of a heterofullerene C_(n-1)N).
    cage_charge : int
        Formal charge on the cage (endohedral clusters donate electrons).
    kind : str
        ``cage``, ``endohedral``, ``oxide``, ``hydride``, ``heterofullerene``
        or ``fragment``.
    reasons : tuple of str
        The evidence behind the line, in words.
    alternatives : tuple of str
        Other formulas that explain the same envelope about as well.
    n_peaks : int
        Isotope peaks matched.
    intensity : float
        Envelope total in the spectrum's intensity units.
    c13 : float
        13C fraction used for (or fitted to) the theoretical envelope.
    """

    formula: str
    charge: int
    mz: float
    relative_abundance: float
    error_ppm: float
    envelope_score: float
    cage_n: int
    cage_charge: int
    kind: str
    reasons: tuple[str, ...] = ()
    alternatives: tuple[str, ...] = ()
    n_peaks: int = 0
    intensity: float = 0.0
    c13: float = C13_NATURAL

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        d["reasons"] = list(self.reasons)
        d["alternatives"] = list(self.alternatives)
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> MassSpecies:
        d = dict(d)
        d["reasons"] = tuple(d.get("reasons", ()))
        d["alternatives"] = tuple(d.get("alternatives", ()))
        return cls(**d)


@dataclass(frozen=True, eq=False)
class ObservedEnvelope:
    """A group of peaks spaced by ~1/z: one (or more overlapping) isotope envelopes.

    ``mz`` is corrected for the calibration offset; ``intensity`` is peak area
    (profile data) or the listed intensity (peak lists).
    """

    charge: int
    mz: np.ndarray
    intensity: np.ndarray

    @property
    def base_mz(self) -> float:
        return float(self.mz[int(np.argmax(self.intensity))])


@dataclass(frozen=True, eq=False)
class MassObservation:
    """What :func:`observe_mass` found.

    Attributes
    ----------
    species : tuple of MassSpecies
        Most abundant first.
    envelopes : tuple of ObservedEnvelope
        Every isotope envelope found (explained or not).
    peaks_mz, peaks_intensity : ndarray
        All peaks above the threshold, m/z corrected for the calibration offset.
    diagnostics : mapping
        Thresholds, noise, baseline, calibration offset and calibrants,
        unexplained envelopes and unassigned peaks.
    """

    species: tuple[MassSpecies, ...]
    envelopes: tuple[ObservedEnvelope, ...]
    peaks_mz: np.ndarray
    peaks_intensity: np.ndarray
    diagnostics: Any = field(default_factory=dict)

    @property
    def formulas(self) -> list[str]:
        return [s.formula for s in self.species]

    @property
    def cage_sizes(self) -> list[int]:
        """Cage sizes of the non-fragment species, sorted."""
        return sorted({s.cage_n for s in self.species if s.kind != "fragment"})

    def to_frame(self):
        """Species as a pandas DataFrame, one row each."""
        import pandas as pd

        cols = ["formula", "charge", "mz", "relative_abundance", "error_ppm", "envelope_score",
                "cage_n", "cage_charge", "kind", "n_peaks", "c13", "alternatives", "reasons"]
        rows = []
        for s in self.species:
            d = s.to_dict()
            d["alternatives"] = "; ".join(s.alternatives)
            d["reasons"] = " ".join(s.reasons)
            rows.append({c: d[c] for c in cols})
        return pd.DataFrame(rows, columns=cols)


# ------------------------------------------------------------------ candidates


def _text(inner: dict[str, int], outer: dict[str, int]) -> str:
    return Formula(tuple(sorted(inner.items())), tuple(sorted(outer.items()))).text


@lru_cache(maxsize=4)
def _library(metals: tuple[str, ...], max_h: int):
    """Sorted (mono masses, formulas, kinds) of every candidate formula."""
    mono = {e: _principal(e, C13_NATURAL)[1] for e in ISOTOPES}
    rows: list[tuple[float, str, str]] = []
    for n in CAGE_SIZES:
        c = 12.0 * n
        rows.append((c, f"C{n}", "cage"))
        rows.append((c + mono["O"], f"C{n}O", "oxide"))
        rows.append((c + 2 * mono["O"], f"C{n}O2", "oxide"))
        rows.append((c - 12.0 + mono["N"], f"C{n - 1}N", "heterofullerene"))
        for h in range(2, max_h + 1, 2):
            rows.append((c + h * mono["H"], f"C{n}H{h}", "hydride"))
        for m in metals:
            mm = mono[m]
            rows.append((c + mm, f"{m}@C{n}", "endohedral"))
            rows.append((c + 2 * mm, f"{m}2@C{n}", "endohedral"))
            rows.append((c + 3 * mm + mono["N"], f"{m}3N@C{n}", "endohedral"))
            rows.append((c + 2 * mm + 24.0, f"{m}2C2@C{n}", "endohedral"))
    rows.sort()
    masses = np.array([r[0] for r in rows])
    return masses, tuple(r[1] for r in rows), tuple(r[2] for r in rows)


def candidate_formulas(mass_lo: float, mass_hi: float, metals=None) -> list[tuple[str, str, float]]:
    """Candidate formulas with monoisotopic neutral mass in [mass_lo, mass_hi].

    Returns (formula, kind, monoisotopic mass) tuples sorted by mass.

    Examples
    --------
    >>> [f for f, k, m in candidate_formulas(719.9, 720.1)]
    ['Ti@C56', 'C60']
    """
    masses, texts, kinds = _library(tuple(metals) if metals is not None else METALS,
                                    MAX_HYDROGENS)
    lo, hi = np.searchsorted(masses, [mass_lo, mass_hi], side="left")
    return [(texts[i], kinds[i], float(masses[i])) for i in range(lo, hi)]


@lru_cache(maxsize=8192)
def _envelope_cached(text: str, charge: int, c13: float) -> Envelope:
    return isotope_envelope(text, charge, c13=c13, threshold=1e-6)


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


def _centroid_profile(x, y, snr):
    """Centroids, areas and heights of the peaks of a profile spectrum.

    Centroid: intensity-weighted mean of the points above half height (weights
    y - half, so the window edges carry no weight); with fewer than 5 such
    points, the vertex of a parabola through ln y of the top 3 points (exact
    for a Gaussian).  Area: height x FWHM x 1.0645 (Gaussian).
    """
    from scipy.signal import find_peaks, peak_widths

    noise, baseline = _noise_and_baseline(y)
    yc = y - baseline
    floor = MIN_RELATIVE_INTENSITY * float(yc.max())
    thr = max(snr * noise, floor)
    idx, _ = find_peaks(yc, height=thr, prominence=thr)
    idx = idx[(idx > 0) & (idx < y.size - 1)]
    if idx.size == 0:
        return np.empty(0), np.empty(0), np.empty(0), noise, thr
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
    return centre, area, height, noise, thr


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
                    tol = ISOTOPE_STEP_TOL / z + 2 * float(_tol(mz[cur], ppm, floor))
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


# ------------------------------------------------------------------ scoring


@dataclass(frozen=True)
class MassMatch:
    """How well one formula explains one observed envelope.

    Attributes
    ----------
    formula : str
    charge : int
    score : float
        Combined score: envelope cosine times a Gaussian mass-error factor.
    envelope_score : float
    error_ppm : float
    mono_mz : float
        Observed monoisotopic m/z (inferred from the matched lines).
    scale : float
        Least-squares envelope total fitted to the intensities.
    n_matched : int
    c13 : float
    matched : tuple of int
        Indices of the envelope peaks explained.
    """

    formula: str
    charge: int
    score: float
    envelope_score: float
    error_ppm: float
    mono_mz: float
    scale: float
    n_matched: int
    c13: float
    matched: tuple[int, ...] = ()


def _match(text, z, mz, inten, ppm, floor, c13) -> MassMatch | None:
    env = _envelope_cached(text, z, c13)
    rel = env.abundance
    keep = rel >= 1e-3 * rel.max()
    tmz, tab = env.mz[keep], rel[keep]
    tol = _tol(tmz, ppm, floor)
    j = np.clip(np.searchsorted(mz, tmz), 1, max(mz.size - 1, 1))
    left = np.clip(j - 1, 0, mz.size - 1)
    right = np.clip(j, 0, mz.size - 1)
    pick = np.where(np.abs(mz[left] - tmz) <= np.abs(mz[right] - tmz), left, right)
    dev = mz[pick] - tmz
    hit = np.abs(dev) <= tol
    base = int(np.argmax(tab))
    if not hit[base] or np.count_nonzero(hit) < min(MIN_ISOTOPE_PEAKS, tab.size):
        return None
    # the envelope's strongest measured peak must be explained
    strongest = int(np.argmax(inten))
    if strongest not in set(pick[hit].tolist()):
        return None
    meas = np.zeros(tab.size)
    meas[hit] = inten[pick[hit]]
    explained = np.zeros(mz.size, dtype=bool)
    explained[pick[hit]] = True
    extra = inten[~explained]
    num = float(tab @ meas)
    den = float(np.sqrt(tab @ tab) * np.sqrt(meas @ meas + extra @ extra))
    cos = num / den if den > 0 else 0.0
    w = tab[hit] * meas[hit]
    err_ppm = float(np.sum(w * dev[hit] / tmz[hit]) / np.sum(w) * 1e6)
    tol_ppm = float(np.max(tol[hit] / tmz[hit]) * 1e6)
    score = cos * float(np.exp(-0.5 * (err_ppm / tol_ppm) ** 2))
    nominal0 = sum(n * _principal(e, C13_NATURAL)[0] for e, n in parse_formula(text).counts.items())
    mono_line = np.flatnonzero(env.nominal == nominal0)
    mono_t = float(env.mz[mono_line[0]]) if mono_line.size else float(env.mz[0])
    scale = num / float(tab @ tab) if num > 0 else 0.0
    return MassMatch(
        formula=env.formula, charge=z, score=score, envelope_score=cos, error_ppm=err_ppm,
        mono_mz=mono_t * (1 + err_ppm * 1e-6), scale=scale,
        n_matched=int(np.count_nonzero(hit)), c13=c13,
        matched=tuple(sorted(set(pick[hit].tolist()))),
    )


def _match_free_c13(text, z, mz, inten, ppm, floor) -> MassMatch | None:
    first = _match(text, z, mz, inten, ppm, floor, C13_NATURAL)
    if first is None:
        # positions hardly depend on p; accept if the strongest peak is on a line
        env = _envelope_cached(text, z, C13_NATURAL)
        d = np.abs(env.mz[:, None] - mz[None, :]).min(axis=0)
        if np.count_nonzero(d <= _tol(mz, ppm, floor)) < MIN_ISOTOPE_PEAKS:
            return None
    try:
        fit = fit_c13(text, mz, inten, z)
    except FormulaError:
        return first
    p = round(float(fit.c13), 5)
    second = _match(text, z, mz, inten, ppm, floor, p)
    if second is None:
        return first
    if first is None or second.score > first.score:
        return second
    return first


def score_formula(formula, envelope: ObservedEnvelope, *, c13=None,
                  ppm: float = MASS_TOL_PPM, floor: float = MASS_TOL_FLOOR) -> MassMatch | None:
    """Score one formula against one observed envelope (None if the lines do not line up).

    ``c13``: None for the natural 13C fraction, a number to fix it, or
    ``"fit"`` to fit it to the envelope.

    Examples
    --------
    >>> from cageprint.isotopes import isotope_envelope
    >>> e = isotope_envelope("C70", 1, threshold=1e-3)
    >>> m = score_formula("C70", ObservedEnvelope(1, e.mz, e.abundance))
    >>> round(m.envelope_score, 4), round(m.error_ppm, 4)
    (1.0, 0.0)
    """
    text = parse_formula(formula).text
    z = envelope.charge
    if c13 == "fit":
        return _match_free_c13(text, z, envelope.mz, envelope.intensity, ppm, floor)
    c = C13_NATURAL if c13 is None else float(c13)
    return _match(text, z, envelope.mz, envelope.intensity, ppm, floor, c)


def _best_for(z, mz, inten, ppm, floor, c13, metals):
    masses = neutral_mass(mz, z)
    lo, hi = float(masses.min()) - 13.0, float(masses.max()) + 1.0
    results = []
    for text, kind, _ in candidate_formulas(lo, hi, metals):
        if c13 == "fit":
            m = _match_free_c13(text, z, mz, inten, ppm, floor)
        else:
            m = _match(text, z, mz, inten, ppm, floor, c13)
        if m is not None and m.envelope_score >= ENVELOPE_MIN_SCORE:
            results.append((m, kind))
    results.sort(key=lambda r: (-r[0].score, _KIND_ORDER.index(r[1])))
    return results


def _model(found, mz, ppm, floor) -> np.ndarray:
    """Sum of the fitted envelopes of ``found`` on the peaks ``mz``."""
    model = np.zeros(mz.size)
    for f in found:
        m = f["match"]
        assign = PEAK_ASSIGN_TOL / abs(m.charge)
        env = _envelope_cached(m.formula, m.charge, m.c13)
        for mz_t, a in zip(env.mz, env.abundance, strict=True):
            i = int(np.argmin(np.abs(mz - mz_t)))
            if abs(mz[i] - mz_t) <= max(float(_tol(mz_t, ppm, floor)), assign):
                model[i] += a * m.scale
    return model


def _explained(found, mz, inten, ppm, floor) -> float:
    """Cosine between the summed model of ``found`` and the measured envelope."""
    if not found:
        return 0.0
    model = _model(found, mz, ppm, floor)
    return float(model @ inten / (np.linalg.norm(model) * np.linalg.norm(inten) + 1e-300))


def _greedy(z, mz, inten, ppm, floor, c13, metals, snr, noise):
    """Best formula for the envelope, then for what it leaves (up to 3 species)."""
    found = []
    resid = inten.copy()
    for attempt in range(3):
        res = _best_for(z, mz, resid, ppm, floor, c13, metals)
        if not res:
            break
        best, kind = res[0]
        same = parse_formula(best.formula).counts
        alts = [m.formula for m, _ in res[1:]
                if m.score >= best.score - AMBIGUITY_MARGIN
                or parse_formula(m.formula).counts == same]
        found.append({"match": best, "kind": kind, "alts": alts, "shared": attempt > 0})
        resid = np.maximum(resid - _model(found[-1:], mz, ppm, floor), 0.0)
        big = resid > max(RESIDUAL_MIN_FRACTION * inten.max(),
                          snr * noise if np.isfinite(noise) else 0.0)
        if np.count_nonzero(big) < MIN_ISOTOPE_PEAKS:
            break
    return found


# ------------------------------------------------------------------ overlapping envelopes


def _mono_index(env: Envelope, text: str) -> int:
    nominal0 = sum(n * _principal(e, C13_NATURAL)[0] for e, n in parse_formula(text).counts.items())
    hit = np.flatnonzero(env.nominal == nominal0)
    return int(hit[0]) if hit.size else 0


def _peel(z, mz, inten, ppm, floor, c13, metals):
    """Explain one envelope as a sum of overlapping species, lowest m/z first.

    The lowest remaining peak must be the monoisotopic line of a species; its
    height fixes the species' amount, whose envelope is subtracted; repeat.
    Amounts are then refined jointly by non-negative least squares.
    """
    from scipy.optimize import nnls

    thr = PEEL_MIN_FRACTION * float(inten.max())
    resid = inten.astype(float).copy()
    picked = []
    for _ in range(4):
        above = np.flatnonzero(resid > thr)
        if above.size == 0:
            break
        i = int(above[0])
        mass = neutral_mass(mz[i], z)
        tol_m = float(_tol(mz[i], ppm, floor)) * abs(z)
        best = None
        for text, kind, _ in candidate_formulas(mass - tol_m, mass + tol_m, metals):
            env = _envelope_cached(text, z, c13)
            rel = env.abundance
            j0 = _mono_index(env, text)
            if rel[:j0].sum() > 0.01 * rel[j0]:
                continue
            amount = resid[i] / rel[j0]
            column = np.zeros(mz.size)
            line_mz = np.full(mz.size, np.nan)
            missing = 0.0
            for t in np.flatnonzero(amount * rel > 0.3 * thr):
                k = int(np.argmin(np.abs(mz - env.mz[t])))
                if abs(mz[k] - env.mz[t]) <= max(float(_tol(env.mz[t], ppm, floor)),
                                                 PEAK_ASSIGN_TOL / abs(z)):
                    column[k] += rel[t]
                    line_mz[k] = env.mz[t]
                else:
                    missing += amount * rel[t]
            total = amount * float(rel.sum())
            bad = (float(np.maximum(amount * column - resid, 0.0).sum()) + missing) / total
            key = (bad, _KIND_ORDER.index(kind))
            if best is None or key < best[0]:
                best = (key, text, kind, column, line_mz, amount, env, j0)
        if best is None or best[0][0] > PEEL_MAX_OVERSHOOT:
            break
        picked.append(best)
        resid = np.maximum(resid - best[5] * best[3], 0.0)
    if len(picked) < 2:
        return []  # one species alone was already tried (and failed) by the usual search
    a = np.column_stack([p[3] for p in picked])
    amounts, _ = nnls(a, inten.astype(float))
    out = []
    for j, (_, _text, kind, column, line_mz, _, env, j0) in enumerate(picked):
        if amounts[j] <= 0:
            continue
        others = a @ amounts - column * amounts[j]
        target = np.maximum(inten - others, 0.0)
        cos = float(column @ target / (np.linalg.norm(column) * np.linalg.norm(target) + 1e-300))
        own = (column * amounts[j] >= 0.5 * (a @ amounts)) & np.isfinite(line_mz)
        if not own.any():
            continue
        w = column[own]
        err = float(np.sum(w * (mz[own] - line_mz[own]) / line_mz[own]) / w.sum() * 1e6)
        tol_ppm = float(np.max(_tol(line_mz[own], ppm, floor) / line_mz[own]) * 1e6)
        if cos < ENVELOPE_MIN_SCORE or abs(err) > tol_ppm:
            continue
        match = MassMatch(
            formula=env.formula, charge=z, score=cos * float(np.exp(-0.5 * (err / tol_ppm) ** 2)),
            envelope_score=cos, error_ppm=err,
            mono_mz=float(env.mz[j0]) * (1 + err * 1e-6),
            scale=float(amounts[j] * env.abundance.sum()), n_matched=int(np.count_nonzero(column)),
            c13=c13, matched=tuple(np.flatnonzero(column).tolist()),
        )
        out.append({"match": match, "kind": kind, "alts": [], "shared": True})
    return out


# ------------------------------------------------------------------ calibration


def _ladder_residual(z, mz, inten):
    """Fit the best C_n (n even) to an envelope without a mass tolerance.

    Returns (cosine, residual in m/z, n) of the best alignment, or None.
    """
    masses = neutral_mass(mz, z)
    b = int(np.argmax(inten))
    best = None
    for s in (-1, 0, 1):
        nb = int(np.round(masses[b])) + s
        nominals = np.round(masses - masses[b]).astype(int) + nb
        n = (nb // 24) * 2
        for n_try in (n, n - 2):
            if n_try < CAGE_SIZES[0] or n_try > CAGE_SIZES[-1]:
                continue
            env = _envelope_cached(f"C{n_try}", 0, C13_NATURAL)
            k = nominals - env.nominal[0]
            t = np.zeros(k.size)
            ok = (k >= 0) & (k < env.nominal.size)
            t[ok] = env.abundance[k[ok]]
            if t.sum() <= 0:
                continue
            cos = float(t @ inten) / float(np.linalg.norm(env.abundance) * np.linalg.norm(inten))
            w = t * inten
            resid = float(np.sum(w[ok] * (masses[ok] - env.mz[k[ok]])) / np.sum(w[ok])) / abs(z)
            if best is None or cos > best[0] + 1e-9:
                best = (cos, resid, n_try)
    return best


# ------------------------------------------------------------------ observe


def _formula_minus_c2(text: str) -> str | None:
    f = parse_formula(text)
    outer = dict(f.outer)
    if outer.get("C", 0) < CAGE_SIZES[0] + 2:
        return None
    outer["C"] -= 2
    return _text(dict(f.inner), outer)


def observe_mass(
    spectrum: Spectrum,
    *,
    snr: float = PEAK_SNR,
    ppm: float = MASS_TOL_PPM,
    floor: float = MASS_TOL_FLOOR,
    c13: float | str | None = None,
    calibrate: bool | float = True,
    polarity: str | None = None,
    metals=None,
    clip_negative: bool = False,
) -> MassObservation:
    """Find the cage species in a mass spectrum.

    Parameters
    ----------
    spectrum : Spectrum
        ``technique="mass"``, x in m/z; ``kind="profile"`` (centroided here)
        or ``kind="peaks"`` (a peak list).  Intensities must be >= 0.
    snr : float
        Peak threshold in noise standard deviations (:data:`PEAK_SNR`).
    ppm, floor : float
        Mass tolerance: ``max(ppm * 1e-6 * m/z, floor)`` (:data:`MASS_TOL_PPM`,
        :data:`MASS_TOL_FLOOR`, floor in m/z units).
    c13 : None, float or "fit"
        13C fraction of the theoretical envelopes: natural (None), fixed, or
        fitted per species.
    calibrate : bool or float
        True: estimate a constant m/z offset from the C_n ladder and correct
        it; False: none; a number: use that offset (measured minus true).
    polarity : {"positive", "negative"}, optional
        Default from ``spectrum.meta["polarity"]``, else positive.
    metals : iterable of str, optional
        Metals searched for endohedral candidates (default: all in the table).
    clip_negative : bool
        Set negative intensities to zero instead of refusing them.

    Returns
    -------
    MassObservation

    Examples
    --------
    >>> from cageprint.techniques.mass_synthetic import synthetic_mass_spectrum
    >>> s = synthetic_mass_spectrum([("C60", 1, 1.0), ("C70", 1, 0.4)], seed=1)
    >>> obs = observe_mass(s)
    >>> [(sp.formula, sp.charge) for sp in obs.species]
    [('C60', 1), ('C70', 1)]
    """
    if not isinstance(spectrum, Spectrum):
        raise SpectrumError(f"spectrum must be a Spectrum, got {type(spectrum).__name__}")
    if spectrum.technique != "mass":
        raise SpectrumError(
            f"observe_mass needs a spectrum with technique 'mass', got {spectrum.technique!r}"
        )
    pol = polarity or str(spectrum.meta.get("polarity", "positive")).lower()
    if pol.startswith("pos") or pol == "+":
        sign = 1
    elif pol.startswith("neg") or pol == "-":
        sign = -1
    else:
        raise SpectrumError(f"polarity must be 'positive' or 'negative', got {pol!r}")
    if c13 is not None and c13 != "fit":
        c13 = float(c13)
        if not 0.0 <= c13 <= 1.0:
            raise FormulaError(f"c13 must be None, 'fit' or a fraction in [0, 1], got {c13!r}")
    c13_fixed = C13_NATURAL if c13 is None else c13
    x, y = spectrum.x, spectrum.y
    if np.any(y < 0):
        if not clip_negative:
            i = int(np.flatnonzero(y < 0)[0])
            raise SpectrumError(
                f"spectrum has {int(np.count_nonzero(y < 0))} negative intensities (first at "
                f"point {i}, m/z {x[i]:.4f}: {y[i]:.4g}); mass spectra must be >= 0; pass "
                "clip_negative=True to set them to zero"
            )
        y = np.maximum(y, 0.0)
    if spectrum.kind == "profile":
        pmz, parea, _, noise, thr = _centroid_profile(x, y, snr)
    else:
        keep = y >= MIN_RELATIVE_INTENSITY * (y.max() if y.size else 0)
        pmz, parea = x[keep & (y > 0)], y[keep & (y > 0)]
        noise, thr = float("nan"), float(MIN_RELATIVE_INTENSITY * y.max())
    if pmz.size == 0:
        raise SpectrumError(
            f"no peaks in the mass spectrum above the threshold ({snr} x noise "
            f"{noise:.3g} = {thr:.3g}); lower snr= or check the file"
        )
    chains, free = _chains(pmz, parea, ppm, floor)

    # calibration offset from the C_n ladder
    calib: list[dict[str, Any]] = []
    if calibrate is True:
        for z, members in chains:
            r = _ladder_residual(sign * z, pmz[members], parea[members])
            if r and r[0] >= CALIBRANT_MIN_SCORE and abs(r[1]) <= MAX_CALIBRATION_OFFSET:
                calib.append({"formula": f"C{r[2]}", "charge": sign * z,
                              "offset": r[1], "score": r[0]})
        offset = float(np.median([c["offset"] for c in calib])) if calib else 0.0
        spread = (float(np.median(np.abs([c["offset"] - offset for c in calib])))
                  if len(calib) > 1 else float("nan"))
    elif calibrate is False:
        offset, spread = 0.0, float("nan")
    else:
        offset, spread = float(calibrate), float("nan")
    cmz = pmz - offset

    found: list[dict[str, Any]] = []
    envelopes: list[ObservedEnvelope] = []
    unexplained: list[dict[str, Any]] = []
    for z, members in chains:
        zs = sign * z
        emz, eint = cmz[members], parea[members]
        envelopes.append(ObservedEnvelope(zs, emz, eint))
        c13_search = c13 if c13 == "fit" else c13_fixed
        greedy = _greedy(zs, emz, eint, ppm, floor, c13_search, metals, snr, noise)
        chosen = greedy
        fit_greedy = _explained(greedy, emz, eint, ppm, floor)
        if c13 != "fit" and fit_greedy < PEEL_TRY_BELOW:
            peeled = _peel(zs, emz, eint, ppm, floor, c13_fixed, metals)
            if peeled and _explained(peeled, emz, eint, ppm, floor) > fit_greedy + 0.005:
                chosen = peeled
        if not chosen:
            unexplained.append({"charge": zs, "mz": [round(v, 5) for v in emz.tolist()],
                                "reason": "no candidate formula within tolerance "
                                f"({ppm} ppm, floor {floor}) and envelope score "
                                f">= {ENVELOPE_MIN_SCORE}"})
        found.extend(chosen)

    total_max = max((f["match"].scale for f in found), default=1.0) or 1.0
    by_key = {(f["match"].formula, f["match"].charge): f for f in found}
    species = []
    for f in found:
        m: MassMatch = f["match"]
        kind = f["kind"]
        pf = parse_formula(m.formula)
        reasons = [
            f"{m.n_matched} isotope peaks spaced 1/{abs(m.charge)} give charge {m.charge:+d}.",
            f"mass error {m.error_ppm:+.2f} ppm (tolerance {ppm} ppm, floor {floor}).",
            f"envelope cosine {m.envelope_score:.4f} with 13C fraction {m.c13:.4f}.",
        ]
        if f["shared"]:
            reasons.append("overlaps another envelope; separated by subtracting envelopes.")
        if f["alts"]:
            reasons.append("ambiguous: " + ", ".join(f["alts"][:6])
                           + " explain the envelope about as well.")
        parent_key = None
        fm = m.formula
        up = _text(dict(pf.inner), {**dict(pf.outer), "C": pf.cage_n + 2})
        if (up, m.charge) in by_key:
            parent = by_key[(up, m.charge)]["match"]
            if m.scale <= FRAGMENT_MAX_RATIO * parent.scale:
                parent_key = up
        if parent_key is not None:
            kind = "fragment"
            reasons.append(
                f"C2 loss from {parent_key} (spacing {24 / abs(m.charge):g} m/z, "
                f"{m.scale / by_key[(parent_key, m.charge)]['match'].scale:.1%} of it): "
                "probably a fragment, possibly a genuine cage."
            )
        species.append(MassSpecies(
            formula=fm, charge=m.charge, mz=round(m.mono_mz, 6),
            relative_abundance=m.scale / total_max, error_ppm=m.error_ppm,
            envelope_score=m.envelope_score,
            cage_n=pf.cage_n + (dict(pf.outer).get("N", 0) if kind == "heterofullerene" else 0),
            cage_charge=cage_charge(pf),
            kind=kind, reasons=tuple(reasons), alternatives=tuple(f["alts"]),
            n_peaks=m.n_matched, intensity=m.scale, c13=m.c13,
        ))
    species.sort(key=lambda s: -s.relative_abundance)

    diagnostics = {
        "polarity": "positive" if sign > 0 else "negative",
        "kind": spectrum.kind,
        "n_points": int(x.size),
        "noise": noise,
        "threshold": thr,
        "snr": snr,
        "ppm": ppm,
        "floor": floor,
        "c13": c13 if c13 == "fit" else c13_fixed,
        "n_peaks": int(pmz.size),
        "calibration_offset": offset,
        "calibration_spread": spread,
        "calibrants": tuple(calib),
        "calibration": ("estimated from the C_n ladder" if calibrate is True and calib
                        else "no C_n ladder found; no correction" if calibrate is True
                        else "given" if calibrate is not False else "off"),
        "unexplained_envelopes": tuple(unexplained),
        "unassigned_peaks": tuple(round(float(v), 5) for v in cmz[free]),
    }
    return MassObservation(
        species=tuple(species), envelopes=tuple(envelopes), peaks_mz=cmz, peaks_intensity=parea,
        diagnostics=MappingProxyType(diagnostics),
    )


# ------------------------------------------------------------------ predict / compare


def _as_formula(item) -> str:
    if isinstance(item, (str, Formula)):
        return parse_formula(item).text
    f = getattr(item, "formula", None)
    if f is None:
        raise FormulaError(
            f"cannot take a formula from {type(item).__name__}; pass a string such as 'C60' "
            "or an object with a .formula"
        )
    return parse_formula(f).text


def predict_mass(item, charge: int = 1, *, c13: float | None = None) -> Envelope:
    """Expected ion envelope of a formula or a cage (anything with ``.formula``).

    Examples
    --------
    >>> env = predict_mass("La@C82", 1)
    >>> env.formula, round(float(env.base_mz), 3)
    ('La@C82', 1122.906)
    """
    return isotope_envelope(_as_formula(item), _check_charge(charge), c13=c13)


def compare_mass(predicted, observed: MassObservation, *, c13=None,
                 ppm: float = MASS_TOL_PPM, floor: float = MASS_TOL_FLOOR):
    """Score formulas (or cages) against an observation.

    For each formula, every observed envelope is tried at its charge; the best
    match is kept.  Returns a list of :class:`MassMatch` (None where the
    formula explains no envelope), in the order given.

    Examples
    --------
    >>> from cageprint.techniques.mass_synthetic import synthetic_mass_spectrum
    >>> obs = observe_mass(synthetic_mass_spectrum([("C60", 1, 1.0)], seed=2))
    >>> [m is not None for m in compare_mass(["C60", "C70"], obs)]
    [True, False]
    """
    items = [predicted] if isinstance(predicted, (str, Formula)) or hasattr(
        predicted, "formula") else list(predicted)
    out = []
    for item in items:
        text = _as_formula(item)
        best = None
        for env in observed.envelopes:
            m = score_formula(text, env, c13=c13, ppm=ppm, floor=floor)
            if m is not None and (best is None or m.score > best.score):
                best = m
        out.append(best)
    return out
