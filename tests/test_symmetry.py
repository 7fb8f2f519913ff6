"""Automorphisms, symmetric model geometry, point groups of cages, invariance, errors."""

from __future__ import annotations

import platform

import networkx as nx
import numpy as np
import pytest

from cagelib import C60_IH, ipr, ipr_isomers
from cageprint.cage import Cage
from cageprint.errors import CageError, SymmetryError
from cageprint.symmetry import (
    automorphisms,
    cage_symmetry,
    point_group_from_geometry,
    symmetric_geometry,
    to_xyz,
)
from cageprint.symmetry.automorphisms import check_rotation_system, trace_faces
from cageprint.symmetry.geometry import GEOMETRY_TOL, symmetry_operations

TETRAHEDRON = [[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]


def relabel_table(nb: np.ndarray, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Renumber atoms at random (keeping each row's rotational order)."""
    rng = np.random.default_rng(seed)
    sigma = rng.permutation(nb.shape[0])
    out = np.empty_like(nb)
    out[sigma] = sigma[nb]
    return out, sigma


def random_rotation(seed: int) -> np.ndarray:
    q, r = np.linalg.qr(np.random.default_rng(seed).normal(size=(3, 3)))
    q = q * np.sign(np.diag(r))
    return q if np.linalg.det(q) > 0 else -q


# ------------------------------------------------------------------ automorphisms


def test_tetrahedron_graph_has_td_automorphisms():
    # common practice, no source: K4 has 4! = 24 automorphisms, 12 of them rotations
    g = automorphisms(TETRAHEDRON)
    assert (g.order, g.n_proper) == (24, 12)
    assert (g.perms[0] == np.arange(4)).all() and g.proper[0]


def test_c60_has_120_automorphisms_60_proper():
    # Dresselhaus, Dresselhaus & Eklund, Science of Fullerenes and Carbon Nanotubes, 1996:
    # C60 is Ih, order 120 with 60 proper rotations
    g = automorphisms(Cage.from_spiral(60, C60_IH).neighbours)
    assert (g.order, g.n_proper) == (120, 60)
    assert len({tuple(p) for p in g.perms.tolist()}) == 120


@pytest.mark.parametrize("n", [60, 70, 76, 78, 84])
def test_every_automorphism_maps_bonds_to_bonds(n):
    # common practice, no source: an automorphism preserves adjacency
    for cage in ipr_isomers(n):
        g = automorphisms(cage.neighbours)
        bonds = {tuple(b) for b in cage.bonds.tolist()}
        for p in g.perms:
            img = {tuple(sorted((int(p[i]), int(p[j])))) for i, j in bonds}
            assert img == bonds


def test_automorphism_count_matches_networkx_on_c78():
    # independent oracle: networkx's general matcher counts the same self-isomorphisms
    from networkx.algorithms.isomorphism import GraphMatcher

    for cage in ipr_isomers(78):
        gr = cage.graph()
        n_nx = sum(1 for _ in GraphMatcher(gr, gr).isomorphisms_iter())
        assert automorphisms(cage.neighbours).order == n_nx


def test_composition_closes_and_proper_flags_multiply():
    # common practice, no source: automorphisms form a group; orientation is a homomorphism
    g = automorphisms(ipr(84, 23).neighbours)
    index = {tuple(p): k for k, p in enumerate(g.perms.tolist())}
    for a in range(g.order):
        for b in range(g.order):
            c = index[tuple(g.perms[a][g.perms[b]].tolist())]
            assert g.proper[c] == (g.proper[a] == g.proper[b])


# ------------------------------------------------------------------ point groups


# C60 Ih, C70 D5h: Dresselhaus, Dresselhaus & Eklund 1996; C76 D2: Ettl et al., Nature 1991;
# C78 isomers 1-5 D3, C2v, C2v', D3h, D3h': Diederich et al., Science 1991 (numbering from
# memory); C84 isomers 22 D2, 23 D2d, 24 D6h, 20 Td: from memory; C80 isomer 7 Ih: from memory
POINT_GROUPS = [
    (60, 1, "Ih", 120),
    (70, 1, "D5h", 20),
    (76, 1, "D2", 4),
    (76, 2, "Td", 24),
    (78, 1, "D3", 6),
    (78, 2, "C2v", 4),
    (78, 3, "C2v", 4),
    (78, 4, "D3h", 12),
    (78, 5, "D3h", 12),
    (80, 7, "Ih", 120),
    (84, 20, "Td", 24),
    (84, 22, "D2", 4),
    (84, 23, "D2d", 8),
    (84, 24, "D6h", 24),
]


@pytest.mark.parametrize("n, isomer, symbol, order", POINT_GROUPS)
def test_point_groups_of_known_cages(n, isomer, symbol, order):
    cs = cage_symmetry(ipr(n, isomer))
    assert cs.point_group == symbol
    assert cs.group.order == order == cs.table.order


def test_every_ipr_isomer_c60_to_c84_gets_a_consistent_point_group():
    # common practice, no source: |Aut| of the graph equals the order of the point group
    seen = set()
    for n in range(60, 86, 2):
        for cage in ipr_isomers(n):
            cs = cage_symmetry(cage)
            assert cs.group.order == cs.table.order
            assert cs.group.n_proper * (2 if cs.group.n_proper < cs.group.order else 1) == (
                cs.group.order
            )
            seen.add(cs.point_group)
    assert {"Ih", "D5h", "D2", "Td", "D3", "C2v", "D3h", "C2", "Cs", "C1", "D2d", "D3d",
            "D6h"} <= seen


@pytest.mark.slow
def test_every_ipr_isomer_c60_to_c100_gets_a_consistent_point_group():
    # common practice, no source: |Aut| equals the order of the named point group
    total = 0
    for n in range(60, 102, 2):
        for cage in ipr_isomers(n):
            cs = cage_symmetry(cage)
            assert cs.group.order == cs.table.order, (n, cage.isomer, cs.point_group)
            total += 1
    assert total == 1267  # IPR isomers C60..C100 summed (from memory; 450 of them are C100)


def test_embedding_matrices_realise_the_automorphisms_exactly():
    # common practice, no source: whole eigenspaces give an invariant subspace, so
    # x[p(i)] = R x[i] holds exactly in topological coordinates
    for n, iso in [(70, 1), (78, 1), (84, 23)]:
        cs = cage_symmetry(ipr(n, iso))
        x = cs.embedding.coords
        mapped = np.einsum("gij,nj->gni", cs.embedding.ops, x)
        assert np.abs(mapped - x[cs.group.perms]).max() < 1e-10
        det = np.linalg.det(cs.embedding.ops)
        assert np.array_equal(det > 0, cs.group.proper)


# ------------------------------------------------------------------ geometry


def test_symmetric_geometry_has_model_bond_lengths_and_exact_symmetry():
    # Hedberg et al., Science 1991 (from memory): C60 bonds 1.40 and 1.46 Å; the model aims
    # at 1.39-1.46 Å
    for n, iso in [(60, 1), (70, 1), (84, 22)]:
        cage = ipr(n, iso)
        geo = symmetric_geometry(cage)
        bl = geo.bond_lengths(cage.neighbours)
        assert 1.36 < bl.min() and bl.max() < 1.49, (n, bl.min(), bl.max())
        assert geo.symmetry_error < GEOMETRY_TOL
        assert "not an optimised structure" in geo.note
        ops = symmetry_operations(geo.coords, geo.group, tol=1e-8)
        assert ops.shape == (geo.group.order, 3, 3)


def test_c60_model_radius_near_experiment():
    # Hedberg et al., Science 1991 (from memory): C60 cage radius about 3.55 Å
    geo = symmetric_geometry(Cage.from_spiral(60, C60_IH))
    r = np.linalg.norm(geo.coords, axis=1)
    assert np.ptp(r) < 1e-8
    assert 3.4 < r.mean() < 3.7


def test_point_group_of_rotated_and_relabelled_geometry_is_unchanged():
    # common practice, no source: the point group does not depend on frame or atom order
    for n, iso, symbol in [(70, 1, "D5h"), (78, 1, "D3"), (84, 23, "D2d"), (84, 22, "D2")]:
        cage = ipr(n, iso)
        x = symmetric_geometry(cage).coords
        rot = random_rotation(n + iso)
        y = x @ rot.T + np.array([0.3, -1.2, 5.0])
        assert point_group_from_geometry(cage, y).symbol == symbol
        nb2, sigma = relabel_table(cage.neighbours, seed=iso)
        y2 = np.empty_like(y)
        y2[sigma] = y
        assert point_group_from_geometry(nb2, y2).symbol == symbol


def test_geometry_breaking_symmetry_names_the_tolerance():
    cage = Cage.from_spiral(60, C60_IH)
    x = symmetric_geometry(cage).coords.copy()
    x[7] += [0.05, 0.0, 0.0]
    with pytest.raises(SymmetryError, match=r"expected <= tol=0.001 Å \(GEOMETRY_TOL\)"):
        point_group_from_geometry(cage, x)
    with pytest.raises(SymmetryError, match=r"coords: expected a finite \(60, 3\) array"):
        symmetry_operations(x[:10], automorphisms(cage.neighbours))


def test_mirror_image_geometry_keeps_the_point_group():
    # common practice, no source: the mirror image of a chiral D2 cage is still D2
    cage = ipr(76, 1)
    x = symmetric_geometry(cage).coords * np.array([1.0, 1.0, -1.0])
    assert point_group_from_geometry(cage, x).symbol == "D2"
    c60 = Cage.from_spiral(60, C60_IH)
    y = symmetric_geometry(c60).coords * np.array([1.0, 1.0, -1.0])
    assert point_group_from_geometry(c60, y).symbol == "Ih"


def test_xyz_export():
    # XYZ: atom count, comment line, element and Cartesian coordinates in Å (common practice)
    cage = Cage.from_spiral(60, C60_IH)
    geo = symmetric_geometry(cage)
    text = to_xyz(cage, geo.coords)
    lines = text.splitlines()
    assert lines[0] == "60"
    assert lines[1].startswith("C60: model geometry for symmetry analysis")
    assert len(lines) == 62 and all(ln.split()[0] == "C" for ln in lines[2:])
    back = np.array([[float(v) for v in ln.split()[1:]] for ln in lines[2:]])
    assert np.abs(back - geo.coords).max() < 1e-6
    with pytest.raises(SymmetryError, match=r"coords: expected shape \(60, 3\)"):
        to_xyz(cage, geo.coords[:5])


@pytest.mark.skipif(platform.machine() != "x86_64", reason="libmsym ships x86_64 wheels only")
def test_point_groups_agree_with_libmsym():
    # independent oracle (test dependency): libmsym finds the point group of our model geometry
    msym = pytest.importorskip("libmsym")
    for n, iso, symbol in [(70, 1, "D5h"), (84, 23, "D2d"), (78, 1, "D3")]:
        x = symmetric_geometry(ipr(n, iso)).coords
        els = [msym.Element(name="C", coordinates=[float(v) for v in p]) for p in x]
        with msym.Context(elements=els) as ctx:
            assert ctx.find_symmetry() == symbol


# ------------------------------------------------------------------ invariance


def test_relabelled_graph_gives_the_same_fingerprint_counts():
    # common practice, no source: renumbering atoms changes nothing observable
    from cageprint.symmetry import fingerprint

    for n, iso in [(70, 1), (78, 2), (84, 23), (84, 5)]:
        cage = ipr(n, iso)
        g = cage.graph()
        perm = np.random.default_rng(n * 100 + iso).permutation(n)
        g2 = nx.relabel_nodes(g, {i: int(perm[i]) for i in g.nodes})
        for other in (Cage.from_graph(g2), relabel_table(cage.neighbours, seed=iso)[0]):
            a, b = fingerprint(cage), fingerprint(other)
            assert (a.point_group, a.nmr.pattern, a.vib.ir_count, a.vib.raman_count) == (
                b.point_group, b.nmr.pattern, b.vib.ir_count, b.vib.raman_count)
            assert a.nmr.inadequate and sorted(t[2] for t in a.nmr.inadequate) == sorted(
                t[2] for t in b.nmr.inadequate)
            assert abs(a.elec.gap_beta - b.elec.gap_beta) < 1e-9


# ------------------------------------------------------------------ errors


def test_bad_neighbour_tables_raise_cage_errors():
    with pytest.raises(CageError, match=r"neighbours: expected an \(n, 3\) integer array"):
        automorphisms([[1, 2], [0, 2], [0, 1]])
    with pytest.raises(CageError, match=r"row 1 has an atom index outside 0\.\.3"):
        automorphisms([[1, 2, 3], [0, 3, 9], [0, 1, 3], [0, 2, 1]])
    with pytest.raises(CageError, match=r"row 0 must list three distinct other atoms"):
        automorphisms([[1, 1, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    bad = Cage.from_spiral(60, C60_IH).neighbours.copy()
    bad[5, [0, 1]] = bad[5, [1, 0]]  # one atom turning the other way
    with pytest.raises(CageError, match=r"traces \d+ faces; a cage with 60 atoms on a sphere "
                                        r"has 32"):
        cage_symmetry(bad)
    one_way = np.array(TETRAHEDRON)
    one_way[0] = [1, 2, 2]
    with pytest.raises(CageError, match="must list three distinct"):
        check_rotation_system(one_way)
    cube_like = [[1, 2, 3], [0, 2, 3], [0, 1, 4], [0, 1, 5], [2, 5, 5], [3, 4, 4]]
    with pytest.raises(CageError, match="neighbours"):
        check_rotation_system(cube_like)


def test_trace_faces_of_c60():
    # Euler's formula for a fullerene, no source needed: 12 pentagons and n/2 - 10 hexagons
    faces = trace_faces(Cage.from_spiral(60, C60_IH).neighbours)
    assert sorted(len(f) for f in faces) == [5] * 12 + [6] * 20


def test_face_walk_without_numba_gives_the_same_faces(monkeypatch):
    # common practice, no source: the compiled and the plain face walk must agree exactly
    import sys

    mod = sys.modules["cageprint.symmetry.automorphisms"]
    tables = [c.neighbours for c in (ipr(70, 1), ipr(84, 20), Cage.from_spiral(60, C60_IH))]
    fast = [trace_faces(nb) for nb in tables]
    monkeypatch.setattr(mod, "_walk_compiled", None)
    assert [trace_faces(nb) for nb in tables] == fast


def test_nmr_orbits_in_one_pass_match_the_separate_functions():
    # common practice, no source: one-pass orbits/links equal the step-by-step ones (C84:12 is C1)
    from cageprint.symmetry.orbits import (
        atom_orbits,
        bond_list,
        bond_orbits,
        inadequate_links,
        nmr_orbits,
    )

    for c in (ipr(78, 5), ipr(84, 12), ipr(84, 20), ipr(100, 1), Cage.from_spiral(60, C60_IH)):
        perms = automorphisms(c.neighbours).perms
        o, bo, links = nmr_orbits(perms, c.neighbours)
        assert o == atom_orbits(perms)
        assert bo == bond_orbits(perms, bond_list(c.neighbours))
        assert links == inadequate_links(o, bo)


def test_numpy_fallback_finds_the_same_automorphisms(monkeypatch):
    # common practice, no source: the compiled and the numpy search must agree exactly
    import sys

    mod = sys.modules["cageprint.symmetry.automorphisms"]
    cages = [ipr(70, 1), ipr(78, 5), ipr(84, 20), Cage.from_spiral(60, C60_IH)]
    fast = [automorphisms(c.neighbours) for c in cages]
    monkeypatch.setattr(mod, "_grow_compiled", None)

    def as_set(g):
        return {(tuple(p), q) for p, q in zip(g.perms.tolist(), g.proper.tolist(), strict=True)}

    for c, a in zip(cages, fast, strict=True):
        b = automorphisms(c.neighbours)
        assert as_set(a) == as_set(b)
        assert (b.perms[0] == np.arange(c.n)).all()


def test_no_faithful_embedding_names_the_setting_to_change():
    from cageprint.symmetry.geometry import topological_embedding

    nb = Cage.from_spiral(60, C60_IH).neighbours
    with pytest.raises(SymmetryError, match=r"no choice of adjacency eigenspaces among the top 0 "
                                            r"realises all 120 automorphisms.*max_levels"):
        topological_embedding(nb, max_levels=0)
