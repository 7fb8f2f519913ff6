"""Isomer enumeration and numbering: counts against the published sequences, order, numbers."""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest

from cageprint.cage import Cage, count_isomers, isomer_number, iter_isomers, iter_spirals
from cageprint.errors import CageError

# Number of fullerene isomers C_n, all isomers: OEIS A007894; P. W. Fowler and
# D. E. Manolopoulos, An Atlas of Fullerenes, Clarendon Press, 1995 (from memory).
ALL_COUNTS = {
    20: 1, 24: 1, 26: 1, 28: 2, 30: 3, 32: 6, 34: 6, 36: 15, 38: 17, 40: 40, 42: 45,
    44: 89, 46: 116, 48: 199, 50: 271, 52: 437, 54: 580, 56: 924, 58: 1205, 60: 1812,
}
# Same source (OEIS A007894 / Atlas of Fullerenes 1995, from memory)
C70_ALL = 8149

# IPR isomers C_n: OEIS A046880; Fowler & Manolopoulos, An Atlas of Fullerenes, 1995 (from memory).
IPR_COUNTS = {
    60: 1, 62: 0, 64: 0, 66: 0, 68: 0, 70: 1, 72: 1, 74: 1, 76: 2, 78: 5, 80: 7, 82: 9,
    84: 24, 86: 19, 88: 35, 90: 46, 92: 86, 94: 134, 96: 187, 98: 259, 100: 450,
}


def _euler(cage: Cage) -> None:
    # Euler relations: common practice, no source
    n = cage.n
    assert cage.face_sizes.count(5) == 12
    assert cage.face_sizes.count(6) == n // 2 - 10
    assert len(cage.bonds) == 3 * n // 2
    assert n - len(cage.bonds) + len(cage.faces) == 2
    assert {len(r) for r in cage.faces} <= {5, 6}


@pytest.fixture(scope="module")
def all_upto_60():
    return {n: list(iter_isomers(n)) for n in ALL_COUNTS}


def test_all_isomer_counts_20_to_60(all_upto_60):
    found = {n: len(v) for n, v in all_upto_60.items()}
    assert found == ALL_COUNTS


def test_no_isomers_of_c22():
    with pytest.raises(CageError, match=r"n=22: no fullerene C22 exists"):
        count_isomers(22)


def test_every_enumerated_cage_obeys_euler_and_is_numbered_in_order(all_upto_60):
    for n, cages in all_upto_60.items():
        spirals = [c.spiral for c in cages]
        assert spirals == sorted(spirals), n  # canonical-spiral lexicographic order
        assert len(set(spirals)) == len(spirals)
        assert [c.isomer_all for c in cages] == list(range(1, len(cages) + 1))
        for c in cages:
            assert c.spiral[0] == 1  # a canonical spiral starts at a pentagon
            assert c.canonical_spiral == c.spiral
            _euler(c)


def test_enumerated_spirals_are_canonical_when_rebuilt(all_upto_60):
    # rebuild from the spiral alone (no hints) and recompute the canonical spiral
    for n in (40, 50):
        for c in all_upto_60[n]:
            again = Cage.from_spiral(n, c.spiral)
            assert again.canonical_spiral == c.spiral


def test_isomers_are_pairwise_different_graphs(all_upto_60):
    # an independent check that no cage is listed twice: adjacency spectra differ, or
    # networkx finds no isomorphism (common practice, no source)
    for n in (36, 40, 44):
        cages = all_upto_60[n]
        spectra = [
            np.round(np.linalg.eigvalsh(nx.to_numpy_array(c.graph())), 8) for c in cages
        ]
        for i, j in itertools.combinations(range(len(cages)), 2):
            if np.array_equal(spectra[i], spectra[j]):
                assert not nx.is_isomorphic(cages[i].graph(), cages[j].graph())


@pytest.mark.slow
def test_all_isomer_count_c70():
    # OEIS A007894 / Atlas of Fullerenes (1995), from memory: 8,149 isomers of C70, the last
    # of which is the one IPR isomer (D5h), spiral 1 7 9 11 13 15 27 29 31 33 35 37
    spirals = np.concatenate(list(iter_spirals(70)))
    assert len(spirals) == C70_ALL
    assert tuple(spirals[-1].tolist()) == (1, 7, 9, 11, 13, 15, 27, 29, 31, 33, 35, 37)


