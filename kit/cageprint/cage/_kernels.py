"""Array kernels of the face-spiral method (compiled with numba when available).

Everything here works on plain integer arrays so that numba can compile it;
without numba the same functions run as ordinary (slow) Python.  Nothing in
this module is public: :mod:`cageprint.cage.spiral` and
:mod:`cageprint.cage.isomers` wrap it.

Conventions
-----------
Faces are numbered ``0 .. F-1`` in spiral order (``F = n/2 + 2``).  While a
spiral is wound up, the faces placed so far form a disc whose rim is the
*boundary*: a cyclic list of faces ``bnd[h:t]`` that still have free edges,
oldest first.  Face ``k`` is laid into the gap between the newest rim face
``bnd[t-1]`` and the oldest ``bnd[h]``; rim faces that become fully surrounded
leave the rim and ``k`` touches the next one.  Every placement records the
oriented triangles ``(a, b, c)`` of the dual; all triangles share one sense
of rotation, and ``nxt[a, b] = c`` is the neighbour of ``a`` that follows
``b`` in that sense.  Atoms of the cage are these triangles.
"""

from __future__ import annotations

import numpy as np

from ._canon import is_canonical, ring_codes, unwind

# njit, or a stand-in without numba (defined once, in _prune)
from ._prune import (
    RIM_BITS,
    RIM_CODE_BITS,
    fill_bound,
    memo_has,
    memo_key,
    memo_put,
    memo_wanted,
    njit,
    rim_code,
    rim_field,
)

# status codes of _place (spiral.py turns them into words)
OK = 0
OVERFULL = 1  # a face would get more neighbours than its size
FUSED = 2  # two pentagons would share an edge (only when pentagons must be isolated)
EARLY = 3  # the rim closes before the last face
SURROUNDED = 4  # a face is surrounded before the spiral ends
OPEN = 5  # the last face does not close the rim


@njit(cache=True, inline="always")
def _connect(k, x, size, deg, nbr, ipr):
    if deg[x] >= size[x] or deg[k] >= size[k]:
        return OVERFULL
    if size[x] == 5 and size[k] == 5:
        if ipr == 1:  # no two pentagons may touch
            return FUSED
    nbr[x, deg[x]] = k
    deg[x] += 1
    nbr[k, deg[k]] = x
    deg[k] += 1
    return OK


@njit(cache=True, inline="always")
def _add_tri(tri, ptr, a, b, c):
    i = ptr[2]
    tri[i, 0] = a
    tri[i, 1] = b
    tri[i, 2] = c
    ptr[2] = i + 1


@njit(cache=True, inline="always")
def place(k, nfaces, size, deg, nbr, bnd, ptr, tri, ipr):
    """Lay face ``k`` (its size already in ``size[k]``) onto the spiral.

    ``ptr`` holds ``[head, tail, n_triangles, offending_face, slot, old]``:
    the rim changes only by moving head and tail and by writing ``k`` into
    ``bnd[slot]`` (whose old value is kept), so saving ``ptr`` is enough to
    undo a placement (with the edges of face ``k`` taken off again).  Returns
    a status code; ``ptr[3]`` names the face that broke a rule.
    """
    ptr[3] = k
    ptr[4] = -1
    if k == 0:
        deg[0] = 0
        bnd[0] = 0
        ptr[0] = 0
        ptr[1] = 1
        ptr[2] = 0
        return OK
    if k == 1:
        deg[1] = 0
        c = _connect(1, 0, size, deg, nbr, ipr)
        if c != OK:
            return c
        bnd[1] = 1
        ptr[1] = 2
        return OK
    deg[k] = 0
    h = ptr[0]
    t = ptr[1]
    bm = bnd[t - 1]
    b0 = bnd[h]
    c = _connect(k, bm, size, deg, nbr, ipr)
    if c != OK:
        ptr[3] = bm
        return c
    c = _connect(k, b0, size, deg, nbr, ipr)
    if c != OK:
        ptr[3] = b0
        return c
    _add_tri(tri, ptr, bm, b0, k)
    # the rim ends in turn (side 0 the oldest face, 1 the newest) until neither moves
    closed = False
    side = 0
    idle = 0
    while idle < 2 and not closed:
        f = bnd[h + side * (t - 1 - h)]
        if t - h < 2 or deg[f] != size[f]:
            idle += 1
        else:  # f is surrounded: it leaves the rim and k touches the face beyond it
            idle = 0
            h += 1 - side
            t -= side
            nb = bnd[h + side * (t - 1 - h)]
            closed = t - h == 1
            if not closed:
                c = _connect(k, nb, size, deg, nbr, ipr)
                if c != OK:
                    ptr[3] = nb
                    return c
            if side:
                _add_tri(tri, ptr, nb, f, k)
            else:
                _add_tri(tri, ptr, f, nb, k)
        side = 1 - side
    ptr[0] = h
    ptr[1] = t
    if closed:
        if k != nfaces - 1:
            return EARLY
        if deg[k] != size[k]:
            return OPEN
        if deg[bnd[h]] != size[bnd[h]]:
            ptr[3] = bnd[h]
            return OPEN
        return OK
    if k == nfaces - 1:
        return OPEN
    if deg[k] == size[k]:
        return SURROUNDED
    ptr[4] = t
    ptr[5] = bnd[t]
    bnd[t] = k
    ptr[1] = t + 1
    return OK


