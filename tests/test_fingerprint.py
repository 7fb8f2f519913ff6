"""Fingerprints: 13C NMR orbits and INADEQUATE links, vibrational counts, caching, saving."""

from __future__ import annotations

import json
import platform

import numpy as np
import pytest

from cagelib import C60_IH, ipr, ipr_isomers
from cageprint.cage import Cage
from cageprint.symmetry import (
    Fingerprint,
    fingerprint,
    predict_electronic,
    predict_nmr,
    predict_vibrational,
    symmetric_geometry,
)

# ------------------------------------------------------------------ 13C NMR


def test_c60_single_line():
    # Taylor et al., J. Chem. Soc., Chem. Commun. 1990: one 13C line for C60
    nmr = predict_nmr(Cage.from_spiral(60, C60_IH))
    assert (nmr.n_lines, nmr.pattern, nmr.sizes) == (1, "1x60", (60,))
    assert nmr.orbits == (tuple(range(60)),)


def test_c70_five_lines_1_2_1_2_1():
    # Taylor et al., J. Chem. Soc., Chem. Commun. 1990: C70 (D5h) five lines, 1:2:1:2:1
    nmr = predict_nmr(ipr(70, 1))
    assert nmr.point_group == "D5h"
    assert nmr.n_lines == 5
    assert nmr.pattern == "2x20+3x10"
    assert sorted(nmr.sizes) == [10, 10, 10, 20, 20]
    assert sum(len(o) for o in nmr.orbits) == 70
    assert sorted(a for o in nmr.orbits for a in o) == list(range(70))


def test_c70_inadequate_connectivity():
    # from memory: the five C70 carbon types link as a chain a-b-c-d-e from pole to
    # equator (4 cross peaks), with 8 bond types in all; common practice, no source, for
    # the counting: 3n/2 bonds, three bonds per carbon
    nmr = predict_nmr(ipr(70, 1))
    links = {(a, b): k for a, b, k in nmr.inadequate}
    assert sum(links.values()) == 105  # 3n/2 bonds
    degree = np.zeros(nmr.n_lines)
    for (a, b), k in links.items():
        degree[a] += k
        degree[b] += k
    assert np.array_equal(degree, 3 * np.array(nmr.sizes))  # three bonds per carbon
    cross = [(a, b) for (a, b) in links if a != b]
    assert len(cross) == 4
    assert len(nmr.bond_orbits) == 8


def test_c76_d2_nineteen_equal_lines():
    # Ettl et al., Nature 1991: C76 is D2 with 19 lines of equal intensity
    nmr = predict_nmr(ipr(76, 1))
    assert nmr.point_group == "D2"
    assert (nmr.n_lines, nmr.pattern) == (19, "19x4")


# Diederich et al., Science 1991 (C78 isomers by 13C NMR); counts from memory:
# D3 13 lines (13x6), C2v 21 lines (18x4 + 3x2), C2v' 22 lines (17x4 + 5x2),
# D3h and D3h' 8 lines (5x12 + 3x6)
C78 = [
    (1, "D3", 13, "13x6"),
    (2, "C2v", 21, "18x4+3x2"),
    (3, "C2v", 22, "17x4+5x2"),
    (4, "D3h", 8, "5x12+3x6"),
    (5, "D3h", 8, "5x12+3x6"),
]


@pytest.mark.parametrize("isomer, group, lines, pattern", C78)
def test_c78_isomers(isomer, group, lines, pattern):
    nmr = predict_nmr(ipr(78, isomer))
    assert (nmr.point_group, nmr.n_lines, nmr.pattern) == (group, lines, pattern)


def test_c84_majors():
    # from memory: the two major C84 isomers are IPR isomers 22 (D2, 21 lines of 4) and
    # 23 (D2d, 10 lines of 8 and one of 4), 32 lines together in the mixture's spectrum
    d2, d2d = predict_nmr(ipr(84, 22)), predict_nmr(ipr(84, 23))
    assert (d2.point_group, d2.pattern) == ("D2", "21x4")
    assert (d2d.point_group, d2d.pattern) == ("D2d", "10x8+1x4")
    assert d2.n_lines + d2d.n_lines == 32


def test_sc3n_c80_cage_two_lines():
    # Stevenson et al., Nature 1999 (from memory): the Ih C80 cage of Sc3N@C80 gives two
    # 13C lines, 3:1 (60 and 20 carbons)
    nmr = predict_nmr(ipr(80, 7))
    assert (nmr.point_group, nmr.pattern) == ("Ih", "1x60+1x20")


