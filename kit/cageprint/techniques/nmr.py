"""13C NMR: observed cage lines against each candidate's orbit pattern.

``predict_nmr`` comes from :mod:`cageprint.symmetry` (orbits of the
automorphism group).  ``observe_nmr`` finds the cage lines of a spectrum (or
takes a peak list), drops solvent and reference lines, and integrates.
``compare_nmr`` finds the best explanation of the observed lines by the
predicted orbits, allowing what real spectra do:

* two or three orbits on one line (accidental coincidence; intensities add),
* orbits not seen (weak lines lost in noise),
* a few impurity lines (cheap when weak, costly when as strong as the cage's own),
* integrals off by 25 % or more (relaxation), weak lines by their noise too,
* a mixture: the candidate beside a second pattern (profiles: the best pair, either role).

Notes
-----
A dynamic programme over the observed lines (:mod:`.nmr_match`): orbits of one size
are interchangeable, so the state is how many of each size are used; a line is an
impurity or carries one to :data:`NMR_MAX_MERGE` orbits, and the integral scale is
fitted by alternating with the assignment.  Peak lists: the squared log-ratio of a
line's scaled integral to its carbons over :data:`NMR_INTEGRAL_TOL` (halved),
:data:`NMR_MERGE_COST` per extra orbit, :data:`NMR_MISSING_COST` per unseen orbit,
:data:`NMR_IMPURITY_COST` per impurity; with more than :data:`NMR_IMPURITY_ALLOWANCE`
lines left over, a partner pattern at :data:`NMR_MIXTURE_COST` plus ln C(lines, partner
lines).  Profiles (S/N and widths known) are scored by a stated likelihood instead: one
relaxation spread for all candidates (of highest evidence on a 25-50 % grid, or that of the
best pair when a pair explains the lines best), widened per line by its noise, normalised
line densities, unseen orbits priced by their expected S/N, coincidences by the crowding, a
Poisson count of impurities, the labelling of all observed lines, and every pair with one
of the best single patterns searched once per spectrum (:mod:`.nmr_pairs`), the minor's
share fitted.  The score is minus the cost, in nats.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import numpy as np

from ..candidate import Candidate
from ..errors import EvidenceError, SpectrumError
from ..plain import freeze_fields
from ..plain import plain as _plain
from ..spectra import integrate, pick_peaks, references
from ..spectra.shoulders import split_areas
from ..symmetry import predict_nmr  # re-exported: one module per technique
from ..verdict import TechniqueVerdict
from .nmr_match import (
    _crowding,
    _crowding_factor,
    _detection,
    _fit,
    _orbit_sizes,
    _partner_list,
    labeling_cost,
    line_noise,
    missing_costs,
    shared_spread,
    tols_at,
)
from .nmr_mixture import PARTNER_FLAWS, _second_component, pair_mixture
from .nmr_pairs import pair_fit
from .nmr_shifts import (  # noqa: F401  (re-exported: one module per technique)
    ESTIMATE_C60_ANGLE_DEG,
    ESTIMATE_PPM_AT_C60,
    ESTIMATE_PPM_PER_DEG,
    StickSpectrum,
    estimated_stick_spectrum,
    pyramidalization_angles,
)
from .nmr_solvents import find_deuterium_triplets, solvent_windows

__all__ = [
    "NMR_REGION",
    "NMR_SNR",
    "NMR_INTEGRAL_TOL",
    "NMR_MAX_MERGE",
    "NmrObservation",
    "StickSpectrum",
    "predict_nmr",
    "observe_nmr",
    "compare_nmr",
    "pyramidalization_angles",
    "estimated_stick_spectrum",
]

#: default window of sp2 cage carbons, ppm (common practice, no source: fullerene
#: 13C lines fall between about 128 and 158 ppm)
NMR_REGION: tuple[float, float] = (125.0, 160.0)
#: minimum signal-to-noise of a line in a profile spectrum
NMR_SNR = 5.0
#: half-width (ppm) of the window each line is integrated over in a profile
NMR_INTEGRATION_HALFWIDTH = 0.15
#: a reference line (solvent) within this distance (ppm) of a peak removes the peak
NMR_REFERENCE_TOL = 0.15
#: relative integral error (log scale, one sd): quaternary carbons relax unevenly, lines
#: spread +-25 % or more (issue 10; tests/benchmarks/bench_accuracy.py measures the costs)
NMR_INTEGRAL_TOL = 0.3
#: at most this many orbits on one observed line
NMR_MAX_MERGE = 3
#: costs (negative log-likelihood units) of the explanations
NMR_MERGE_COST = 2.0
NMR_MISSING_COST = 3.9  # -ln(nmr_match.LOST_ANYWAY): an orbit lost at high S/N
#: an unexplained line costs NMR_IMPURITY_COST + NMR_IMPURITY_STRENGTH_COST * r**2, r its
#: carbons (at the fitted scale) over the candidate's largest orbit: weak extra lines are
#: cheap, lines as strong as the cage's own are not
NMR_IMPURITY_COST = 1.5
NMR_IMPURITY_STRENGTH_COST = 6.0
#: mixtures: unexplained lines may be a second component (another candidate's pattern at
#: its own scale); assuming one costs NMR_MIXTURE_COST, and being the weaker of the two
#: costs NMR_MINOR_COMPONENT_COST more
NMR_MIXTURE_COST = 3.0
NMR_MINOR_COMPONENT_COST = 6.0
#: more unexplained intensity than this fraction of the total rules a candidate out
#: (fewer than NMR_IMPURITY_ALLOWANCE unexplained lines never do)
NMR_MINOR_FRACTION = 0.6
#: a second component with more flaws than this (orbits merged or missing, lines left
#: over) does not make a convincing mixture: the verdict is at best "unlikely"
NMR_PARTNER_FLAWS = PARTNER_FLAWS
#: the second-component search tries at most this many distinct partner patterns
NMR_MAX_PARTNERS = 60
#: verdict limits: impurity lines, and lost orbits (merged + missing) as a fraction
NMR_IMPURITY_ALLOWANCE = 3
NMR_LOST_ALLOWANCE = 0.5


@dataclass(frozen=True)
class NmrObservation:
    """Cage lines found in a 13C spectrum.

    Attributes
    ----------
    positions : tuple of float
        Line positions (ppm), increasing.
    integrals : tuple of float or None
        Line areas (arbitrary units), or None when the input gave none.
    snr : tuple of float
        Signal-to-noise per line (``inf`` for peak lists).
    excluded : tuple of dict
        Lines left out: ``{"position": ppm, "reason": "..."}``.
    region : (float, float)
    thresholds : mapping
        The settings used.
    diagnostics : mapping
        Noise estimate, source checksum and other figures.
    """

    positions: tuple[float, ...]
    integrals: tuple[float, ...] | None
    snr: tuple[float, ...] = ()
    excluded: tuple[Mapping[str, Any], ...] = ()
    region: tuple[float, float] = NMR_REGION
    thresholds: Mapping[str, Any] = field(default_factory=dict)
    diagnostics: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "positions", tuple(float(p) for p in self.positions))
        if self.integrals is not None:
            ints = tuple(float(a) for a in self.integrals)
            if len(ints) != len(self.positions):
                raise EvidenceError(f"integrals has {len(ints)} values for "
                                    f"{len(self.positions)} lines; expected one per line")
            object.__setattr__(self, "integrals", ints)
        object.__setattr__(self, "snr", tuple(float(s) for s in self.snr))
        freeze_fields(self, "excluded", "region", "thresholds", "diagnostics")

    @property
    def n_lines(self) -> int:
        return len(self.positions)

    def to_dict(self) -> dict[str, Any]:
        return _plain({
            "positions": self.positions, "integrals": self.integrals, "snr": self.snr,
            "excluded": self.excluded, "region": self.region,
            "thresholds": self.thresholds, "diagnostics": self.diagnostics,
        })

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> NmrObservation:
        return cls(
            positions=tuple(d["positions"]),
            integrals=None if d.get("integrals") is None else tuple(d["integrals"]),
            snr=tuple(math.inf if s is None else s for s in d.get("snr", ())),
            excluded=tuple(d.get("excluded", ())), region=tuple(d.get("region", NMR_REGION)),
            thresholds=d.get("thresholds", {}), diagnostics=d.get("diagnostics", {}),
        )


# --------------------------------------------------------------------- observe


def observe_nmr(
    spectrum: Any,
    *,
    region: tuple[float, float] = NMR_REGION,
    solvent: str | None = None,
    reference_lines: Sequence[float] = (),
    reference_tol: float = NMR_REFERENCE_TOL,
    snr: float = NMR_SNR,
    prominence: float | None = None,
    integration_halfwidth: float = NMR_INTEGRATION_HALFWIDTH,
    use_intensities: bool = True,
    keep_unlisted_multiplets: bool = False,
) -> NmrObservation:
    """Find the cage lines of a 13C spectrum.

    Parameters
    ----------
    spectrum : Spectrum
        A profile (peaks are picked and integrated) or a peak list
        (``kind="peaks"``: y is taken as the line's integral).
    region : (low, high) ppm
        Only lines inside count as cage lines.
    solvent : str, optional
        Solvent name or mixture (``"CS2 + C6D6"``); every line of its 13C multiplets
        (:func:`cageprint.spectra.references.multiplet_lines`, spaced by J(C,D) at the
        spectrometer frequency ``spectrum.meta["observe_mhz"]``) is excluded.  When
        None, the solvent the file names (``meta["solvent"]``, e.g. JCAMP
        ``##.SOLVENT NAME``) is used if the reference table knows it.
    reference_lines : sequence of float
        Further positions (ppm) to exclude (lock or reference compounds).
    reference_tol : float
        Exclusion distance in ppm.
    snr : float
        Minimum signal-to-noise of a profile peak.
    prominence : float, optional
        Minimum prominence (y units) of a profile peak; default ``snr * noise``.
    integration_halfwidth : float
        Profile lines are integrated over +- this many ppm.
    use_intensities : bool
        False records no integrals (pattern comparison by line count only).
    keep_unlisted_multiplets : bool
        A 1:1:1 triplet with a C-D spacing that no declared solvent explains
        (:func:`find_deuterium_triplets`) is a probable lock or solvent signal: it is
        excluded and named in ``diagnostics["unlisted_multiplets"]`` unless this is True
        (then it is only named).

    Returns
    -------
    NmrObservation

    Examples
    --------
    >>> from cageprint.spectra import Spectrum
    >>> s = Spectrum([150.07, 147.52, 146.82, 144.77, 130.28, 77.16], [10, 10, 20, 20, 10, 50],
    ...              technique="nmr", kind="peaks")
    >>> obs = observe_nmr(s)
    >>> obs.n_lines, obs.excluded[0]["reason"]
    (5, 'outside the cage region 125-160 ppm')
    """
    if getattr(spectrum, "technique", "nmr") != "nmr":
        raise SpectrumError(f"observe_nmr needs a 13C spectrum (technique 'nmr'); "
                            f"got technique {spectrum.technique!r}")
    lo, hi = float(min(region)), float(max(region))
    if not hi > lo:
        raise SpectrumError(f"region must span a range of ppm; got {region!r}")
    meta = getattr(spectrum, "meta", {}) or {}
    mhz = meta.get("observe_mhz")
    mhz = float(mhz) if isinstance(mhz, (int, float)) and mhz > 0 else None
    solvent_from_file = None
    if not solvent and isinstance(meta.get("solvent"), str):
        try:
            references.reference_lines(meta["solvent"])
            solvent = solvent_from_file = meta["solvent"]
        except SpectrumError:
            pass
    windows = [(float(r), reference_tol, "reference") for r in reference_lines]
    windows += solvent_windows(solvent, mhz, reference_tol)
    refs = tuple(w[0] for w in windows)
    x = np.asarray(spectrum.x, float)
    y = np.asarray(spectrum.y, float)
    diagnostics: dict[str, Any] = {"kind": spectrum.kind}
    sha = getattr(spectrum, "meta", {}).get("sha256") if hasattr(spectrum, "meta") else None
    if sha:
        diagnostics["sha256"] = sha
    if spectrum.kind == "peaks":
        pos, area, s_n = x, y, np.full(x.size, math.inf)
        keep = area > 0
        excluded = [{"position": float(p), "reason": "zero or negative intensity"}
                    for p in pos[~keep]]
        pos, area, s_n = pos[keep], area[keep], s_n[keep]
    else:
        pos, area, s_n, noise, width = _pick_profile(spectrum, snr, prominence,
                                                     integration_halfwidth)
        diagnostics["noise"], diagnostics["line_width"] = noise, width
        excluded = []
    lines_p, lines_a, lines_s = [], [], []
    for p, a, s in zip(pos, area, s_n, strict=False):
        near = [(r, lab) for r, half, lab in windows if abs(r - p) <= half]
        why = None
        if near:
            r, lab = near[0]
            why = f"reference/solvent line at {r:g} ppm" + ("" if lab == "reference"
                                                            else f" ({lab})")
        elif not lo <= p <= hi:
            why = f"outside the cage region {lo:g}-{hi:g} ppm"
        if why:
            excluded.append({"position": float(p), "reason": why})
            continue
        lines_p.append(float(p))
        lines_a.append(float(a))
        lines_s.append(float(s))
    unlisted = []
    for trio in find_deuterium_triplets(lines_p, lines_a, mhz):
        centre = lines_p[trio[1]]
        unlisted.append({"centre": centre, "lines": [lines_p[i] for i in trio],
                         "spacing_hz": (lines_p[trio[2]] - lines_p[trio[0]]) / 2 * mhz})
    if unlisted and not keep_unlisted_multiplets:
        drop = {lines_p.index(q) for u in unlisted for q in u["lines"]}
        for i in sorted(drop):
            excluded.append({"position": lines_p[i],
                             "reason": "1:1:1 triplet with a C-D spacing that no declared "
                                       "solvent explains (probable lock/solvent signal)"})
        lines_p = [q for i, q in enumerate(lines_p) if i not in drop]
        lines_a = [q for i, q in enumerate(lines_a) if i not in drop]
        lines_s = [q for i, q in enumerate(lines_s) if i not in drop]
    if unlisted:
        diagnostics["unlisted_multiplets"] = unlisted
    if solvent_from_file:
        diagnostics["solvent_from_file"] = solvent_from_file
    thresholds = {"region": [lo, hi], "solvent": solvent, "reference_lines": list(refs),
                  "reference_tol": reference_tol, "snr": snr, "prominence": prominence,
                  "integration_halfwidth": integration_halfwidth,
                  "use_intensities": use_intensities, "observe_mhz": mhz,
                  "keep_unlisted_multiplets": keep_unlisted_multiplets}
    return NmrObservation(
        positions=tuple(lines_p), integrals=tuple(lines_a) if use_intensities else None,
        snr=tuple(lines_s), excluded=tuple(sorted(excluded, key=lambda e: e["position"])),
        region=(lo, hi), thresholds=thresholds, diagnostics=diagnostics,
    )


def _pick_profile(spectrum, snr, prominence, halfwidth):
    """Peaks of a profile (:func:`cageprint.spectra.pick_peaks`) and their integrals.

    The whole trace is searched (lines outside the region are then listed as
    left out); integrals are taken after the same baseline correction.
    """
    peaks = pick_peaks(spectrum, snr=snr, prominence=prominence, shoulders=True)
    if len(peaks) == 0:
        return np.array([]), np.array([]), np.array([]), peaks.diagnostics.get("noise"), None
    ints = integrate(spectrum, peaks, half_width=halfwidth, baseline="arpls")
    area = np.maximum(split_areas(ints.integrals, peaks.diagnostics.get("clusters") or ()),
                      1e-300)
    widths = np.asarray(peaks.widths, float)
    widths = widths[np.isfinite(widths) & (widths > 0)]
    width = float(np.median(widths)) if widths.size else None
    return (np.asarray(peaks.positions, float), area, np.asarray(peaks.snr, float),
            peaks.diagnostics.get("noise"), width)


# --------------------------------------------------------------------- compare


def compare_nmr(
    prediction: Any,
    observation: NmrObservation,
    *,
    integral_tol: float = NMR_INTEGRAL_TOL,
    max_merge: int = NMR_MAX_MERGE,
    merge_cost: float = NMR_MERGE_COST,
    impurity_cost: float = NMR_IMPURITY_COST,
    impurity_strength_cost: float = NMR_IMPURITY_STRENGTH_COST,
    missing_cost: float = NMR_MISSING_COST,
    impurity_allowance: int = NMR_IMPURITY_ALLOWANCE,
    lost_allowance: float = NMR_LOST_ALLOWANCE,
    minor_fraction: float = NMR_MINOR_FRACTION,
    partners: Sequence[Any] = (),
    mixture_cost: float = NMR_MIXTURE_COST,
    minor_component_cost: float = NMR_MINOR_COMPONENT_COST,
) -> TechniqueVerdict:
    """Score a candidate's 13C orbit pattern against the observed lines.

    Parameters
    ----------
    prediction : NmrPrediction, Fingerprint, Candidate or sequence of int
        Anything carrying the orbit sizes.
    observation : NmrObservation
    integral_tol : float
        Relative integral error of one standard deviation (log scale).
    max_merge : int
        Most orbits one observed line may carry.
    merge_cost, missing_cost : float
        Cost of each extra orbit on a line, and of each unseen orbit.
    impurity_cost, impurity_strength_cost : float
        An unexplained line costs ``impurity_cost + impurity_strength_cost *
        r**2``, ``r`` its carbons at the fitted scale over the largest orbit.
    impurity_allowance : int
        More unexplained lines than this, carrying more than
        ``minor_fraction`` of the total intensity, rule the candidate out.
    lost_allowance : float
        More than this fraction of orbits lost (merged or missing; at least 2)
        rules the candidate out.
    minor_fraction : float
    partners : sequence, optional
        Other candidates (Candidate, orbit sizes, or ``(sizes, label)``) whose
        pattern may explain the unexplained lines as a second component of a
        mixture.  Tried only when more than ``impurity_allowance`` lines are
        unexplained.
    mixture_cost, minor_component_cost : float
        Cost of assuming a mixture, and extra cost when the candidate carries
        less intensity than its partner.

    Returns
    -------
    TechniqueVerdict
        ``score`` is minus the cost; ``details`` holds the assignment.

    Examples
    --------
    >>> obs = NmrObservation((130.3, 144.8, 146.8, 147.5, 150.1), (10.5, 19.0, 21.0, 9.5, 10.2))
    >>> v = compare_nmr((10, 10, 10, 20, 20), obs)
    >>> v.verdict, round(v.score + labeling_cost(v.details["assignment"]), 2) > -1
    ('consistent', True)
    >>> compare_nmr((60,), obs).verdict
    'ruled out'
    """
    sizes = _orbit_sizes(prediction)
    n_obs = observation.n_lines
    pattern = Candidate("C", sum(sizes), 0, "", sizes).pattern
    if n_obs == 0:
        return TechniqueVerdict("nmr", 0.0, "no data",
                                ("no cage lines found in the 13C region.",),
                                {"pattern": pattern})
    if integral_tol <= 0 or max_merge < 1:
        raise EvidenceError(f"integral_tol must be > 0 and max_merge >= 1; got "
                            f"{integral_tol}, {max_merge}")
    ints = observation.integrals
    use = ints is not None and all(a > 0 for a in ints)
    logs = [math.log(a) for a in ints] if use else [None] * n_obs
    weights = list(ints) if use else [1.0] * n_obs
    costs = (integral_tol, max_merge, merge_cost, impurity_cost, impurity_strength_cost,
             missing_cost) + _detection(observation, use) + (_crowding(observation, len(sizes)),)
    noise = line_noise(observation) if use else None
    tols = tols_at(integral_tol, noise)
    # a profile's lines are labelled with impurities as one more kind; a peak list (no
    # S/N, no widths) keeps the labelling of the predicted orbits alone
    profile, spread, listed = bool(costs[6]), integral_tol, _partner_list(partners)
    table = None
    if profile and tols is not None:  # one spread for all; pairs: see .nmr_pairs
        patterns = tuple(sorted({sizes} | {p for p, _ in listed}))
        args = (patterns, tuple(logs), costs[:8], noise, _crowding_factor(observation))
        spread, table = (pair_fit(*args, (mixture_cost, minor_component_cost)) if partners
                         else (shared_spread(*args), None))
        tols = tols_at(spread, noise)
        costs = (spread,) + costs[1:]
    cost, picks, values, counts, ln_s = _fit(sizes, logs, costs, tols)
    if use:
        cost += labeling_cost(picks if profile else sizes)
    mixture = None
    unexplained = [j for j, k in enumerate(picks) if k is None]
    if table is not None:  # the candidate's best pair, either component
        mixture = pair_mixture(sizes, table, dict(listed), weights, costs=costs, cost_alone=cost)
    elif len(unexplained) > impurity_allowance and partners:
        mixture = _second_component(sizes, logs, picks, values, ln_s, weights,
                                    unexplained=unexplained, partners=listed[:NMR_MAX_PARTNERS],
                                    costs=costs, cost_alone=cost, mixture_cost=mixture_cost,
                                    minor_component_cost=minor_component_cost)
    if mixture is not None:
        cost, picks, ln_s = mixture["cost"], mixture["picks"], mixture["ln_s"]
    lost_expected = float(np.dot(counts, np.exp(-missing_costs(values, ln_s if use else None,
                                                               costs))))
    return _verdict(observation, sizes, pattern, cost, picks, values, counts=counts, ln_s=ln_s,
                    use=use, lost_expected=lost_expected, tol=integral_tol,
                    spread=spread if profile else None,
                    impurity_allowance=impurity_allowance,
                    lost_allowance=lost_allowance, minor_fraction=minor_fraction,
                    weights=weights, mixture=mixture)


_WORD = {1: "one", 2: "two", 3: "three", 4: "four", 5: "five", 6: "six", 10: "ten", 12: "twelve"}


def _intensity_word(v: int, top: int) -> str:
    if v == top:
        return "full-intensity"
    frac = Fraction(v, top)
    if frac == Fraction(1, 2):
        return "half-intensity"
    return f"{frac.numerator}/{frac.denominator}-intensity"


def _verdict(obs, sizes, pattern, cost, picks, values, *, counts, ln_s, use, lost_expected, tol,
             spread, impurity_allowance, lost_allowance, minor_fraction, weights, mixture):
    n_obs, n_pred = obs.n_lines, len(sizes)
    partner_lines = set(mixture["lines"]) if mixture else set()
    imp_idx = [j for j, k in enumerate(picks) if k is None and j not in partner_lines]
    impurities = [obs.positions[j] for j in imp_idx]
    total_w = sum(weights)
    imp_fraction = sum(weights[j] for j in imp_idx) / total_w if total_w else 0.0
    used = [sum(k[i] for k in picks if k is not None) for i in range(len(values))]
    missing = sum(c - u for c, u in zip(counts, used, strict=True))
    merged_lines = [(obs.positions[j], k) for j, k in enumerate(picks)
                    if k is not None and sum(k) > 1]
    extra = sum(sum(k) - 1 for _, k in merged_lines)
    # orbits the S/N makes likely to be lost do not count against the candidate
    lost = extra + max(0, missing - math.floor(lost_expected))
    errs = []
    if use:
        for j, k in enumerate(picks):
            if k is not None:
                c = sum(ki * v for ki, v in zip(k, values, strict=True))
                errs.append(math.log(obs.integrals[j]) + ln_s - math.log(c))
    rms = float(np.sqrt(np.mean(np.square(errs)))) if errs else 0.0

    reasons = [f"{n_obs} line{'s' if n_obs != 1 else ''} observed, {n_pred} predicted "
               f"({pattern})."]
    if use and len(values) > 1:
        top = values[0]
        for i, v in enumerate(values):
            single = sum(1 for k in picks if k is not None and sum(k) == 1 and k[i] == 1)
            if single == 0:
                continue
            word, many = _WORD.get(v, str(v)), _WORD.get(single, str(single)).capitalize()
            whose = ("the one" if counts[i] == 1 else f"all {counts[i]}" if single == counts[i]
                     else f"{single} of the {counts[i]}")
            reasons.append(f"{many} {_intensity_word(v, top)} line"
                           f"{'s match' if single != 1 else ' matches'} {whose} {word}-carbon "
                           f"orbit{'s' if counts[i] != 1 else ''}.")
    for p, k in merged_lines:
        c = sum(ki * v for ki, v in zip(k, values, strict=True))
        reasons.append(f"the line at {p:.2f} ppm carries {sum(k)} orbits ({c} carbons; "
                       "accidental coincidence assumed).")
    if mixture:
        m = len(mixture["lines"])
        share = "" if mixture.get("share") is None else f", share {100 * mixture['share']:.0f} %"
        if mixture["minor"]:
            reasons.append(f"fits only as the minor component ({100 * mixture['own_fraction']:.0f} "
                           f"% of the intensity) beside {mixture['label']} "
                           f"({mixture['pattern']}{share}).")
        else:
            reasons.append(f"{m} further line{'s' if m != 1 else ''} "
                           f"({100 * mixture['fraction']:.0f} % of the intensity) fit a second "
                           f"component: {mixture['label']} ({mixture['pattern']}{share}); a "
                           "mixture is assumed.")
    if impurities:
        shown = ", ".join(f"{p:.2f}" for p in impurities[:5])
        more = f" and {len(impurities) - 5} more" if len(impurities) > 5 else ""
        reasons.append(f"{len(impurities)} line{'s' if len(impurities) != 1 else ''} "
                       f"unexplained (impurity assumed): {shown}{more} ppm.")
    if missing:
        at_snr = (f"; {lost_expected:.1f} expected at this S/N"
                  if any(math.isfinite(q) for q in obs.snr) else "")
        reasons.append(f"{missing} orbit{'s' if missing != 1 else ''} not seen "
                       f"(weak or lost in noise assumed{at_snr}).")
    if use and errs:
        reasons.append(f"integrals agree within {100 * (math.exp(rms) - 1):.0f} % rms "
                       f"(tolerance {100 * tol:.0f} %).")
    lost_limit = max(2, math.floor(lost_allowance * n_pred))
    too_many = len(impurities) > impurity_allowance and imp_fraction > minor_fraction
    # a minor's (or, in a fitted pair, either one's) orbits may hide under the other's lines
    hidden = bool(mixture and (mixture["minor"] or mixture.get("share"))) and lost > lost_limit
    if hidden:
        reasons.append(f"As a mixture component, {lost} of its orbits merged or missing may "
                       "lie under the other component's lines.")
    if too_many or (lost > lost_limit and not hidden):
        verdict = "ruled out"
        why = []
        if too_many:
            why.append(f"{len(impurities)} unexplained lines ({100 * imp_fraction:.0f} % of the "
                       f"intensity) exceed the allowance of {impurity_allowance} lines or "
                       f"{100 * minor_fraction:.0f} %")
        if lost > lost_limit:
            why.append(f"{lost} orbits merged or missing beyond those expected to be lost "
                       f"exceed the allowance of {lost_limit}")
        reasons.insert(1, "ruled out: " + "; ".join(why) + ".")
    elif mixture and mixture["flaws"] > NMR_PARTNER_FLAWS:
        verdict = "unlikely"
        reasons.append(f"the second component fits poorly ({mixture['flaws']} of its lines "
                       "merged, missing or unexplained).")
    elif mixture and (mixture["minor"] or mixture["flaws"] > 0 or rms > tol):
        verdict = "possible"
    elif len(impurities) + lost <= 1 and rms <= 2 * tol:
        verdict = "consistent"
    elif len(impurities) <= impurity_allowance and lost <= 3 and rms <= 3 * tol:
        verdict = "possible"
    else:
        verdict = "unlikely"
    details = {
        "pattern": pattern, "n_observed": n_obs, "n_predicted": n_pred, "cost": cost,
        "impurity_lines": impurities, "impurity_fraction": imp_fraction,
        "missing_orbits": missing, "missing_expected": lost_expected, "merged_orbits": extra,
        "merged_lines": [[p, int(sum(k))] for p, k in merged_lines],
        "rms_log_integral_error": rms, "carbons_per_unit_area": math.exp(ln_s) if use else None,
        "spread": spread,
        "assignment": [None if k is None
                       else int(sum(ki * v for ki, v in zip(k, values, strict=True)))
                       for k in picks],
        "second_component": None if not mixture else {
            "label": mixture["label"], "pattern": mixture["pattern"],
            "lines": [obs.positions[j] for j in mixture["lines"]],
            "fraction": mixture["fraction"], "minor": mixture["minor"],
            "share": mixture.get("share")},
    }
    return TechniqueVerdict("nmr", -cost, verdict, tuple(reasons), details)
