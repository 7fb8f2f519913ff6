"""Point group, conjugacy classes and class labels from a set of 3x3 operations.

:func:`identify_point_group` takes the orthogonal matrices of a finite point
group (for a cage: every automorphism realised on the symmetric geometry),
names the group (Schoenflies symbol), computes the conjugacy classes from the
multiplication table and labels each class with its column in the group's
character table (:mod:`cageprint.symmetry.tables`).

The work is vectorised: operations are told apart by where they send one fixed
generic vector, so the g x g multiplication table costs one matrix product and
one binned look-up (checked on the full image vector); conjugacy classes come
from fancy indexing of that table (about 1-2 ms for Ih on this project's
machines; ``tests/benchmarks/bench_pointgroup.py``).
"""

from __future__ import annotations

import functools
import itertools
from dataclasses import dataclass, field

import numpy as np

from ..errors import SymmetryError
from .tables import CharacterTable, character_table, class_operation

__all__ = ["SYMMETRY_TOL", "PointGroupMatch", "identify_point_group"]

SYMMETRY_TOL = 1e-3
"""Largest accepted deviation of a matrix entry (orthogonality, closure, matching)."""

# Generic probe vectors: an operation is identified by the image of one of them.
_PROBES = np.array([
    [0.5773, 0.6231, 0.5275],
    [0.2113, -0.7887, 0.5774],
    [-0.6412, 0.3017, 0.7056],
    [0.8138, 0.1279, -0.5669],
])
_PROBES = _PROBES / np.linalg.norm(_PROBES, axis=1, keepdims=True)
_PROJ = np.array([0.4227, 0.8660, -0.2672])


@dataclass(frozen=True)
class PointGroupMatch:
    """A named point group with every operation assigned to a table class.

    Attributes
    ----------
    symbol : str
        Schoenflies symbol, e.g. ``"Ih"``.
    table : CharacterTable
        The group's character table.
    op_class : numpy.ndarray
        For each input operation, the index of its class in ``table.classes``.
    frame : numpy.ndarray
        Right-handed orthonormal frame, rows x, y, z, in the input coordinates:
        z is the principal axis (see :func:`identify_point_group` for the rule
        in each family), x a C2' axis or a vertical mirror line where the group
        has one.
    multiplication : numpy.ndarray
        (g, g) int table: ``ops[multiplication[a, b]] == ops[a] @ ops[b]``.
    inverse : numpy.ndarray
        Index of each operation's inverse.
    tol : float
        Tolerance the match was made with.
    """

    symbol: str
    table: CharacterTable = field(repr=False)
    op_class: np.ndarray = field(repr=False, compare=False)
    frame: np.ndarray = field(repr=False, compare=False)
    multiplication: np.ndarray = field(repr=False, compare=False)
    inverse: np.ndarray = field(repr=False, compare=False)
    tol: float = SYMMETRY_TOL

    @property
    def order(self) -> int:
        """Number of operations."""
        return len(self.op_class)

    @property
    def axis(self) -> np.ndarray:
        """The principal axis (third row of :attr:`frame`)."""
        return self.frame[2]

    def members(self, label: str) -> np.ndarray:
        """Indices of the operations in the class labelled ``label``."""
        if label not in self.table.classes:
            raise SymmetryError(f"class {label!r}: not in the {self.symbol} table; expected one "
                                f"of {', '.join(self.table.classes)}")
        return np.flatnonzero(self.op_class == self.table.classes.index(label))


# ----------------------------------------------------------------------------- helpers
def _axis(r: np.ndarray) -> np.ndarray:
    """Unit rotation axis of a proper rotation (any sign), or of -r if improper."""
    if _det3(r) < 0:
        r = -r
    v = np.array([r[2, 1] - r[1, 2], r[0, 2] - r[2, 0], r[1, 0] - r[0, 1]])
    nv = np.linalg.norm(v)
    if nv > 1e-2:
        return v / nv
    s = r + np.eye(3)  # half-turn: r + 1 = 2 n n^T
    j = int(np.argmax(np.linalg.norm(s, axis=0)))
    col = s[:, j]
    return col / np.linalg.norm(col)


