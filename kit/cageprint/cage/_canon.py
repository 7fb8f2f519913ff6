"""Reading spirals off a finished cage, and the canonicity test of the search.

Compiled with numba when available, like :mod:`~cageprint.cage._kernels`
(which re-exports :func:`unwind`).  Nothing in this module is public.

The test of a complete spiral from a pentagon (:func:`is_canonical`) first
compares first rings: a spiral from pentagon ``f0`` lays the five
neighbours of ``f0`` as its faces 1 to 5, in rotation order from the
second face, so their sizes are known before any face is read off.  A start
whose first ring reads larger than the spiral's own is larger whatever
follows and is skipped; one that reads smaller is smaller if it closes, and
is unwound only to see that it does.  Only starts whose first ring reads
the same are compared face by face.
"""

from __future__ import annotations

import numpy as np

from ._prune import njit


@njit(cache=True, inline="always")
def _order(state, s, r):
    # the comparison with the reference after one more face (``s`` read, ``r`` the
    # reference's): 0 equal so far, 2 smaller, 1 larger (decided at the first difference)
    if state == 0 and s != r:
        return 2 if s < r else 1
    return state


@njit(cache=True, inline="always")
def unwind(f0, f1, sense, nxt, size, deg, nbr, ref, have_ref, out, placed, cnt, bnd):
    """Read the face spiral starting at faces ``f0, f1`` in rotation ``sense``.

    The face order goes to ``out``.  Returns -1 if no spiral starts there,
    1 if its size sequence is larger than ``ref`` (abandoned at the first
    larger face), 0 if equal, 2 if smaller (or if ``have_ref`` is false).
    ``placed`` and ``cnt`` must be all zero on entry and are left so.
    """
    if have_ref and size[f0] == ref[0] and size[f1] > ref[1]:  # common: no work at all
        return 1
    r, steps = _unwind(f0, f1, sense, nxt, size, deg, nbr, ref, have_ref, out, placed, cnt, bnd)
    for i in range(steps):
        f = out[i]
        placed[f] = 0
        for j in range(deg[f]):
            cnt[nbr[f, j]] = 0
    return r


@njit(cache=True, inline="always")
def _unwind(f0, f1, sense, nxt, size, deg, nbr, ref, have_ref, out, placed, cnt, bnd):
    # returns (result, number of faces placed) without cleaning up
    nf = size.shape[0]
    state = 0 if have_ref else 2
    out[0] = f0
    out[1] = f1
    for k in range(2):
        f = out[k]
        state = _order(state, size[f], ref[k])
        if state == 1:
            return 1, k
        placed[f] = 1
        for j in range(deg[f]):
            cnt[nbr[f, j]] += 1
    bnd[0] = f0
    bnd[1] = f1
    h = 0
    t = 2
    for k in range(2, nf):
        bm = bnd[t - 1]
        b0 = bnd[h]
        if sense == 0:
            f = nxt[bm, b0]
        else:
            f = nxt[b0, bm]
        if f < 0 or placed[f]:
            return -1, k
        state = _order(state, size[f], ref[k])
        if state == 1:
            return 1, k
        out[k] = f
        placed[f] = 1
        for j in range(deg[f]):
            cnt[nbr[f, j]] += 1
        if k == nf - 1:
            break
        while True:
            changed = False
            if t - h >= 2 and cnt[bnd[h]] == deg[bnd[h]]:
                h += 1
                changed = True
            if t - h >= 2 and cnt[bnd[t - 1]] == deg[bnd[t - 1]]:
                t -= 1
                changed = True
            if not changed:
                break
        if cnt[f] == deg[f]:
            return -1, k + 1
        bnd[t] = f
        t += 1
    return state, nf



@njit(cache=True, inline="always")
def _is_canonical_from_hexagon(nxt, size, deg, nbr, out, placed, cnt, bnd):
    # the spiral being tested is faces 0, 1, 2, ... in sense 0: its sizes are ``size``;
    # starts towards a pentagon go first (when face 1 is a hexagon they read smaller at
    # once, so a non-canonical spiral is usually caught by the first closing one)
    nf = size.shape[0]
    for second in (5, 6):
        if second > size[1]:  # larger at once (checked here: calls cost)
            break
        for f0 in range(nf):
            if size[f0] != size[0]:
                continue
            for j in range(deg[f0]):
                f1 = nbr[f0, j]
                if size[f1] != second:
                    continue
                for sense in range(2):
                    if f0 == 0 and f1 == 1 and sense == 0:
                        continue
                    r = unwind(f0, f1, sense, nxt, size, deg, nbr, size, True, out, placed,
                               cnt, bnd)
                    if r == 2:
                        return False
    if size[0] == 6:  # the smallest from a hexagon: kept if no spiral from a pentagon closes
        for f0 in range(nf):
            if size[f0] != 5:
                continue
            for j in range(deg[f0]):
                for sense in range(2):
                    if unwind(f0, nbr[f0, j], sense, nxt, size, deg, nbr, size, False, out,
                              placed, cnt, bnd) == 2:
                        return False
    return True