def test_orbits_sorted_largest_first_then_by_smallest_atom():
    # convention of this kit (DEVELOPERS.md), no source
    for n, iso in [(70, 1), (78, 2), (84, 10)]:
        orbits = predict_nmr(ipr(n, iso)).orbits
        keys = [(-len(o), o[0]) for o in orbits]
        assert keys == sorted(keys)
        assert all(list(o) == sorted(o) for o in orbits)


@pytest.mark.skipif(platform.machine() != "x86_64", reason="libmsym ships x86_64 wheels only")
def test_line_counts_agree_with_libmsym():
    # independent oracle: the number of totally symmetric SALCs of s functions on the
    # carbons equals the number of symmetry-distinct carbons (../shared notes, libmsym)
    msym = pytest.importorskip("libmsym")
    for n, iso in [(70, 1), (84, 23)]:
        cage = ipr(n, iso)
        x = symmetric_geometry(cage).coords
        els = [msym.Element(name="C", coordinates=[float(v) for v in p]) for p in x]
        bfs = [msym.RealSphericalHarmonic(element=e, n=1, l=0, m=0, name="s") for e in els]
        with msym.Context(elements=els, basis_functions=bfs) as ctx:
            ctx.find_symmetry()
            spaces = ctx.subrepresentation_spaces
            total_sym = [s for s in spaces if s.symmetry_species == 0]
            n_a1 = sum(len(s.salcs) for s in total_sym)
        assert n_a1 == predict_nmr(cage).n_lines


# ------------------------------------------------------------------ vibrations


def test_c60_vibrations():
    # Dresselhaus, Dresselhaus & Eklund, Science of Fullerenes and Carbon Nanotubes, 1996:
    # Γvib = 2Ag+3T1g+4T2g+6Gg+8Hg+Au+4T1u+5T2u+6Gu+7Hu; 4 IR (T1u), 10 Raman (2Ag+8Hg),
    # 46 distinct frequencies
    vib = predict_vibrational(Cage.from_spiral(60, C60_IH))
    assert vib.gamma_vib == {"Ag": 2, "T1g": 3, "T2g": 4, "Gg": 6, "Hg": 8,
                             "Au": 1, "T1u": 4, "T2u": 5, "Gu": 6, "Hu": 7}
    assert vib.gamma_vib_text == "2Ag+3T1g+4T2g+6Gg+8Hg+Au+4T1u+5T2u+6Gu+7Hu"
    assert (vib.ir_irreps, vib.ir_count) == (("T1u",), 4)
    assert (vib.raman_irreps, vib.raman_count) == (("Ag", "Hg"), 10)
    assert vib.n_distinct == 46
    assert vib.silent_count == 46 - 4 - 10


def test_c70_vibrations():
    # Dresselhaus, Dresselhaus & Eklund 1996: C70 has 31 IR-active and 53 Raman-active modes;
    # Γvib = 12A1'+9A2'+21E1'+22E2'+9A1''+10A2''+19E1''+20E2'' (same book, from memory)
    vib = predict_vibrational(ipr(70, 1))
    assert (vib.ir_count, vib.raman_count) == (31, 53)
    assert vib.gamma_vib == {"A1'": 12, "A2'": 9, "E1'": 21, "E2'": 22,
                             "A1''": 9, "A2''": 10, "E1''": 19, "E2''": 20}
    dims = {"A": 1, "E": 2}
    assert sum(c * dims[k[0]] for k, c in vib.gamma_vib.items()) == 3 * 70 - 6


def test_every_mode_counted_once_for_low_symmetry_cages():
    # common practice, no source: in C1 every one of the 3n-6 modes is IR and Raman active
    cage = next(c for c in ipr_isomers(84) if fingerprint(c).point_group == "C1")
    vib = predict_vibrational(cage)
    assert vib.gamma_vib == {"A": 3 * 84 - 6}
    assert vib.ir_count == vib.raman_count == vib.n_distinct == 246


# ------------------------------------------------------------------ fingerprint object


def test_fingerprint_is_cached_and_frozen():
    cage = ipr(78, 1)
    a, b = fingerprint(cage), fingerprint(cage)
    assert a is b
    with pytest.raises(AttributeError):
        a.point_group = "C1"
    assert fingerprint(cage, charge=-6) is not a
    assert fingerprint(cage, charge=-6).nmr is a.nmr  # charge-independent parts shared