@njit(cache=True)
def windup(size, ipr):
    """Wind a whole spiral up.

    Returns ``(status, face, offender, deg, nbr, tri)``: ``face`` is the face being
    placed when a rule broke and ``offender`` the face that broke it.
    """
    nf = size.shape[0]
    n = 2 * nf - 4
    deg = np.zeros(nf, np.int64)
    nbr = np.zeros((nf, 6), np.int64)
    bnd = np.zeros(nf + 1, np.int64)
    ptr = np.zeros(6, np.int64)
    tri = np.zeros((n, 3), np.int64)
    for k in range(nf):
        c = place(k, nf, size, deg, nbr, bnd, ptr, tri, ipr)
        if c != OK:
            return c, k, ptr[3], deg, nbr, tri
    return OK, nf - 1, nf - 1, deg, nbr, tri


@njit(cache=True)
def next_matrix(tri, nf):
    """``nxt[a, b]``: the neighbour of face ``a`` that follows ``b`` (one sense)."""
    nxt = -np.ones((nf, nf), np.int64)
    fill_next(tri, nxt)
    return nxt


@njit(cache=True, inline="always")
def fill_next(tri, nxt):
    for i in range(tri.shape[0]):
        a = tri[i, 0]
        b = tri[i, 1]
        c = tri[i, 2]
        nxt[a, b] = c
        nxt[b, c] = a
        nxt[c, a] = b


@njit(cache=True)
def smallest_spiral(nxt, size, deg, nbr, pentagon_starts_only):
    """Face order of the lexicographically smallest spiral (pentagon-first sizes).

    Tries every start face, second face and sense (only pentagon start faces
    when asked).  Returns an array of length F, or ``[-1]`` if none closes.
    """
    nf = size.shape[0]
    best = np.zeros(nf, np.int64)
    best_faces = -np.ones(nf, np.int64)
    have = False
    out = np.zeros(nf, np.int64)
    placed = np.zeros(nf, np.int64)
    cnt = np.zeros(nf, np.int64)
    bnd = np.zeros(nf + 1, np.int64)
    for f0 in range(nf):
        if pentagon_starts_only and size[f0] != 5:
            continue
        for j in range(deg[f0]):
            f1 = nbr[f0, j]
            for sense in range(2):
                r = unwind(f0, f1, sense, nxt, size, deg, nbr, best, have, out, placed, cnt, bnd)
                if r == 2:
                    have = True
                    for i in range(nf):
                        best_faces[i] = out[i]
                        best[i] = size[out[i]]
    if not have:
        return best_faces[:1]
    return best_faces


def new_search_state(n, first=5):
    """Arrays holding a resumable depth-first search over spirals of C``n`` whose
    face 0 has ``first`` sides (6: the cages no spiral from a pentagon closes on)."""
    nf = n // 2 + 2
    st = {
        "size": np.zeros(nf, np.int64),
        "deg": np.zeros(nf, np.int64),
        "nbr": np.zeros((nf, 6), np.int64),
        "bnd": np.zeros(nf + 1, np.int64),
        # as in `place`, and [6] the rim code (_prune.rim_code; -1: not known)
        "ptr": np.array([0, 0, 0, 0, 0, 0, -1], np.int64),
        "tri": np.zeros((n, 3), np.int64),
        "nxt": -np.ones((nf, nf), np.int64),
        # ptr saved per face ([3]: the rim code)
        "psave": np.zeros((nf + 1, 6), np.int64),
        # per face: its state key if it may be remembered as dead, and the windups then
        "mkey": np.zeros(nf + 1, np.int64),
        "wmark": np.zeros(nf + 1, np.int64),
        "tried": np.zeros(nf + 1, np.int64),
        # [k, pentagons placed, started, nodes visited, complete windups,
        #  first face searched (faces before it are a given prefix), depth of a leaf,
        #  sides of face 0]
        "ctl": np.array([0, 0, 0, 0, 0, 1, nf, first], np.int64),
    }
    return st


