"""The cage model: Cage.from_spiral / from_graph, its attributes, bad input, invariance."""

from __future__ import annotations

import random
from collections import Counter

import networkx as nx
import numpy as np
import pytest

from cageprint.cage import Cage
from cageprint.cage.spiral import spiral_faces
from cageprint.errors import CageError, CageprintError

# Icosahedral C60: canonical spiral from Fowler & Manolopoulos, An Atlas of Fullerenes (1995),
# from memory.
C60_IH = (1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32)


@pytest.fixture(scope="module")
def c60():
    return Cage.from_spiral(60, C60_IH)


def _check_structure(cage: Cage) -> None:
    n = cage.n
    nf = n // 2 + 2
    # Euler relations (V - E + F = 2; 12 pentagons, n/2 - 10 hexagons): common practice, no source
    assert len(cage.faces) == nf
    assert cage.face_sizes.count(5) == 12
    assert cage.face_sizes.count(6) == n // 2 - 10
    assert cage.bonds.shape == (3 * n // 2, 2)
    assert n - len(cage.bonds) + len(cage.faces) == 2
    assert cage.neighbours.shape == (n, 3)
    # bonds: i < j, sorted, no repeats, and the same as the neighbour table
    b = cage.bonds
    assert (b[:, 0] < b[:, 1]).all()
    assert len({tuple(r) for r in b.tolist()}) == len(b)
    assert b.tolist() == sorted(b.tolist())
    pairs = {tuple(sorted((i, int(j)))) for i in range(n) for j in cage.neighbours[i]}
    assert pairs == {tuple(r) for r in b.tolist()}
    # every face is a ring of bonded atoms in cyclic order, of the stated size
    for ring, s in zip(cage.faces, cage.face_sizes, strict=True):
        assert len(ring) == s == len(set(ring))
        for i in range(s):
            assert tuple(sorted((ring[i], ring[i - 1]))) in pairs
    # every atom lies on exactly three faces, every bond on exactly two
    on = Counter(a for ring in cage.faces for a in ring)
    assert set(on.values()) == {3}
    # the graph is cubic, connected and planar
    g = cage.graph()
    assert {d for _, d in g.degree()} == {3}
    assert nx.is_connected(g) and nx.is_planar(g)
    # the dual has one node per face, an edge per bond, sizes as node attributes
    assert cage.dual.number_of_nodes() == nf
    assert cage.dual.number_of_edges() == 3 * n // 2
    assert [cage.dual.nodes[v]["size"] for v in range(nf)] == list(cage.face_sizes)


def _rotation_is_consistent(cage: Cage) -> bool:
    # one rotational sense: every bond is crossed in opposite directions by the faces
    # on its two sides when each face is walked in the order given by `faces`
    # (common practice for planar embeddings, no source)
    darts = Counter()
    for ring in cage.faces:
        for i in range(len(ring)):
            darts[(ring[i - 1], ring[i])] += 1
    return all(v == 1 for v in darts.values()) and all(
        (j, i) in darts for (i, j) in darts
    )


def test_c60_structure(c60):
    _check_structure(c60)
    assert c60.formula == "C60"
    assert c60.is_ipr and c60.fused_pentagon_pairs == 0
    # Ih C60: every atom on one pentagon and two hexagons (Atlas of Fullerenes, 1995, from memory)
    for atom in range(60):
        sizes = sorted(s for ring, s in zip(c60.faces, c60.face_sizes, strict=True) if atom in ring)
        assert sizes == [5, 6, 6]
    assert _rotation_is_consistent(c60)


def test_c60_canonical_spiral_and_numbers(c60):
    # Atlas of Fullerenes (Fowler & Manolopoulos, 1995), from memory: IPR C60 is isomer 1 of 1 IPR
    # and 1812 of 1812 overall; canonical spiral 1 7 9 11 13 15 18 20 22 24 26 32
    assert c60.canonical_spiral == C60_IH
    assert c60.isomer == 1
    assert c60.isomer_all == 1812


def test_neighbours_follow_one_rotation(c60):
    # the three neighbours of atom i, in order, are such that consecutive pairs
    # (i, a), (i, b) lie on a common face: common practice, no source
    face_sets = [set(r) for r in c60.faces]
    for i, row in enumerate(c60.neighbours.tolist()):
        for a, b in ((row[0], row[1]), (row[1], row[2]), (row[2], row[0])):
            assert any({i, a, b} <= f for f in face_sets)


def test_arrays_are_read_only(c60):
    with pytest.raises(ValueError, match="read-only"):
        c60.bonds[0, 0] = 5
    with pytest.raises(ValueError, match="read-only"):
        c60.neighbours[0, 0] = 5


def test_dodecahedron():
    # C20 is the dodecahedron: 12 pentagons, 30 fused pentagon pairs (common practice, no source)
    c = Cage.from_spiral(20, range(1, 13))
    _check_structure(c)
    assert c.fused_pentagon_pairs == 30 and not c.is_ipr
    assert nx.is_isomorphic(c.graph(), nx.dodecahedral_graph())


def test_to_from_dict_round_trip(c60):
    d = c60.to_dict()
    assert d == {"n": 60, "spiral": list(C60_IH)}
    assert Cage.from_dict(d) == c60
    with pytest.raises(CageError, match=r"expected keys 'n' and 'spiral'"):
        Cage.from_dict({"n": 60})


def test_unsorted_spiral_is_accepted_and_sorted():
    c = Cage.from_spiral(60, list(reversed(C60_IH)))
    assert c.spiral == C60_IH


def test_numpy_integers_are_accepted():
    c = Cage.from_spiral(np.int64(60), np.array(C60_IH, dtype=np.int32))
    assert c.n == 60 and c.spiral == C60_IH


# --- bad input: each error names the value and the reason -------------------------------------

@pytest.mark.parametrize(
    ("n", "spiral", "match"),
    [
        (21, range(1, 13), r"n=21: a fullerene has an even number of atoms, found an odd one"),
        (18, range(1, 13), r"n=18: a fullerene has at least 20 atoms"),
        (22, range(1, 13), r"n=22: no fullerene C22 exists"),
        (-4, range(1, 13), r"n=-4: a fullerene has at least 20 atoms"),
        (60.0, C60_IH, r"n=60.0: expected an integer atom count, found float"),
        ("60", C60_IH, r"n='60': expected an integer atom count, found str"),
        (60, [1, 7, 9], r"spiral has 3 positions, expected 12 \(one per pentagon\) for C60"),
        (60, list(C60_IH) + [33], r"spiral has 13 positions, expected 12"),
        (60, [0, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32],
         r"spiral position 1 is 0: out of range, C60 has faces 1..32"),
        (60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 33],
         r"spiral position 12 is 33: out of range, C60 has faces 1..32"),
        (60, [1, 7, 7, 11, 13, 15, 18, 20, 22, 24, 26, 32],
         r"spiral repeats face 7: the 12 pentagon positions must differ"),
        (60, [1, 7, 9.5, 11, 13, 15, 18, 20, 22, 24, 26, 32],
         r"spiral position 3 is 9.5: expected an integer face number 1..32"),
        (60, [1, 7, "9", 11, 13, 15, 18, 20, 22, 24, 26, 32],
         r"spiral position 3 is '9': expected an integer face number 1..32"),
        (60, "1 7 9 11 13 15 18 20 22 24 26 32", r"expected 12 pentagon positions"),
        (60, 7, r"spiral=7: expected 12 pentagon positions \(integers 1..32\), found int"),
        (60, range(1, 13),
         r"spiral 1 2 3 4 5 6 7 8 9 10 11 12 does not close into a C60 cage: the faces close up "
         r"at face 12, before the last face 32"),
        (60, [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 32],
         r"spiral 1 2 3 4 5 6 7 8 9 10 11 32 does not close into a C60 cage"),
    ],
)
def test_bad_input(n, spiral, match):
    with pytest.raises(CageError, match=match):
        Cage.from_spiral(n, spiral)


