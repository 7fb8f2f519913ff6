"""Mass spectrum step: which cage formulas, charge states and abundances a spectrum shows.

``observe_mass`` runs peaks -> isotope envelopes -> charge (from the 1/z
spacing) -> calibration offset (from the C_n ladder) -> candidate formulas
within a ppm tolerance -> envelope-shape scores -> fragments and ambiguities.
Where the isotope peaks blend (resolving power below ``PROFILE_BELOW_R``,
about 4000) the envelopes are compared as drawn profiles instead
(:mod:`~cageprint.techniques.mass_profile`).  Either way every region of
signal above the noise is accounted for: explained by a species, or listed in
``MassObservation.unexplained`` with its m/z and relative height.
``compare_mass`` scores given formulas (or cages) against an observation.
``predict_mass`` gives the expected ion envelope of a formula or cage.

Candidate families searched: empty cages C_n (n even, 20..400); endohedral
M@C_n, M2@C_n, M3N@C_n, M2C2@C_n for the metals of the isotope table; oxides
C_nO and C_nO2; hydrides C_nH_2k; heterofullerenes C_(n-1)N.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from ..candidate import Candidate
from ..errors import FormulaError, SpectrumError
from ..formula import CLUSTER_CHARGES, Formula, cage_charge, parse_formula
from ..isotopes import C13_NATURAL, Envelope, _check_charge, isotope_envelope
from ..spectra.model import Spectrum
from ..verdict import RULED_OUT_SCORE, TechniqueVerdict
from .mass_match import (
    CAGE_SIZES,
    ENVELOPE_MIN_SCORE,
    MASS_TOL_FLOOR,
    MASS_TOL_PPM,
    MassMatch,
    ObservedEnvelope,
    _text,
    candidate_formulas,
    score_formula,
)
from .mass_observe import (
    MAX_CALIBRATION_OFFSET,
    Unexplained,
    account_regions,
    calibration_line,
    chain_unexplained,
    fwhm_coefficient,
    stick_calibration,
    stick_species,
)
from .mass_peaks import MIN_RELATIVE_INTENSITY, PEAK_SNR, _centroid_profile, _chains
from .mass_profile import PROFILE_BELOW_R, find_regions
from .mass_profile import calibrate as profile_calibration

__all__ = [
    "MASS_TOL_PPM",
    "MASS_TOL_FLOOR",
    "PEAK_SNR",
    "ENVELOPE_MIN_SCORE",
    "FRAGMENT_MAX_RATIO",
    "MAX_CALIBRATION_OFFSET",
    "CLUSTER_CHARGES",
    "CAGE_SIZES",
    "PROFILE_BELOW_R",
    "MassSpecies",
    "Unexplained",
    "ObservedEnvelope",
    "MassObservation",
    "MassMatch",
    "observe_mass",
    "compare_mass",
    "mass_verdict",
    "MASS_MINOR_ABUNDANCE",
    "predict_mass",
    "score_formula",
    "cage_charge",
    "candidate_formulas",
]

#: a species below this relative abundance is "minor" (its cage only "possible")
MASS_MINOR_ABUNDANCE = 0.1
#: a weak peak's mass tolerance is at least this many times its centroid uncertainty FWHM/(S/N)
CENTROID_UNCERTAINTY_FACTOR = 2.0
#: a "profile" whose median point spacing exceeds this (m/z) is read as a peak list: isotope
#: lines of charge 1-3 lie 1, 0.5, 0.33 apart, while a profile at R 1000 near m/z 700 (FWHM
#: 0.7) is still sampled every 0.1-0.2 m/z
PEAK_LIST_STEP = 0.3
#: without a peak width to measure, a line is taken to span this many points at its FWHM
FALLBACK_POINTS_PER_FWHM = 5.0
#: a species is a C2-loss fragment when at most this fraction of its C2-richer neighbour
FRAGMENT_MAX_RATIO = 0.25

def _ladder_c13(calib) -> float | None:
    """Median 13C fraction fitted to the C_n calibrants (profile route), if any."""
    ps = [c["c13"] for c in calib if "c13" in c]
    return float(np.median(ps)) if ps else None


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
        13C fraction used for (or fitted to) the theoretical envelope; also
        readable as ``c13_fraction``.
    c13_fraction_err : float or None
        Standard uncertainty of a fitted fraction (``c13="fit"``; None otherwise).
        Centroided envelopes: least-squares standard error from the fit's
        covariance scaled by the residual variance (:func:`~cageprint.isotopes.fit_c13`);
        profiles: the same from the curvature of the residual sum of squares,
        one measurement per FWHM.
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
    c13_fraction_err: float | None = None

    @property
    def c13_fraction(self) -> float:
        """The 13C fraction of the species' envelope (the same as ``c13``)."""
        return self.c13

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
class MassObservation:
    """What :func:`observe_mass` found.

    Attributes
    ----------
    species : tuple of MassSpecies
        Most abundant first.
    envelopes : tuple of ObservedEnvelope
        Every isotope envelope found (explained or not).
    peaks_mz, peaks_intensity : ndarray
        All peaks above the threshold on the spectrum's own axes (m/z as
        measured, before the calibration correction; apex intensity including
        the baseline), ready to mark on a plot of the spectrum.
    peaks_area : ndarray
        Peak areas (profile data) or listed intensities (peak lists): the
        intensities the envelopes are fitted to.
    diagnostics : mapping
        Thresholds, noise, route ("peaks" or "profile") and resolving power,
        calibration offset and calibrants, unexplained envelopes (as dicts) and
        unassigned peaks.
    unexplained : tuple of Unexplained
        Envelopes above the noise threshold that no species explains (m/z,
        relative height), tallest first.
    """

    species: tuple[MassSpecies, ...]
    envelopes: tuple[ObservedEnvelope, ...]
    peaks_mz: np.ndarray
    peaks_intensity: np.ndarray
    peaks_area: np.ndarray | None = None
    diagnostics: Any = field(default_factory=dict)
    unexplained: tuple[Unexplained, ...] = ()

    @property
    def formulas(self) -> list[str]:
        return [s.formula for s in self.species]

    @property
    def cage_sizes(self) -> list[int]:
        """Cage sizes of the non-fragment species, sorted."""
        return sorted({s.cage_n for s in self.species if s.kind != "fragment"})

    def to_frame(self):
        """Species as a pandas DataFrame, one row each."""
        # lazy: pandas takes ~0.5 s to import; only the table output needs it
        import pandas as pd

        cols = ["formula", "charge", "mz", "relative_abundance", "error_ppm", "envelope_score",
                "cage_n", "cage_charge", "kind", "n_peaks", "c13", "c13_fraction",
                "c13_fraction_err", "alternatives", "reasons"]
        rows = []
        for s in self.species:
            d = s.to_dict()
            d["c13_fraction"] = s.c13_fraction
            d["alternatives"] = "; ".join(s.alternatives)
            d["reasons"] = " ".join(s.reasons)
            rows.append({c: d[c] for c in cols})
        return pd.DataFrame(rows, columns=cols)