def test_fingerprint_round_trips_through_json():
    for cage, q in [(Cage.from_spiral(60, C60_IH), 0), (ipr(80, 7), -6), (ipr(84, 23), 0)]:
        fp = fingerprint(cage, charge=q)
        d = json.loads(json.dumps(fp.to_dict()))
        assert Fingerprint.from_dict(d) == fp


def test_columns_for_the_cli():
    # C60: Ih, one line, 4 IR, 10 Raman (Dresselhaus et al. 1996); gap 0.7566 |β| from the
    # Hückel levels 0.618 and -0.139 (Haddon, Brus & Raghavachari, Chem. Phys. Lett. 1986)
    cols = fingerprint(Cage.from_spiral(60, C60_IH)).columns()
    assert cols == {"point_group": "Ih", "nmr_lines": 1, "nmr_pattern": "1x60",
                    "ir_active": 4, "raman_active": 10, "gap_beta": 0.7566}


def test_predict_functions_accept_a_fingerprint_source():
    cage = ipr(70, 1)
    fp = fingerprint(cage)
    assert predict_nmr(cage) is fp.nmr
    assert predict_vibrational(cage) is fp.vib
    assert predict_electronic(cage) is fp.elec


def test_non_cage_graphs_are_refused_by_the_cage_model():
    # the cage model validates graphs (issue 2); the fingerprint never sees a non-cage
    import networkx as nx

    from cageprint.errors import CageError

    with pytest.raises(CageError, match=r"graph atom count=8: a fullerene has at least 20 atoms"):
        fingerprint(Cage.from_graph(nx.cubical_graph()))
    with pytest.raises(CageError, match=r"neighbours: expected an \(n, 3\) integer array"):
        fingerprint(np.zeros((20, 4), dtype=int))


def test_plain_neighbour_table_and_cage_share_the_analysis():
    cage = ipr(70, 1)
    a = fingerprint(cage)
    b = fingerprint(cage.neighbours.tolist())
    assert b.spiral is None and a.spiral == tuple(cage.spiral)
    assert a.nmr is b.nmr and a.vib is b.vib


def test_isomers_can_share_an_nmr_pattern():
    # ../shared notes (facts found on this machine): several isomers of one formula can share
    # an orbit pattern exactly; C84 isomers 6 and 7 (both C2v) give 19x4+4x2
    a, b = predict_nmr(ipr(84, 6)), predict_nmr(ipr(84, 7))
    assert (a.point_group, a.pattern) == (b.point_group, b.pattern) == ("C2v", "19x4+4x2")
    assert ipr(84, 6).canonical_spiral != ipr(84, 7).canonical_spiral


@pytest.mark.skipif(platform.machine() != "x86_64", reason="libmsym ships x86_64 wheels only")
@pytest.mark.parametrize("n, isomer", [(70, 1), (78, 1), (84, 23), (84, 22)])
def test_gamma_3n_agrees_with_libmsym(n, isomer):
    # independent oracle (test dependency): p functions on every carbon of our model geometry
    # span Γ3N; libmsym writes E1 where the textbook writes E (../shared notes)
    msym = pytest.importorskip("libmsym")
    cage = ipr(n, isomer)
    vib = predict_vibrational(cage)
    x = symmetric_geometry(cage).coords
    els = [msym.Element(name="C", coordinates=[float(v) for v in p]) for p in x]
    bfs = [msym.RealSphericalHarmonic(element=e, n=2, l=1, m=m, name="p")
           for e in els for m in (-1, 0, 1)]
    with msym.Context(elements=els, basis_functions=bfs) as ctx:
        assert ctx.find_symmetry() == vib.point_group
        names = [s.name for s in ctx.character_table.symmetry_species]
        counts: dict[str, int] = {}
        for sp in ctx.subrepresentation_spaces:
            label = names[sp.symmetry_species]
            if label not in vib.gamma_3n and label.replace("E1", "E") in vib.gamma_3n:
                label = label.replace("E1", "E")
            counts[label] = counts.get(label, 0) + len(sp.salcs)
    if vib.point_group == "D2":  # B1/B2/B3 depend on the axis choice: compare the multiset
        assert sorted(counts.values()) == sorted(vib.gamma_3n.values())
    else:
        assert counts == vib.gamma_3n