def test_cage_error_is_a_value_error():
    with pytest.raises(ValueError):
        Cage.from_spiral(21, range(1, 13))
    assert issubclass(CageError, CageprintError)


def test_non_closing_spirals_all_raise():
    # every 12-subset tried for C24 either closes or raises CageError naming the spiral
    # (common practice, no source: C24 has exactly one isomer, Atlas of Fullerenes 1995)
    rng = random.Random(3)
    closed = set()
    for _ in range(300):
        sp = sorted(rng.sample(range(1, 15), 12))
        try:
            closed.add(Cage.from_spiral(24, sp).canonical_spiral)
        except CageError as exc:
            assert "does not close into a C24 cage" in str(exc)
            assert " ".join(map(str, sp)) in str(exc)
    assert len(closed) == 1


# --- from_graph -------------------------------------------------------------------------------

def _relabelled(cage: Cage, seed: int) -> nx.Graph:
    rng = random.Random(seed)
    names = [f"atom{i}" for i in range(cage.n)]
    rng.shuffle(names)
    g = nx.relabel_nodes(cage.graph(), dict(enumerate(names)))
    # also scramble the insertion order of nodes and edges
    h = nx.Graph()
    nodes = list(g.nodes())
    rng.shuffle(nodes)
    h.add_nodes_from(nodes)
    edges = list(g.edges())
    rng.shuffle(edges)
    h.add_edges_from(edges)
    return h