@njit(cache=True, nogil=True)
def search(size, deg, nbr, bnd, ptr, tri, nxt, psave, tried, ctl, ipr, out, max_out,
           mkey, wmark, table):
    """Resumable depth-first search for canonical spirals in lexicographic order.

    Face 0 is a pentagon (``ctl[7] = 5``: a canonical spiral starts at one
    when any spiral from a pentagon closes), or a hexagon (``ctl[7] = 6``: then
    only cages on which no spiral from a pentagon closes are kept).  At each
    face the pentagon is tried before the hexagon, so canonical spirals come
    out in increasing lexicographic order of their pentagon positions.  Up to
    ``max_out`` spirals (rows of 12 one-based positions) are written to
    ``out``; returns ``(found, finished)``.  Call again to continue.

    ``ctl[5] = d > 1`` searches only below the prefix already in
    ``size[:d]``; ``ctl[6] = d < F`` instead lists the partial spirals of
    ``d`` faces (rows of their pentagon positions, padded with 0) without
    going deeper.  The two together split a search into independent parts.
    ``table`` remembers dead states (:mod:`~cageprint.cage._prune`; length 1: off).
    """
    nf = size.shape[0]
    nout = 0
    placed = np.zeros(nf, np.int64)
    cnt = np.zeros(nf, np.int64)
    ubnd = np.zeros(nf + 1, np.int64)
    uout = np.zeros(nf, np.int64)
    kmin = ctl[5]
    kstop = ctl[6]
    umax = fill_bound(nf)
    ring = ring_codes()
    rf = np.zeros(5, np.int64)
    mark = np.zeros(nf + 1, np.int64)
    memo = kstop >= nf and table.shape[0] > 1  # dead states are known only in a full search
    bits = RIM_BITS + 1 if ipr else RIM_BITS
    if ctl[2] == 0:
        ctl[2] = 1
        if kmin <= 1:
            size[0] = ctl[7]
        npent = 0
        for j in range(kmin):  # face 0, or a prefix known to wind up
            place(j, nf, size, deg, nbr, bnd, ptr, tri, ipr)
            if size[j] == 5:
                npent += 1
        ptr[6] = -1
        ctl[0] = kmin
        ctl[1] = npent
        tried[kmin] = 0
    k = ctl[0]
    npent = ctl[1]
    nodes = ctl[3]
    windups = ctl[4]
    while k >= kmin:
        if k == nf or (k == kstop and kstop < nf):
            keep = True
            if k == nf:  # a complete spiral: keep it if no pentagon start gives a smaller one
                windups += 1
                fill_next(tri, nxt)
                keep = is_canonical(nxt, size, deg, nbr, uout, placed, cnt, ubnd, ring, rf,
                                    mark)
            if keep:  # (or a prefix of the requested length: listed, not searched deeper)
                j = 0
                for i in range(12):
                    out[nout, i] = 0
                for i in range(k):
                    if size[i] == 5:
                        out[nout, j] = i + 1
                        j += 1
                nout += 1
            tk = 2
        else:
            tk = tried[k]
        if tk == 2:
            # nothing more to try at face k: take face k - 1 off again
            k -= 1
            if k >= kmin:
                if mkey[k] != 0 and windups == wmark[k]:  # nothing closed below: dead
                    memo_put(table, mkey[k])
                for j in range(deg[k]):
                    deg[nbr[k, j]] -= 1
                deg[k] = 0
                if ptr[4] >= 0:
                    bnd[ptr[4]] = ptr[5]
                ptr[0] = psave[k, 0]
                ptr[1] = psave[k, 1]
                ptr[2] = psave[k, 2]
                ptr[4] = psave[k, 4]
                ptr[5] = psave[k, 5]
                ptr[6] = psave[k, 3]
                if size[k] == 5:
                    npent -= 1
            if nout >= max_out:
                break
            continue
        tried[k] = tk + 1
        s = 5 if tk == 0 else 6
        np_after = npent + (1 if s == 5 else 0)
        q = 12 - np_after
        left = nf - 1 - k
        if q < 0 or q > left:
            continue
        if ipr and s == 5 and (size[bnd[ptr[1] - 1]] == 5 or size[bnd[ptr[0]]] == 5):
            continue  # it would touch the newest or the oldest rim face, a pentagon
        nodes += 1
        psave[k, 0] = ptr[0]
        psave[k, 1] = ptr[1]
        psave[k, 2] = ptr[2]
        psave[k, 4] = ptr[4]
        psave[k, 5] = ptr[5]
        psave[k, 3] = ptr[6]
        size[k] = s
        # lay face k: the same steps as `place`, written out here so that the
        # hot loop makes no calls (each call would count references to every
        # array it is given)
        h = ptr[0]
        t = ptr[1]
        nt = ptr[2]
        # the rim code follows every change of the rim (rv: it is known)
        rc = ptr[6]
        rv = memo and rc >= 0
        deg[k] = 0
        ok = True
        closed = False
        if k == 1:
            deg[0] = 1
            nbr[0, 0] = 1
            deg[1] = 1
            nbr[1, 0] = 0
            if ipr and s == 5 and size[0] == 5:
                ok = False
        else:
            for e in range(2):  # k touches the newest rim face, then the oldest
                x = bnd[t - 1] if e == 0 else bnd[h]
                if deg[x] >= size[x] or (ipr and s == 5 and size[x] == 5):
                    ok = False
                    break
                nbr[x, deg[x]] = k
                deg[x] += 1
                if rv:
                    rc -= (1 << (bits * (t - 1 - h))) if e == 0 else 1
                nbr[k, e] = x
                deg[k] = e + 1
            if ok:
                tri[nt, 0] = bnd[t - 1]
                tri[nt, 1] = bnd[h]
                tri[nt, 2] = k
                nt += 1
            while ok and not closed:
                changed = False
                for side in range(2):  # the oldest rim face, then the newest
                    f = bnd[h] if side == 0 else bnd[t - 1]
                    if t - h < 2 or deg[f] != size[f]:
                        continue
                    # f is surrounded: it leaves the rim and k touches the face beyond it
                    if side == 0:
                        if rv:
                            rc = (rc - rim_field(f, size, deg, ipr)) >> bits
                        h += 1
                        nb = bnd[h]
                        a, b = f, nb
                    else:
                        t -= 1
                        if rv:
                            rc -= rim_field(f, size, deg, ipr) << (bits * (t - h))
                        nb = bnd[t - 1]
                        a, b = nb, f
                    closed = t - h == 1
                    if not closed:
                        if deg[nb] >= size[nb] or deg[k] >= s or (
                            ipr and s == 5 and size[nb] == 5
                        ):
                            ok = False
                            break
                        nbr[nb, deg[nb]] = k
                        deg[nb] += 1
                        if rv:
                            rc -= 1 if side == 0 else 1 << (bits * (t - 1 - h))
                        nbr[k, deg[k]] = nb
                        deg[k] += 1
                    tri[nt, 0] = a
                    tri[nt, 1] = b
                    tri[nt, 2] = k
                    nt += 1
                    if closed:
                        break
                    changed = True
                if not changed:
                    break
            if ok:
                if closed:
                    ok = (k == nf - 1 and deg[k] == s and deg[bnd[h]] == size[bnd[h]])
                elif k == nf - 1 or deg[k] == s:
                    ok = False
        slot = -1
        old = 0
        if ok and not closed:
            slot = t
            old = bnd[t]
            bnd[t] = k
            t += 1
            if rv and bits * (t - h) <= RIM_CODE_BITS:
                rc += rim_field(k, size, deg, ipr) << (bits * (t - 1 - h))
            else:
                rv = False
        # a face shortens the rim by at most 2 (a pentagon by 1) while the last
        # face needs a rim of its own size; with isolated pentagons no two
        # pentagons follow each other either (consecutive faces touch)
        if ok and k < nf - 1:
            m = t - h
            if m + q - 2 * (left - 1) > 6 or (
                ipr and q > 0 and left < 2 * q - (0 if s == 5 else 1)
            ):
                ok = False
            elif k >= 2 and q < 6 and left > umax[m, q]:
                ok = False  # more faces left than the rim can enclose (see fill_bound)
        mkey[k] = 0
        if ok and memo and k >= 2 and k < nf - 1 and memo_wanted(t - h, left, ipr):
            if not rv:  # (the rim was too long to pack above)
                rc = rim_code(bnd, h, t, size, deg, ipr)
                rv = True
            key = memo_key(rc, t - h, q, left)
            if memo_has(table, key):
                ok = False  # met before, and nothing closed from it
            else:
                mkey[k] = key
        if not ok:
            for j in range(deg[k]):
                deg[nbr[k, j]] -= 1
            deg[k] = 0
            if slot >= 0:
                bnd[slot] = old
            continue
        ptr[0] = h
        ptr[1] = t
        ptr[2] = nt
        ptr[4] = slot
        ptr[5] = old
        ptr[6] = rc if rv else -1
        npent = np_after
        wmark[k] = windups
        k += 1
        if k < nf:
            tried[k] = 0
    ctl[0] = k
    ctl[1] = npent
    ctl[3] = nodes
    ctl[4] = windups
    return nout, k < kmin
