"""The :class:`Cage` model: one fullerene C_n, built from its face spiral."""

from __future__ import annotations

import dataclasses
from functools import cached_property

import networkx as nx
import numpy as np

from ..errors import CageError
from . import _kernels as K
from .isomers import isomer_rank
from .spiral import canonical_spiral_of, check_n, check_spiral, wind_up

__all__ = ["Cage"]


def _frozen(a: np.ndarray) -> np.ndarray:
    a.setflags(write=False)
    return a


@dataclasses.dataclass(frozen=True)
class Cage:
    """A fullerene C_n given by ``n`` and the 12 pentagon positions of a face spiral.

    Build one with :meth:`Cage.from_spiral` or :meth:`Cage.from_graph`; the
    enumeration (:func:`cageprint.cage.iter_isomers`) yields them too.  All
    derived attributes are computed on first use and kept.

    Attributes
    ----------
    n : int
        Number of atoms.
    spiral : tuple of int
        The 12 one-based pentagon positions (sorted) of the spiral the cage was
        built from.  Two Cage objects are equal when ``n`` and ``spiral`` are;
        compare :attr:`canonical_spiral` to ask whether two spirals name the
        same cage.

    Notes
    -----
    Faces are numbered in spiral order.  Each atom is a corner shared by three
    faces (a triangle of the dual); atoms are numbered in the order the
    spiral creates those corners.  ``neighbours`` lists each atom's three
    neighbours in one common sense of rotation (a planar embedding), and each
    face lists its atoms in cyclic order.

    References
    ----------
    D. E. Manolopoulos, J. C. May, S. E. Down, "Theoretical studies of the
    fullerenes: C34 to C70", Chem. Phys. Lett. 181, 105 (1991).
    P. W. Fowler, D. E. Manolopoulos, *An Atlas of Fullerenes*, Clarendon
    Press, Oxford, 1995.

    Examples
    --------
    >>> c = Cage.from_spiral(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32])
    >>> c.formula, c.is_ipr, len(c.bonds), c.face_sizes.count(6)
    ('C60', True, 90, 20)
    """

    n: int
    spiral: tuple[int, ...]
    _canonical: tuple[int, ...] | None = dataclasses.field(
        default=None, compare=False, repr=False
    )
    _isomer_all: int | None = dataclasses.field(default=None, compare=False, repr=False)
    _isomer_ipr: int | None = dataclasses.field(default=None, compare=False, repr=False)

    # ------------------------------------------------------------------ building
    @classmethod
    def from_spiral(cls, n: int, spiral) -> Cage:
        """Build C_n from the 12 one-based pentagon positions of a face spiral.

        Parameters
        ----------
        n : int
            Number of atoms (even, at least 20, not 22).
        spiral : sequence of 12 int
            Positions (1 .. n/2+2) of the pentagons in the face spiral.

        Returns
        -------
        Cage

        Raises
        ------
        CageError
            For a bad ``n``, a spiral with other than 12 positions, positions
            that are not integers, out of range or repeated, or a spiral that
            does not close into a cage.  The message names the value and the
            reason.

        Notes
        -----
        The Manolopoulos-Fowler ring-spiral windup: faces are laid one by one,
        each next to the previous face and to the oldest face on the rim that
        still has a free edge.

        Examples
        --------
        >>> Cage.from_spiral(20, range(1, 13)).face_sizes.count(5)
        12
        >>> Cage.from_spiral(24, [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 13])
        Traceback (most recent call last):
        ...
        cageprint.errors.CageError: spiral 1 2 3 4 5 6 7 8 9 10 11 13 does not close ...
        """
        n = check_n(n)
        spiral = check_spiral(n, spiral)
        cage = cls(n, spiral)
        cage.__dict__["_windup"] = wind_up(n, spiral)
        return cage

    @classmethod
    def _trusted(cls, n, spiral, isomer_all=None, isomer_ipr=None) -> Cage:
        # a canonical spiral straight from the enumeration: checked lazily
        spiral = tuple(int(p) for p in spiral)
        return cls(n, spiral, spiral, isomer_all, isomer_ipr)

    @classmethod
    def from_graph(cls, graph: nx.Graph) -> Cage:
        """Recognise a fullerene given as a graph of atoms (any node labels).

        The graph must be cubic, connected and planar with faces of 5 and 6
        atoms only.  The returned cage is built from the canonical spiral, so
        its atoms are renumbered.

        Parameters
        ----------
        graph : networkx.Graph
            Atoms as nodes, bonds as edges.

        Returns
        -------
        Cage
            Built from the canonical spiral (atoms renumbered).

        Raises
        ------
        CageError
            Naming what is wrong: atom count, an atom without three bonds, a
            graph in pieces, a non-planar graph, or a ring of another size.

        Examples
        --------
        >>> g = nx.dodecahedral_graph()
        >>> Cage.from_graph(g).canonical_spiral
        (1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12)
        """
        if not isinstance(graph, nx.Graph) or graph.is_directed() or graph.is_multigraph():
            raise CageError(
                f"graph: expected an undirected simple networkx.Graph, found {type(graph).__name__}"
            )
        n = check_n(graph.number_of_nodes(), name="graph atom count")
        loops = list(nx.selfloop_edges(graph))
        if loops:
            raise CageError(f"graph: atom {loops[0][0]!r} is bonded to itself")
        for v, d in graph.degree():
            if d != 3:
                raise CageError(
                    f"graph: atom {v!r} has {d} bonds, expected 3 (a fullerene is cubic)"
                )
        if not nx.is_connected(graph):
            parts = nx.number_connected_components(graph)
            raise CageError(f"graph: found {parts} separate pieces, expected one connected cage")
        planar, emb = nx.check_planarity(graph)
        if not planar:
            raise CageError("graph: not planar, so it cannot be a closed cage of rings")
        face_of: dict[tuple, int] = {}
        sizes: list[int] = []
        for v, w in emb.edges():
            if (v, w) in face_of:
                continue
            ring = emb.traverse_face(v, w)
            if len(ring) not in (5, 6):
                raise CageError(
                    f"graph: found a ring of {len(ring)} atoms ({', '.join(map(repr, ring[:8]))}"
                    f"{', ...' if len(ring) > 8 else ''}), expected only 5- and 6-rings"
                )
            fid = len(sizes)
            sizes.append(len(ring))
            for i in range(len(ring)):
                face_of[(ring[i], ring[(i + 1) % len(ring)])] = fid
        nf = n // 2 + 2
        if len(sizes) != nf:  # pragma: no cover - Euler's formula makes this impossible
            raise CageError(f"graph: found {len(sizes)} rings, expected {nf} for C{n}")
        tri = np.array(
            [[face_of[(v, w)] for w in emb.neighbors_cw_order(v)] for v in emb.nodes()],
            np.int64,
        )
        size = np.asarray(sizes, np.int64)
        nxt = K.next_matrix(tri, nf)
        canon, _ = canonical_spiral_of(size, nxt)
        cage = cls(n, canon, canon)
        cage.__dict__["_windup"] = wind_up(n, canon)
        return cage

    # ------------------------------------------------------------ serialising
    def to_dict(self) -> dict:
        """Plain data for saving: ``{"n": ..., "spiral": [...]}``.

        Examples
        --------
        >>> Cage.from_spiral(20, range(1, 13)).to_dict()
        {'n': 20, 'spiral': [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12]}
        """
        return {"n": self.n, "spiral": list(self.spiral)}

    @classmethod
    def from_dict(cls, data: dict) -> Cage:
        """Inverse of :meth:`to_dict` (validates like :meth:`from_spiral`).

        Examples
        --------
        >>> Cage.from_dict({"n": 20, "spiral": list(range(1, 13))}).formula
        'C20'
        """
        try:
            n, spiral = data["n"], data["spiral"]
        except (KeyError, TypeError) as exc:
            raise CageError(f"cage record {data!r}: expected keys 'n' and 'spiral'") from exc
        return cls.from_spiral(n, spiral)

    # -------------------------------------------------------------- structure
    @cached_property
    def _windup(self):
        return wind_up(self.n, self.spiral)

    @property
    def formula(self) -> str:
        """Molecular formula of the empty cage, e.g. ``"C60"``."""
        return f"C{self.n}"

    @cached_property
    def _owner(self) -> np.ndarray:
        size, nxt, tri = self._windup
        nf = len(size)
        owner = -np.ones((nf, nf), np.int64)
        for t, (a, b, c) in enumerate(tri.tolist()):
            owner[a, b] = t
            owner[b, c] = t
            owner[c, a] = t
        return owner

    @cached_property
    def neighbours(self) -> np.ndarray:
        """(n, 3) int array: row i holds atom i's neighbours in one rotational sense."""
        _, _, tri = self._windup
        ow = self._owner
        a, b, c = tri[:, 0], tri[:, 1], tri[:, 2]
        nb = np.stack([ow[b, a], ow[c, b], ow[a, c]], axis=1)
        return _frozen(nb)

    @cached_property
    def faces(self) -> tuple[tuple[int, ...], ...]:
        """Atoms of each face in cyclic order; faces in spiral order."""
        size, nxt, _ = self._windup
        ow, nx_ = self._owner.tolist(), nxt.tolist()  # plain lists: a few hundred lookups
        first = np.argmax(nxt >= 0, axis=1).tolist()
        out = []
        for v, k in enumerate(size.tolist()):
            u, row, ring = first[v], nx_[v], []
            for _ in range(k):
                ring.append(ow[v][u])
                u = row[u]
            out.append(tuple(ring))
        return tuple(out)

    @cached_property
    def face_sizes(self) -> tuple[int, ...]:
        """Size (5 or 6) of each face, in spiral order."""
        return tuple(int(s) for s in self._windup[0])

    @cached_property
    def bonds(self) -> np.ndarray:
        """(3n/2, 2) int array of bonds ``(i, j)`` with ``i < j``, rows sorted."""
        nb = self.neighbours
        i = np.repeat(np.arange(self.n), 3)
        j = nb.ravel()
        keep = i < j
        pairs = np.stack([i[keep], j[keep]], axis=1)
        order = np.lexsort((pairs[:, 1], pairs[:, 0]))
        return _frozen(pairs[order])

    @cached_property
    def dual(self) -> nx.Graph:
        """Frozen networkx.Graph of the faces (node attribute ``size``)."""
        size, nxt, _ = self._windup
        g = nx.Graph()
        for v, s in enumerate(size.tolist()):
            g.add_node(v, size=s)
        a, b = np.nonzero(nxt >= 0)
        g.add_edges_from((int(x), int(y)) for x, y in zip(a, b, strict=True) if x < y)
        return nx.freeze(g)

    def graph(self) -> nx.Graph:
        """A new networkx.Graph of the atoms and bonds.

        Examples
        --------
        >>> g = Cage.from_spiral(20, range(1, 13)).graph()
        >>> g.number_of_nodes(), g.number_of_edges()
        (20, 30)
        """
        g = nx.Graph()
        g.add_nodes_from(range(self.n))
        g.add_edges_from(map(tuple, self.bonds.tolist()))
        return g

    @cached_property
    def fused_pentagon_pairs(self) -> int:
        """Number of bonds shared by two pentagons (pentagon-pentagon fusions)."""
        size, nxt, _ = self._windup
        pent = size == 5
        return int(np.count_nonzero((nxt >= 0) & pent[:, None] & pent[None, :]) // 2)

    @property
    def is_ipr(self) -> bool:
        """True if no two pentagons share a bond (isolated pentagon rule)."""
        return self.fused_pentagon_pairs == 0

    @cached_property
    def canonical_spiral(self) -> tuple[int, ...]:
        """The lexicographically smallest spiral of this cage (over every start).

        Examples
        --------
        >>> Cage.from_spiral(20, range(1, 13)).canonical_spiral
        (1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12)
        """
        if self._canonical is not None:
            return self._canonical
        size, nxt, _ = self._windup
        return canonical_spiral_of(size, nxt)[0]

    @cached_property
    def isomer_all(self) -> int:
        """Rank of this cage among all isomers of C_n (canonical-spiral order)."""
        if self._isomer_all is not None:
            return self._isomer_all
        return isomer_rank(self.n, self.canonical_spiral, False)

    @cached_property
    def isomer(self) -> int:
        """Literature isomer number: rank among IPR isomers if IPR, else among all.

        Examples
        --------
        >>> Cage.from_spiral(60, [1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32]).isomer
        1
        """
        if not self.is_ipr:
            return self.isomer_all
        if self._isomer_ipr is not None:
            return self._isomer_ipr
        return isomer_rank(self.n, self.canonical_spiral, True)
