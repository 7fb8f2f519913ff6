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

from ..candidate import Candidate
from ..errors import EvidenceError


@functools.lru_cache(maxsize=256)
def _layout(sizes: tuple[int, ...], max_merge: int):
    """The DP's fixed parts for one pattern, on the flattened state grid.

    Returns (values, counts, options, log contents, orbits per option, gather
    index, the same per state as lists, flat offset per option, unused orbits
    per state).  ``gather[o, s]`` is the state before option ``o`` leads to
    state ``s``, or the extra slot ``n_states`` (holding +inf) when ``o``
    cannot lead there.
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
    unused = sum(c - g for c, g in zip(counts, grids, strict=True))
    return (values, counts, options, np.log(contents), n_orb, gather, gather.T.tolist(),
            [int(o) for o in offsets], unused)


def _assign(sizes, logs, ln_scale, costs):
    """Best explanation of the lines by the orbits, for one integral scale.

    ``costs`` is (tol, max_merge, c_merge, c_imp, c_strong, c_miss).

    Returns (cost, per-line choice vectors or None for impurity, values, counts).

    Each line's step is one gather over all options at once and a minimum
    with the "impurity" choice; the costs after every line are kept, and the
    choices are recovered backwards along the best path only, by the same
    sums: the first of equal costs wins (impurity, then the earlier option).
    """
    tol, max_merge, c_merge, c_imp, c_strong, c_miss = costs
    values, counts, options, log_contents, n_orb, gather, sources, offsets, unused = _layout(
        tuple(sizes), int(max_merge))
    merge = c_merge * (n_orb - 1)
    n_states = unused.size
    n_opt = len(options)
    top = float(values[0])
    n_lines = len(logs)
    if n_lines and logs[0] is not None:
        shifted = np.array([ell + ln_scale for ell in logs])
        z = (shifted[:, None] - log_contents[None, :]) / tol
        line_costs = 0.5 * z * z + merge
        imps = []
        for ell in logs:
            r = math.exp(ell + ln_scale) / top
            imps.append(c_imp + c_strong * r * r)
    else:
        line_costs = np.broadcast_to(merge, (n_lines, n_opt))
        imps = [c_imp] * n_lines
    # history[j] = best cost of each state after j lines; the last slot stays +inf
    history = np.full((n_lines + 1, n_states + 1), math.inf)
    history[0, 0] = 0.0
    table = np.empty((n_opt, n_states))
    lowest = np.empty(n_states)
    columns = np.ascontiguousarray(line_costs.T)[:, :, None]
    take, add, minimum, reduce_min = np.take, np.add, np.minimum, np.minimum.reduce
    for j in range(n_lines):
        dp = history[j]
        nxt = history[j + 1, :n_states]
        take(dp, gather, out=table)
        add(table, columns[:, j], out=table)
        reduce_min(table, axis=0, out=lowest)
        add(dp[:n_states], imps[j], out=nxt)
        minimum(nxt, lowest, out=nxt)
    total = history[n_lines, :n_states] + c_miss * unused
    state = int(np.argmin(total))
    cost = float(total[state])
    picks: list[tuple[int, ...] | None] = [None] * n_lines
    costs_per_line = line_costs.tolist()
    for j in range(n_lines - 1, -1, -1):
        # the same float64 sums as above, in Python floats; strict < keeps the first
        dp = history[j]
        best = dp.item(state) + imps[j]
        o = -1
        for i, (src, c) in enumerate(zip(sources[state], costs_per_line[j], strict=True)):
            v = dp.item(src) + c
            if v < best:
                best, o = v, i
        if o >= 0:
            picks[j] = options[o]
            state -= offsets[o]
    return cost, picks, values, counts


def _fit(sizes, logs, costs):
    """Best assignment over the integral scale (memoised: see :func:`_fit_cached`)."""
    return _fit_cached(tuple(sizes), tuple(logs), tuple(costs))


@functools.lru_cache(maxsize=4096)
def _fit_cached(sizes, logs, costs):
    """Best assignment over the integral scale.

    Two starting scales (all carbons seen; the commonest orbit on the median
    line) are tried; from the better one the scale is re-fitted to the
    assigned lines and the assignment redone, until neither changes.

    A pure function of hashable arguments, so it is memoised: the mixture
    search fits each partner pattern to the same left-over lines for many
    candidates, and a re-rank repeats the fits of unchanged lines.  The
    result's lists are shared; callers only read them.
    """
    use = logs and logs[0] is not None
    if not use:
        return _assign(sizes, logs, 0.0, costs) + (0.0,)
    counts = {v: sizes.count(v) for v in set(sizes)}
    v_mode = max(counts, key=lambda v: (counts[v], v))
    total = sum(math.exp(ell) for ell in logs)
    starts = [math.log(sum(sizes) / total), math.log(v_mode) - float(np.median(logs))]
    if abs(starts[1] - starts[0]) < 1e-3:
        starts = starts[:1]
    best = min((_assign(sizes, logs, ln_s, costs) + (ln_s,) for ln_s in starts),
               key=lambda r: r[0])
    seen = {round(r, 6) for r in starts}
    for _ in range(4):
        _cost, picks, values, _c, ln_s = best
        diffs = [math.log(sum(ki * v for ki, v in zip(k, values, strict=True))) - ell
                 for k, ell in zip(picks, logs, strict=True) if k is not None]
        if not diffs:
            break
        new_s = float(np.mean(diffs))
        if round(new_s, 6) in seen:
            break
        seen.add(round(new_s, 6))
        res = _assign(sizes, logs, new_s, costs) + (new_s,)
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


def labeling_cost(sizes: tuple[int, ...]) -> float:
    """Occam term of a pattern: ln of the number of distinct orders of its orbit sizes.

    Which observed line belongs to which kind of orbit is itself fitted to the data; with
    shifts unknown, every order of the orbits along the axis is equally likely a priori, so
    one labelling has prior probability 1 / (n! / prod n_v!).  A pattern with one orbit size
    pays nothing; one with many small orbits beside big ones pays for the freedom to explain
    weak lines as small orbits (common practice, no source: the multinomial count).

    Examples
    --------
    >>> labeling_cost((4,) * 19)
    0.0
    >>> round(labeling_cost((10, 10, 10, 20, 20)), 3)   # 5! / (3! 2!) = 10
    2.303
    """
    counts: dict[int, int] = {}
    for v in sizes:
        counts[v] = counts.get(v, 0) + 1
    return math.lgamma(len(sizes) + 1) - sum(math.lgamma(c + 1) for c in counts.values())
