"""The pair search of the 13C comparison: two patterns that explain a mixture's lines together.

A two-isomer fraction shows both isomers' lines, the minor's at its share of the intensity.
Fitting one pattern first and giving the other what it leaves (greedy) fails when the minor's
lines are as tall as the major's smaller orbits: the first pattern takes them.  Here the pairs
are searched once per spectrum (:func:`pair_table`, memoised on hashable inputs): each of the
:data:`NMR_PAIR_LEADERS` patterns that fit best alone leads a pair with every other pattern.
Each pair is fitted from several starts, in both orders (which pattern is fitted first), and
every explanation found is kept for the rows (a pattern's row: its cheapest one, with the
minor's extra cost where it is the minor).  The search is not exhaustive (nor bounded):

* the first pattern alone, the second fitted exactly (the assignment DP) to the lines left;
* jointly at one shared scale: the second's carbons per unit area are the first's times the
  ratio of their shares, for each share of :data:`NMR_PAIR_SHARES` and then at the ratio the
  exact fits give.  In the first pattern's DP a line may be left to the second at what its
  best orbit option there would cost (:class:`Aside`), so that fit is not blind to the
  partner; the second is then fitted exactly to the lines left.  Only pairs whose greedy
  fits come within :data:`NMR_PAIR_WINDOW` of the best are fitted jointly.

Every explanation is priced by one likelihood whichever start found it
(:func:`pair_cost`): each component's own lines, coincidences and unseen orbits at its own
scale, lines neither carries as impurities judged against the stronger component's largest
orbit, their count, the labelling of all lines, and the cost of assuming a mixture with
that partner.  The minor component pays
:data:`~cageprint.techniques.nmr.NMR_MINOR_COMPONENT_COST` more in its own row.  Common
practice, no source (a two-component mixture model, alternating fits).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from .nmr_match import (
    NMR_SPREAD_REFERENCE,
    _fit,
    _layout,
    coincidence_rate,
    end_costs,
    impurity_count_cost,
    labeling_cost,
    merge_cost_total,
    shared_spread,
    tols_at,
)

#: this many of the patterns that fit best alone each lead a pair with every other pattern
NMR_PAIR_LEADERS = 4
#: the partners of this many of the best pairs found lead pairs of their own as well
NMR_PAIR_FOLLOW = 2
#: shares of the second (weaker) component tried in the joint fit; the ratio the exact fits
#: then give is tried too (the corpus draws minor shares of 15-50 %)
NMR_PAIR_SHARES = (0.2, 0.35, 0.5)
#: a fitted ratio of scales this close (ln) to one tried already is not tried again
NMR_PAIR_RHO_STEP = 0.1
#: pairs whose greedy fits come within this many nats of the best such pair are also
#: fitted jointly; the joint fit improved on the greedy one by up to about 30 nats on the
#: accuracy corpus (tests/benchmarks/bench_accuracy.py)
NMR_PAIR_WINDOW = 40.0
#: ln(share ratio) of the one joint fit tried when neither pattern alone leaves a line, to
#: place the pair against the window (a 30 % minor)
NMR_PAIR_PROBE = math.log(0.7 / 0.3)
#: spreads tried for the best pair's explanation: those of
#: :data:`~.nmr_match.NMR_SPREAD_GRID` (the same ratio between neighbours) and two more down
#: to 12.5 %.  Single patterns see a mixture's second set of lines as scatter (their grid
#: keeps its 25 % floor); the best pair's own residuals may show the integrals tighter.
#: Measured no worse on the corpus than the 25 % floor; on a spectrum with precise integrals
#: (the demo's C78 fraction) it is what tells 18x4+3x2 from 17x4+5x2
NMR_PAIR_SPREAD_GRID = tuple(float(x) for x in np.geomspace(0.125, 0.5, 7))


@dataclass(frozen=True)
class Aside:
    """What a line may be when the pattern being fitted leaves it (a hashable fit argument).

    Attributes
    ----------
    sizes : tuple of int
        A second component's orbit sizes; () for none.
    rho : float
        Its ln carbons per unit area minus the fitted pattern's: ln(share ratio).
    merge_cost : float
        Its cost per extra orbit on one line.
    ref_area : float or None
        ln area of the largest orbit of a component fitted already (impurities are judged
        against it as well).
    start : float or None
        The starting scale (ln carbons per unit area) of the fit instead of the usual two.
    """

    sizes: tuple[int, ...] = ()
    rho: float = 0.0
    merge_cost: float = 0.0
    ref_area: float | None = None
    start: float | None = None

    def none_costs(self, shifted, ln_scale, spread, top, costs) -> np.ndarray:
        """Cost of each line's "not these orbits" choice at one scale.

        ``shifted`` holds the lines' ln carbons at the scale ``ln_scale``, ``spread`` their
        log-integral spreads, ``top`` the fitted pattern's largest orbit.  An impurity costs
        ``c_imp + c_strong r**2`` with ``r`` the line over the largest orbit of either
        component; a line the second component may carry costs at most what its cheapest
        orbit option there would (its orbit counts are not tracked: a relaxation).
        """
        ln_ref = math.log(top)
        if self.sizes:
            ln_ref = max(ln_ref, math.log(max(self.sizes)) - self.rho)
        if self.ref_area is not None:
            ln_ref = max(ln_ref, self.ref_area + ln_scale)
        cost = costs[3] + costs[4] * np.exp(2.0 * (np.asarray(shifted) - ln_ref))
        if self.sizes:
            lay = _layout(self.sizes, int(costs[1]))
            z = (np.asarray(shifted)[:, None] + self.rho - lay[3][None, :]) / np.asarray(
                spread)[:, None]
            alt = (0.5 * z * z + self.merge_cost * (lay[4] - 1)).min(axis=1)
            cost = np.minimum(cost, alt)
        return np.ascontiguousarray(cost, dtype=np.float64)


def explanation_cost(sizes, logs, tols, picks, ln_s, costs) -> float:
    """One pattern's share of an explanation's cost: its lines, coincidences, unseen orbits.

    ``picks`` gives each line's orbit counts (per distinct size, largest first) or None for
    a line the pattern does not carry; ``ln_s`` is the pattern's ln carbons per unit area.
    The same terms as the fit (:func:`cageprint.techniques.nmr_match._fit`) without the
    lines it leaves: a single pattern's fitted cost is this plus its impurity lines.
    """
    values = sorted(set(sizes), reverse=True)
    counts = [sizes.count(v) for v in values]
    used = [0] * len(values)
    cost, merges, seen = 0.0, 0, 0
    for j, k in enumerate(picks):
        if k is None:
            continue
        c = sum(ki * v for ki, v in zip(k, values, strict=True))
        z = (logs[j] + ln_s - math.log(c)) / tols[j]
        cost += 0.5 * z * z + math.log(tols[j] / NMR_SPREAD_REFERENCE)
        merges += sum(k) - 1
        seen += sum(k)
        used = [u + ki for u, ki in zip(used, k, strict=True)]
    p0 = costs[8] if len(costs) > 8 else 0.0
    cost += merge_cost_total(merges, seen, p0) if p0 else costs[2] * merges
    ends = end_costs(values, tuple(counts), ln_s, costs)
    return cost + sum(float(t[m - u]) for t, m, u in zip(ends, counts, used, strict=True))


def assignment_cost(sizes, logs, tols, picks, costs) -> float:
    """What one pattern's explanation of every line costs, with the scale fitted to it.

    ``picks`` gives each line's orbit counts (per distinct size, largest first) or None for
    an impurity.  The same terms as a single pattern's fit (its lines, coincidences,
    unseen orbits, impurity lines and their number, labelling), so a fit is never dearer
    than the assignment it found, and an assignment made by hand, or the true one of a
    test spectrum, can be priced against it.

    Examples
    --------
    >>> logs = [math.log(4.0)] * 3 + [math.log(2.0)]
    >>> costs = (0.3, 3, 2.0, 1.5, 6.0, 3.9, 0.0, 0.0)
    >>> right = assignment_cost((4, 4, 4, 2), logs, [0.3] * 4, [(1, 0)] * 3 + [(0, 1)], costs)
    >>> wrong = assignment_cost((4, 4, 4, 2), logs, [0.3] * 4, [(1, 0)] * 2 + [None, (0, 1)],
    ...                         costs)
    >>> right < wrong
    True
    """
    values = sorted(set(sizes), reverse=True)
    w = [(t ** -2, math.log(sum(ki * v for ki, v in zip(k, values, strict=True))) - ell)
         for k, ell, t in zip(picks, logs, tols, strict=True) if k is not None]
    ln_s = sum(a * d for a, d in w) / sum(a for a, _ in w) if w else 0.0
    cost = explanation_cost(sizes, logs, tols, picks, ln_s, costs)
    imps = [ell for k, ell in zip(picks, logs, strict=True) if k is None]
    ln_ref = math.log(values[0]) - ln_s
    cost += sum(_impurity_line(ell, ln_ref, costs) for ell in imps)
    return cost + impurity_count_cost(len(imps)) + labeling_cost(picks)


def _impurity_line(ell: float, ln_ref: float, costs) -> float:
    """An unexplained line of ln integral ``ell``, against the largest orbit's ``ln_ref``:
    ``costs[3] + costs[4] r^2`` (``r`` the ratio of the two, as the fit prices it)."""
    return costs[3] + costs[4] * math.exp(2.0 * (ell - ln_ref))


@dataclass(frozen=True)
class Pair:
    """One explanation of the lines by two patterns.

    ``first`` is the component fitted first; ``picks`` and ``ln_s`` hold each component's
    choices over all lines and its ln carbons per unit area, in the order (first, second);
    ``cost`` is the whole explanation's (without the minor component's extra cost).
    """

    cost: float
    patterns: tuple[tuple[int, ...], tuple[int, ...]]
    picks: tuple[tuple, tuple]
    ln_s: tuple[float, float]

    def share(self, i: int) -> float:
        """Fitted share of component ``i`` (0 first, 1 second): amounts are inversely
        proportional to carbons per unit area."""
        a, b = (math.exp(-s) for s in self.ln_s)
        return (a if i == 0 else b) / (a + b)

    def index(self, sizes) -> int:
        return self.patterns.index(tuple(sizes))


@dataclass(frozen=True)
class _Lines:
    """The spectrum and settings every fit of one table shares."""

    logs: tuple
    tols: tuple
    costs: tuple  # without the coincidence rate, which each pattern gets from ``crowding``
    crowding: float
    mixture_cost: float

    def costs_of(self, sizes) -> tuple:
        """The fit costs with the coincidence rate of ``sizes``."""
        return tuple(self.costs) + (coincidence_rate(self.crowding, len(sizes)),)

    def merge_cost(self, sizes) -> float:
        """The flat cost of one coincidence at the rate expected for ``sizes``."""
        p0 = coincidence_rate(self.crowding, len(sizes))
        return math.log((1.0 - p0) / p0) if p0 else float(self.costs[2])

    def flat_costs(self, sizes) -> tuple:
        """The fit costs with coincidences at :meth:`merge_cost` each (no rate re-fitted):
        for fits that only choose lines, the pair being priced afterwards."""
        return tuple(self.costs[:2]) + (self.merge_cost(sizes),) + tuple(self.costs[3:8])


def pair_cost(lines: _Lines, patterns, picks, ln_s) -> float:
    """The likelihood price of a two-pattern explanation (module docstring)."""
    logs, costs = lines.logs, lines.costs
    cost = sum(explanation_cost(p, logs, lines.tols, k, s, lines.costs_of(p))
               for p, k, s in zip(patterns, picks, ln_s, strict=True))
    ln_ref = max(math.log(max(p)) - s for p, s in zip(patterns, ln_s, strict=True))
    kinds: list = []
    n_imp = 0
    for j, (a, b) in enumerate(zip(*picks, strict=True)):
        if a is None and b is None:
            cost += _impurity_line(logs[j], ln_ref, costs)
            n_imp += 1
        kinds.append(None if a is None and b is None else ("first", a) if a is not None
                     else ("second", b))
    return cost + impurity_count_cost(n_imp) + labeling_cost(kinds) + lines.mixture_cost


def _complete(lines: _Lines, first, fit_first, second) -> Pair | None:
    """``second`` fitted exactly (the DP, coincidences at a flat cost) to the lines
    ``first`` leaves; the pair, priced."""
    picks_f, s_f = fit_first[1], fit_first[4]
    left = [j for j, k in enumerate(picks_f) if k is None]
    if not left:
        return None
    aside = Aside(ref_area=math.log(max(first)) - s_f)
    res = _fit(second, tuple(lines.logs[j] for j in left), lines.flat_costs(second),
               tuple(lines.tols[j] for j in left), aside)
    picks_s: list = [None] * len(picks_f)
    for i, k in enumerate(res[1]):
        picks_s[left[i]] = k
    picks = (tuple(picks_f), tuple(picks_s))
    ln_s = (s_f, res[4])
    return Pair(pair_cost(lines, (first, second), picks, ln_s), (first, second), picks, ln_s)


def _joint(lines: _Lines, first, second, rho: float, start: float) -> Pair | None:
    """The pair fitted at one ratio of scales: ``first`` aware of ``second``, then exact.

    The first pattern's fit here only chooses which lines it leaves (the pair is priced
    afterwards), so its coincidences cost a flat amount each (:meth:`_Lines.flat_costs`).
    """
    aside = Aside(sizes=second, rho=rho, merge_cost=lines.merge_cost(second), start=start)
    fit_first = _fit(first, lines.logs, lines.flat_costs(first), lines.tols, aside)
    return _complete(lines, first, fit_first, second)


def _greedy(lines: _Lines, a, b, singles) -> list[Pair]:
    """Each of ``a`` and ``b`` fitted alone first, the other exactly to the lines left."""
    found = [_complete(lines, a, singles[a], b), _complete(lines, b, singles[b], a)]
    return [p for p in found if p is not None]


def _jointly(lines: _Lines, a, b, singles) -> list[Pair]:
    """``a`` and ``b`` fitted jointly, either first, at each share of
    :data:`NMR_PAIR_SHARES` and then at the ratio of scales the best fit gives."""
    found = []
    rhos = [math.log((1.0 - q) / q) for q in NMR_PAIR_SHARES]
    for first, second in ((a, b), (b, a)):
        start = singles[first][4]
        tried = [p for p in (_joint(lines, first, second, rho, start) for rho in rhos)
                 if p is not None]
        if tried:
            best = min(tried, key=lambda p: p.cost)
            rho = best.ln_s[1] - best.ln_s[0]
            if rho > 0 and min(abs(rho - r) for r in rhos) > NMR_PAIR_RHO_STEP:
                pair = _joint(lines, first, second, rho, best.ln_s[0])  # the fitted ratio
                if pair is not None:
                    tried.append(pair)
        found += tried
    return found


@functools.lru_cache(maxsize=32)
def pair_table(patterns, logs, costs, tols, crowding: float, prices: tuple[float, float], *,
               quick: bool = False) -> dict:
    """Each pattern's best two-pattern explanation of a profile's lines.

    Parameters
    ----------
    patterns : tuple of tuple of int
        Every pattern (orbit sizes) that may be a component.
    logs, tols : tuple of float
        The lines' ln integrals and log-integral spreads.
    costs : tuple
        The fit costs without the coincidence rate (``costs[:8]`` of the comparison).
    crowding : float
        The spectrum's coincidence factor (each pattern's rate follows from it).
    prices : (float, float)
        Cost of assuming a mixture (naming the partner costs ln(patterns - 1) more), and
        the minor component's extra cost.
    quick : bool
        Greedy fits only (no joint fit): a first look.

    Returns
    -------
    dict
        Orbit sizes -> (row cost, :class:`Pair`): the cheapest pair the pattern belongs
        to, with the extra cost when it is the minor component.  Patterns in no pair
        found are absent.  The key ``None`` holds the cheapest single pattern's cost.

    Notes
    -----
    The leaders are the :data:`NMR_PAIR_LEADERS` best single patterns, then the partners
    in the :data:`NMR_PAIR_FOLLOW` best pairs found that led none yet (a mixture's major
    may fit worse alone than patterns like it that absorb some of the minor's lines).
    """
    lines = _lines_of(patterns, logs, costs, tols, crowding, prices)
    singles = {p: _fit(p, lines.logs, lines.costs_of(p), lines.tols) for p in patterns}
    alone = {p: singles[p][0] + labeling_cost(singles[p][1]) for p in patterns}
    order = sorted(patterns, key=alone.__getitem__)
    table: dict = {None: alone[order[0]]} if order else {}
    found: dict = {}  # unordered pair -> its explanations from every start
    leaders, done = order[:NMR_PAIR_LEADERS], set()
    for _round in range(2):
        new = []
        for lead in leaders:
            for other in order:
                key = frozenset((lead, other))
                if other != lead and key not in found:
                    found[key] = _greedy(lines, lead, other, singles)
                    if not found[key]:  # each alone leaves no line: one joint fit as a probe
                        probe = _joint(lines, lead, other, NMR_PAIR_PROBE, singles[lead][4])
                        found[key] = [probe] if probe is not None else []
                    new.append((key, lead, other))
        limit = min((p.cost for f in found.values() for p in f), default=0.0) + NMR_PAIR_WINDOW
        for key, lead, other in new:
            if not quick and found[key] and min(p.cost for p in found[key]) <= limit:
                found[key] += _jointly(lines, lead, other, singles)
        done.update(leaders)
        ranked = sorted((min(f, key=lambda p: p.cost) for f in found.values() if f),
                        key=lambda p: p.cost)
        leaders = [q for p in ranked[:NMR_PAIR_FOLLOW] for q in p.patterns if q not in done]
    # a pattern's row: its cheapest explanation with the minor's extra cost where it is the
    # minor (another start may find it the major at little more cost)
    for pair in (p for f in found.values() for p in f):
        for i, p in enumerate(pair.patterns):
            row = pair.cost + (prices[1] if pair.share(i) < 0.5 else 0.0)
            if p not in table or row < table[p][0] - 1e-12:
                table[p] = (row, pair)
    return table


def _lines_of(patterns, logs, costs, tols, crowding, prices) -> _Lines:
    """The shared fit settings of a table; assuming a mixture costs ``prices[0]``, and its
    partner is one of the other patterns, each as likely a priori (common practice, no
    source: a uniform prior over partners)."""
    partner = math.log(max(1, len(patterns) - 1))
    return _Lines(tuple(logs), tuple(tols), tuple(costs), crowding, prices[0] + partner)


@functools.lru_cache(maxsize=32)
def pair_fit(patterns, logs, costs, noise, crowding: float, prices: tuple[float, float]):
    """The shared relaxation spread and the :func:`pair_table` at it.

    The spread starts at that of the single patterns' evidence
    (:func:`~.nmr_match.shared_spread`).  When the best pair of a first look (greedy fits,
    then that pair fitted jointly as well) explains the lines better than every single
    pattern, the spread moves to the value of :data:`NMR_PAIR_SPREAD_GRID` at which that
    pair's explanation is most probable, and the first look is taken again there, until
    the spread stays (coordinate descent on the best explanation and the spread; common
    practice, no source); the full table is searched at that spread.  A mixture seen
    through single patterns looks like a loose spread; through the right pair it does not.
    ``costs`` and ``noise`` as for :func:`shared_spread`.
    """
    spread = shared_spread(patterns, logs, costs, noise, crowding)
    seen = set()
    while spread not in seen:
        seen.add(spread)
        trial = (spread,) + tuple(costs[1:8])
        tols = tols_at(spread, noise) or ()
        first = pair_table(patterns, logs, trial, tols, crowding, prices, quick=True)
        pairs = [row[1] for p, row in first.items() if p is not None]
        if not pairs:
            break
        lines = _lines_of(patterns, logs, trial, tols, crowding, prices)
        a, b = min(pairs, key=lambda p: p.cost).patterns
        singles = {p: _fit(p, logs, lines.costs_of(p), tols) for p in (a, b)}
        top = min(pairs + _jointly(lines, a, b, singles), key=lambda p: p.cost)
        if top.cost >= first[None]:
            break

        def cost_at(s: float, top: Pair = top) -> float:
            at = _Lines(logs, tols_at(s, noise) or (), (s,) + tuple(costs[1:8]), crowding,
                        prices[0])  # the same pair at every spread: its prior does not matter
            return pair_cost(at, top.patterns, top.picks, top.ln_s)

        spread = min(NMR_PAIR_SPREAD_GRID, key=cost_at)
    trial = (spread,) + tuple(costs[1:8])
    return spread, pair_table(patterns, logs, trial, tols_at(spread, noise) or (), crowding,
                              prices)
