"""Stability indices, computed energies and the stability prior (issue 11).

Each check of science names its source beside it.  Isomer numbers are spiral
isomer numbers (IPR numbering for IPR cages), as in Fowler & Manolopoulos,
An Atlas of Fullerenes (1995).
"""

from __future__ import annotations

import pytest

from cageprint.cage import Cage, iter_isomers
from cageprint.errors import CageError, StabilityError
from cageprint.stability import formal_charge, stability_indices, stability_indices_at
from cageprint.stability.indices import INDEX_INFO, pentagon_counts
from cageprint.stability.prior import (
    SCORE_FLOOR,
    StabilityVerdict,
    index_estimates,
    stability_verdicts,
)

C60_SPIRAL = (1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32)


def _ipr(n, charge=0):
    return [stability_indices(c, charge) for c in iter_isomers(n, ipr=True)]


def _first(verdicts):
    best = max(v.score for v in verdicts)
    return [k + 1 for k, v in enumerate(verdicts) if v.score == best]


# ------------------------------------------------------------------ indices


def test_c20_all_pentagons():
    # C20 (dodecahedron): 30 bonds, all between pentagons; every atom on 3 pentagons
    # (common practice, no source: the dodecahedron's counts)
    s = stability_indices(Cage.from_spiral(20, range(1, 13)))
    assert s.pentagon_pairs == 30 and s.pentagon_triples == 20
    assert s.pentagon_neighbours == (0, 0, 0, 0, 0, 12)
    assert s.hexagon_neighbours == (0,) * 7 and s.hexagon_index == 0.0


def test_c60_ih_indices():
    # Ih C60: IPR, all 20 hexagons alike (3 hexagon neighbours each); Hückel gap 0.757 |β|
    # (Haddon, Brus & Raghavachari, Chem. Phys. Lett. 1986; from memory)
    s = stability_indices(Cage.from_spiral(60, C60_SPIRAL))
    assert s.pentagon_pairs == 0 and s.pentagon_neighbours == (12, 0, 0, 0, 0, 0)
    assert s.hexagon_neighbours == (0, 0, 0, 20, 0, 0, 0) and s.hexagon_index == 0.0
    assert s.gap == pytest.approx(0.7566, abs=1e-4) and s.anion_shell == "closed"


def test_pair_count_agrees_with_cage_model():
    # independent count: the cage model's own fused-pentagon count (common practice)
    for cage in list(iter_isomers(40))[:40]:
        pairs, *_ = pentagon_counts(cage.faces, cage.n)
        assert pairs == cage.fused_pentagon_pairs


def test_pi_energy_is_the_sum_of_occupied_levels():
    # Σ occ λ equals the sum of the n/2 largest adjacency eigenvalues, twice (common practice)
    import numpy as np

    cage = list(iter_isomers(50))[10]
    a = np.zeros((50, 50))
    for i, row in enumerate(cage.neighbours):
        a[i, row] = 1
    lam = np.sort(np.linalg.eigvalsh(a))[::-1]
    s = stability_indices_at(cage, (0, -6))
    assert s[0].pi_energy == pytest.approx(2 * lam[:25].sum(), abs=1e-8)
    assert s[1].anion_pi_energy == pytest.approx(2 * lam[:28].sum(), abs=1e-8)


def test_formal_charges():
    # ionic model: M3N -> 6-, M2C2 -> 4-, La -> 3-, Ca -> 2- (common practice, no source)
    assert [formal_charge(f) for f in ("Sc3N@C80", "Sc2C2@C82", "La@C82", "Ca@C84", "C60")] \
        == [-6, -4, -3, -2, 0]
    assert formal_charge("Sm@C84", charges={"Sm": 3}) == -3


def test_every_index_documented():
    fields = set(stability_indices(Cage.from_spiral(60, C60_SPIRAL)).to_dict())
    documented = set(INDEX_INFO)
    assert documented <= fields
    assert fields - documented == {"n", "charge", "anion_shell"}
    for label, _unit, better, source in INDEX_INFO.values():
        assert label and better in ("lower", "higher", "") and len(source) > 20


def test_bad_charge():
    with pytest.raises(CageError, match="out of range"):
        stability_indices(Cage.from_spiral(60, C60_SPIRAL), charge=-61)


