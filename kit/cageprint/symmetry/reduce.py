"""Reduction of representations, vibrational analysis and direct products.

Everything here works on class characters: a vector with one entry per
column of a :class:`~cageprint.symmetry.tables.CharacterTable`.  The reduction
formula is n_i = Σ_k |C_k| χ_i(k) χ(k) / N_i with N_i = h, or 2h for a
separably degenerate pair kept as one real irrep (its count is then the number
of degenerate pairs, as usual when counting modes or levels).
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from typing import NamedTuple

import numpy as np

from ..errors import SymmetryError
from .tables import CharacterTable

__all__ = [
    "REDUCE_TOL",
    "cartesian_character",
    "class_characters",
    "gamma_3n",
    "reduce_representation",
    "representation_characters",
    "VibrationalAnalysis",
    "vibrational_analysis",
    "direct_product",
    "transition_allowed",
]

REDUCE_TOL = 1e-3
"""Largest accepted distance of a reduced multiplicity from a whole number."""


def cartesian_character(r) -> float | np.ndarray:
    """Character of (x, y, z) under an operation: the trace of its 3x3 matrix.

    ``r`` may be one matrix or a stack of shape (g, 3, 3).

    Examples
    --------
    >>> import numpy as np
    >>> cartesian_character(np.diag([-1.0, -1.0, 1.0]))
    -1.0
    """
    a = np.asarray(r, dtype=float)
    if a.shape[-2:] != (3, 3):
        raise SymmetryError(f"r: expected a 3x3 matrix or a (g, 3, 3) stack, found shape {a.shape}")
    t = np.einsum("...ii->...", a)
    return float(t) if t.ndim == 0 else t


def class_characters(table: CharacterTable, op_class, values, tol: float = REDUCE_TOL,
                     what: str = "values") -> np.ndarray:
    """Average a per-operation character over each class, checking it is a class function.

    Parameters
    ----------
    table : CharacterTable
    op_class : array_like of int, shape (g,)
        Class index (into ``table.classes``) of each operation.
    values : array_like, shape (g,)
        The character of each operation.
    tol : float
        Largest accepted spread of the values inside one class.

    Returns
    -------
    numpy.ndarray
        One character per table class.

    Examples
    --------
    >>> from cageprint.symmetry.tables import character_table
    >>> class_characters(character_table("C2"), [0, 1], [3.0, -1.0])
    array([ 3., -1.])
    """
    oc = np.asarray(op_class, dtype=int).reshape(-1)
    v = np.asarray(values, dtype=float).reshape(-1)
    nc = len(table.classes)
    if v.shape != oc.shape:
        raise SymmetryError(f"{what}: expected {len(oc)} values (one per operation), "
                            f"found {v.size}")
    if len(oc) != table.order or np.any((oc < 0) | (oc >= nc)):
        raise SymmetryError(f"op_class: expected {table.order} class indices in 0..{nc - 1} for "
                            f"{table.name}, found {len(oc)} entries")
    sizes = np.bincount(oc, minlength=nc)
    if not np.array_equal(sizes, table.class_sizes):
        raise SymmetryError(f"op_class: class sizes {sizes.tolist()} do not match the "
                            f"{table.name} table {list(table.class_sizes)}")
    mean = np.bincount(oc, weights=v, minlength=nc) / sizes
    spread = np.abs(v - mean[oc])
    k = int(np.argmax(spread))
    if spread[k] > tol:
        raise SymmetryError(
            f"{what}[{k}]: expected the same character for every operation of class "
            f"{table.classes[oc[k]]!r}, found {v[k]:g} against a class mean {mean[oc[k]]:g} "
            f"(tol={tol:g}); the structure may break the symmetry, pass a larger tol")
    return mean


def gamma_3n(table: CharacterTable, op_class, ops, n_fixed_atoms_per_op,
             tol: float = REDUCE_TOL) -> np.ndarray:
    """Characters of the 3N Cartesian displacements, one per table class.

    χ3N(R) = (atoms left in place by R) x trace(R).

    Parameters
    ----------
    table : CharacterTable
    op_class : array_like of int, shape (g,)
    ops : array_like, shape (g, 3, 3)
    n_fixed_atoms_per_op : array_like of int, shape (g,)
    tol : float

    Returns
    -------
    numpy.ndarray

    Examples
    --------
    >>> import numpy as np
    >>> from cageprint.symmetry.tables import character_table
    >>> ops = [np.eye(3), np.diag([1.0, 1.0, -1.0])]          # Cs, mirror xy
    >>> gamma_3n(character_table("Cs"), [0, 1], ops, [3, 3])   # a planar triatomic
    array([9., 3.])
    """
    tr = cartesian_character(ops)
    tr = np.atleast_1d(tr)
    nf = np.asarray(n_fixed_atoms_per_op, dtype=float).reshape(-1)
    if nf.shape != tr.shape:
        raise SymmetryError(f"n_fixed_atoms_per_op: expected {tr.size} counts (one per "
                            f"operation), found {nf.size}")
    return class_characters(table, op_class, nf * tr, tol=tol, what="gamma_3n")


def _chi(table: CharacterTable, chi_by_class) -> np.ndarray:
    if isinstance(chi_by_class, Mapping):
        missing = [c for c in table.classes if c not in chi_by_class]
        if missing:
            raise SymmetryError(f"chi_by_class: missing class(es) {', '.join(missing)} of "
                                f"{table.name}")
        chi = np.array([chi_by_class[c] for c in table.classes], dtype=float)
    else:
        chi = np.asarray(chi_by_class, dtype=float).reshape(-1)
    if chi.shape != (len(table.classes),):
        raise SymmetryError(f"chi_by_class: expected {len(table.classes)} characters for "
                            f"{table.name} ({' '.join(table.classes)}), found {chi.size}")
    return chi


def reduce_representation(table: CharacterTable, chi_by_class, tol: float = REDUCE_TOL,
                          keep_zeros: bool = False) -> dict[str, int]:
    """Multiplicity of each irrep in a representation given by its class characters.

    Parameters
    ----------
    table : CharacterTable
    chi_by_class : array_like or Mapping
        One character per table class (in ``table.classes`` order), or a
        mapping class label -> character.
    tol : float
        Largest accepted distance of a multiplicity from a whole number.
    keep_zeros : bool
        Keep irreps with multiplicity 0 (default: they are omitted).

    Returns
    -------
    dict of str to int
        In table order.  For a separably degenerate irrep the count is the
        number of degenerate pairs.

    Raises
    ------
    SymmetryError
        If a multiplicity is negative or not whole within ``tol``: a sign of
        a wrong class assignment or characters that break the symmetry.

    Examples
    --------
    >>> from cageprint.symmetry.tables import character_table
    >>> t = character_table("Ih")
    >>> reduce_representation(t, [180, 0, 0, 0, 0, 0, 0, 0, 0, 4])   # C60, 3N
    {'Ag': 2, 'T1g': 4, 'T2g': 4, 'Gg': 6, 'Hg': 8, 'Au': 1, 'T1u': 5, 'T2u': 5, 'Gu': 6, 'Hu': 7}
    """
    chi = _chi(table, chi_by_class)
    n = (table.characters * np.asarray(table.class_sizes)) @ chi / table.norms
    r = np.rint(n)
    bad = np.flatnonzero((np.abs(n - r) > tol) | (r < -0.5))
    if len(bad):
        k = int(bad[0])
        raise SymmetryError(
            f"chi_by_class: expected whole non-negative multiplicities in {table.name}, found "
            f"{table.irreps[k]} = {n[k]:.4g} (tol={tol:g}); the class assignment or the "
            f"characters are wrong, or pass a larger tol")
    return {ir: int(c) for ir, c in zip(table.irreps, r, strict=True) if keep_zeros or c != 0}


def representation_characters(table: CharacterTable, counts: Mapping[str, int]) -> np.ndarray:
    """Class characters of a direct sum given as {irrep: multiplicity}.

    Examples
    --------
    >>> from cageprint.symmetry.tables import character_table
    >>> representation_characters(character_table("C2v"), {"A1": 1, "B1": 1, "B2": 1})
    array([ 3., -1.,  1.,  1.])
    """
    chi = np.zeros(len(table.classes))
    for ir, m in counts.items():
        chi += m * table.characters[table.index(ir)]
    return chi


class VibrationalAnalysis(NamedTuple):
    """Result of :func:`vibrational_analysis` (unpacks as a 5-tuple).

    Attributes
    ----------
    gamma_vib : dict of str to int
        Γvib = Γ3N - Γtrans - Γrot, irreps in table order, zero counts omitted.
    ir_irreps, raman_irreps, silent : tuple of str
        Irreps of Γvib that are IR-active (in ``table.linear``), Raman-active
        (in ``table.quadratic``), and neither.
    counts : dict of str to int
        ``n_modes`` (3N - 6 for a non-linear cage), ``n_distinct`` (number of
        distinct frequencies = Σ multiplicities), ``ir_count``, ``raman_count``,
        ``silent_count`` (distinct fundamentals of each kind), ``n_atoms``.
    """

    gamma_vib: dict
    ir_irreps: tuple
    raman_irreps: tuple
    silent: tuple
    counts: dict


def vibrational_analysis(table: CharacterTable, gamma3n) -> VibrationalAnalysis:
    """Γvib, IR/Raman activity and mode counts from Γ(3N).

    Parameters
    ----------
    table : CharacterTable
    gamma3n : array_like or Mapping
        Γ(3N) as class characters (see :func:`gamma_3n`) or already reduced,
        as a mapping irrep -> multiplicity (its keys must be irreps).

    Returns
    -------
    VibrationalAnalysis

    Notes
    -----
    IR activity: the irrep is spanned by x, y or z; Raman activity: by a
    quadratic function (E. B. Wilson, J. C. Decius & P. C. Cross, Molecular
    Vibrations, McGraw-Hill 1955).  Counts are of distinct fundamentals:
    a degenerate set counts once.

    Examples
    --------
    >>> from cageprint.symmetry.tables import character_table
    >>> t = character_table("Ih")
    >>> va = vibrational_analysis(t, [180, 0, 0, 0, 0, 0, 0, 0, 0, 4])
    >>> va.ir_irreps, va.counts["ir_count"], va.counts["raman_count"], va.counts["n_distinct"]
    (('T1u',), 4, 10, 46)
    """
    if isinstance(gamma3n, Mapping) and all(k in table.irreps for k in gamma3n):
        full = {ir: int(gamma3n.get(ir, 0)) for ir in table.irreps}
    else:
        full = reduce_representation(table, gamma3n, keep_zeros=True)
    dims = dict(zip(table.irreps, table.dims, strict=True))
    n3 = sum(full[ir] * dims[ir] for ir in table.irreps)
    if n3 % 3:
        raise SymmetryError(f"gamma3n: expected a dimension divisible by 3 (3N), found {n3}")
    vib = dict(full)
    tr, rot = _trans_rot(table)
    for ir in table.irreps:
        vib[ir] = full[ir] - tr[ir] - rot[ir]
        if vib[ir] < 0:
            raise SymmetryError(
                f"gamma3n: {ir} occurs {full[ir]} time(s), fewer than the "
                f"{tr[ir] + rot[ir]} needed by translations and rotations; expected Γ(3N) of a "
                f"non-linear set of at least 3 atoms")
    gv = {ir: m for ir, m in vib.items() if m}
    ir_ir = tuple(ir for ir in gv if ir in table.linear)
    ra_ir = tuple(ir for ir in gv if ir in table.quadratic)
    silent = tuple(ir for ir in gv if ir not in ir_ir and ir not in ra_ir)
    counts = {
        "n_atoms": n3 // 3,
        "n_modes": sum(m * dims[ir] for ir, m in gv.items()),
        "n_distinct": sum(gv.values()),
        "ir_count": sum(gv[ir] for ir in ir_ir),
        "raman_count": sum(gv[ir] for ir in ra_ir),
        "silent_count": sum(gv[ir] for ir in silent),
    }
    return VibrationalAnalysis(gv, ir_ir, ra_ir, silent, counts)


@functools.cache
def _trans_rot(t: CharacterTable) -> tuple[dict[str, int], dict[str, int]]:
    """Γtrans and Γrot of a group, reduced once per table."""
    return (reduce_representation(t, t.vector_characters, keep_zeros=True),
            reduce_representation(t, t.axial_characters, keep_zeros=True))


def direct_product(table: CharacterTable, a: str, b: str) -> dict[str, int]:
    """Reduce the direct product of two irreps.

    For a separably degenerate irrep the product is taken of the real
    (pair-summed) representation, e.g. E x E = 2A + E in C3.

    Examples
    --------
    >>> from cageprint.symmetry.tables import character_table
    >>> direct_product(character_table("Ih"), "T1u", "T1u")
    {'Ag': 1, 'T1g': 1, 'Hg': 1}
    """
    chi = table.characters[table.index(a)] * table.characters[table.index(b)]
    return reduce_representation(table, chi)


def transition_allowed(table: CharacterTable, a: str, b: str) -> bool:
    """Whether a dipole transition a -> b is symmetry-allowed.

    Allowed when a x b contains an irrep spanned by x, y or z.

    Examples
    --------
    >>> from cageprint.symmetry.tables import character_table
    >>> t = character_table("Ih")
    >>> transition_allowed(t, "Hu", "T1u"), transition_allowed(t, "Hu", "T1g")
    (False, True)
    """
    return any(ir in table.linear for ir in direct_product(table, a, b))