def _det3(r: np.ndarray) -> float:
    return float(r[0, 0] * (r[1, 1] * r[2, 2] - r[1, 2] * r[2, 1])
                 - r[0, 1] * (r[1, 0] * r[2, 2] - r[1, 2] * r[2, 0])
                 + r[0, 2] * (r[1, 0] * r[2, 1] - r[1, 1] * r[2, 0]))


def _cross(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    return np.array([u[1] * v[2] - u[2] * v[1], u[2] * v[0] - u[0] * v[2],
                     u[0] * v[1] - u[1] * v[0]])


def _canon(v: np.ndarray) -> np.ndarray:
    """Fix the sign of a direction: its largest component positive."""
    return v if v[int(np.argmax(np.abs(v)))] > 0 else -v


def _perp(z: np.ndarray) -> np.ndarray:
    """A unit vector perpendicular to z, chosen deterministically."""
    e = np.eye(3)[int(np.argmin(np.abs(z)))]
    x = e - (e @ z) * z
    return x / np.linalg.norm(x)


class _Lookup:
    """Find operations by the image of a probe vector.

    Fast path: the images are projected on one line and binned, so a query is
    one array index; a query the bins do not settle is searched among all
    operations.  Either way the answer is checked on the full image vector.
    """

    def __init__(self, ops: np.ndarray, tol: float):
        g = len(ops)
        self.match_tol = 8.0 * tol  # a product of two ops, each off by tol per entry
        best = None
        for u in _PROBES:
            keys = ops @ u
            s = keys @ _PROJ
            ss = np.sort(s)
            gap = float(np.min(np.diff(ss))) if g > 1 else 1.0
            if best is None or gap > best[0]:
                best = (gap, u, keys, s)
        assert best is not None  # _PROBES is not empty
        gap, self.u, self.keys, s = best
        self.keys_t = np.ascontiguousarray(self.keys.T)
        if g > 1:
            d2 = 2.0 - 2.0 * (self.keys @ self.keys.T)  # keys are unit vectors
            d2[np.diag_indices(g)] = np.inf
            k = int(np.argmin(d2))
            i, j = divmod(k, g)
            if d2.flat[k] <= (2 * self.match_tol) ** 2:
                raise SymmetryError(
                    f"ops[{min(i, j)}] and ops[{max(i, j)}]: expected distinct operations, "
                    f"found them equal within tol={tol:g}; remove duplicates or pass a "
                    f"smaller tol")
        self.delta = max(gap / 3.0, 1e-9)
        self.smin = float(s.min()) - 2 * self.delta
        nb = int((float(s.max()) - self.smin) / self.delta) + 3
        self.bins = np.zeros(min(nb, 2_000_000), dtype=np.int64)
        b = ((s - self.smin) / self.delta).astype(np.int64)
        if nb <= len(self.bins):
            for off in (-1, 0, 1):
                self.bins[b + off] = np.arange(g)

    def bin(self, s: np.ndarray) -> np.ndarray:
        """Candidate op for each projection (any shape); a wrong one fails the vector check."""
        b = ((s - self.smin) / self.delta).astype(np.int64)
        np.clip(b, 0, len(self.bins) - 1, out=b)
        return self.bins[b]

    def nearest(self, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Brute-force nearest op to each row of q (the slow path)."""
        d = np.linalg.norm(q[:, None, :] - self.keys[None, :, :], axis=2)
        j = np.argmin(d, axis=1)
        return j, d[np.arange(len(q)), j]

    def find(self, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Index of the op whose image is nearest to each row of q, and that distance."""
        cand = self.bin(q @ _PROJ)
        dist = np.sqrt(np.sum((self.keys[cand] - q) ** 2, axis=1))
        slow = np.flatnonzero(dist > self.match_tol)
        if len(slow):
            cand[slow], dist[slow] = self.nearest(q[slow])
        return cand, dist


def _check_ops(ops, tol: float) -> np.ndarray:
    try:
        a = np.asarray(ops, dtype=float)
    except (TypeError, ValueError):
        raise SymmetryError("ops: expected a (g, 3, 3) array of numbers") from None
    if a.ndim != 3 or a.shape[1:] != (3, 3) or len(a) == 0:
        raise SymmetryError(f"ops: expected a (g, 3, 3) array with g >= 1, found shape {a.shape}")
    if not np.all(np.isfinite(a)):
        raise SymmetryError("ops: expected finite numbers, found NaN or inf")
    if not (tol > 0):
        raise SymmetryError(f"tol: expected a positive number, found {tol!r}")
    dev = np.abs(a @ a.transpose(0, 2, 1) - np.eye(3)).max(axis=(1, 2))
    bad = int(np.argmax(dev))
    if dev[bad] > tol:
        raise SymmetryError(
            f"ops[{bad}]: expected an orthogonal matrix, found max |R Rᵀ - 1| = {dev[bad]:.3g} "
            f"> tol={tol:g}; pass a larger tol or orthogonalise the matrices")
    return a


def _group_structure(a: np.ndarray, tol: float):
    g = len(a)
    look = _Lookup(a, tol)
    # image of the probe under ops[i] @ ops[j]: p[i, :, j]; its projection sp[i, j]
    p = (a.reshape(3 * g, 3) @ look.keys.T).reshape(g, 3, g)
    sp = (a.transpose(0, 2, 1) @ _PROJ) @ look.keys.T
    idx = look.bin(sp)
    d2 = np.zeros(sp.shape)
    for c in range(3):
        d2 += (p[:, c, :] - np.take(look.keys_t[c], idx)) ** 2
    idx, dist = idx.reshape(-1), np.sqrt(d2.reshape(-1))
    slow = np.flatnonzero(dist > look.match_tol)
    if len(slow):
        q = p.transpose(0, 2, 1).reshape(-1, 3)[slow]
        idx[slow], dist[slow] = look.nearest(q)
    worst = int(np.argmax(dist))
    if dist[worst] > look.match_tol:
        i, j = divmod(worst, g)
        raise SymmetryError(
            f"ops: expected a group closed under multiplication, found ops[{i}] @ ops[{j}] "
            f"{dist[worst]:.3g} away from every operation (tol={tol:g}); pass a larger tol or "
            f"complete the set")
    mult = idx.reshape(g, g)
    ident, d_id = look.find(look.u[None, :])
    e = int(ident[0])
    if d_id[0] > look.match_tol or np.abs(a[e] - np.eye(3)).max() > tol:
        raise SymmetryError(f"ops: expected the identity among the operations (tol={tol:g}), "
                            "found none")
    inv = np.argmax(mult == e, axis=1)
    if not np.all(mult[np.arange(g), inv] == e):
        raise SymmetryError(f"ops: expected a group, found an operation without inverse "
                            f"(tol={tol:g})")
    return mult, inv, e


def _orders(mult: np.ndarray, e: int) -> np.ndarray:
    g = len(mult)
    ar = np.arange(g)
    cur = ar.copy()
    order = np.zeros(g, dtype=int)
    for k in range(1, g + 1):
        hit = (cur == e) & (order == 0)
        order[hit] = k
        if order.all():
            break
        cur = mult[cur, ar]
    return order


def _schoenflies(det, trace, order, has_i, tol) -> str:
    g = len(det)
    proper = det > 0
    gp = int(proper.sum())
    po = order[proper]
    n = int(po.max())
    n3 = int(np.sum(po == 3))
    if gp == 60:
        fam = "I"
    elif gp == 12 and n3 == 8:
        fam = "T"
    elif gp == 24 and n3 == 8:
        fam = "O"
    elif gp == n:
        fam = "C"
    elif gp == 2 * n:
        fam = "D"
    else:  # pragma: no cover - not a finite point group
        raise SymmetryError(f"ops: proper rotations of order {gp} with largest rotation order "
                            f"{n} match no point group (tol={tol:g})")
    if gp == g:
        return {"I": "I", "T": "T", "O": "O"}.get(fam, f"{fam}{n}")
    if 2 * gp != g:  # pragma: no cover - det is +-1 and the proper part is a subgroup
        raise SymmetryError(f"ops: {gp} proper among {g} operations; expected exactly half")
    n_mirror = int(np.sum((det < 0) & (np.abs(trace - 1.0) < 0.1)))
    if fam in ("I", "O"):
        return fam + "h"
    if fam == "T":
        return "Th" if has_i else "Td"
    if fam == "D":
        if n % 2 == 0:
            return f"D{n}h" if has_i else f"D{n}d"
        return f"D{n}d" if has_i else f"D{n}h"
    if n == 1:
        return "Ci" if has_i else "Cs"
    if n % 2 == 0:
        if has_i:
            return f"C{n}h"
        return f"C{n}v" if n_mirror else f"S{2 * n}"
    if has_i:
        return f"S{2 * n}"
    return f"C{n}h" if n_mirror == 1 else f"C{n}v"


# ----------------------------------------------------------------------------- main entry
def identify_point_group(ops, tol: float = SYMMETRY_TOL, weights=None) -> PointGroupMatch:
    """Name the point group of a set of orthogonal matrices and label their classes.

    Parameters
    ----------
    ops : array_like, shape (g, 3, 3)
        Every operation of a finite point group (closed under multiplication,
        identity included, no duplicates), in any orientation and any order.
    tol : float, optional
        Largest accepted deviation of a matrix entry, for orthogonality and for
        matching products to operations (default :data:`SYMMETRY_TOL`).
    weights : array_like, shape (g,), optional
        A number per operation that settles axis choices the table leaves open,
        normally the number of atoms the operation leaves in place.  See Notes.

    Returns
    -------
    PointGroupMatch

    Raises
    ------
    SymmetryError
        If a matrix is not orthogonal within ``tol``, the set is not closed,
        has no identity or holds duplicates, or the group has no table here
        (O, Oh and groups with axes of order 4 or above 6 are not fullerene
        groups).

    Notes
    -----
    The symbol follows from the proper subgroup (its order, the largest
    rotation order and the number of three-fold elements: I, O, T, Cn or Dn)
    and from how the improper half extends it (inversion, number of mirrors).
    Conjugacy classes are computed from the multiplication table; each is
    matched to the table column with the same determinant, trace and size.

    Where the table's labels depend on an axis choice (the three C2 of D2 and
    D2h, the two mirrors of C2v, C2' against C2'' in D6 and D6h, and the
    C3/C3^2-type pairs of the separably degenerate groups, whose columns are
    equal) every labelling consistent with the one-dimensional characters is
    a valid answer.  The one returned follows ``weights`` (normally the number
    of atoms each operation leaves in place): in C2v the mirror with the
    larger weight is σv'(yz), so x is perpendicular to the plane holding more
    atoms; in D2h likewise σ(yz), then C2(z) is the heavier remaining axis;
    in D2 C2(z), then C2(y), are the heavier axes; in D6 and D6h C2' is the
    heavier class (axes through atoms), then σv in D6h (planar-molecule
    conventions of Mulliken 1955; C2' through atoms as for benzene in
    Cotton's tables).  Ties go to the class holding the operation that comes
    first in ``ops``, in table column order.  With ``weights`` = atoms left
    in place, Γ(3N) and every count derived from it therefore do not depend
    on the atom numbering or on the order of ``ops``.

    The frame: z is the principal axis (the Cn axis of highest order; the S4
    axis of S4 and D2d; the C2(z) axis of D2 and D2h; the mirror normal of Cs;
    one C2 axis in T, Td, Th, I and Ih), x is a C2' axis (Dn, Dnh, Dnd), the
    C2(x) axis (D2, D2h), the σv(xz) line (Cnv) or another C2 axis (cubic and
    icosahedral groups), otherwise a fixed perpendicular.

    References
    ----------
    R. S. Mulliken, "Report on notation for the spectra of polyatomic
    molecules", J. Chem. Phys. 23, 1997-2011 (1955).

    Examples
    --------
    >>> import numpy as np
    >>> c2z = np.diag([-1.0, -1.0, 1.0]); sxz = np.diag([1.0, -1.0, 1.0])
    >>> m = identify_point_group([np.eye(3), c2z, sxz, c2z @ sxz])
    >>> m.symbol, [m.table.classes[k] for k in m.op_class]
    ('C2v', ['E', 'C2', 'σv(xz)', "σv'(yz)"])
    """
    a = _check_ops(ops, tol)
    g = len(a)
    if weights is None:
        w = np.zeros(g)
    else:
        w = np.asarray(weights, dtype=float).reshape(-1)
        if w.shape != (g,):
            raise SymmetryError(f"weights: expected {g} values (one per operation), "
                                f"found {w.size}")
    mult, inv, e = _group_structure(a, tol)
    det = np.sign(np.linalg.det(a))
    trace = np.einsum("gii->g", a)
    order = _orders(mult, e)
    has_i = bool(np.any(np.abs(trace + 3.0) < 0.1))
    symbol = _schoenflies(det, trace, order, has_i, tol)
    if symbol in ("O", "Oh"):
        raise SymmetryError(f"ops: point group {symbol} found; expected one of the 28 fullerene "
                            "point groups (a fullerene has no four-fold axis)")
    table = character_table(symbol)

    # conjugacy classes: conj[x, b] = x b x^-1 ; representative = smallest index
    conj = mult[mult, inv[:, None]]
    rep = conj.min(axis=0)
    reps, cls_of_op, sizes = np.unique(rep, return_inverse=True, return_counts=True)
    nc = len(reps)
    if nc != len(table.classes):
        raise SymmetryError(
            f"ops: {symbol} needs {len(table.classes)} classes, found {nc} (tol={tol:g})")
    first = np.full(nc, g)
    np.minimum.at(first, cls_of_op, np.arange(g))
    cdet = det[reps]
    ctr = trace[reps]
    cw = np.bincount(cls_of_op, weights=w, minlength=nc) / sizes

    # match each table class to the conjugacy classes of the same kind
    groups = _column_kinds(symbol)
    free: list[tuple[list[int], list[int]]] = []
    assign = np.full(nc, -1)
    for (d, tr, sz), tcols in groups.items():
        cand = np.flatnonzero((cdet == d) & (np.abs(ctr - tr) < 0.1) & (sizes == sz))
        if len(cand) != len(tcols):
            raise SymmetryError(
                f"ops: the classes of {symbol} do not match its table: column "
                f"{table.classes[tcols[0]]!r} needs {len(tcols)} class(es) of {sz} operation(s) "
                f"with trace {tr:g}, found {len(cand)} (tol={tol:g})")
        if len(tcols) == 1:
            assign[tcols[0]] = cand[0]
        else:
            free.append((tcols, list(cand)))
    if free:
        assign = _settle(table, assign, free, cls_of_op, mult, cw, first=first, symbol=symbol)
    table_col = np.empty(nc, dtype=int)
    table_col[assign] = np.arange(nc)
    op_class = table_col[cls_of_op]
    op_class.setflags(write=False)
    mult.setflags(write=False)
    inv.setflags(write=False)
    frame = _frame(symbol, table, a, op_class)
    return PointGroupMatch(symbol=symbol, table=table, op_class=op_class, frame=frame,
                           multiplication=mult, inverse=inv, tol=tol)


# Columns that take the class with the larger weight (atoms left in place), in priority order.
# C2v and D2h follow the recommendation for planar molecules (x perpendicular to the plane
# holding most atoms, z through most atoms): R. S. Mulliken, J. Chem. Phys. 23, 1997 (1955).
# D6 and D6h: the C2' axes pass through atoms, as in Cotton's D6h tables (benzene).
_HEAVY_FIRST = {
    "C2v": ("σv'(yz)",),
    "D2h": ("σ(yz)", "C2(z)", "C2(y)"),
    "D2": ("C2(z)", "C2(y)"),
    "D6": ("3C2'",),
    "D6h": ("3C2'", "3σv"),
}


@functools.cache
def _column_kinds(symbol: str) -> dict[tuple, list[int]]:
    """Table columns grouped by (determinant, trace, class size), per group (cached)."""
    table = character_table(symbol)
    ttr = table.vector_characters
    groups: dict[tuple, list[int]] = {}
    for t, lab in enumerate(table.classes):
        key = (class_operation(lab)[0], round(float(ttr[t]), 3), table.class_sizes[t])
        groups.setdefault(key, []).append(t)
    return groups


def _settle(table, assign, free, cls_of_op, mult, cw, *, first, symbol):
    """Choose among the labellings left open by the table (see Notes above)."""
    one_d = [i for i, (r, d) in enumerate(zip(table.irreps, table.dims, strict=True))
             if d == 1 and r not in table.separable]
    chars = table.characters
    order_cols = sorted(t for tcols, _ in free for t in tcols)
    heavy_cols = [table.classes.index(c) for c in _HEAVY_FIRST.get(symbol, ())]
    cands = []
    for perms in itertools.product(*(itertools.permutations(c) for _, c in free)):
        cand = assign.copy()
        for (tcols, _), p in zip(free, perms, strict=True):
            cand[tcols] = p
        cands.append(cand)
    cands = np.array(cands)                          # (K, nc): table column -> class
    if one_d:                                        # all candidates tested at once
        op_col = np.argsort(cands, axis=1)[:, cls_of_op]   # (K, g)
        chi = chars[one_d][:, op_col]                # (n1d, K, g)
        ok = np.all(chi[:, :, mult] == chi[:, :, :, None] * chi[:, :, None, :], axis=(0, 2, 3))
        cands = cands[ok]
    if not len(cands):  # pragma: no cover - a group that passed the class count always fits
        raise SymmetryError(f"ops: no labelling of the {symbol} classes fits its characters")
    keys = [(tuple(-cw[c[t]] for t in heavy_cols), tuple(first[c[t]] for t in order_cols))
            for c in cands]
    return cands[min(range(len(cands)), key=keys.__getitem__)]


def _frame(symbol: str, table: CharacterTable, a: np.ndarray, op_class: np.ndarray) -> np.ndarray:
    classes = table.classes

    def first_op(pred) -> int | None:
        for k, lab in enumerate(classes):
            if pred(lab):
                hits = np.flatnonzero(op_class == k)
                if len(hits):
                    return int(hits[0])
        return None

    def ax(pred):
        j = first_op(pred)
        return None if j is None else _canon(_axis(a[j]))

    x = None
    if symbol in ("C1", "Ci"):
        return np.eye(3)
    if symbol == "Cs":
        z = ax(lambda c: c.startswith("σ"))
    elif symbol in ("I", "Ih", "T", "Td", "Th"):
        c2 = [j for j in np.flatnonzero(op_class == classes.index(
            next(c for c in classes if c.endswith("C2"))))]
        z = _canon(_axis(a[c2[0]]))
        for k in c2[1:]:
            v = _axis(a[k])
            if abs(v @ z) < 0.1:
                x = _canon(v)
                break
    elif symbol in ("D2", "D2h"):
        z = ax(lambda c: c == "C2(z)")
        x = ax(lambda c: c == "C2(x)")
    elif symbol in ("S4", "D2d", "C2", "C2v", "C2h"):
        z = ax(lambda c: c == "C2")
    else:
        n = max(int(c.split("C")[1].split("^")[0].strip("'")) for c in classes if "C" in c)
        z = ax(lambda c, n=n: c.lstrip("0123456789") == f"C{n}")
    if x is None and symbol[0] == "D":
        x = ax(lambda c: c.rstrip("'").endswith("C2") and c.endswith("'") and not c.endswith("''"))
        if x is None:  # D3, D5, D3h, ...: the perpendicular C2 class
            x = ax(lambda c: c.endswith("C2") and c not in ("C2",))
    if x is None and symbol.endswith("v") and symbol != "C1":
        j = first_op(lambda c: c.startswith("σv") or c.lstrip("0123456789").startswith("σv"))
        if j is not None:
            nrm = _axis(a[j])  # mirror normal; the x axis lies in the mirror
            x = _cross(nrm, z)
    if x is None or np.linalg.norm(x - (x @ z) * z) < 0.5:
        x = _perp(z)
    x = x - (x @ z) * z
    x /= np.linalg.norm(x)
    y = _cross(z, x)
    return np.vstack([x, y, z])

