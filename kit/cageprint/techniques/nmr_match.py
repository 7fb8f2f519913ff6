"""The matching engine of the 13C comparison: orbits to observed lines.

A small dynamic programme over the observed lines (see
:mod:`cageprint.techniques.nmr`, Notes, for the costs).  Orbits of the same
size are interchangeable, so the state is how many orbits of each distinct
size have been used.  Pure functions of hashable arguments, memoised.
"""

from __future__ import annotations

import functools
import itertools
import math
from typing import Any

import numpy as np
from scipy.special import ndtr

from ..cage._kernels import njit  # numba, or plain Python without it
from ..candidate import Candidate
from ..errors import EvidenceError


@functools.lru_cache(maxsize=256)
def _layout(sizes: tuple[int, ...], max_merge: int):
    """The DP's fixed parts for one pattern, on the flattened state grid.

    Returns (values, counts, options, log contents, orbits per option, gather
    index, flat offset per option, unused orbits per state).  ``gather[o, s]``
    is the state before option ``o`` leads to state ``s``, or the extra slot
    ``n_states`` (holding +inf) when ``o`` cannot lead there.
    """
    values = sorted(set(sizes), reverse=True)
    counts = [sizes.count(v) for v in values]
    dims = tuple(c + 1 for c in counts)
    options = []
    for k in itertools.product(*(range(min(c, max_merge) + 1) for c in counts)):
        if 1 <= sum(k) <= max_merge:
            options.append(k)
    contents = np.array([sum(ki * v for ki, v in zip(k, values, strict=True))
                         for k in options], float)
    n_orb = np.array([sum(k) for k in options])
    n_states = math.prod(dims)
    grids = np.indices(dims).reshape(len(dims), n_states)
    strides = np.array([math.prod(dims[i + 1:]) for i in range(len(dims))], np.intp)
    k_arr = np.array(options, np.intp).reshape(len(options), len(dims))
    offsets = k_arr @ strides
    flat = np.arange(n_states, dtype=np.intp)
    valid = np.all(grids[None, :, :] >= k_arr[:, :, None], axis=1)
    gather = np.where(valid, flat[None, :] - offsets[:, None], n_states)
    left = np.array(counts, np.intp)[:, None] - grids  # row index into each end-cost table
    return (values, counts, options, np.log(contents), n_orb, gather,
            np.asarray(offsets, dtype=np.intp), left)


def _assign(sizes, logs, ln_scale, costs, tols=None, aside=None):
    """Best explanation of the lines by the orbits, for one integral scale.

    ``costs`` is (tol, max_merge, c_merge, c_imp, c_strong, c_miss, snr_per_area,
    snr_min): see :func:`missing_costs` for the last three.  ``tols`` gives each line
    its own log-integral spread (noise widens that of weak lines); default ``tol``.
    ``aside`` (:class:`cageprint.techniques.nmr_pairs.Aside`) prices a line these orbits
    leave as what else it may be in a mixture (the other component's, or an impurity
    judged against both components' orbits); default an impurity of this pattern alone.

    Returns (cost, per-line choice vectors or None for impurity, values, counts).

    Each line's step takes, for every state, the cheapest of the "impurity" choice
    and every option that leads there (:func:`_dp_forward`); the costs after every
    line are kept, and the choices are recovered backwards along the best path only,
    by the same sums (:func:`_dp_back`): the first of equal costs wins (impurity,
    then the earlier option).
    """
    tol, max_merge, c_merge, c_imp, c_strong = costs[:5]
    values, counts, options, log_contents, n_orb, gather, offsets, left = _layout(
        tuple(sizes), int(max_merge))
    merge = c_merge * (n_orb - 1)
    n_states = left.shape[1]
    have = bool(logs) and logs[0] is not None
    ends = end_costs(values, tuple(counts), ln_scale if have else None, costs)
    n_opt = len(options)
    top = float(values[0])
    n_lines = len(logs)
    if have:
        shifted = np.array([ell + ln_scale for ell in logs])
        spread = np.full(n_lines, tol) if tols is None else np.asarray(tols, float)
        z = (shifted[:, None] - log_contents[None, :]) / spread[:, None]
        line_costs = 0.5 * z * z + merge
        imps = []
        for ell in logs:
            r = math.exp(ell + ln_scale) / top
            imps.append(c_imp + c_strong * r * r)
    else:
        line_costs = np.broadcast_to(merge, (n_lines, n_opt))
        imps = [c_imp] * n_lines
    line_costs = np.ascontiguousarray(line_costs, dtype=np.float64)
    imps_arr = np.asarray(imps, dtype=np.float64)
    if aside is not None and have:
        imps_arr = aside.none_costs(shifted, ln_scale, spread, top, costs)
    history = _dp_forward(line_costs, imps_arr, gather)
    total = history[n_lines, :n_states] + sum(
        table[row] for table, row in zip(ends, left, strict=True))
    state = int(np.argmin(total))
    cost = float(total[state])
    chosen = _dp_back(history, line_costs, imps_arr, gather, offsets, state)
    picks: list[tuple[int, ...] | None] = [None if o < 0 else options[o]
                                           for o in chosen.tolist()]
    return cost, picks, values, counts


