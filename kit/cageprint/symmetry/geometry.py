"""Symmetric 3D model geometry of a cage, its symmetry operations, and XYZ export.

The geometry made here is a *model for symmetry analysis*, not an optimised
structure: topological coordinates (adjacency eigenvectors) chosen so every
automorphism is realised faithfully, relaxed with springs to C-C bonds of
1.39-1.45 Å, then averaged over the group so it is exactly symmetric.

Eigenvector columns that span whole eigenspaces of the adjacency matrix give
an invariant subspace, so ``R_g = X[p_g]^T X`` is an exact orthogonal matrix
for each automorphism ``g``; the fingerprint uses these matrices directly and
never needs the relaxed geometry, which is made lazily (export, 3D view,
curvature estimates).

Convention: an automorphism sends atom ``i`` to ``perms[g, i]`` and its
matrix satisfies ``x[perms[g, i]] = R_g @ x[i]``.
"""

from __future__ import annotations

import functools
import itertools
from dataclasses import dataclass

import numpy as np
from threadpoolctl import ThreadpoolController

from ..errors import SymmetryError
from .automorphisms import AutomorphismGroup, automorphisms, trace_faces

__all__ = [
    "EIGEN_TOL",
    "GEOMETRY_TOL",
    "ORTHOGONALITY_TOL",
    "BOND_PENTAGON",
    "BOND_HEXAGON",
    "MODEL_NOTE",
    "TopologicalEmbedding",
    "SymmetricGeometry",
    "adjacency_spectrum",
    "topological_embedding",
    "relax",
    "symmetrise",
    "symmetry_operations",
    "build_symmetric_geometry",
    "to_xyz",
]

#: two adjacency eigenvalues closer than this are one degenerate level
EIGEN_TOL = 1e-6
#: largest allowed misfit (Å) of an atom mapped by a fitted symmetry operation
GEOMETRY_TOL = 1e-3
#: largest allowed deviation of R R^T from the identity for an exact operation
ORTHOGONALITY_TOL = 1e-8
#: model bond length (Å) of a bond on a pentagon edge, and between two hexagons.
#: C60 gas-phase electron diffraction: 1.458 and 1.401 Å (Hedberg et al.,
#: Science 1991; from memory) -- rounded model values.
BOND_PENTAGON = 1.45
BOND_HEXAGON = 1.40
MODEL_NOTE = (
    "model geometry for symmetry analysis (spring-relaxed topological coordinates, "
    "exactly symmetrised); not an optimised structure"
)


def adjacency_spectrum(neighbours) -> tuple[np.ndarray, np.ndarray]:
    """Eigenvalues (descending) and orthonormal eigenvectors of the adjacency matrix.

    Examples
    --------
    >>> lam, vec = adjacency_spectrum([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    >>> [round(float(v), 6) for v in lam]
    [3.0, -1.0, -1.0, -1.0]
    """
    nb = np.asarray(neighbours, dtype=np.int64)
    n = nb.shape[0]
    a = np.zeros((n, n))
    a[np.repeat(np.arange(n), 3), nb.ravel()] = 1.0
    with _single_thread_blas():
        lam, vec = np.linalg.eigh(a)
    return lam[::-1].copy(), np.ascontiguousarray(vec[:, ::-1])


_BLAS: list[ThreadpoolController] = []


def _single_thread_blas():
    """Context keeping BLAS on one thread: small eigenproblems run many times faster so."""
    if not _BLAS:  # the controller inspects the loaded libraries: made once, on first use
        _BLAS.append(ThreadpoolController())
    return _BLAS[0].limit(limits=1, user_api="blas")


def eigenspaces(lam: np.ndarray, tol: float = EIGEN_TOL) -> list[tuple[int, int]]:
    """``[start, stop)`` column ranges of the degenerate levels of sorted eigenvalues."""
    cuts = np.flatnonzero(np.abs(np.diff(lam)) > tol) + 1
    edges = np.concatenate(([0], cuts, [len(lam)])).tolist()
    return list(zip(edges[:-1], edges[1:], strict=True))


def _orders(mats_or_perms, is_perm: bool, max_order: int = 24) -> np.ndarray:
    """Order of each permutation (rows) or each 3x3 matrix (tolerance 1e-6)."""
    x = mats_or_perms
    g = x.shape[0]
    out = np.zeros(g, dtype=np.int64)
    if is_perm:
        n = x.shape[1]
        flat = (x + n * np.arange(g)[:, None]).ravel()  # one gather applies every permutation
        ident = np.arange(g * n).reshape(g, n)
        cur = flat.reshape(g, n)
        for k in range(1, max_order + 1):
            done = (out == 0) & (cur == ident).all(axis=1)
            out[done] = k
            if (out > 0).all():
                break
            cur = flat[cur]
    else:
        eye = np.eye(3).reshape(1, 9)
        cur = x.copy()
        for k in range(1, max_order + 1):
            done = (out == 0) & (np.abs(cur.reshape(g, 9) - eye).max(axis=1) < 1e-6)
            out[done] = k
            if (out > 0).all():
                break
            cur = cur @ x
    return out