@pytest.mark.parametrize(
    ("n", "spiral"),
    [
        (60, C60_IH),
        (20, tuple(range(1, 13))),
        # Atlas of Fullerenes (1995), from memory: the IPR C70 (D5h) spiral
        (70, (1, 7, 9, 11, 13, 15, 27, 29, 31, 33, 35, 37)),
        # C84 IPR isomers 22 and 23 as found by our own enumeration (numbering stability)
        (84, (1, 7, 10, 13, 18, 22, 25, 27, 31, 34, 38, 44)),
        (84, (1, 7, 10, 13, 18, 22, 25, 27, 31, 38, 41, 43)),
    ],
)
@pytest.mark.parametrize("seed", [0, 1])
def test_from_graph_relabelled_gives_same_spiral(n, spiral, seed):
    # invariance under atom relabelling: common practice, no source
    cage = Cage.from_spiral(n, spiral)
    again = Cage.from_graph(_relabelled(cage, seed))
    assert again.canonical_spiral == cage.canonical_spiral
    assert again.isomer == cage.isomer
    assert nx.is_isomorphic(again.graph(), cage.graph())


def test_from_graph_all_c40_isomers_round_trip():
    from cageprint.cage import iter_isomers

    for cage in iter_isomers(40):
        again = Cage.from_graph(_relabelled(cage, cage.isomer))
        assert again.spiral == cage.spiral
        assert again.isomer_all == cage.isomer_all


def test_spiral_from_another_start_gives_same_canonical_spiral():
    # invariance under the choice of start face: common practice, no source
    from cageprint.cage import iter_isomers

    checked = 0
    for cage in list(iter_isomers(84, ipr=True)) + list(iter_isomers(36)):
        size, nxt, _ = cage._windup
        nf = len(size)
        for f0 in (nf - 1, nf // 2, 3):
            f1 = int(np.flatnonzero(nxt[f0] >= 0)[0])
            for sense in (0, 1):
                faces = spiral_faces(size, nxt, f0, f1, sense)
                if faces is None:
                    continue
                other = tuple(int(i) + 1 for i in np.flatnonzero(size[faces] == 5))
                c2 = Cage.from_spiral(cage.n, other)
                assert c2.canonical_spiral == cage.spiral
                assert c2.isomer == cage.isomer
                checked += 1
    assert checked > 100


@pytest.mark.parametrize(
    ("graph", "match"),
    [
        (nx.cycle_graph(20), r"graph: atom 0 has 2 bonds, expected 3 \(a fullerene is cubic\)"),
        (nx.petersen_graph(), r"graph atom count=10: a fullerene has at least 20 atoms"),
        (nx.disjoint_union(nx.dodecahedral_graph(), nx.dodecahedral_graph()),
         r"graph: found 2 separate pieces, expected one connected cage"),
        (nx.DiGraph(nx.dodecahedral_graph()), r"expected an undirected simple networkx.Graph"),
        (nx.MultiGraph(nx.dodecahedral_graph()), r"expected an undirected simple networkx.Graph"),
        ("not a graph", r"graph: expected an undirected simple networkx.Graph, found str"),
    ],
)
def test_from_graph_rejects(graph, match):
    with pytest.raises(CageError, match=match):
        Cage.from_graph(graph)


def test_from_graph_rejects_non_planar_cubic():
    # a cubic, connected, non-planar graph of 20 atoms (generalized Petersen GP(10, 3),
    # the Desargues graph): common practice, no source
    g = nx.desargues_graph()
    with pytest.raises(CageError, match=r"graph: not planar, so it cannot be a closed cage"):
        Cage.from_graph(g)


def test_from_graph_rejects_prism_with_other_rings():
    # the 24-atom prism C12 x K2 is cubic and planar, with 4-rings and two 12-rings
    g = nx.circular_ladder_graph(12)
    with pytest.raises(CageError, match=r"graph: found a ring of (4|12) atoms \(\d+, \d+"):
        Cage.from_graph(g)
