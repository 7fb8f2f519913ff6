"""One predicted fingerprint per cage: point group, 13C orbits, modes, Hückel levels.

The frozen result classes live in :mod:`cageprint.symmetry.results` and are
re-exported here.

:func:`fingerprint` computes everything from the cage graph alone: the
automorphisms, the exact symmetry matrices of a faithful topological
embedding, the point group, the atom and bond orbits, Γ3N and the IR/Raman
counts, and the Hückel levels labelled with irreps.  No geometry relaxation is
needed; :func:`symmetric_geometry` makes the relaxed model geometry on demand
(3D views, XYZ export, pyramidalisation estimates).  Results are cached per
cage graph (the neighbour table, so a relabelled cage gets its own atom
indices) and charge.
"""

from __future__ import annotations

import functools
from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import SymmetryError
from .automorphisms import AutomorphismGroup, automorphisms, checked_faces
from .geometry import (
    GEOMETRY_TOL,
    SymmetricGeometry,
    TopologicalEmbedding,
    adjacency_spectrum,
    build_symmetric_geometry,
    symmetry_operations,
    topological_embedding,
)
from .huckel import (
    fill_levels,
    frontier,
    level_characters,
    levels_from_eigenvalues,
    shell_type,
)
from .orbits import nmr_orbits, orbit_pattern
from .pointgroup import identify_point_group
from .reduce import gamma_3n, reduce_representation, transition_allowed, vibrational_analysis
from .results import (
    ElectronicPrediction,
    Fingerprint,
    NmrPrediction,
    VibrationalPrediction,
    _irrep_sum,
)

__all__ = [
    "NmrPrediction",
    "VibrationalPrediction",
    "ElectronicPrediction",
    "Fingerprint",
    "CageSymmetry",
    "cage_symmetry",
    "fingerprint",
    "predict_nmr",
    "predict_vibrational",
    "predict_electronic",
    "symmetric_geometry",
    "point_group_from_geometry",
    "clear_caches",
    "CACHE_SIZE",
]

#: how many fingerprints the cache keeps (small objects)
CACHE_SIZE = 4096
#: how many full graph analyses (eigenvectors, automorphisms: ~100 kB each) are kept
ANALYSIS_CACHE_SIZE = 256
#: a symmetry-operation tolerance for identifying the point group of exact matrices
OPS_TOL = 1e-6
#: largest allowed spread of a level character within a class, or of a multiplicity
#: from a whole number, when Hückel levels are labelled
LABEL_TOL = 1e-6

ENDOHEDRAL_NOTE = (
    "the cage's own point group is used; an inner cluster (endohedral species) or "
    "counter-ions are assumed to average out by rotation"
)
HUCKEL_NOTE = "simple Hückel: α = 0, energies λ in units of β (β < 0), λ > 0 bonding"


# ------------------------------------------------------------ graph analysis


@dataclass(frozen=True, eq=False)
class CageSymmetry:
    """The symmetry analysis of one cage graph (shared by all predictions).

    Attributes
    ----------
    neighbours : numpy.ndarray
    group : AutomorphismGroup
    spectrum : tuple of numpy.ndarray
        Adjacency eigenvalues (descending) and eigenvectors.
    embedding : TopologicalEmbedding
        Exact symmetry matrices ``embedding.ops``.  Chosen when the point group
        is identified; for a cage with the identity alone it is chosen on first use.
    match : PointGroupMatch
        ``.symbol``, ``.table``, ``.op_class`` (one class index per automorphism).
    """

    neighbours: np.ndarray
    group: AutomorphismGroup
    spectrum: tuple[np.ndarray, np.ndarray]
    match: Any
    faces: list | None = field(default=None, repr=False)
    chosen: TopologicalEmbedding | None = field(default=None, repr=False)

    @functools.cached_property
    def embedding(self) -> TopologicalEmbedding:
        if self.chosen is not None:
            return self.chosen
        return topological_embedding(self.neighbours, self.group, self.spectrum, faces=self.faces)

    @property
    def point_group(self) -> str:
        return self.match.symbol

    @property
    def table(self):
        return self.match.table