# ------------------------------------------------------------------ observe


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
        Mass tolerance: ``max(ppm * 1e-6 * m/z, floor, FWHM / (S/N))`` (:data:`MASS_TOL_PPM`,
        :data:`MASS_TOL_FLOOR`, floor in m/z units); for blended envelopes at
        least a tenth of the line width
        (:data:`~cageprint.techniques.mass_profile.PROFILE_TOL_FWHM`).
    c13 : None, float or "fit"
        13C fraction of the theoretical envelopes: natural (None), fixed, or
        fitted per species (then reported as ``c13_fraction`` with its
        uncertainty ``c13_fraction_err``).
    calibrate : bool or float
        True: estimate the m/z offset from the C_n ladder and correct it (an
        offset, plus a slope in ppm where the calibrants span 100 m/z or more;
        see :func:`~cageprint.techniques.mass_observe.calibration_line`);
        False: none; a number: use that constant offset (measured minus true).
    polarity : {"positive", "negative"}, optional
        Default from ``spectrum.meta["polarity"]``, else positive.
    metals : iterable of str, optional
        Metals searched for endohedral candidates (default: all in the table).
    clip_negative : bool
        Set negative intensities to zero instead of refusing them.

    Returns
    -------
    MassObservation
        ``diagnostics["route"]`` says how the envelopes were compared
        ("peaks": centroided isotope peaks; "profile": drawn envelopes, for
        blended peaks) and ``diagnostics["resolving_power"]`` the R estimated
        from the data.

    Examples
    --------
    >>> from cageprint.techniques.mass_synthetic import synthetic_mass_spectrum
    >>> s = synthetic_mass_spectrum([("C60", 1, 1.0), ("C70", 1, 0.4)], seed=1)
    >>> obs = observe_mass(s)
    >>> [(sp.formula, sp.charge) for sp in obs.species], obs.unexplained
    ([('C60', 1), ('C70', 1)], ())
    >>> low = synthetic_mass_spectrum([("C60", -1, 1.0), ("C84", -1, 0.2)], seed=1,
    ...                               resolving_power=1500, polarity="negative")
    >>> obs = observe_mass(low)
    >>> [(sp.formula, sp.charge) for sp in obs.species], obs.diagnostics["route"]
    ([('C60', -1), ('C84', -1)], 'profile')
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
    read_as = spectrum.kind
    if read_as == "profile" and x.size > 1 and float(np.median(np.diff(x))) > PEAK_LIST_STEP:
        read_as = "peaks"  # points further apart than any profile sampling: a stick list
    if read_as == "profile":
        peaks = _centroid_profile(x, y, snr)
        pmz, parea, papex, punc = peaks.mz, peaks.area, peaks.apex, peaks.uncertainty
        noise, thr = peaks.noise, peaks.threshold
    else:
        keep = y >= MIN_RELATIVE_INTENSITY * (y.max() if y.size else 0)
        pmz, parea = x[keep & (y > 0)], y[keep & (y > 0)]
        papex = parea
        punc = np.zeros(pmz.size)
        noise, thr = float("nan"), float(MIN_RELATIVE_INTENSITY * y.max())
    if pmz.size == 0:
        raise SpectrumError(
            f"no peaks in the mass spectrum above the threshold ({snr} x noise "
            f"{noise:.3g} = {thr:.3g}); lower snr= or check the file"
        )
    # weak peaks: the tolerance widens to their centroid uncertainty (FWHM / S/N)
    pfloor = np.maximum(floor, CENTROID_UNCERTAINTY_FACTOR * punc)
    chains, free = _chains(pmz, parea, ppm, pfloor)
    c13_search = c13 if c13 == "fit" else c13_fixed

    profile = read_as == "profile"
    coef = fwhm_coefficient(peaks) if profile else float("nan")
    if profile and not coef > 0:  # no measurable width (single-point spikes)
        coef = FALLBACK_POINTS_PER_FWHM * float(np.median(np.diff(x)) / np.median(x))
    r_data = peaks.smoothing / coef if profile and coef > 0 else float("nan")
    route = "profile" if profile and r_data < PROFILE_BELOW_R else "peaks"
    regions = find_regions(x, peaks.y, noise, thr, coef) if profile else []
    found: list[dict[str, Any]] = []
    calib: Any = []
    if route == "profile":
        # blended isotope peaks: resolving power (and offsets) from the C_n profiles
        coef, _, calib = profile_calibration(
            x, peaks.y, regions, sign, coef, max_offset=MAX_CALIBRATION_OFFSET, c13=c13_search)
    elif calibrate is True:
        calib = stick_calibration(chains, pmz, parea, sign, c13_search)
    offset, slope, mz_ref = calibration_line(calib) if calibrate is True else (0.0, 0.0, 0.0)
    if calibrate is not True and calibrate is not False:
        offset = float(calibrate)

    def corrected(m):
        return m - offset - slope * 1e-6 * (m - mz_ref)

    resid = [c["offset"] - (offset + slope * 1e-6 * (c["mz"] - mz_ref)) for c in calib]
    spread = float(np.median(np.abs(resid))) if len(resid) > 1 else float("nan")
    cmz = corrected(pmz)
    envelopes = [ObservedEnvelope(sign * z, cmz[m], parea[m], pfloor[m]) for z, m in chains]
    left: list = []
    if route == "peaks":
        found, envelopes, left = stick_species(
            chains, cmz, parea, pfloor, sign, ppm=ppm, floor=floor, c13=c13, metals=metals,
            snr=snr, noise=noise)
    if profile:
        found, unexplained = account_regions(
            corrected(x), peaks.y, regions, found, sign=sign, fwhm_coef=coef, threshold=thr,
            ppm=ppm, floor=floor, c13=c13 if c13 == "fit" else c13_fixed, metals=metals,
            noise=noise, c13_hint=_ladder_c13(calib) if c13 == "fit" else None)
    else:
        unexplained = chain_unexplained(left, float(parea.max()), ppm=ppm, floor=floor)

    r_fit = peaks.smoothing / coef if profile and coef > 0 else float("nan")
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
            f"envelope cosine {m.envelope_score:.4f} with 13C fraction {m.c13:.4f}"
            + (f" +- {m.c13_err:.4f} (fitted)." if m.c13_err is not None else "."),
        ]
        if f.get("route") == "profile":
            reasons[0] = (f"isotope peaks blended at resolving power ~{r_fit:.0f}: the envelope "
                          f"drawn at charge {m.charge:+d} matches the measured profile.")
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
            n_peaks=m.n_matched, intensity=m.scale, c13=m.c13, c13_fraction_err=m.c13_err,
        ))
    species.sort(key=lambda s: -s.relative_abundance)

    diagnostics = {
        "polarity": "positive" if sign > 0 else "negative",
        "kind": spectrum.kind,
        "read_as": read_as,
        "n_points": int(x.size),
        "noise": noise,
        "threshold": thr,
        "snr": snr,
        "ppm": ppm,
        "floor": floor,
        "c13": c13 if c13 == "fit" else c13_fixed,
        "n_peaks": int(pmz.size),
        "calibration_offset": offset,
        "calibration_slope_ppm": slope,
        "calibration_mz": mz_ref,
        "calibration_spread": spread,
        "calibrants": tuple(calib),
        "calibration": ("estimated from the C_n ladder" if calibrate is True and calib
                        else "no C_n ladder found; no correction" if calibrate is True
                        else "given" if calibrate is not False else "off"),
        "route": route,
        "resolving_power": r_fit,
        "unexplained_envelopes": tuple(u.to_dict() for u in unexplained),
        "unassigned_peaks": tuple(round(float(v), 5) for v in cmz[free]),
    }
    return MassObservation(
        species=tuple(species), envelopes=tuple(envelopes), peaks_mz=pmz, peaks_intensity=papex,
        peaks_area=parea, diagnostics=MappingProxyType(diagnostics),
        unexplained=tuple(sorted(unexplained, key=lambda u: -u.relative_height)),
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


def mass_verdict(candidate: Candidate, observation: MassObservation, *,
                 minor_abundance: float = MASS_MINOR_ABUNDANCE) -> TechniqueVerdict:
    """Mass evidence on one candidate: the cage sizes (and cage charges) found fix ``n``.

    Fragment ions do not vouch for a cage; a species weaker than
    ``minor_abundance`` (relative to the strongest) makes its cage only "possible".

    Examples
    --------
    >>> from cageprint.techniques.mass_synthetic import synthetic_mass_spectrum
    >>> obs = observe_mass(synthetic_mass_spectrum([("C78", 1, 1.0)], seed=3))
    >>> c78 = Candidate("C78", 78, 1, "D3", (6,) * 13)
    >>> mass_verdict(c78, obs).verdict, mass_verdict(Candidate("C84", 84, 1, "D2"), obs).verdict
    ('consistent', 'ruled out')
    """
    found = observation.species
    if not found:
        return TechniqueVerdict("mass", 0.0, "no data",
                                ("the mass spectrum shows no cage species.",))
    intact = [sp for sp in found if sp.kind != "fragment"]
    names = ", ".join(sorted({sp.formula for sp in intact})) or "fragments only"
    details = {"cage_sizes": sorted({sp.cage_n for sp in intact}),
               "fragments": sorted({sp.formula for sp in found} - {sp.formula for sp in intact})}
    mine = [sp for sp in intact if sp.cage_n == candidate.n]
    n = candidate.n
    if not mine:
        if any(sp.cage_n == n for sp in found):
            return TechniqueVerdict("mass", -6.0, "unlikely", (
                f"mass spectrum shows {names}; a C{n} cage appears only as a fragment "
                "ion.",), details)
        return TechniqueVerdict("mass", RULED_OUT_SCORE, "ruled out", (
            f"mass spectrum shows {names}; none has a C{n} cage.",), details)
    charges = sorted({sp.cage_charge for sp in mine})
    if candidate.cage_charge not in charges:
        return TechniqueVerdict("mass", -6.0, "unlikely", (
            f"mass spectrum shows a C{n} cage carrying charge "
            f"{', '.join(str(c) for c in charges)}, the candidate is built for "
            f"{candidate.cage_charge}.",), {**details, "cage_charges": charges})
    strongest = max(sp.relative_abundance for sp in mine)
    if strongest < minor_abundance:
        return TechniqueVerdict("mass", -2.0, "possible", (
            f"mass spectrum shows {names}; the C{n} cage is a minor species "
            f"({100 * strongest:.0f} % of the strongest).",), details)
    return TechniqueVerdict("mass", 0.0, "consistent", (
        f"mass spectrum shows {names}: a C{n} cage is present.",), details)