@njit(cache=True)
def _dp_forward(line_costs, imps, gather):  # pragma: no cover - compiled
    """Best cost of each state after each line: ``history[j, s]`` (the last slot +inf)."""
    n_lines, n_opt = line_costs.shape
    n_states = gather.shape[1]
    history = np.full((n_lines + 1, n_states + 1), np.inf)
    history[0, 0] = 0.0
    for j in range(n_lines):
        for s in range(n_states):
            best = history[j, s] + imps[j]
            for o in range(n_opt):
                v = history[j, gather[o, s]] + line_costs[j, o]
                if v < best:
                    best = v
            history[j + 1, s] = best
    return history


@njit(cache=True)
def _dp_back(history, line_costs, imps, gather, offsets, state):  # pragma: no cover
    """The option chosen for each line along the best path to ``state`` (-1: impurity)."""
    n_lines, n_opt = line_costs.shape
    chosen = np.full(n_lines, -1, dtype=np.int64)
    for j in range(n_lines - 1, -1, -1):
        best = history[j, state] + imps[j]
        o = -1
        for i in range(n_opt):
            v = history[j, gather[i, state]] + line_costs[j, i]
            if v < best:
                best, o = v, i
        if o >= 0:
            chosen[j] = o
            state -= offsets[o]
    return chosen


#: chance that an orbit's line is lost for reasons other than noise (under a solvent or
#: impurity line, outside the window); bounds the cost of a missing orbit from above
#: when its expected S/N is high: -ln(0.02) = 3.9 (common practice, no source).  With the
#: binomial count (:func:`end_costs`) 0.05 made one lost orbit of 13 nearly free (0.4 nats);
#: on the corpus 0.02, 0.03 and 0.05 were within 3 points of each other (200 cases per range)
LOST_ANYWAY = 0.02


def detection_probability(expected_snr, snr_min: float, tol: float):
    """Chance that a line of ``expected_snr`` is picked at the threshold ``snr_min``.

    The picked height is the expected one spread by the relaxation scatter (log-normal,
    ``tol``) and by unit noise: P = Phi((E - T) / sqrt(1 + (tol E)^2)) (a normal
    approximation of both; common practice, no source).

    Examples
    --------
    >>> round(float(detection_probability(5.0, 5.0, 0.3)), 2)
    0.5
    >>> float(detection_probability(50.0, 5.0, 0.3)) > 0.99
    True
    """
    e = np.asarray(expected_snr, float)
    z = (e - snr_min) / np.sqrt(1.0 + (tol * e) ** 2)
    return ndtr(z)