# OEIS A007894 (number of fullerenes C_n), n = 62..100, from memory; the values the issue
# quotes (C64 3,465, C78 24,109, C80 31,924, C84 51,592, C90 99,918, C100 285,914) agree
OEIS_ALL_62_100 = {
    62: 2385, 64: 3465, 66: 4478, 68: 6332, 70: 8149, 72: 11190, 74: 14246, 76: 19151,
    78: 24109, 80: 31924, 82: 39718, 84: 51592, 86: 63761, 88: 81738, 90: 99918,
    92: 126409, 94: 153493, 96: 191839, 98: 231017, 100: 285914,
}
# OEIS A046880 (IPR fullerenes C_n), n = 102..150, from memory
OEIS_IPR_102_150 = {
    102: 616, 104: 823, 106: 1233, 108: 1799, 110: 2355, 112: 3342, 114: 4468, 116: 6063,
    118: 8148, 120: 10774, 122: 13977, 124: 18769, 126: 23589, 128: 30683, 130: 39393,
    132: 49878, 134: 62372, 136: 79362, 138: 98541, 140: 121354, 142: 151201,
    144: 186611, 146: 225245, 148: 277930, 150: 335569,
}


@pytest.mark.slow
@pytest.mark.long
@pytest.mark.parametrize("n", sorted(OEIS_ALL_62_100))
def test_all_isomer_counts_equal_oeis_a007894(n):
    # OEIS A007894, from memory (values above); minutes each from C90 on.  C100 counts
    # one cage on which no spiral from a pentagon closes (found by the hexagon starts)
    assert count_isomers(n) == OEIS_ALL_62_100[n]


@pytest.mark.slow
@pytest.mark.long
@pytest.mark.parametrize("n", sorted(OEIS_IPR_102_150))
def test_ipr_counts_equal_oeis_a046880(n):
    # OEIS A046880, from memory (values above); up to an hour each near C150
    assert count_isomers(n, ipr=True) == OEIS_IPR_102_150[n]


@pytest.mark.parametrize(("n", "ipr"), [(n, False) for n in range(20, 42, 2) if n != 22]
                         + [(60, True), (70, True), (72, True), (76, True)])
def test_lists_equal_a_plain_python_reference(n, ipr):
    # tests/reference_spiral.py: the same method written apart in plain Python; the lists
    # (not only the counts) must agree, in order (common practice, no source)
    import reference_spiral

    ours = [tuple(r) for r in np.concatenate(list(iter_spirals(n, ipr))).tolist()]
    assert ours == reference_spiral.spirals(n, ipr)


def test_ipr_counts_60_to_100():
    found = {n: count_isomers(n, ipr=True) for n in IPR_COUNTS}
    assert found == IPR_COUNTS


def test_ipr_lists_are_ipr_and_numbered():
    for n in (78, 84):
        cages = list(iter_isomers(n, ipr=True))
        assert [c.isomer for c in cages] == list(range(1, len(cages) + 1))
        for c in cages:
            assert c.is_ipr and c.fused_pentagon_pairs == 0
            _euler(c)


def test_c60_ipr_is_last_of_all_and_first_of_ipr(all_upto_60):
    # Atlas of Fullerenes (1995), from memory: Ih C60 = IPR isomer 1 = isomer 1812 of all
    ih = (1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32)
    assert all_upto_60[60][-1].spiral == ih
    assert [c.spiral for c in iter_isomers(60, ipr=True)] == [ih]
    assert isomer_number(60, ih) == 1
    assert isomer_number(60, ih, ipr=True) == 1
    assert isomer_number(60, ih, ipr=False) == 1812
    ipr = [c for c in all_upto_60[60] if c.is_ipr]
    assert len(ipr) == 1


def test_c84_ipr_numbering():
    # Atlas of Fullerenes (1995), from memory: 24 IPR isomers of C84; the two major isomers
    # are D2 (22) and D2d (23), and 24 is D6h.  Point groups are not computed here; the order of
    # the graph automorphism group (= point-group order for these cages) is: D2 4, D2d 8, D6h 24.
    from networkx.algorithms.isomorphism import GraphMatcher

    cages = list(iter_isomers(84, ipr=True))
    assert len(cages) == 24
    by_number = {c.isomer: c for c in cages}
    orders = {}
    for k in (22, 23, 24):
        g = by_number[k].graph()
        orders[k] = sum(1 for _ in GraphMatcher(g, g).isomorphisms_iter())
    assert orders == {22: 4, 23: 8, 24: 24}
    # numbering is stable: any spiral of the cage gives back the same number
    for k in (22, 23):
        assert isomer_number(84, by_number[k].spiral) == k
        assert Cage.from_spiral(84, by_number[k].spiral).isomer == k


