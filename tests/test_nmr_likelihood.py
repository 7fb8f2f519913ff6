"""The 13C likelihood on profile observations: shared spread, impurity count, the candidate as
the minor isomer of a mixture, and the compiled assignment DP.

Orbit patterns of the C78 IPR isomers (D3 13x6, C2v 18x4+3x2, C2v' 17x4+5x2, D3h 5x12+3x6):
Fowler & Manolopoulos, An Atlas of Fullerenes (1995), from memory.  The likelihood terms
themselves: common practice, no source.
"""

from __future__ import annotations

import numpy as np

from cageprint.techniques.nmr import NmrObservation, compare_nmr
from cageprint.techniques.nmr_match import (
    NMR_SPREAD_BOUNDS,
    _dp_back,
    _dp_forward,
    _layout,
    impurity_count_cost,
)

C78 = {"D3": (6,) * 13, "C2v": (4,) * 18 + (2,) * 3, "C2v'": (4,) * 17 + (2,) * 5,
       "D3h": (12,) * 5 + (6,) * 3}


def _profile(components, seed, spread=0.1, snr_median=40.0):
    """A profile observation: each component's orbits at share x size x log-normal spread,
    every line at its own shift, S/N proportional to area."""
    rng = np.random.default_rng(seed)
    areas = [share * s * float(np.exp(rng.normal(0, spread)))
             for sizes, share in components for s in sizes]
    pos = rng.permutation(np.linspace(130.0, 150.0, len(areas)))
    k = snr_median / float(np.median(areas))
    order = np.argsort(pos)
    return NmrObservation(
        positions=tuple(float(pos[i]) for i in order),
        integrals=tuple(areas[i] for i in order),
        snr=tuple(k * areas[i] for i in order),
        thresholds={"snr": 5.0}, diagnostics={"line_width": 0.01})


def test_minor_isomer_is_named_beside_the_major_and_not_ruled_out():
    # 75 % C2v (18x4+3x2) + 25 % D3 (13x6): the D3 lines are as tall as the C2v 2-carbon lines
    obs = _profile([(C78["C2v"], 0.75), (C78["D3"], 0.25)], seed=3)
    partners = [(sizes, name) for name, sizes in C78.items()]
    minor = compare_nmr(C78["D3"], obs, partners=partners)
    major = compare_nmr(C78["C2v"], obs, partners=partners)
    assert minor.verdict != "ruled out", minor.reasons
    assert minor.details["second_component"]["pattern"] == "18x4+3x2"
    assert major.details["second_component"]["pattern"] == "13x6"
    assert major.score > minor.score  # the major explains the spectrum better


def test_spread_is_shared_and_bounded():
    tight = _profile([(C78["C2v"], 1.0)], seed=5, spread=0.02)
    loose = _profile([(C78["C2v"], 1.0)], seed=5, spread=0.8)
    partners = [(sizes, name) for name, sizes in C78.items()]
    for obs in (tight, loose):
        v = compare_nmr(C78["C2v"], obs, partners=partners)
        spread = v.details.get("spread")
        assert spread is not None and NMR_SPREAD_BOUNDS[0] <= spread <= NMR_SPREAD_BOUNDS[1]
        # every candidate is judged at the same spread
        assert compare_nmr(C78["D3h"], obs, partners=partners).details["spread"] == spread
    assert compare_nmr(C78["C2v"], tight, partners=partners).details["spread"] == \
        NMR_SPREAD_BOUNDS[0]


def test_each_further_impurity_line_costs_more():
    steps = np.diff([impurity_count_cost(k) for k in range(12)])
    assert np.all(np.diff(steps) > 0)


def test_compiled_dp_equals_its_python_source():
    # the numba kernels against the same functions run as Python (ties included)
    sizes = (4,) * 6 + (2,) * 3
    values, counts, options, log_c, n_orb, gather, offsets, left = _layout(sizes, 3)
    rng = np.random.default_rng(0)
    lc = np.round(rng.uniform(0, 3, (12, len(options))), 1)  # rounded: many exact ties
    imps = np.round(rng.uniform(0, 3, 12), 1)
    hist = _dp_forward(lc, imps, gather)
    ref = getattr(_dp_forward, "py_func", _dp_forward)(lc, imps, gather)
    np.testing.assert_array_equal(hist, ref)
    state = int(np.argmin(hist[-1, :-1]))
    back = getattr(_dp_back, "py_func", _dp_back)
    np.testing.assert_array_equal(_dp_back(hist, lc, imps, gather, offsets, state),
                                  back(ref, lc, imps, gather, offsets, state))


def test_unseen_orbits_are_a_binomial_count_as_scipy_gives_it():
    # any k of m alike orbits may be the lost ones: -ln Binom(k; m, p) (common practice,
    # no source); cross-checked against scipy.stats.binom
    from scipy.stats import binom

    from cageprint.techniques.nmr_match import end_costs, missing_costs

    costs = (0.3, 3, 2.0, 4.0, 0.0, 3.0, 2.0, 5.0)   # S/N per unit area known: a profile
    values, counts, ln_s = [4, 2], (17, 5), 0.0
    tables = end_costs(values, counts, ln_s, costs)
    p = np.exp(-missing_costs(values, ln_s, costs))
    for table, m, pi in zip(tables, counts, p, strict=True):
        k = np.arange(m + 1)
        assert np.allclose(table, -binom.logpmf(k, m, pi))
    # peak lists: a perfect fit costs nothing, each lost orbit the flat cost less ln C(m, k)
    flat = end_costs([2], (10,), None, costs[:6])[0]
    assert flat[0] == 0.0 and np.isclose(flat[2], 6.0 - np.log(45.0))


def test_losing_one_of_many_alike_orbits_is_cheaper_than_one_of_few():
    # the same lost orbit is likelier among many alike ones (binomial count; common practice,
    # no source)
    from cageprint.techniques.nmr_match import end_costs

    costs = (0.3, 3, 2.0, 4.0, 0.0, 3.0, 2.0, 5.0)
    many = end_costs([2], (40,), 0.0, costs)[0]
    few = end_costs([2], (4,), 0.0, costs)[0]
    assert many[1] - many[0] < few[1] - few[0]