class _LRU:
    def __init__(self, size: int):
        self.size = size
        self.data: OrderedDict = OrderedDict()

    def get(self, key):
        if key in self.data:
            self.data.move_to_end(key)
            return self.data[key]
        return None

    def put(self, key, value):
        self.data[key] = value
        self.data.move_to_end(key)
        while len(self.data) > self.size:
            self.data.popitem(last=False)


_SYM_CACHE = _LRU(ANALYSIS_CACHE_SIZE)
_FP_CACHE = _LRU(CACHE_SIZE)
_GEO_CACHE = _LRU(64)
_VIB_CACHE = _LRU(CACHE_SIZE)
_TRIVIAL_MATCH: dict[float, Any] = {}


def clear_caches() -> None:
    """Empty the symmetry, fingerprint and geometry caches."""
    for c in (_SYM_CACHE, _FP_CACHE, _GEO_CACHE, _VIB_CACHE):
        c.data.clear()


def _neighbours_of(cage) -> np.ndarray:
    nb = getattr(cage, "neighbours", cage)
    return np.ascontiguousarray(nb, dtype=np.int64)


def _key(nb: np.ndarray) -> bytes:
    return nb.shape[0].to_bytes(4, "little") + nb.tobytes()


def cage_symmetry(cage) -> CageSymmetry:
    """Automorphisms, exact symmetry matrices and point group of a cage (cached).

    Parameters
    ----------
    cage : Cage or array_like
        A cage (its ``neighbours``) or an ``(n, 3)`` neighbour table in one
        rotational sense.

    Raises
    ------
    CageError
        If the neighbour table is not a cage graph with a rotation system.
    SymmetryError
        If the group found does not match a point group of the same order.

    Examples
    --------
    >>> cs = cage_symmetry([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    >>> cs.point_group, cs.group.order
    ('Td', 24)
    """
    nb = _neighbours_of(cage)
    key = _key(nb)
    hit = _SYM_CACHE.get(key)
    if hit is not None:
        return hit
    nb, faces = checked_faces(nb)
    group = automorphisms(nb, validate=False, faces=faces)
    spectrum = adjacency_spectrum(nb)
    n_fixed = (group.perms == np.arange(nb.shape[0])[None, :]).sum(axis=1)
    emb = None
    if group.order == 1:
        # the identity alone: the same C1 match for every such cage, and the embedding
        # (coordinates for the model geometry) is chosen only when asked for
        match = _TRIVIAL_MATCH.get(OPS_TOL)
        if match is None:
            match = identify_point_group(np.eye(3)[None], tol=OPS_TOL, weights=n_fixed)
            _TRIVIAL_MATCH[OPS_TOL] = match
    else:
        emb = topological_embedding(nb, group, spectrum, faces=faces)
        match = identify_point_group(emb.ops, tol=OPS_TOL, weights=n_fixed)
    if match.table.order != group.order:
        raise SymmetryError(
            f"cage graph: {group.order} automorphisms but the operations were identified as "
            f"{match.symbol} of order {match.table.order}; expected equal orders "
            f"(tol={OPS_TOL:g}, OPS_TOL)"
        )
    out = CageSymmetry(nb, group, spectrum, match, faces=faces, chosen=emb)
    _SYM_CACHE.put(key, out)
    return out


# ------------------------------------------------------------------ predictions


def _nmr(cs: CageSymmetry) -> NmrPrediction:
    orbits, bo, links = nmr_orbits(cs.group.perms, cs.neighbours)
    sizes = tuple(len(o) for o in orbits)
    return NmrPrediction(
        point_group=cs.point_group,
        orbits=orbits,
        sizes=sizes,
        n_lines=len(orbits),
        pattern=orbit_pattern(sizes),
        bond_orbits=bo,
        inadequate=links,
    )