def missing_costs(values, ln_scale, costs) -> np.ndarray:
    """Cost of leaving one orbit of each size in ``values`` unobserved.

    With the spectrum's S/N per unit area known (``costs[6] > 0``, from picked
    profile lines) an orbit of ``v`` carbons is expected at S/N ``E = v k / s`` (``s``
    the fitted carbons per unit area): it goes unseen with probability
    ``LOST_ANYWAY + (1 - LOST_ANYWAY) (1 - P_detect(E))``, and the cost is minus its log.
    Weak orbits in a noisy spectrum are then nearly free to lose, strong ones are not.
    Without S/N (peak lists) every orbit costs the flat ``costs[5]``.
    """
    c_miss = costs[5]
    k = costs[6] if len(costs) > 6 else 0.0
    if not k or ln_scale is None:
        return np.full(len(values), float(c_miss))
    expected = np.asarray(values, float) * k * math.exp(-ln_scale)
    p_lost = LOST_ANYWAY + (1.0 - LOST_ANYWAY) * (1.0 - detection_probability(
        expected, costs[7], costs[0]))
    return np.minimum(-np.log(p_lost), float(c_miss))


@functools.lru_cache(maxsize=256)
def _ln_choose(m: int) -> tuple[np.ndarray, np.ndarray]:
    """``(k, ln C(m, k))`` for ``k = 0..m`` (read-only; memoised: every fit asks again)."""
    k = np.arange(m + 1, dtype=float)
    out = np.array([math.lgamma(m + 1) - math.lgamma(x + 1) - math.lgamma(m - x + 1)
                    for x in range(m + 1)])
    k.flags.writeable = False
    out.flags.writeable = False
    return k, out


def end_costs(values, counts, ln_scale, costs) -> list[np.ndarray]:
    """Cost of each number of unseen orbits, per orbit size: ``table[i][k]`` for ``k``
    of the ``counts[i]`` orbits of ``values[i]`` carbons not seen.

    Orbits of one size are alike, so any ``k`` of the ``m`` may be the lost ones: with
    the chance ``p`` that one is lost (:func:`missing_costs`), the count is binomial and
    the cost is ``-ln[C(m, k) p^k (1 - p)^(m - k)]`` (common practice, no source).  With
    detection modelled (profiles: S/N per unit area known) the seen orbits pay for being
    seen.  Peak lists keep a perfect fit at zero: ``k`` flat costs less ``ln C(m, k)``.

    Examples
    --------
    >>> t = end_costs([2], (10,), None, (0.3, 3, 2.0, 4.0, 0.0, 3.0))
    >>> round(float(t[0][0]), 3), round(float(t[0][1]), 3)   # 3 - ln 10
    (0.0, 0.697)
    """
    miss = missing_costs(values, ln_scale, costs)
    detect = len(costs) > 6 and bool(costs[6]) and ln_scale is not None
    out = []
    for c, m in zip(miss, counts, strict=True):
        k, ln_choose = _ln_choose(int(m))
        table = k * float(c) - ln_choose
        if detect:
            p = math.exp(-float(c))
            table = table - (m - k) * math.log1p(-min(p, 1.0 - 1e-12))
        out.append(table)
    return out


def _fit(sizes, logs, costs, tols=None, aside=None):
    """Best assignment over the integral scale (memoised: see :func:`_fit_cached`):
    (cost, picks, values, counts, ln scale)."""
    return _fit_cached(tuple(sizes), tuple(logs), tuple(costs),
                       None if tols is None else tuple(tols), aside)[:5]


def fit_spread(sizes, logs, costs, tols=None) -> float:
    """The relaxation spread the fit of :func:`_fit_cached` settled on (``costs[0]`` for
    peak lists); a cache hit after :func:`_fit` with the same arguments."""
    return _fit_cached(tuple(sizes), tuple(logs), tuple(costs),
                       None if tols is None else tuple(tols))[5]