# --------------------------------------------------------- the prior, no spectra


def test_sc3n_c80_ranks_ih_first():
    # Sc3N@C80 is the Ih cage, isomer 7 of the 7 IPR C80 (Stevenson et al., Nature 1999);
    # the hexaanion gap criterion picks it (Campanera, Bo & Poblet, Angew. Chem. 2005)
    v = stability_verdicts(_ipr(80, formal_charge("Sc3N@C80")))
    assert _first(v) == [7]
    assert v[6].reasons[1] == "anion gap 0.99 |β|, widest of 7"
    assert v[6].verdict == "consistent" and v[6].basis == "indices"


def test_sc3n_c78_ranks_d3h_first():
    # Sc3N@C78 is the D3h cage, C78 isomer 5 (Olmstead, de Bettencourt-Dias, Duchamp,
    # Stevenson, Marciu, Dorn & Balch, Angew. Chem. 2001; from memory)
    v = stability_verdicts(_ipr(78, formal_charge("Sc3N@C78")))
    assert _first(v) == [5]


def test_c76_d2_over_td_by_indices():
    # C76 is isolated as the D2 cage, isomer 1 (Ettl, Chao, Diederich & Whetten, Nature 1991);
    # the Td cage (isomer 2) is open-shell in Hückel theory (Fowler & Manolopoulos 1995)
    v = stability_verdicts(_ipr(76))
    assert _first(v) == [1]
    assert "open shell" in " ".join(v[1].reasons)


def test_c82_trianion_pi_energy_alone_misses_c2v():
    # measured here (issue 11): the trianion π energy prefers C82 isomer 6 (Cs) over the
    # C2v isomer 9 of La@C82 (Akasaka et al. / Nishibori et al. 2000; from memory), so
    # energies are needed for La@C82 (see the slow test below)
    est = index_estimates(_ipr(82, formal_charge("La@C82")))
    assert est.index(min(est)) + 1 == 6


def test_energies_take_over_when_all_given():
    s = _ipr(76)
    v = stability_verdicts(s, energies=[30.0, 0.0])
    assert _first(v) == [2] and v[1].basis == "GFN2-xTB"
    assert v[1].reasons[0].startswith("+0 kJ/mol, lowest of 2 by GFN2-xTB")
    # one missing energy: the index estimate for all (never a mix of the two)
    v = stability_verdicts(s, energies=[30.0, None])
    assert v[0].basis == "indices"


def test_score_floor_and_verdict_words():
    s = _ipr(76)
    v = stability_verdicts(s, energies=[0.0, 1e4])
    assert v[1].score == -SCORE_FLOOR and v[1].verdict == "unlikely"
    assert StabilityVerdict.from_dict(v[1].to_dict()) == v[1]
    with pytest.raises(StabilityError, match="temperature"):
        stability_verdicts(s, temperature=0)


def test_mixed_sizes_refused():
    with pytest.raises(StabilityError, match="one formula"):
        stability_verdicts(_ipr(76) + _ipr(78))


def test_sc3n_placed_over_the_three_fused_pairs_of_c68_6140():
    # in Sc3N@C68 (D3, isomer 6140) each Sc sits over one of the three fused pentagon pairs
    # (Stevenson et al., Nature 2000; from memory): the placement must aim the metals there
    import numpy as np

    from cageprint.stability.endohedral import place_cluster, sites

    cage = Cage.from_spiral(68, (1, 2, 9, 11, 14, 16, 22, 27, 29, 31, 33, 35))
    numbers, x = place_cluster(cage, "Sc3N@C68")
    assert numbers[-4:] == [7, 21, 21, 21] and len(numbers) == 72
    fused, _ = sites(cage, x[:68])
    assert len(fused) == 3
    metal = x[-3:] - x[-4]
    metal /= np.linalg.norm(metal, axis=1, keepdims=True)
    cos = metal @ fused.T
    assert np.all(cos.max(axis=1) > 0.95)  # within about 18 degrees of a fused bond
    with pytest.raises(StabilityError, match="places M3N or a single metal"):
        place_cluster(cage, "Sc2C2@C68")