def _vib(cs: CageSymmetry) -> VibrationalPrediction:
    table = cs.table
    n_fixed = (cs.group.perms == np.arange(cs.group.perms.shape[1])[None, :]).sum(axis=1)
    if cs.group.order == 1:
        # the identity alone (its exact matrix; the embedding's is the identity to rounding):
        # every atom stays, trace 3
        g3n = np.array([3.0 * n_fixed[0]])
    else:
        g3n = gamma_3n(table, cs.match.op_class, cs.embedding.ops, n_fixed)
    # the rest depends only on the group and Γ3N: shared by cages with equal characters
    key = (cs.point_group, np.asarray(g3n, dtype=float).tobytes())
    hit = _VIB_CACHE.get(key)
    if hit is None:
        va = vibrational_analysis(table, g3n)
        hit = _vib_from(cs.point_group, table, g3n, va)
        _VIB_CACHE.put(key, hit)
    return hit


def _as_counts(table, x) -> dict[str, int]:
    if isinstance(x, dict):
        return {r: int(x.get(r, 0)) for r in table.irreps if int(x.get(r, 0))}
    return _as_counts(table, reduce_representation(table, np.asarray(x, float)))


def _vib_from(symbol, table, g3n, va) -> VibrationalPrediction:
    get = va.get if isinstance(va, dict) else (lambda k, d=None: getattr(va, k, d))
    gamma_vib = _as_counts(table, get("gamma_vib"))
    ir = tuple(r for r in table.irreps if r in gamma_vib and r in table.linear)
    raman = tuple(r for r in table.irreps if r in gamma_vib and r in table.quadratic)
    silent = tuple(r for r in table.irreps if r in gamma_vib and r not in ir and r not in raman)
    return VibrationalPrediction(
        point_group=symbol,
        gamma_3n=_as_counts(table, g3n),
        gamma_vib=gamma_vib,
        n_distinct=int(sum(gamma_vib.values())),
        ir_irreps=ir,
        raman_irreps=raman,
        silent_irreps=silent,
        ir_count=int(sum(gamma_vib[r] for r in ir)),
        raman_count=int(sum(gamma_vib[r] for r in raman)),
        silent_count=int(sum(gamma_vib[r] for r in silent)),
    )


def _level_labels(cs: CageSymmetry, levels, degs) -> list[str]:
    """Irrep label of every Hückel level, all levels reduced at once."""
    table = cs.table
    if cs.group.order == 1:
        # trivial group: a level is its degeneracy times the one irrep (no eigenvectors needed)
        (r,) = table.irreps
        return [r if d == 1 else f"{d}{r}" for d in degs]
    _, vec = cs.spectrum
    chi = level_characters(vec, levels, cs.group.perms)  # (g, L)
    oc = np.asarray(cs.match.op_class, dtype=np.int64)
    nc = len(table.classes)
    onehot = np.zeros((nc, oc.size))
    onehot[oc, np.arange(oc.size)] = 1.0
    sizes = np.asarray(table.class_sizes, dtype=float)
    chi_cls = (onehot @ chi) / sizes[:, None]  # (classes, L)
    spread = np.abs(chi - chi_cls[oc]).max() if chi.size else 0.0
    if spread > LABEL_TOL:
        raise SymmetryError(
            f"Hückel levels: characters differ within a class by {spread:.3g}; expected a "
            f"class function within LABEL_TOL={LABEL_TOL:g} (the operations of "
            f"{table.name} do not match the automorphisms)"
        )
    chars = np.asarray(table.characters, dtype=float)
    mult = (chars * sizes[None, :]) @ chi_cls / np.asarray(table.norms)[:, None]  # (irreps, L)
    whole = np.round(mult)
    bad = np.abs(mult - whole).max() if mult.size else 0.0
    if bad > LABEL_TOL:
        raise SymmetryError(
            f"Hückel levels: a level reduces to a multiplicity {bad:.3g} away from a whole "
            f"number; expected whole numbers within LABEL_TOL={LABEL_TOL:g} (try a smaller "
            "huckel.DEGENERACY_TOL)"
        )
    # few distinct multiplicity columns per cage: name each once (cached per table)
    w = whole.T.astype(np.int64)  # (L, irreps)
    top = int(np.abs(w).max()) if w.size else 0
    if (2 * top + 1) ** w.shape[1] < 2**62:  # one integer per column, then unique
        base = np.int64(2 * top + 1) ** np.arange(w.shape[1], dtype=np.int64)
        _, first, inv = np.unique((w + top) @ base, return_index=True, return_inverse=True)
    else:  # pragma: no cover - multiplicities far beyond any cage level
        _, first, inv = np.unique(w, axis=0, return_index=True, return_inverse=True)
    names = []
    for col in w[first].tolist():
        key = (table.name, tuple(col))
        lab = _LABEL_CACHE.get(key)
        if lab is None:
            counts = {r: c for r, c in zip(table.irreps, col, strict=True) if c}
            lab = _LABEL_CACHE[key] = _irrep_sum(counts) or "?"
        names.append(lab)
    return [names[k] for k in inv.reshape(-1).tolist()]