@functools.lru_cache(maxsize=4096)
def _fit_cached(sizes, logs, costs, tols=None, aside=None):
    """Best assignment over the integral scale, merges charged from the crowding.

    A pure function of hashable arguments, so it is memoised: the mixture
    search fits each partner pattern to the same left-over lines for many
    candidates, and a re-rank repeats the fits of unchanged lines.  The
    result's lists are shared; callers only read them.

    With per-line spreads (``tols``, profiles) each assigned line also pays the log
    of its normal density relative to that at :data:`NMR_SPREAD_REFERENCE`, so that
    against the fixed density of an impurity a line is priced by how tightly the
    integrals are known (common practice, no source: a normalised Gaussian likelihood).
    Lines left to another component (``aside`` with a pattern) are not counted as
    impurities here: the pair search prices the whole explanation afterwards.
    """
    res = _fit_merges(sizes, logs, costs, tols, aside)
    if tols is None:
        return res
    norm = sum(math.log(tols[j] / NMR_SPREAD_REFERENCE) for j, k in enumerate(res[1])
               if k is not None)
    if aside is None or not aside.sizes:
        norm += impurity_count_cost(sum(1 for k in res[1] if k is None))
    return (res[0] + norm,) + tuple(res[1:])


#: expected number of impurity lines in a fraction's 13C spectrum (a few: common practice,
#: no source); 1 and 2 measured alike on the corpus, 2 rules out fewer true isomers
NMR_IMPURITY_RATE = 2.0


def impurity_count_cost(k: int) -> float:
    """Prior cost of ``k`` impurity lines in a profile: ``ln k! - k ln rate``, minus the log
    of a Poisson count of mean :data:`NMR_IMPURITY_RATE` up to a constant (a few impurity
    lines are common, many are not; common practice, no source).  The per-line
    ``impurity_cost`` prices each line's integral; this prices their number, so a pattern
    cannot call most of a spectrum impurities cheaply.

    Examples
    --------
    >>> [round(impurity_count_cost(k), 2) for k in (0, 1, 2, 20)]
    [0.0, -0.69, -0.69, 28.47]
    """
    return math.lgamma(k + 1) - k * math.log(NMR_IMPURITY_RATE)


#: the spread at which the impurity cost is calibrated (the default ``integral_tol``)
NMR_SPREAD_REFERENCE = 0.3
#: bounds of the relaxation spread (sd of log integrals) estimated from a profile's lines:
#: never below 25 % (quaternary carbons relax unevenly even with a relaxation agent; issue
#: 10's model, common practice, no source); 0.2 and 0.1 measured no better on the corpus
NMR_SPREAD_BOUNDS = (0.25, 0.5)


#: spreads tried for the shared relaxation spread, geometric between the bounds
NMR_SPREAD_GRID = tuple(float(x) for x in np.geomspace(*NMR_SPREAD_BOUNDS, 5))


@functools.lru_cache(maxsize=64)
def single_evidence(patterns, logs, costs, noise, crowding: float = 0.0) -> dict:
    """``ln sum_p exp(-cost_p(s))`` over ``patterns`` for each spread ``s`` of
    :data:`NMR_SPREAD_GRID`: how probable the lines are with each pattern alone taken
    as equally likely a priori (labelling included).  ``noise`` holds each line's
    log-integral error from noise (:func:`line_noise`); ``costs`` is without its
    coincidence rate, which ``crowding`` (:func:`_crowding_factor`) gives each pattern.

    Every pattern is fitted at the grid spread nearest ``costs[0]``; at the other
    spreads only those that came within :data:`NMR_EVIDENCE_WINDOW` of the best one at
    that first spread (the rest would add about ``exp(-window)`` of the sum).
    """
    def evidence(s, kept):
        tols = tols_at(s, noise)
        trial = (s,) + tuple(costs[1:8])
        fits = {}
        for sizes in kept:
            res = _fit(sizes, logs, trial + (coincidence_rate(crowding, len(sizes)),), tols)
            fits[sizes] = -(res[0] + labeling_cost(res[1]))
        top = max(fits.values())
        return top + math.log(sum(math.exp(f - top) for f in fits.values())), fits

    first = min(NMR_SPREAD_GRID, key=lambda s: abs(s - costs[0]))
    at_first, fits = evidence(first, patterns)
    best = max(fits.values())
    kept = [p for p in patterns if fits[p] > best - NMR_EVIDENCE_WINDOW]
    return {s: at_first if s == first else evidence(s, kept)[0] for s in NMR_SPREAD_GRID}


