"""Exact cuts of the spiral search (compiled with numba when available), kept apart from it.

Two cuts drop partial spirals that cannot close, without changing what the
search finds (the complete spirals, canonical or not, stay the same; the
test suite compares the lists and the number of complete spirals):

- :func:`fill_bound`: a rim that cannot enclose the faces still to be laid.
- A memo of dead states.  What can follow a partial spiral depends only on
  its rim (the free edges of each rim face, oldest face first; with
  isolated pentagons also which rim faces are pentagons), the pentagons left
  and the faces left; the faces inside the rim play no part until the
  spiral is complete.  A state from which no spiral closed is packed
  exactly into one integer (:func:`memo_key`, from the rim code
  :func:`rim_code` that the search keeps up to date) and kept in a small open-address
  table; meeting it again cuts the subtree.  A full table overwrites old
  entries, which only forgets, never errs.

Nothing in this module is public.  numba caches :func:`~cageprint.cage._kernels.search`
by its own file: after editing this one, clear the cache (``__pycache__/*.nbi``,
``*.nbc``) or the search keeps the old code.
"""

from __future__ import annotations

import numpy as np

try:  # numba is a core dependency; the fallback keeps a source checkout usable
    from numba import njit
except ImportError:  # pragma: no cover - exercised only without numba

    def njit(*args, **kwargs):  # type: ignore[no-redef]
        if args and callable(args[0]):
            return args[0]
        return lambda f: f

#: states are remembered with at most this many faces left (deeper ones rarely recur)
MEMO_LEFT = 18
#: and at least this many (smaller subtrees cost less to search than to look up)
MEMO_MIN = 2
#: and with a rim of at most this many faces (so the key fits one 64-bit integer)
MEMO_RIM = 24
#: bits per rim face in the rim code (free edges less one: 0..3), and the most it may use
RIM_BITS = 2
RIM_CODE_BITS = 60
#: table entries (8 bytes each); one table serves every search thread
MEMO_SIZE = 1 << 21
#: how many neighbouring slots a key may take
_PROBES = 4
#: a 64-bit odd multiplier (golden ratio), as a signed integer so numba keeps int64
_MIX = -7046029254386353131


@njit(cache=True)
def fill_bound(nf):
    """``u[m, q]``: the most faces a rim of ``m`` faces can enclose with ``q < 6`` pentagons.

    The free edges of the ``m`` rim faces number ``2m - 6 + q`` (Euler's
    formula for the placed disc).  Walking round the rim, each rim face's
    inner neighbours follow one another and neighbouring rim faces share one,
    so at most ``m + q - 6`` faces touch the rim (or a single face touching
    all of it).  They bound the rest, whose own outer ring is at most
    ``q - 6`` shorter again, and so on until one face or none is left.  With
    ``q >= 6`` the rings need not shrink and there is no bound.  The argument
    takes each ring to bound the rest as a simple cycle; the test suite checks
    that the cut changes nothing (the same complete spirals, canonical or not,
    for every all-isomer C20-C70 and C100 search and IPR C60-C114).
    """
    u = np.zeros((nf + 2, 6), np.int64)
    for m in range(nf + 2):
        for q in range(6):
            tot = 0
            a = m + q - 6
            while a > 0:
                tot += a
                a += q - 6
            u[m, q] = tot + 1
    return u


@njit(cache=True, inline="always")
def rim_field(f, size, deg, ipr):
    """Face ``f``'s field in the rim code: its free edges less one (0..3 on the rim, -1
    once surrounded), with isolated pentagons also 4 for a hexagon."""
    v = size[f] - deg[f] - 1
    if ipr:
        v += (size[f] - 5) << 2
    return v


@njit(cache=True, inline="always")
def rim_code(bnd, h, t, size, deg, ipr):
    """The rim ``bnd[h:t]`` packed into one integer, oldest face lowest (-1: too long).

    Fields of :data:`RIM_BITS` (one more with isolated pentagons).  The search keeps
    this code up to date as faces come and go (adding and taking off whole fields
    by arithmetic, so a field may borrow from the next while a face is laid), and
    calls this only to start it again after the rim was too long to pack.
    """
    bits = RIM_BITS + 1 if ipr else RIM_BITS
    m = t - h
    if bits * m > RIM_CODE_BITS:
        return -1
    code = 0
    for i in range(m - 1, -1, -1):
        code = (code << bits) + rim_field(bnd[h + i], size, deg, ipr)
    return code


@njit(cache=True, inline="always")
def memo_wanted(m, left, ipr):
    """Whether a state with a rim of ``m`` faces and ``left`` faces to lay is remembered."""
    return MEMO_MIN <= left <= MEMO_LEFT and m <= (MEMO_RIM * 2 // 3 if ipr else MEMO_RIM)


@njit(cache=True, inline="always")
def memo_key(code, m, q, left):
    """The state after a face is laid, packed into one positive integer.

    ``code``: :func:`rim_code` of a rim of ``m`` faces (every field 0..3 on a rim),
    which :func:`memo_wanted` keeps short enough to fit beside ``m``, the
    pentagons left ``q`` and the faces left ``left``.
    """
    return (m | (q << 5) | (left << 9) | (code << 14)) + 1


@njit(cache=True, inline="always")
def _slot(key, cap):
    x = key * _MIX
    x ^= (x >> 31) & 0x1FFFFFFFF
    return x & (cap - 1)


@njit(cache=True, inline="always")
def _cap(table):
    # slots of a table of `cap` keys followed by its `cap // 64` words of home-slot bits
    return (table.shape[0] // 65) * 64


@njit(cache=True, inline="always")
def memo_has(table, key):
    cap = _cap(table)
    j0 = _slot(key, cap)
    # most keys looked up were never put: a set bit per home slot (a table 64 times
    # smaller, that stays in cache) answers most of them without reading the slots
    if not (table[cap + (j0 >> 6)] >> (j0 & 63)) & 1:
        return False
    for p in range(_PROBES):
        v = table[(j0 + p) & (cap - 1)]
        if v == key:
            return True
        if v == 0:
            return False
    return False


@njit(cache=True, inline="always")
def memo_put(table, key):
    cap = _cap(table)
    j0 = _slot(key, cap)
    j = j0
    for p in range(_PROBES):
        if table[(j0 + p) & (cap - 1)] == 0:
            j = (j0 + p) & (cap - 1)
            break
    table[j] = key
    # (two threads setting bits of one word at once may lose one: that only forgets)
    table[cap + (j0 >> 6)] |= 1 << (j0 & 63)


def new_memo() -> np.ndarray:
    """An empty dead-state table (the search threads and every cage size may share it):
    :data:`MEMO_SIZE` slots, then one bit per slot (set when a key whose first slot it is
    was put)."""
    return np.zeros(MEMO_SIZE + MEMO_SIZE // 64, np.int64)