_LABEL_CACHE: dict[tuple, str] = {}
_ALLOWED_CACHE: dict[tuple, bool] = {}


def _allowed(table, a: str, b: str) -> bool:
    """``transition_allowed`` memoised per table and irrep pair."""
    key = (table.name, a, b)
    hit = _ALLOWED_CACHE.get(key)
    if hit is None:
        hit = _ALLOWED_CACHE[key] = bool(transition_allowed(table, a, b))
    return hit


def _elec(cs: CageSymmetry, charge: int) -> ElectronicPrediction:
    n = cs.neighbours.shape[0]
    lam, _ = cs.spectrum
    levels = levels_from_eigenvalues(lam)
    degs = [b - a for _, a, b in levels]
    energies = [e for e, _, _ in levels]
    labels = _level_labels(cs, levels, degs)
    n_el = n - int(charge)
    occ = fill_levels(degs, n_el)
    homo, lumo = frontier(degs, occ)
    shell, detail = shell_type(energies, degs, occ)
    gap = 0.0
    if homo is not None and lumo is not None and homo != lumo:
        gap = max(0.0, energies[homo] - energies[lumo])
    trans: list[tuple[str, str, float, bool]] = []
    if homo is not None and lumo is not None:
        occ_levels = [k for k in (homo - 1, homo) if k >= 0 and occ[k] > 0]
        vac_levels = [k for k in (lumo, lumo + 1) if k < len(levels) and occ[k] < 2 * degs[k]]
        for a in occ_levels:
            for b in vac_levels:
                if a == b:
                    continue
                for ra in _components(labels[a]):
                    for rb in _components(labels[b]):
                        ok = _allowed(cs.table, ra, rb)
                        trans.append((ra, rb, round(energies[a] - energies[b], 10), ok))
    notes = [HUCKEL_NOTE]
    if charge:
        notes.append(f"charge {charge:+d}: {n_el} π electrons; {ENDOHEDRAL_NOTE}")
    return ElectronicPrediction(
        point_group=cs.point_group,
        charge=int(charge),
        n_electrons=n_el,
        levels=tuple(zip(energies, degs, labels, occ, strict=True)),  # float, int, str, int
        homo=None if homo is None else float(energies[homo]),
        lumo=None if lumo is None else float(energies[lumo]),
        homo_index=homo,
        lumo_index=lumo,
        gap_beta=float(gap),
        shell=shell,
        shell_detail=detail,
        transitions=tuple(trans),
        allowed_transitions=tuple((a, b, d) for a, b, d, ok in trans if ok),
        notes=tuple(notes),
    )


def _components(label: str) -> list[str]:
    out = []
    for part in label.split("+"):
        k = 0
        while k < len(part) and part[k].isdigit():
            k += 1
        out.append(part[k:])
    return out