def _fixes_a_cell(group: AutomorphismGroup, nb: np.ndarray, faces) -> np.ndarray:
    """For each automorphism: does it fix an atom, a bond (setwise) or a face (setwise)?"""
    p = group.perms
    n = p.shape[1]
    atom = (p == np.arange(n)[None, :]).any(axis=1)
    # a bond i-j fixed setwise with its ends swapped: p[i] == j and p[j] == i
    swapped = (p[:, :, None] == nb[None]) & (p[:, nb] == np.arange(n)[None, :, None])
    bond = swapped.any(axis=(1, 2))
    # a face fixed setwise: same order-free hash of its atoms before and after
    h = np.asarray(np.random.default_rng(12345).integers(1, 2**62, size=n, dtype=np.int64),
                   dtype=np.uint64)
    flat = np.concatenate([np.asarray(f, dtype=np.int64) for f in faces])
    starts = np.cumsum([0] + [len(f) for f in faces[:-1]])
    fh = np.add.reduceat(h[flat], starts)
    imh = np.add.reduceat(h[p[:, flat]], starts, axis=1)
    face = (imh == fh[None, :]).any(axis=1)
    return atom | bond | face


def _orientation_consistent(x: np.ndarray, nb: np.ndarray) -> bool:
    """True when every atom sees its three neighbours turn the same way (no fold)."""
    b = x[nb[:, 0]]
    u, w = (x[nb[:, 1]] - b).T, (x[nb[:, 2]] - b).T
    # u x w, component by component as numpy's cross product forms it
    cr = np.stack([u[1] * w[2] - u[2] * w[1], u[2] * w[0] - u[0] * w[2], u[0] * w[1] - u[1] * w[0]],
                  axis=1)
    s = np.einsum("ij,ij->i", cr, x)
    return bool((s > 0).all() or (s < 0).all())


@dataclass(frozen=True, eq=False)
class TopologicalEmbedding:
    """Adjacency-eigenvector coordinates with the exact symmetry matrices.

    Attributes
    ----------
    coords : numpy.ndarray
        ``(n, 3)`` orthonormal eigenvector columns (unitless).
    ops : numpy.ndarray
        ``(g, 3, 3)`` orthogonal matrices, one per automorphism (same order).
    levels : tuple of int
        Indices (0 = the top, constant eigenvector) of the eigenspaces used.
    folded_ok : bool
        False when no choice gave an unfolded embedding and a folded one that
        still realises every automorphism faithfully was used.
    """

    coords: np.ndarray
    ops: np.ndarray
    levels: tuple[int, ...]
    folded_ok: bool


def _check_candidate(x, group, porders, improper_inv_mirror):
    ops = np.einsum("gni,nj->gij", x[group.perms], x)
    dev = np.abs(np.einsum("gij,gkj->gik", ops, ops) - np.eye(3)[None]).max()
    if dev > ORTHOGONALITY_TOL:
        return None
    det = np.linalg.det(ops)
    if not np.array_equal(det > 0, group.proper):
        return None
    if not np.array_equal(_orders(ops, False), porders):
        return None
    inv_like = (np.abs(ops + np.eye(3)[None]).max(axis=(1, 2)) < 1e-6)
    sel = (~group.proper) & (porders == 2)
    if np.any(inv_like[sel] == improper_inv_mirror[sel]):
        return None
    return ops


@functools.lru_cache(maxsize=1024)
def _combos(dims: tuple[int, ...]) -> tuple[tuple[int, ...], ...]:
    """Sets of eigenspaces of total dimension 3, highest eigenvalues first (cached per dims)."""
    by_dim = {d: [k for k, dk in enumerate(dims) if dk == d] for d in (1, 2, 3)}
    combos: list[tuple[int, ...]] = [(k,) for k in by_dim[3]]
    combos += [tuple(sorted(c)) for c in itertools.product(by_dim[1], by_dim[2])]
    combos += list(itertools.combinations(by_dim[1], 3))
    combos.sort(key=lambda c: (max(c), c))
    return tuple(combos)