#: patterns further than this (nats) below the best at the first spread are left out of
#: the evidence at the others
NMR_EVIDENCE_WINDOW = 30.0


def shared_spread(patterns, logs, costs, noise, crowding: float = 0.0) -> float:
    """The relaxation spread of a spectrum's integrals, shared by every candidate.

    The spread on :data:`NMR_SPREAD_GRID` of the highest :func:`single_evidence`
    (common practice, no source: empirical Bayes, type-II maximum likelihood).  One value
    for all candidates: a spread fitted per candidate would reward the patterns whose
    many orbit kinds let each line pick the nearest content; a spread taken from the
    single best pattern at a loose first guess lets a wrong pattern that needs a loose
    spread set it for all.
    """
    if not patterns:
        return float(costs[0])
    evidence = single_evidence(patterns, logs, costs, noise, crowding)
    return max(evidence, key=lambda s: evidence[s])


def line_noise(obs) -> tuple[float, ...] | None:
    """Each line's log-integral error from noise alone (0 where its S/N is unknown)."""
    if not any(math.isfinite(q) for q in obs.snr):
        return None
    return tuple(NMR_NOISE_AREA_FACTOR / q if math.isfinite(q) and q > 0 else 0.0
                 for q in obs.snr)


def tols_at(spread: float, noise) -> tuple[float, ...] | None:
    """Each line's log-integral spread: the relaxation ``spread`` and its ``noise``
    (:func:`line_noise`) in quadrature."""
    if noise is None:
        return None
    return tuple(math.hypot(spread, n) for n in noise)


def _fit_merges(sizes, logs, costs, tols=None, aside=None):
    """Best assignment over the integral scale, merges charged from the crowding.

    Two starting scales (all carbons seen; the commonest orbit on the median
    line) are tried; from the better one the scale is re-fitted to the
    assigned lines and the assignment redone, until neither changes.

    With a coincidence rate expected from the crowding (``costs[8] > 0``) the
    merges are charged by :func:`merge_cost_total` instead of a flat cost each:
    the assignment is made at the per-merge cost of the expected rate, then once
    more at the rate the candidate's own merges suggest, and the cheaper total wins.
    """
    p0 = costs[8] if len(costs) > 8 else 0.0
    if not p0:
        return _fit_scale(sizes, logs, costs, tols, aside)
    tried = []
    c_merge = math.log((1.0 - p0) / p0)
    for _ in range(2):
        trial = tuple(costs[:2]) + (c_merge,) + tuple(costs[3:])
        res = _fit_scale(sizes, logs, trial, tols, aside)
        merges = sum(sum(k) - 1 for k in res[1] if k is not None)
        seen = sum(sum(k) for k in res[1] if k is not None)
        total = res[0] - c_merge * merges + merge_cost_total(merges, seen, p0)
        tried.append((total,) + res[1:])
        rate = (merges + MERGE_PRIOR_WEIGHT * p0) / (seen + MERGE_PRIOR_WEIGHT)
        new = math.log((1.0 - rate) / rate)
        if abs(new - c_merge) < 0.25:
            break
        c_merge = new
    return min(tried, key=lambda r: r[0])


#: weight (in orbits) of the expected coincidence rate against the candidate's own count.
#: The rate belongs to the spectrum (line density x width), not to a candidate: at 10 a
#: candidate that needed five coincidences among 18 orbits paid 0.7 nats for each past the
#: first, and patterns with spare orbits won by merging.  At 100 each costs about
#: ln((1 - p0) / p0) (corpus, 4 x 200 cases: 570 -> 582 true isomers in the first group)
MERGE_PRIOR_WEIGHT = 100.0