def test_ipr_c70():
    # Atlas of Fullerenes (1995), from memory: the one IPR C70 has spiral
    # 1 7 9 11 13 15 27 29 31 33 35 37
    spiral = (1, 7, 9, 11, 13, 15, 27, 29, 31, 33, 35, 37)
    c = Cage.from_spiral(70, spiral)
    assert c.is_ipr and c.isomer == 1
    assert isomer_number(70, spiral, ipr=True) == 1


def test_isomer_number_non_ipr_literature_number(all_upto_60):
    for c in all_upto_60[40][::7]:
        assert isomer_number(40, c.spiral) == c.isomer_all == c.isomer


def test_isomer_number_rejects_ipr_for_fused_cage():
    with pytest.raises(
        CageError,
        match=r"spiral 1 2 3 4 5 6 7 8 9 10 11 12: this C20 cage has 30 fused pentagon pair\(s\), "
        r"so it has no IPR isomer number; pass ipr=False",
    ):
        isomer_number(20, range(1, 13), ipr=True)


def test_isomer_number_validates_input():
    with pytest.raises(CageError, match=r"spiral has 11 positions, expected 12"):
        isomer_number(60, range(1, 12))


def test_iter_isomers_streams():
    # the generator yields before the search is finished
    it = iter_isomers(60)
    first = next(it)
    assert first.isomer_all == 1 and first.spiral[:2] == (1, 2)
    it.close()


def test_iter_isomers_bad_n_raises_on_first_use():
    with pytest.raises(CageError, match=r"n=61: a fullerene has an even number of atoms"):
        next(iter_isomers(61))


def test_progress_bar_goes_to_stderr(capsys):
    cages = list(iter_isomers(40, progress=True))
    assert len(cages) == 40
    out, err = capsys.readouterr()
    assert out == ""
    assert "C40 isomers" in err and "40" in err


def test_pure_python_fallback_agrees():
    # the kernels also run uncompiled (NUMBA_DISABLE_JIT=1): same answers, common practice
    import os
    import subprocess
    import sys

    code = (
        "from cageprint.cage import Cage, count_isomers; "
        "print(count_isomers(36), count_isomers(70, ipr=True), "
        "Cage.from_spiral(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32]).canonical_spiral)"
    )
    env = dict(os.environ, NUMBA_DISABLE_JIT="1")
    res = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True,
                         timeout=300)
    assert res.returncode == 0, res.stderr
    assert res.stdout.split("(")[0].split() == ["15", "1"]
    assert "(1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32)" in res.stdout


@pytest.mark.parametrize(("n", "ipr"), [(58, False), (96, True)])
def test_split_search_gives_the_same_order(monkeypatch, n, ipr):
    # the search split into parts run by threads hands over exactly what one search gives
    # (common practice, no source)
    import cageprint.cage.isomers as mod

    monkeypatch.setattr(mod, "WORKERS", 2)
    monkeypatch.setattr(mod.os, "cpu_count", lambda: 2)
    split = np.concatenate(list(iter_spirals(n, ipr)))
    monkeypatch.setattr(mod, "WORKERS", 1)
    whole = np.concatenate(list(iter_spirals(n, ipr)))
    assert np.array_equal(split, whole)


@pytest.mark.parametrize("n", [44, 52])
def test_dead_state_memo_keeps_every_complete_spiral(monkeypatch, n):
    # the memo may cut only partial spirals that cannot close: the number of complete
    # spirals (canonical or not) and the list stay the same with it off (common practice)
    import cageprint.cage.isomers as mod
    from cageprint.cage import _kernels as K

    def run():
        st = K.new_search_state(n)
        rows = np.concatenate(list(mod._run(st, False, mod.BATCH)))
        return rows, int(st["ctl"][4]), int(st["ctl"][3])

    with_memo, windups, nodes = run()
    monkeypatch.setattr(mod, "MEMO_ALL", False)
    without, windups_off, nodes_off = run()
    assert windups == windups_off and np.array_equal(with_memo, without)
    assert nodes < nodes_off / 2  # and it does cut