@njit(cache=True, inline="always")
def read_off(f0, f1, sense, nxt, size, deg, ref, have_ref, out, mark, bnd):
    """:func:`unwind` without counting placed neighbours (the search's hot path).

    Returns ``(result, faces read)`` like :func:`_unwind`.  ``mark`` has one
    entry per face and one more holding the number of the current reading, so
    nothing needs clearing afterwards.  While the faces read form a disc whose
    rim is ``bnd[h:t]``, the newest face ``f`` lies between the rim's ends, and
    a rim end is surrounded exactly when the face beyond ``f`` around it (the
    next one in the rotation that put ``f`` there) is its own neighbour along
    the rim; ``f`` touches the two rim ends and each face such a step uncovers.
    It gives the same result as :func:`unwind`, and the same faces unless the
    reading fails (it may then stop a few faces earlier): checked on every start,
    sense and reference of every spiral the all-isomer C60 search winds up (121.8
    million readings, 2026-12-05); the test suite repeats it on the C44 cages.
    """
    nf = size.shape[0]
    stamp = mark[nf] + 1
    mark[nf] = stamp
    state = 0 if have_ref else 2
    out[0] = f0
    out[1] = f1
    for k in range(2):
        f = out[k]
        state = _order(state, size[f], ref[k])
        if state == 1:
            return 1, k
        mark[f] = stamp
    bnd[0] = f0
    bnd[1] = f1
    h = 0
    t = 2
    for k in range(2, nf):
        bm = bnd[t - 1]
        b0 = bnd[h]
        f = nxt[bm, b0] if sense == 0 else nxt[b0, bm]
        if f < 0 or mark[f] == stamp:
            return -1, k
        state = _order(state, size[f], ref[k])
        if state == 1:
            return 1, k
        out[k] = f
        mark[f] = stamp
        if k == nf - 1:
            break
        touched = 2
        while True:
            changed = False
            if t - h >= 2:
                b0 = bnd[h]
                if (nxt[f, b0] if sense == 0 else nxt[b0, f]) == bnd[h + 1]:
                    h += 1
                    changed = True
                    if t - h >= 2:
                        touched += 1
            if t - h >= 2:
                bm = bnd[t - 1]
                if (nxt[bm, f] if sense == 0 else nxt[f, bm]) == bnd[t - 2]:
                    t -= 1
                    changed = True
                    if t - h >= 2:
                        touched += 1
            if not changed:
                break
        if touched == deg[f]:
            return -1, k + 1
        bnd[t] = f
        t += 1
    return state, nf


@njit(cache=True)
def ring_codes():
    """``c[w, j, s]``: how the first ring of a spiral from a pentagon reads (5 bits, a
    hexagon 1, face 1 the highest bit) when the pentagon's neighbours in ``nxt``
    order are hexagons where ``w`` has bits (bit i: the i-th neighbour), the second
    face is neighbour ``j`` and the sense of rotation ``s``."""
    c = np.zeros((32, 5, 2), np.int64)
    for w in range(32):
        for j in range(5):
            for s in range(2):
                code = 0
                for i in range(5):
                    r = (j + i) % 5 if s == 1 else (j - i) % 5
                    code = 2 * code + ((w >> r) & 1)
                c[w, j, s] = code
    return c


@njit(cache=True)
def is_canonical(nxt, size, deg, nbr, out, placed, cnt, bnd, ring, rf, mark):
    """Whether the complete spiral ``size`` (faces 0, 1, 2, ... in sense 0, its
    neighbours ``nxt``) is the smallest that starts at a pentagon (from a hexagon:
    the smallest from a hexagon, and no spiral from a pentagon closes).  ``ring``:
    :func:`ring_codes`; ``rf``: room for 5 faces; ``mark``: as in :func:`read_off`."""
    if size[0] == 6:
        return _is_canonical_from_hexagon(nxt, size, deg, nbr, out, placed, cnt, bnd)
    nf = size.shape[0]
    own = 0
    for i in range(1, 6):
        own = 2 * own + size[i] - 5
    for p in range(2):  # starts whose first ring reads smaller, then those reading the same
        for f0 in range(nf):
            if size[f0] != 5:
                continue
            x = nbr[f0, 0]
            w = 0
            for i in range(5):
                rf[i] = x
                w |= (size[x] - 5) << i
                x = nxt[f0, x]
            for j in range(5):
                for s in range(2):
                    c = ring[w, j, s]
                    if c > own or (p == 0 and c == own) or (p == 1 and c < own):
                        continue
                    if f0 == 0 and rf[j] == 1 and s == 0:
                        continue
                    r, _ = read_off(f0, rf[j], s, nxt, size, deg, size, p == 1, out, mark, bnd)
                    if r == 2:
                        return False
    return True