def merge_cost_total(merges: int, seen: int, p0: float) -> float:
    """Cost of ``merges`` extra orbits sharing lines among ``seen`` observed orbits.

    Each observed orbit lands on another's line with an unknown probability ``p``
    drawn from a Beta prior of mean ``p0`` (the rate the crowding predicts) and weight
    :data:`MERGE_PRIOR_WEIGHT`; minus the log of the beta-binomial probability of the
    count (which lines carry the merges is charged by :func:`labeling_cost`).  A
    crowded spectrum that shows many coincidences makes each one cheap; a sparse one
    keeps them dear (common practice, no source).

    Examples
    --------
    >>> costs = [merge_cost_total(m, 20, 0.05) for m in (0, 1, 2)]
    >>> costs[0] < costs[1] < costs[2]
    True
    """
    a = MERGE_PRIOR_WEIGHT * p0
    b = MERGE_PRIOR_WEIGHT * (1.0 - p0)
    m, n = merges, max(seen, merges)
    ln_choose = math.lgamma(n + 1) - math.lgamma(m + 1) - math.lgamma(n - m + 1)
    return -(ln_choose + _lbeta(m + a, n - m + b) - _lbeta(a, b))


def _lbeta(a: float, b: float) -> float:
    return math.lgamma(a) + math.lgamma(b) - math.lgamma(a + b)


def _fit_scale(sizes, logs, costs, tols=None, aside=None):
    use = logs and logs[0] is not None
    if not use:
        return _assign(sizes, logs, 0.0, costs, tols, aside) + (0.0,)
    counts = {v: sizes.count(v) for v in set(sizes)}
    v_mode = max(counts, key=lambda v: (counts[v], v))
    total = sum(math.exp(ell) for ell in logs)
    starts = [math.log(sum(sizes) / total), math.log(v_mode) - float(np.median(logs))]
    if abs(starts[1] - starts[0]) < 1e-3:
        starts = starts[:1]
    if aside is not None and aside.start is not None:  # e.g. the pattern's scale alone
        starts = [aside.start]
    best = min((_assign(sizes, logs, ln_s, costs, tols, aside) + (ln_s,) for ln_s in starts),
               key=lambda r: r[0])
    seen = {round(r, 6) for r in starts}
    for _ in range(4):
        _cost, picks, values, _c, ln_s = best
        w = [1.0] * len(logs) if tols is None else [t ** -2 for t in tols]
        diffs = [(math.log(sum(ki * v for ki, v in zip(k, values, strict=True))) - ell, wj)
                 for k, ell, wj in zip(picks, logs, w, strict=True) if k is not None]
        if not diffs:
            break
        new_s = sum(d * wj for d, wj in diffs) / sum(wj for _, wj in diffs)
        if round(new_s, 6) in seen:
            break
        seen.add(round(new_s, 6))
        res = _assign(sizes, logs, new_s, costs, tols, aside) + (new_s,)
        if res[0] >= best[0] - 1e-12:
            break
        best = res
    return best


def _orbit_sizes(prediction: Any) -> tuple[int, ...]:
    if isinstance(prediction, Candidate):
        return prediction.nmr_sizes
    nmr = getattr(prediction, "nmr", prediction)
    sizes = getattr(nmr, "sizes", None)
    if sizes is None and isinstance(prediction, (tuple, list)):
        sizes = prediction
    if sizes is None:
        raise EvidenceError("compare_nmr: prediction must be an NMR prediction, a "
                            f"fingerprint, a Candidate or orbit sizes; got {type(prediction)}")
    sizes = tuple(sorted((int(s) for s in sizes), reverse=True))
    if not sizes or min(sizes) < 1:
        raise EvidenceError(f"compare_nmr: orbit sizes must be positive; got {sizes}")
    return sizes


@functools.lru_cache(maxsize=1024)
def _tuple_sizes(sizes: tuple) -> tuple[int, ...]:
    """:func:`_orbit_sizes` of a tuple, memoised (the session passes the same partners)."""
    return _orbit_sizes(sizes)


