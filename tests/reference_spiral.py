"""A small, slow reference of the face-spiral isomer search in plain Python (test helper).

Written apart from the kit's compiled search (plain lists and dicts, no shared code):
a depth-first search lays faces one at a time, pentagon before hexagon, and keeps a
complete spiral when no spiral read from another pentagon, neighbour and sense is
lexicographically smaller (each competitor abandoned at its first larger face).  The
cuts are the plain ones: a face with too many neighbours, a rim that closes early, a
face surrounded too soon, touching pentagons under IPR, a rim too long for the faces
left.  The tests compare its lists with the kit's; ``tests/benchmarks/bench_cage.py
--reference`` times the kit against it.

Method: Manolopoulos, May & Down, Chem. Phys. Lett. 181, 105 (1991); Fowler &
Manolopoulos, *An Atlas of Fullerenes* (1995).
"""

from __future__ import annotations


class _Search:
    def __init__(self, n, ipr):
        self.nf = n // 2 + 2
        self.ipr = ipr
        self.size = [0] * self.nf
        self.nbrs = [[] for _ in range(self.nf)]
        self.tris = []
        self.out = []

    def _lay(self, k, rim):
        """Lay face k against ``rim``; returns (new rim, edges added, ok, closed)."""
        size, nbrs, ipr = self.size, self.nbrs, self.ipr
        added = []

        def link(a):
            if len(nbrs[a]) >= size[a] or len(nbrs[k]) >= size[k]:
                return False
            if ipr and size[a] == 5 and size[k] == 5:
                return False
            nbrs[a].append(k)
            nbrs[k].append(a)
            added.append(a)
            return True

        if k == 1:
            return [0, 1], added, link(0), False
        rim = list(rim)
        if not link(rim[-1]) or not link(rim[0]):
            return rim, added, False, False
        self.tris.append((rim[-1], rim[0], k))
        closed = False
        moved = True
        while moved and not closed:
            moved = False
            for end in (0, -1):
                f = rim[end]
                if len(rim) < 2 or len(nbrs[f]) != size[f]:
                    continue
                rim.pop(end)
                nb = rim[end]
                closed = len(rim) == 1
                if not closed and not link(nb):
                    return rim, added, False, False
                self.tris.append((f, nb, k) if end == 0 else (nb, f, k))
                moved = True
                if closed:
                    break
        if closed:
            ok = (k == self.nf - 1 and len(nbrs[k]) == size[k]
                  and len(nbrs[rim[0]]) == size[rim[0]])
            return rim, added, ok, True
        if k == self.nf - 1 or len(nbrs[k]) == size[k]:
            return rim, added, False, False
        rim.append(k)
        return rim, added, True, False

    def _undo(self, k, added, ntris):
        for a in added:
            self.nbrs[a].pop()
            self.nbrs[k].pop()
        del self.tris[ntris:]

    def grow(self, k, rim, pent):
        nf = self.nf
        if k == nf:
            if self._canonical():
                self.out.append(tuple(i + 1 for i in range(nf) if self.size[i] == 5))
            return
        for s in (5, 6):
            q = 12 - pent - (s == 5)
            left = nf - 1 - k
            if q < 0 or q > left or (k == 0 and s == 6):
                continue
            self.size[k] = s
            if k == 0:
                self.grow(1, [0], pent + 1)
                continue
            ntris = len(self.tris)
            new_rim, added, ok, _ = self._lay(k, rim)
            if ok and k < nf - 1 and len(new_rim) + q - 2 * (left - 1) > 6:
                ok = False
            if ok:
                self.grow(k + 1, new_rim, pent + (s == 5))
            self._undo(k, added, ntris)

    def _canonical(self):
        size, nbrs, nf = self.size, self.nbrs, self.nf
        turn = {}
        for a, b, c in self.tris:
            turn[(a, b)] = c
            turn[(b, c)] = a
            turn[(c, a)] = b
        for f0 in range(nf):
            if size[f0] != 5:
                continue
            for f1 in nbrs[f0]:
                for sense in (0, 1):
                    if (f0, f1, sense) != (0, 1, 0) and self._smaller(f0, f1, sense, turn):
                        return False
        return True

    def _smaller(self, f0, f1, sense, turn):
        # does the spiral from f0, f1 close and read smaller than faces 0, 1, 2, ...?
        size, nbrs, nf = self.size, self.nbrs, self.nf
        smaller = False
        seen = {f0, f1}
        count = {}
        for f in (f0, f1):
            for x in nbrs[f]:
                count[x] = count.get(x, 0) + 1
        for i, f in enumerate((f0, f1)):
            if not smaller and size[f] != size[i]:
                if size[f] > size[i]:
                    return False
                smaller = True
        rim = [f0, f1]
        for k in range(2, nf):
            a, b = rim[-1], rim[0]
            f = turn.get((a, b)) if sense == 0 else turn.get((b, a))
            if f is None or f in seen:
                return False
            if not smaller and size[f] != size[k]:
                if size[f] > size[k]:
                    return False
                smaller = True
            seen.add(f)
            for x in nbrs[f]:
                count[x] = count.get(x, 0) + 1
            if k == nf - 1:
                break
            while len(rim) >= 2 and count.get(rim[0], 0) == len(nbrs[rim[0]]):
                rim.pop(0)
            while len(rim) >= 2 and count.get(rim[-1], 0) == len(nbrs[rim[-1]]):
                rim.pop()
            if count.get(f, 0) == len(nbrs[f]):
                return False
            rim.append(f)
        return smaller


def spirals(n: int, ipr: bool = False) -> list[tuple[int, ...]]:
    """Canonical spirals of C_n (12 one-based pentagon positions each), in order.

    >>> len(spirals(40)), spirals(60, ipr=True)
    (40, [(1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32)])
    """
    s = _Search(n, ipr)
    s.grow(0, [], 0)
    return s.out
