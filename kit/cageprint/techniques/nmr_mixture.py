"""The mixture search of the 13C comparison: a candidate beside a second pattern.

Two directions, both over the memoised fits of :mod:`.nmr_match`: the candidate's own
fit first and a partner pattern on the lines it leaves (:func:`_second_component`), and
another pattern's fit first with the candidate on what that leaves
(:func:`_beside_major`, the candidate as the minor isomer).  The cheaper total, if it
beats the candidate alone, is the candidate's explanation.
"""

from __future__ import annotations

import math

from ..candidate import Candidate
from .nmr_match import _fit, coincidence_rate, impurity_count_cost, labeling_cost

#: a second component may leave this many of its orbits or the lines unexplained
PARTNER_FLAWS = 2


def _second_component(sizes, logs, picks, values, ln_s, weights, *, unexplained, tols, profile,
                      partners,
                      costs, cost_alone, mixture_cost, minor_component_cost):
    """Try the unexplained lines as a second component; the best, if cheaper than impurities."""
    def imp(j: int, ln_scale: float, top: float) -> float:
        r = math.exp(logs[j] + ln_scale) / top if logs[j] is not None else 0.0
        return costs[3] + costs[4] * r * r

    top = float(values[0])
    base = cost_alone - sum(imp(j, ln_s, top) for j in unexplained)
    if tols is not None:  # the sub-fit prices the impurities that remain
        base -= impurity_count_cost(len(unexplained))
    sub_logs = [logs[j] for j in unexplained]
    sub_tols = None if tols is None else [tols[j] for j in unexplained]
    total = sum(weights)
    mine = sum(w for j, w in enumerate(weights) if picks[j] is not None)
    best, n_left, own = None, len(unexplained), sorted(sizes)  # own: no second component
    # a profile always has integrals (its S/N per unit area comes from them)
    own_labels = labeling_cost(picks) if profile else 0.0
    for p_sizes, label in partners:
        # a partner must be able to explain the left-over lines with few flaws
        if sorted(p_sizes) == own or not (n_left - PARTNER_FLAWS <= len(p_sizes)
                <= costs[1] * n_left + PARTNER_FLAWS):
            continue
        sub_cost, sub_picks, _v, sub_counts, sub_s = _fit(p_sizes, sub_logs, costs, sub_tols)
        # lines neither component explains are impurities of the sample: judge their
        # strength against the candidate's own scale, not the partner's
        for i, k in enumerate(sub_picks):
            if k is None:
                j = unexplained[i]
                sub_cost += imp(j, ln_s, top) - imp(j, sub_s, float(max(p_sizes)))
        if profile:
            # which line is of which kind (either component's orbits, impurity) is itself
            # a choice fitted to the data: the labelling of all lines replaces the single one's
            kinds = list(picks)
            for i, k in enumerate(sub_picks):
                if k is not None:
                    kinds[unexplained[i]] = ("partner", k)
            cost = base + sub_cost + mixture_cost + labeling_cost(kinds) - own_labels
        else:  # which lines belong to the partner: ln C(lines, partner lines)
            m = sum(1 for k in sub_picks if k is not None)
            cost = base + sub_cost + mixture_cost + (math.lgamma(len(logs) + 1)
                                                     - math.lgamma(m + 1)
                                                     - math.lgamma(len(logs) - m + 1))
        minor = mine < 0.5 * total
        if minor:
            cost += minor_component_cost
        if best is None or cost < best["cost"] - 1e-12:
            used = [unexplained[i] for i, k in enumerate(sub_picks) if k is not None]
            n_used = sum(sum(k) for k in sub_picks if k is not None)
            merges = sum(sum(k) - 1 for k in sub_picks if k is not None)
            flaws = (sum(sub_counts) - n_used) + merges + (len(sub_picks) - len(used))
            best = {"cost": cost, "label": label, "flaws": flaws,
                    "pattern": Candidate("C", sum(p_sizes), 0, "", p_sizes).pattern,
                    "lines": used, "fraction": sum(weights[j] for j in used) / total,
                    "own_fraction": mine / total, "minor": minor}
    if best is None or best["cost"] >= cost_alone:
        return None
    return best


#: a candidate is also tried as the minor component beside each of this many best single fits
NMR_MAJOR_PARTNERS = 3


def _beside_major(sizes, logs, weights, *, tols, partners, costs, crowding, cost_alone,
                  mixture_cost, minor_component_cost):
    """The candidate as the second component of a mixture whose first is another pattern.

    The greedy search of :func:`_second_component` fits the candidate first and gives
    the partner what is left; when the candidate is the minor isomer its own fit takes
    the major's lines and the partner never gets them.  Here each of the
    :data:`NMR_MAJOR_PARTNERS` patterns that fit the lines best alone takes its lines
    first, and the candidate is fitted to what is left.  Returns the cheapest such
    mixture, in :func:`_second_component`'s form plus the candidate's own ``picks``
    (over all lines) and ``ln_s``, or None when none beats ``cost_alone``.
    """
    own = sorted(sizes)
    singles = []
    for p_sizes, label in partners:
        if sorted(p_sizes) == own:
            continue
        c_p = tuple(costs[:8]) + (coincidence_rate(crowding, len(p_sizes)),)
        res = _fit(p_sizes, logs, c_p, tols)
        singles.append((res[0] + labeling_cost(res[1]), p_sizes, label, res))
    singles.sort(key=lambda t: t[0])
    total = sum(weights)
    best = None
    for _c, p_sizes, label, res in singles[:NMR_MAJOR_PARTNERS]:
        p_cost, p_picks, p_values, _pc, p_s = res
        left = [j for j, k in enumerate(p_picks) if k is None]
        if not left:
            continue
        top_p = float(p_values[0])

        def imp(j: int, ln_scale: float, top: float) -> float:
            r = math.exp(logs[j] + ln_scale) / top
            return costs[3] + costs[4] * r * r

        base = p_cost - sum(imp(j, p_s, top_p) for j in left)
        if tols is not None:  # the sub-fit prices the impurities that remain
            base -= impurity_count_cost(len(left))
        sub_logs = [logs[j] for j in left]
        sub_tols = None if tols is None else [tols[j] for j in left]
        s_cost, s_picks, s_values, s_counts, s_s = _fit(sizes, sub_logs, costs, sub_tols)
        picks: list = [None] * len(logs)
        kinds: list = [("partner", k) if k is not None else None for k in p_picks]
        for i, k in enumerate(s_picks):
            j = left[i]
            picks[j] = k
            kinds[j] = k
            if k is None:  # neither explains it: judged against the major's scale
                s_cost += imp(j, p_s, top_p) - imp(j, s_s, float(s_values[0]))
        cost = base + s_cost + mixture_cost + labeling_cost(kinds)
        mine = sum(weights[j] for j in left if picks[j] is not None)
        minor = mine < 0.5 * total
        if minor:
            cost += minor_component_cost
        if best is None or cost < best["cost"] - 1e-12:
            used = [j for j, k in enumerate(p_picks) if k is not None]
            merges = sum(sum(k) - 1 for k in p_picks if k is not None)
            missing = sum(_pc) - sum(sum(k) for k in p_picks if k is not None)
            best = {"cost": cost, "label": label, "flaws": missing + merges,
                    "pattern": Candidate("C", sum(p_sizes), 0, "", p_sizes).pattern,
                    "lines": used, "fraction": sum(weights[j] for j in used) / total,
                    "own_fraction": mine / total, "minor": minor,
                    "picks": picks, "ln_s": s_s}
    if best is None or best["cost"] >= cost_alone:
        return None
    return best