def _partner_list(partners) -> list[tuple[tuple[int, ...], str]]:
    out: dict[tuple[int, ...], str] = {}
    for p in partners or ():
        if isinstance(p, Candidate):
            sizes, label = p.nmr_sizes, p.label
        elif isinstance(p, (tuple, list)) and len(p) == 2 and isinstance(p[1], str):
            try:
                sizes = _tuple_sizes(p[0]) if type(p[0]) is tuple else _orbit_sizes(p[0])
            except TypeError:  # unhashable items
                sizes = _orbit_sizes(p[0])
            label = p[1]
        else:
            sizes = _orbit_sizes(p)
            label = f"pattern {Candidate('C', sum(sizes), 0, '', sizes).pattern}"
        if sizes and sizes not in out:
            out[sizes] = label
    return list(out.items())


def labeling_cost(kinds) -> float:
    """Occam term of an explanation: ln of the number of distinct orders of its line kinds.

    ``kinds`` holds one hashable label per observed line: what the line carries (an orbit
    size, a merged group, a component of a mixture) or None for an impurity.  With shifts
    unknown, every order of the kinds along the axis is equally likely a priori, so one
    labelling has prior probability ``prod n_k! / n!``.  Charged over the *observed* lines,
    impurities included, so a pattern with many small orbits pays for the freedom to call
    weak lines small orbits, and an explanation that calls lines impurities pays for the
    freedom to pick which (common practice, no source: the multinomial count).

    Examples
    --------
    >>> labeling_cost([4] * 19)
    0.0
    >>> round(labeling_cost([10, 10, 10, 20, 20]), 3)   # 5! / (3! 2!) = 10
    2.303
    >>> round(labeling_cost([4] * 17 + [None] * 2), 3)  # which 2 of 19 lines: 171
    5.142
    """
    counts: dict = {}
    for k in kinds:
        counts[k] = counts.get(k, 0) + 1
    n = sum(counts.values())
    return math.lgamma(n + 1) - sum(math.lgamma(c + 1) for c in counts.values())


# ------------------------------------------------ what the spectrum tells the model

#: relative integral error from noise alone, per unit of 1/(S/N) of the line: a line a few
#: points wide integrated over +-NMR_INTEGRATION_HALFWIDTH (common practice, no source)
NMR_NOISE_AREA_FACTOR = 1.0


def _crowding(obs, n_orbits: int) -> float:
    """Expected chance that an orbit's line falls on another's (0 when line widths are unknown).

    ``(n - 1) * 2 w * integral f^2``: ``w`` the median line width (FWHM, ppm), ``f`` the
    density of shifts, taken as normal with the robust spread of the observed lines
    (common practice, no source).
    """
    return coincidence_rate(_crowding_factor(obs), n_orbits)


def coincidence_rate(factor: float, n_orbits: int) -> float:
    """``(n - 1) * factor`` within the bounds below (0 stays 0: widths unknown)."""
    if not factor:
        return 0.0
    return float(min(max((n_orbits - 1) * factor, NMR_COINCIDENCE_FLOOR),
                     NMR_COINCIDENCE_CEILING))


def _crowding_factor(obs) -> float:
    """``2 w * integral f^2`` of :func:`_crowding`, per other orbit."""
    w = obs.diagnostics.get("line_width") if obs.diagnostics else None
    if not w or not math.isfinite(w) or obs.n_lines < 5:
        return 0.0
    pos = np.asarray(obs.positions)
    spread = max(1.4826 * float(np.median(np.abs(pos - np.median(pos)))), 1.0)
    return 2.0 * w / (2.0 * spread * math.sqrt(math.pi))


#: bounds of the expected coincidence rate per orbit; the floor because cage shifts cluster
#: more than a smooth density says (higher fullerenes' spectra often show one or two
#: doubled lines among 20-40: from memory)
NMR_COINCIDENCE_FLOOR = 0.03
NMR_COINCIDENCE_CEILING = 0.3


def _detection(obs, use: bool) -> tuple[float, float]:
    """(S/N per unit area, picking threshold) of a profile's lines, or (0, 0) if unknown."""
    snr_min = obs.thresholds.get("snr") if obs.thresholds else None
    ratios = [q / a for q, a in zip(obs.snr, obs.integrals or (), strict=False)
              if use and math.isfinite(q) and a > 0]
    if not ratios or not snr_min:
        return (0.0, 0.0)
    return (float(np.median(ratios)), float(snr_min))