def fingerprint(cage, charge: int = 0) -> Fingerprint:
    """The predicted fingerprint of a cage (cached per cage graph and charge).

    Parameters
    ----------
    cage : Cage or array_like
        A cage or its ``(n, 3)`` neighbour table in one rotational sense.
    charge : int, default 0
        Charge of the cage for the Hückel filling (``-6``: six electrons
        taken from an inner cluster).

    Returns
    -------
    Fingerprint

    Examples
    --------
    >>> fp = fingerprint([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    >>> fp.point_group, fp.nmr.pattern
    ('Td', '1x4')
    """
    nb = _neighbours_of(cage)
    spiral = getattr(cage, "spiral", None)
    spiral = None if spiral is None else tuple(int(v) for v in spiral)
    key = (_key(nb), int(charge), spiral)
    hit = _FP_CACHE.get(key)
    if hit is not None:
        return hit
    cs = cage_symmetry(nb)
    fp = Fingerprint(
        n=int(nb.shape[0]),
        spiral=spiral,
        charge=int(charge),
        point_group=cs.point_group,
        group_order=cs.group.order,
        n_proper=cs.group.n_proper,
        nmr=_cached_part(cs, "nmr", _nmr),
        vib=_cached_part(cs, "vib", _vib),
        elec=_elec(cs, charge),
    )
    _FP_CACHE.put(key, fp)
    return fp


def _cached_part(cs: CageSymmetry, name: str, fn):
    # charge-independent parts are computed once per cage graph
    key = (_key(cs.neighbours), name)
    hit = _FP_CACHE.get(key)
    if hit is None:
        hit = fn(cs)
        _FP_CACHE.put(key, hit)
    return hit


def predict_nmr(cage) -> NmrPrediction:
    """Predicted 13C NMR pattern (lines = carbon orbits) of a cage.

    Examples
    --------
    >>> predict_nmr([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]).n_lines
    1
    """
    return fingerprint(cage).nmr


def predict_vibrational(cage) -> VibrationalPrediction:
    """Predicted vibrational symmetry species and IR/Raman counts of a cage.

    Examples
    --------
    >>> predict_vibrational([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]).n_distinct
    3
    """
    return fingerprint(cage).vib


def predict_electronic(cage, charge: int = 0) -> ElectronicPrediction:
    """Predicted Hückel levels, shell type and frontier transitions of a cage.

    Examples
    --------
    >>> predict_electronic([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]).shell
    'open'
    """
    return fingerprint(cage, charge).elec


def symmetric_geometry(cage, tol: float = GEOMETRY_TOL) -> SymmetricGeometry:
    """The symmetric model geometry (Å) of a cage, made on demand and cached.

    A model for symmetry analysis (spring-relaxed, exactly symmetrised), not
    an optimised structure.

    Examples
    --------
    >>> geo = symmetric_geometry([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    >>> geo.coords.shape
    (4, 3)
    """
    nb = _neighbours_of(cage)
    key = (_key(nb), float(tol))
    hit = _GEO_CACHE.get(key)
    if hit is None:
        cs = cage_symmetry(nb)
        hit = build_symmetric_geometry(nb, cs.group, cs.embedding, tol=tol)
        _GEO_CACHE.put(key, hit)
    return hit


def point_group_from_geometry(cage, coords, tol: float = GEOMETRY_TOL):
    """Point group of a given geometry of the cage (atoms in the cage's order).

    Each automorphism is fitted with an orthogonal matrix; the geometry must
    realise every automorphism within ``tol`` Å.

    Raises
    ------
    SymmetryError
        If the geometry breaks the symmetry by more than ``tol`` (GEOMETRY_TOL).

    Examples
    --------
    >>> nb = [[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]
    >>> x = [[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]]
    >>> point_group_from_geometry(nb, x).symbol
    'Td'
    """
    cs = cage_symmetry(cage)
    ops = symmetry_operations(coords, cs.group, tol=tol)
    n_fixed = (cs.group.perms == np.arange(cs.group.perms.shape[1])[None, :]).sum(axis=1)
    return identify_point_group(ops, weights=n_fixed)