def topological_embedding(
    neighbours,
    group: AutomorphismGroup | None = None,
    spectrum=None,
    max_levels: int = 10,
    faces=None,
) -> TopologicalEmbedding:
    """Choose adjacency eigenspaces that realise every automorphism faithfully.

    Candidates are sets of whole eigenspaces (the constant top one excluded)
    of total dimension 3, tried from the top of the spectrum down.  A choice is
    accepted when each automorphism's matrix is orthogonal and agrees with it
    on order, on proper/improper (det), and on inversion versus mirror; an
    unfolded embedding (all atoms turn the same way) is preferred.

    Parameters
    ----------
    neighbours : array_like
        ``(n, 3)`` neighbour table in one rotational sense.
    group : AutomorphismGroup, optional
        Precomputed automorphisms.
    spectrum : tuple, optional
        Precomputed ``adjacency_spectrum(neighbours)``.
    max_levels : int, default 10
        How many eigenspaces below the top one to combine.
    faces : list of tuple of int, optional
        Precomputed :func:`trace_faces` of the table.

    Raises
    ------
    SymmetryError
        If no choice realises the group.

    Examples
    --------
    >>> emb = topological_embedding([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]])
    >>> emb.ops.shape, emb.levels
    ((24, 3, 3), (1,))
    """
    nb = np.asarray(neighbours, dtype=np.int64)
    if group is None:
        group = automorphisms(nb)
    lam, vec = adjacency_spectrum(nb) if spectrum is None else spectrum
    spaces = eigenspaces(lam)[1 : 1 + max_levels]
    # the identity alone: order 1, nothing improper
    porders = np.ones(1, dtype=np.int64) if group.order == 1 else _orders(group.perms, True)
    sel = (~group.proper) & (porders == 2)
    mirror = np.zeros(group.order, dtype=bool)
    if sel.any():
        if faces is None:
            faces = trace_faces(nb)
        sub = AutomorphismGroup(group.perms[sel], group.proper[sel])
        mirror[sel] = _fixes_a_cell(sub, nb, faces)
    fallback = None
    for combo in _combos(tuple(b - a for a, b in spaces)):
        cols = np.concatenate([np.arange(*spaces[k]) for k in combo])
        x = vec[:, cols]
        ops = _check_candidate(x, group, porders, mirror)
        if ops is None:
            continue
        levels = tuple(k + 1 for k in combo)
        if _orientation_consistent(x, nb):
            return TopologicalEmbedding(x, ops, levels, True)
        if fallback is None:
            fallback = TopologicalEmbedding(x, ops, levels, False)
    if fallback is not None:
        return fallback
    raise SymmetryError(
        f"no choice of adjacency eigenspaces among the top {max_levels} realises all "
        f"{group.order} automorphisms as orthogonal matrices (ORTHOGONALITY_TOL="
        f"{ORTHOGONALITY_TOL:g}); pass a larger max_levels"
    )


