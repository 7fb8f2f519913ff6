"""The mixture of the 13C comparison: a candidate beside a second pattern.

Profiles (S/N known, the stated likelihood): the candidate's best pair from the pair
search of :mod:`.nmr_pairs`, either component (:func:`pair_mixture`).  Peak lists: the
candidate's own fit first and a partner pattern on the lines it leaves
(:func:`_second_component`).  The mixture, if it beats the candidate alone, is the
candidate's explanation.
"""

from __future__ import annotations

import math

import numpy as np

from ..candidate import Candidate
from .nmr_match import _fit, missing_costs

#: a second component may leave this many of its orbits or the lines unexplained
PARTNER_FLAWS = 2


def _second_component(sizes, logs, picks, values, ln_s, weights, *, unexplained, partners,
                      costs, cost_alone, mixture_cost, minor_component_cost):
    """Peak lists: try the unexplained lines as a second component; the best, if cheaper than
    impurities (with the candidate's own ``picks`` and ``ln_s``)."""
    def imp(j: int, ln_scale: float, top: float) -> float:
        r = math.exp(logs[j] + ln_scale) / top if logs[j] is not None else 0.0
        return costs[3] + costs[4] * r * r

    top = float(values[0])
    base = cost_alone - sum(imp(j, ln_s, top) for j in unexplained)
    sub_logs = [logs[j] for j in unexplained]
    total = sum(weights)
    mine = sum(w for j, w in enumerate(weights) if picks[j] is not None)
    best, n_left, own = None, len(unexplained), sorted(sizes)  # own: no second component
    for p_sizes, label in partners:
        # a partner must be able to explain the left-over lines with few flaws
        if sorted(p_sizes) == own or not (n_left - PARTNER_FLAWS <= len(p_sizes)
                <= costs[1] * n_left + PARTNER_FLAWS):
            continue
        sub_cost, sub_picks, _v, sub_counts, sub_s = _fit(p_sizes, sub_logs, costs)
        # lines neither component explains are impurities of the sample: judge their
        # strength against the candidate's own scale, not the partner's
        for i, k in enumerate(sub_picks):
            if k is None:
                j = unexplained[i]
                sub_cost += imp(j, ln_s, top) - imp(j, sub_s, float(max(p_sizes)))
        # which lines belong to the partner: ln C(lines, partner lines)
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
            best = {"cost": cost, "label": label, "flaws": flaws, "pattern": _pattern(p_sizes),
                    "lines": used, "fraction": sum(weights[j] for j in used) / total,
                    "own_fraction": mine / total, "minor": minor, "picks": picks,
                    "ln_s": ln_s}
    if best is None or best["cost"] >= cost_alone:
        return None
    return best


def pair_mixture(sizes, table, labels, weights, *, costs, cost_alone):
    """The candidate's best two-pattern explanation from :func:`.nmr_pairs.pair_table`.

    Returns None when the candidate is in no pair or its pair does not beat
    ``cost_alone``; else the mixture in :func:`_second_component`'s form plus the
    candidate's own ``picks`` (over all lines) and ``ln_s``, and the partner's fitted
    ``share`` of the sample (from the two scales).  ``labels`` maps orbit sizes to the
    partner's name; the partner's flaws are its coincidences and the orbits it misses
    beyond those its S/N makes likely to be lost.
    """
    row = table.get(tuple(sizes))
    if row is None or row[0] >= cost_alone:
        return None
    cost, pair = row
    i = pair.index(sizes)
    partner, p_picks = pair.patterns[1 - i], pair.picks[1 - i]
    lines = [j for j, k in enumerate(p_picks) if k is not None]
    values = sorted(set(partner), reverse=True)
    expected = missing_costs(values, pair.ln_s[1 - i], costs)
    lost = float(np.dot([partner.count(v) for v in values], np.exp(-expected)))
    seen = sum(sum(k) for k in p_picks if k is not None)
    merges = sum(sum(k) - 1 for k in p_picks if k is not None)
    total = sum(weights)
    mine = sum(w for w, k in zip(weights, pair.picks[i], strict=True) if k is not None)
    return {"cost": cost, "label": labels.get(partner) or f"pattern {_pattern(partner)}",
            "flaws": max(0, len(partner) - seen - math.floor(lost)) + merges,
            "pattern": _pattern(partner), "lines": lines,
            "fraction": sum(weights[j] for j in lines) / total, "share": pair.share(1 - i),
            "own_fraction": mine / total, "minor": pair.share(i) < 0.5,
            "picks": list(pair.picks[i]), "ln_s": pair.ln_s[i]}


def _pattern(sizes) -> str:
    return Candidate("C", sum(sizes), 0, "", sizes).pattern