@pytest.mark.parametrize("n", [24, 30, 36, 40, 44, 50])
def test_hexagon_starts_add_nothing_below_c100(n):
    # every cage below C100 has a closing spiral from a pentagon (the all-isomer counts
    # agree with OEIS A007894, values from memory), so the search from hexagons keeps none
    assert count_isomers(n, hexagons=True) == count_isomers(n, hexagons=False)


def test_known_hexagon_start_cages_are_canonical_and_have_no_pentagon_spiral():
    # each listed cage: its spiral closes, is its own canonical spiral (the smallest from any
    # face when none from a pentagon closes: Fowler & Manolopoulos, An Atlas of Fullerenes,
    # 1995, from memory) and no spiral from a pentagon closes on it (own check)
    from cageprint.cage import _kernels as K
    from cageprint.cage.isomers import HEXAGON_START_CAGES, _known_subtrees, _part, plan_subtrees

    assert 100 in HEXAGON_START_CAGES
    for n, spirals in HEXAGON_START_CAGES.items():
        for spiral in spirals:
            cage = Cage.from_spiral(n, spiral)
            assert cage.canonical_spiral == spiral and spiral[0] > 1
            size = np.full(n // 2 + 2, 6, np.int64)
            size[np.array(spiral) - 1] = 5
            status, _f, _o, deg, nbr, tri = K.windup(size, False)
            assert status == K.OK
            nxt = K.next_matrix(tri, len(size))
            assert K.smallest_spiral(nxt, size, deg, nbr, True)[0] == -1
        found = [tuple(r) for p, d, _ in _known_subtrees(n, spirals)
                 for r in _part(n, False, p, d).tolist()]
        assert found == list(spirals)
    tail = plan_subtrees(100)[-len(HEXAGON_START_CAGES[100]):]
    assert all(d == 51 for _, d, _ in tail)


@pytest.mark.slow
@pytest.mark.long
def test_known_hexagon_start_cages_equal_a_fresh_search():
    # the table is this kit's own search from hexagons (15+ minutes per size): repeat it
    from cageprint.cage import _kernels as K
    from cageprint.cage.isomers import HEXAGON_START_CAGES, _run

    for n, spirals in HEXAGON_START_CAGES.items():
        found = [tuple(r) for b in _run(K.new_search_state(n, 6), False) for r in b.tolist()]
        assert found == list(spirals)


def test_fast_reading_of_spirals_agrees_with_the_counting_one():
    # the canonicity test reads competitor spirals without counting placed neighbours
    # (_canon.read_off); on every start of every C44 cage (and against each cage's own
    # sizes) it must give the same result and, where it does not fail, the same faces;
    # a failing reading may stop a face earlier (own consistency check, no source)
    from cageprint.cage import _canon as C
    from cageprint.cage import _kernels as K

    n = 44
    nf = n // 2 + 2
    out, out2 = np.zeros(nf, np.int64), np.zeros(nf, np.int64)
    placed, cnt = np.zeros(nf, np.int64), np.zeros(nf, np.int64)
    bnd, mark = np.zeros(nf + 1, np.int64), np.zeros(nf + 1, np.int64)
    readings = 0
    for row in np.concatenate(list(iter_spirals(n))):
        size = np.full(nf, 6, np.int64)
        size[row - 1] = 5
        _s, _f, _o, deg, nbr, tri = K.windup(size, False)
        nxt = K.next_matrix(tri, nf)
        for f0 in range(nf):
            for f1 in nbr[f0, : deg[f0]]:
                for sense, have_ref in itertools.product((0, 1), (False, True)):
                    a = K.unwind(f0, f1, sense, nxt, size, deg, nbr, size, have_ref, out, placed,
                                 cnt, bnd)
                    b, steps = C.read_off(f0, f1, sense, nxt, size, deg, size, have_ref, out2,
                                          mark, bnd)
                    assert a == b
                    if a >= 0:  # (1: abandoned at the first larger face)
                        assert np.array_equal(out[:steps], out2[:steps])
                        assert steps == nf or a == 1
                    readings += 1
    assert readings == 89 * (12 * 5 + 12 * 6) * 2 * 2  # every start, sense and reference