def _spring_terms(nb: np.ndarray, faces) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Pairs, target lengths (Å) and weights for bonds, bond angles and hexagon diagonals."""
    # face size to the left of dart (i -> nb[i, m]) and its partner; pentagon count per bond
    npent: dict[tuple[int, int], int] = {}
    for f in faces:
        for a, b in zip(f, f[1:] + f[:1], strict=True):
            key = (min(a, b), max(a, b))
            npent[key] = npent.get(key, 0) + (len(f) == 5)
    bonds = np.array(sorted(npent))
    blen = np.array([BOND_PENTAGON if npent[k] else BOND_HEXAGON for k in map(tuple, bonds)])
    bl = {tuple(k): v for k, v in zip(map(tuple, bonds.tolist()), blen, strict=True)}
    pi, pj, tg, wt = [bonds[:, 0]], [bonds[:, 1]], [blen], [np.ones(len(bonds))]
    ai, aj, at = [], [], []
    for f in faces:
        ang = np.deg2rad(108.0 if len(f) == 5 else 120.0)
        k = len(f)
        for t in range(k):
            a, c, b = f[t - 1], f[t], f[(t + 1) % k]
            l1 = bl[(min(a, c), max(a, c))]
            l2 = bl[(min(b, c), max(b, c))]
            ai.append(a)
            aj.append(b)
            at.append(np.sqrt(l1 * l1 + l2 * l2 - 2 * l1 * l2 * np.cos(ang)))
        if k == 6:
            for t in range(3):
                ai.append(f[t])
                aj.append(f[t + 3])
                at.append(2 * BOND_HEXAGON)
    pi.append(np.array(ai))
    pj.append(np.array(aj))
    tg.append(np.array(at))
    wt.append(np.full(len(ai), 0.5))

    return (np.concatenate(pi), np.concatenate(pj), np.concatenate(tg), np.concatenate(wt))


def relax(coords, neighbours, *, iterations: int = 2000) -> np.ndarray:
    """Relax coordinates with harmonic springs to model bond lengths and angles.

    Springs: bonds (1.45 Å on pentagon edges, 1.40 Å between hexagons), the
    1-3 distances of 108° / 120° face angles, and hexagon diagonals.  The
    energy is rotation invariant, so a symmetric start stays symmetric.

    Examples
    --------
    >>> nb = [[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]
    >>> x = relax(topological_embedding(nb).coords, nb)
    >>> x.shape
    (4, 3)
    """
    from scipy.optimize import minimize  # lazy: heavy import (~0.2 s), needed by relax only

    nb = np.asarray(neighbours, dtype=np.int64)
    faces = trace_faces(nb)
    pi, pj, tg, wt = _spring_terms(nb, faces)
    x0 = np.asarray(coords, dtype=float)
    x0 = x0 - x0.mean(axis=0)
    d0 = np.linalg.norm(x0[pi[: len(nb) * 3 // 2]] - x0[pj[: len(nb) * 3 // 2]], axis=1).mean()
    x0 = x0 * (BOND_HEXAGON / d0 if d0 > 0 else 1.0)
    n = x0.shape[0]

    def energy(flat):
        x = flat.reshape(n, 3)
        d = x[pi] - x[pj]
        r = np.sqrt((d * d).sum(axis=1))
        e = r - tg
        f = (2 * wt * e / np.maximum(r, 1e-12))[:, None] * d
        grad = np.zeros((n, 3))
        for k in range(3):
            grad[:, k] = np.bincount(pi, f[:, k], minlength=n) - np.bincount(pj, f[:, k], n)
        return float((wt * e * e).sum()), grad.ravel()

    res = minimize(energy, x0.ravel(), jac=True, method="L-BFGS-B",
                   options={"maxiter": iterations, "gtol": 1e-7})
    return res.x.reshape(n, 3)


def symmetrise(coords, group: AutomorphismGroup, ops) -> np.ndarray:
    """Average coordinates over the group: ``x_i <- mean_g R_g^T x[p_g(i)]``.

    Examples
    --------
    >>> nb = [[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]
    >>> emb = topological_embedding(nb)
    >>> g = automorphisms(nb)
    >>> bool(np.allclose(symmetrise(emb.coords, g, emb.ops), emb.coords))
    True
    """
    x = np.asarray(coords, dtype=float)
    return np.einsum("gji,gnj->ni", ops, x[group.perms]) / group.order


def symmetry_error(coords, group: AutomorphismGroup, ops) -> float:
    """Largest ``|R_g x_i - x[p_g(i)]|`` over atoms and operations (in coordinate units)."""
    x = np.asarray(coords, dtype=float)
    mapped = np.einsum("gij,nj->gni", ops, x)
    return float(np.linalg.norm(mapped - x[group.perms], axis=2).max())


def symmetry_operations(coords, group: AutomorphismGroup, tol: float = GEOMETRY_TOL) -> np.ndarray:
    """Fit one orthogonal matrix per automorphism to a geometry (centred at its mean).

    Parameters
    ----------
    coords : array_like
        ``(n, 3)`` Cartesian coordinates in Å, in the cage's atom order.
    group : AutomorphismGroup
        The cage's automorphisms.
    tol : float, default GEOMETRY_TOL
        Largest allowed misfit in Å of a mapped atom.

    Returns
    -------
    numpy.ndarray
        ``(g, 3, 3)`` orthogonal matrices (best fit, determinant ±1).

    Raises
    ------
    SymmetryError
        If an automorphism does not map the geometry onto itself within
        ``tol``, or its fitted matrix has the wrong handedness.

    Examples
    --------
    >>> nb = [[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]
    >>> x = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], float)
    >>> symmetry_operations(x, automorphisms(nb)).shape
    (24, 3, 3)
    """
    x = np.asarray(coords, dtype=float)
    n = group.perms.shape[1]
    if x.shape != (n, 3) or not np.isfinite(x).all():
        raise SymmetryError(
            f"coords: expected a finite ({n}, 3) array in the cage's atom order; found shape "
            f"{x.shape}"
        )
    x = x - x.mean(axis=0)
    m = np.einsum("gni,nj->gij", x[group.perms], x)
    u, _, vt = np.linalg.svd(m)
    ops = u @ vt
    mapped = np.einsum("gij,nj->gni", ops, x)
    err = np.linalg.norm(mapped - x[group.perms], axis=2).max(axis=1)
    worst = int(np.argmax(err))
    if err[worst] > tol:
        raise SymmetryError(
            f"coords: automorphism {worst} maps the geometry onto itself only within "
            f"{err[worst]:.3g} Å; expected <= tol={tol:g} Å (GEOMETRY_TOL); symmetrise the "
            "geometry or pass a larger tol"
        )
    det = np.linalg.det(ops)
    bad = np.flatnonzero((det > 0) != group.proper)
    if bad.size:
        raise SymmetryError(
            f"coords: automorphism {int(bad[0])} is "
            f"{'proper' if group.proper[bad[0]] else 'improper'} on the graph but fits a matrix "
            f"of determinant {det[bad[0]]:+.0f}; the geometry is folded or mirrored locally"
        )
    return ops


@dataclass(frozen=True, eq=False)
class SymmetricGeometry:
    """A symmetric model geometry.

    Attributes
    ----------
    coords : numpy.ndarray
        ``(n, 3)`` coordinates in Å, centred at the origin, exactly symmetric.
    ops : numpy.ndarray
        ``(g, 3, 3)`` symmetry matrices in this frame, one per automorphism.
    group : AutomorphismGroup
        The automorphisms the matrices realise.
    symmetry_error : float
        Largest misfit (Å) before the final averaging.
    note : str
        What the geometry is (a model, not an optimised structure).
    """

    coords: np.ndarray
    ops: np.ndarray
    group: AutomorphismGroup
    symmetry_error: float
    note: str = MODEL_NOTE

    def bond_lengths(self, neighbours) -> np.ndarray:
        """Lengths (Å) of the bonds ``i < j`` in sorted order."""
        nb = np.asarray(neighbours)
        i = np.repeat(np.arange(nb.shape[0]), 3)
        j = nb.ravel()
        keep = i < j
        order = np.lexsort((j[keep], i[keep]))
        d = self.coords[i[keep]] - self.coords[j[keep]]
        return np.linalg.norm(d, axis=1)[order]


def build_symmetric_geometry(
    neighbours,
    group: AutomorphismGroup | None = None,
    embedding: TopologicalEmbedding | None = None,
    tol: float = GEOMETRY_TOL,
) -> SymmetricGeometry:
    """Relax the topological embedding and symmetrise it exactly.

    Raises
    ------
    SymmetryError
        If the relaxed geometry breaks the symmetry by more than ``tol`` Å
        (GEOMETRY_TOL) before averaging.

    Examples
    --------
    >>> nb = [[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]
    >>> geo = build_symmetric_geometry(nb)
    >>> geo.coords.shape, geo.symmetry_error < GEOMETRY_TOL
    ((4, 3), True)
    """
    nb = np.asarray(neighbours, dtype=np.int64)
    if group is None:
        group = automorphisms(nb)
    if embedding is None:
        embedding = topological_embedding(nb, group)
    x = relax(embedding.coords, nb)
    x = x - x.mean(axis=0)
    err = symmetry_error(x, group, embedding.ops)
    if err > tol:
        raise SymmetryError(
            f"relaxed model geometry breaks the symmetry by {err:.3g} Å; expected <= "
            f"tol={tol:g} Å (GEOMETRY_TOL); pass a larger tol"
        )
    xs = symmetrise(x, group, embedding.ops)
    return SymmetricGeometry(xs, embedding.ops, group, err)


def to_xyz(cage, coords, comment: str = "") -> str:
    """Plain XYZ text: atom count, one comment line, one ``C x y z`` line per atom (Å).

    Parameters
    ----------
    cage : Cage or int
        The cage (its formula names the comment when none is given) or the atom count.
    coords : array_like
        ``(n, 3)`` coordinates in Å.
    comment : str, optional
        Second line; newlines are replaced by spaces.

    Examples
    --------
    >>> print(to_xyz(2, [[0, 0, 0], [1.4, 0, 0]], "two carbons"))
    2
    two carbons
    C     0.000000    0.000000    0.000000
    C     1.400000    0.000000    0.000000
    <BLANKLINE>
    """
    x = np.asarray(coords, dtype=float)
    n = cage if isinstance(cage, int) else int(cage.n)
    if x.shape != (n, 3):
        raise SymmetryError(f"coords: expected shape ({n}, 3) for the XYZ export; found {x.shape}")
    if not comment and not isinstance(cage, int):
        comment = f"{getattr(cage, 'formula', f'C{n}')}: {MODEL_NOTE}"
    lines = [str(n), " ".join(comment.split())]
    lines += [f"C {a:12.6f}{b:12.6f}{c:12.6f}" for a, b, c in x]
    return "\n".join(lines) + "\n"
