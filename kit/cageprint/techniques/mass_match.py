"""Candidate formulas and how well they explain an observed isotope envelope.

Helpers of :mod:`cageprint.techniques.mass`: the candidate library (empty
cages, endohedral M@, M2@, M3N@, M2C2@ cages, oxides, hydrides, aza cages),
scoring of one formula against one envelope (mass error and envelope cosine,
13C fixed or fitted), and the separation of overlapping envelopes.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np

from ..errors import FormulaError
from ..formula import NONMETALS, Formula, parse_formula
from ..isotopes import (
    C13_NATURAL,
    ISOTOPES,
    Envelope,
    _principal,
    fit_c13,
    isotope_envelope,
    neutral_mass,
)
from .mass_peaks import MIN_ISOTOPE_PEAKS, _tol

#: mass tolerance for a formula match, ppm of m/z
MASS_TOL_PPM = 10.0
#: absolute floor of the mass tolerance, in m/z units (raise it for low-resolution data)
MASS_TOL_FLOOR = 0.005
#: cosine between measured and theoretical envelope needed to accept a formula
ENVELOPE_MIN_SCORE = 0.90
#: candidates whose combined score is within this margin of the best are reported as alternatives
AMBIGUITY_MARGIN = 0.02
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
#: with c13="fit", the fitted fraction is kept unless the natural one scores this much better
FIT_KEEP_MARGIN = 0.01
#: cage sizes searched, and the largest hydrogen count of a hydride
CAGE_SIZES = tuple(range(20, 402, 2))
MAX_HYDROGENS = 36

METALS = tuple(e for e in ISOTOPES if e not in NONMETALS)
_KIND_ORDER = ("cage", "endohedral", "oxide", "hydride", "heterofullerene", "fragment")


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


# ------------------------------------------------------------------ scoring


@dataclass(frozen=True, eq=False)
class ObservedEnvelope:
    """A group of peaks spaced by ~1/z: one (or more overlapping) isotope envelopes.

    ``mz`` is corrected for the calibration offset; ``intensity`` is peak area
    (profile data) or the listed intensity (peak lists).
    """

    charge: int
    mz: np.ndarray
    intensity: np.ndarray
    floor: np.ndarray | None = None

    @property
    def base_mz(self) -> float:
        return float(self.mz[int(np.argmax(self.intensity))])


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
    c13_err : float or None
        Standard uncertainty of a fitted 13C fraction (None when it was not fitted).
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
    c13_err: float | None = None


def _fl(floor, idx):
    """The tolerance floor of peak(s) ``idx``: ``floor`` is a number or one value per peak."""
    return floor[idx] if np.ndim(floor) else floor


def _match(text, z, mz, inten, ppm, floor, *, c13) -> MassMatch | None:
    env = _envelope_cached(text, z, c13)
    rel = env.abundance
    keep = rel >= 1e-3 * rel.max()
    tmz, tab = env.mz[keep], rel[keep]
    j = np.clip(np.searchsorted(mz, tmz), 1, max(mz.size - 1, 1))
    left = np.clip(j - 1, 0, mz.size - 1)
    right = np.clip(j, 0, mz.size - 1)
    pick = np.where(np.abs(mz[left] - tmz) <= np.abs(mz[right] - tmz), left, right)
    tol = _tol(tmz, ppm, _fl(floor, pick))
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
    first = _match(text, z, mz, inten, ppm, floor, c13=C13_NATURAL)
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
    second = _match(text, z, mz, inten, ppm, floor, c13=p)
    if second is None:
        return first
    # the fitted fraction is reported unless it fits clearly worse than the natural one
    if first is None or second.score >= first.score - FIT_KEEP_MARGIN:
        err = float(fit.c13_err)
        return replace(second, c13_err=err if np.isfinite(err) else None)
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
    if envelope.floor is not None:
        floor = np.maximum(floor, envelope.floor)
    if c13 == "fit":
        return _match_free_c13(text, z, envelope.mz, envelope.intensity, ppm, floor)
    c = C13_NATURAL if c13 is None else float(c13)
    return _match(text, z, envelope.mz, envelope.intensity, ppm, floor, c13=c)


def _best_for(z, mz, inten, ppm, floor, c13, *, metals):
    masses = neutral_mass(mz, z)
    lo, hi = float(masses.min()) - 13.0, float(masses.max()) + 1.0
    results = []
    for text, kind, _ in candidate_formulas(lo, hi, metals):
        if c13 == "fit":
            m = _match_free_c13(text, z, mz, inten, ppm, floor)
        else:
            m = _match(text, z, mz, inten, ppm, floor, c13=c13)
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
            if abs(mz[i] - mz_t) <= max(float(_tol(mz_t, ppm, _fl(floor, i))), assign):
                model[i] += a * m.scale
    return model


def _explained(found, mz, inten, ppm, floor) -> float:
    """Cosine between the summed model of ``found`` and the measured envelope."""
    if not found:
        return 0.0
    model = _model(found, mz, ppm, floor)
    return float(model @ inten / (np.linalg.norm(model) * np.linalg.norm(inten) + 1e-300))


def _greedy(z, mz, inten, ppm, floor, c13, *, metals, snr, noise):
    """Best formula for the envelope, then for what it leaves (up to 3 species)."""
    found = []
    resid = inten.copy()
    for attempt in range(3):
        res = _best_for(z, mz, resid, ppm, floor, c13, metals=metals)
        if not res:
            break
        best, kind = res[0]
        same = parse_formula(best.formula).counts
        # every other formula inside the mass tolerance with an envelope about as good is
        # reported: the spectrum cannot tell them apart
        alts = [m.formula for m, _ in res[1:]
                if m.envelope_score >= best.envelope_score - AMBIGUITY_MARGIN
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


def _peel(z, mz, inten, ppm, floor, c13, *, metals):
    """Explain one envelope as a sum of overlapping species, lowest m/z first.

    The lowest remaining peak must be the monoisotopic line of a species; its
    height fixes the species' amount, whose envelope is subtracted; repeat.
    Amounts are then refined jointly by non-negative least squares.
    """
    # lazy: scipy submodules take 0.1-0.3 s each to import; only this step needs it
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
        tol_m = float(_tol(mz[i], ppm, _fl(floor, i))) * abs(z)
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
                if abs(mz[k] - env.mz[t]) <= max(float(_tol(env.mz[t], ppm, _fl(floor, k))),
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
        tol_ppm = float(np.max(_tol(line_mz[own], ppm, _fl(floor, np.flatnonzero(own)))
                               / line_mz[own]) * 1e6)
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
