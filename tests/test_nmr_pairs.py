"""The 13C pair search (kit/cageprint/techniques/nmr_pairs.py) on constructed two-isomer line
lists: both isomers named with their shares where fitting one pattern first fails, one price
for every explanation, and the search memoised per spectrum.

Orbit patterns of the C78 IPR isomers (D3 13x6, C2v 18x4+3x2, C2v' 17x4+5x2, D3h 5x12+3x6):
Fowler & Manolopoulos, An Atlas of Fullerenes (1995), from memory.  The line lists, their
scatter and the likelihood terms: common practice, no source.
"""

from __future__ import annotations

import math

import numpy as np

from cageprint.techniques import nmr_pairs
from cageprint.techniques.nmr import NmrObservation, compare_nmr
from cageprint.techniques.nmr_match import (
    _crowding_factor,
    _detection,
    _fit,
    coincidence_rate,
    impurity_count_cost,
    line_noise,
    tols_at,
)

C78 = {"D3": (6,) * 13, "C2v": (4,) * 18 + (2,) * 3, "C2v'": (4,) * 17 + (2,) * 5,
       "D3h": (12,) * 5 + (6,) * 3}
PARTNERS = [(sizes, name) for name, sizes in C78.items()]


def _lines(components, scatter):
    """A line list with S/N: each orbit at share x size x a fixed log scatter
    (``scatter * sin``, no random numbers), lines spread over 130-150 ppm in a fixed mixed
    order, S/N 40 at the median line."""
    areas = []
    for sizes, share in components:
        for s in sizes:
            areas.append(share * s * math.exp(scatter * math.sin(2.3 * len(areas))))
    order = np.argsort([math.sin(3.7 * j + 1.0) for j in range(len(areas))])
    areas = [areas[int(j)] for j in order]
    k = 40.0 / float(np.median(areas))
    return NmrObservation(
        positions=tuple(float(p) for p in np.linspace(130.0, 150.0, len(areas))),
        integrals=tuple(areas), snr=tuple(k * a for a in areas),
        thresholds={"snr": 5.0}, diagnostics={"line_width": 0.01})


def _search(obs):
    """The spread and pair table compare_nmr uses, and the fit settings at that spread."""
    logs = tuple(math.log(a) for a in obs.integrals)
    costs = (0.3, 3, 2.0, 1.5, 6.0, 3.0) + _detection(obs, True)
    noise, crowd = line_noise(obs), _crowding_factor(obs)
    spread, table = nmr_pairs.pair_fit(tuple(sorted(C78.values())), logs, costs, noise, crowd,
                                       (3.0, 6.0))
    lines = nmr_pairs._Lines(logs, tols_at(spread, noise), (spread,) + costs[1:], crowd, 3.0)
    return table, lines


def test_pair_search_names_minor_and_share_where_the_major_first_fails():
    # 65 % C2v + 35 % D3h: the minor's 6-carbon lines (2.1) sit between the major's 4- and
    # 2-carbon lines (2.6, 1.3), and its 12-carbon lines (4.2) near two merged 4-carbon orbits
    major, minor = C78["C2v"], C78["D3h"]
    obs = _lines([(major, 0.65), (minor, 0.35)], scatter=0.15)
    table, lines = _search(obs)
    # the major fitted alone first takes lines the minor needs: a far worse explanation,
    # the minor's share badly off
    alone = _fit(major, lines.logs, lines.costs_of(major), lines.tols)
    greedy = nmr_pairs._complete(lines, major, alone, minor)
    row, pair = table[major]
    assert row < greedy.cost - 10
    assert abs(greedy.share(1) - 0.35) > 0.1
    assert abs(pair.share(1 - pair.index(major)) - 0.35) < 0.05
    # through the comparison: each isomer names the other, with its share
    v_major = compare_nmr(major, obs, partners=PARTNERS)
    v_minor = compare_nmr(minor, obs, partners=PARTNERS)
    second = v_major.details["second_component"]
    assert (second["pattern"], second["minor"]) == ("5x12+3x6", False)
    assert abs(second["share"] - 0.35) < 0.05
    assert v_minor.details["second_component"]["pattern"] == "18x4+3x2"
    assert v_minor.verdict != "ruled out"
    assert v_major.score > max(compare_nmr(s, obs, partners=PARTNERS).score
                               for n, s in C78.items() if n != "C2v")


def test_pair_explanations_are_priced_like_single_fits():
    # one price whichever start found an explanation: a pattern's own part plus its
    # impurity lines equals its fitted cost alone
    obs = _lines([(C78["C2v"], 0.8), (C78["D3"], 0.2)], scatter=0.2)
    _table, lines = _search(obs)
    for sizes in C78.values():
        costs = tuple(lines.costs) + (coincidence_rate(lines.crowding, len(sizes)),)
        cost, picks, values, _counts, ln_s = _fit(sizes, lines.logs, costs, lines.tols)
        imps = [costs[3] + costs[4] * math.exp(2 * (lines.logs[j] + ln_s - math.log(values[0])))
                for j, k in enumerate(picks) if k is None]
        own = nmr_pairs.explanation_cost(sizes, lines.logs, lines.tols, picks, ln_s, costs)
        assert math.isclose(own + sum(imps) + impurity_count_cost(len(imps)), cost,
                            rel_tol=1e-9, abs_tol=1e-9)


def test_single_isomer_is_not_made_a_mixture_and_table_is_memoised():
    obs = _lines([(C78["C2v"], 1.0)], scatter=0.15)
    v = compare_nmr(C78["C2v"], obs, partners=PARTNERS)
    assert v.details["second_component"] is None and v.verdict == "consistent"
    before = nmr_pairs.pair_fit.cache_info().hits
    compare_nmr(C78["D3"], obs, partners=PARTNERS)  # the same spectrum: the same table
    assert nmr_pairs.pair_fit.cache_info().hits > before
