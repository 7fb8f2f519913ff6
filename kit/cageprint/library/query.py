"""Read the cage library: pattern-first queries, the chooser's data source, indices, energies.

Every reader opens the file read-only and returns plain tables (pandas
DataFrames) or the kit's own records; nothing here computes a fingerprint
unless asked to build a missing range (:func:`library_cages`).
"""

from __future__ import annotations

import re
from collections import Counter
from pathlib import Path
from typing import Any

import numpy as np

from ..candidate import PAIRS_MEMO, Candidate, Known
from ..errors import LibraryError
from ..formula import parse_cage_formula
from ..stability.indices import StabilityIndices
from .build import build_library, parse_range
from .store import CHARGES, _q, complete_ranges, default_path, open_library, spiral_key

__all__ = [
    "SHOWN_COLUMNS",
    "normalise_pattern",
    "query_cages",
    "library_cages",
    "library_indices",
    "library_energies",
    "library_geometries",
    "library_info",
    "library_candidates",
    "PAIRS_MEMO",
]

#: columns of a query result, in order
SHOWN_COLUMNS = (
    "formula", "n", "isomer", "isomer_all", "isomer_ipr", "spiral", "point_group",
    "nmr_pattern", "nmr_lines", "ir_active", "raman_active", "gap_beta", "pentagon_pairs",
    "hexagon_index", "ipsi",
)


_TERM = re.compile(r"(\d+)\s*[x×*]\s*(\d+)")


def normalise_pattern(text: str) -> str:
    """A 13C pattern in the kit's form: ``count x orbit size`` terms, largest orbit first.

    Raises
    ------
    LibraryError
        For text that is not a ``+``-separated list of ``AxB`` terms.

    Examples
    --------
    >>> normalise_pattern("1x2 + 11x6")
    '11x6+1x2'
    >>> normalise_pattern("2×12+1x12+3X4")
    '3x12+3x4'
    """
    terms = [t.strip() for t in str(text).lower().replace("×", "x").split("+")]
    count: Counter = Counter()
    for t in terms:
        m = _TERM.fullmatch(t)
        if not m or int(m.group(1)) < 1 or int(m.group(2)) < 1:
            raise LibraryError(f"pattern {text!r}: expected terms like 11x6+1x2 (count x orbit "
                               f"size); found {t!r}")
        count[int(m.group(2))] += int(m.group(1))
    return "+".join(f"{count[s]}x{s}" for s in sorted(count, reverse=True))


def _pattern_atoms(pattern: str) -> int:
    return sum(int(a) * int(b) for a, b in _TERM.findall(pattern))


def _connect(path):
    return open_library(path, read_only=True)


def query_cages(path=None, *, sizes=None, pattern: str | None = None, ipr: bool | None = None,
                point_group: str | None = None, max_pairs: int | None = None,
                limit: int | None = None):
    """Cages of the library matching every condition given, in (n, isomer) order.

    Parameters
    ----------
    path : str or Path, optional
        Library file (default :func:`~cageprint.library.store.default_path`).
    sizes : str or list of int, optional
        ``"C60-C100"`` etc.; with a pattern and no sizes, the size the pattern implies.
    pattern : str, optional
        13C pattern, e.g. ``"11x6+1x2"`` (see :func:`normalise_pattern`).
    ipr : bool, optional
        Only IPR cages (True) or only non-IPR ones (False).
    point_group : str, optional
    max_pairs : int, optional
        At most this many fused pentagon pairs.
    limit : int, optional

    Returns
    -------
    pandas.DataFrame
        :data:`SHOWN_COLUMNS`; ``isomer`` is the literature number (IPR
        number for an IPR cage, else the all-isomer number).
    """
    where: list[str] = []
    args: list[Any] = []
    if pattern:
        pattern = normalise_pattern(pattern)
        where.append("nmr_pattern = ?")
        args.append(pattern)
        if sizes is None:
            sizes = [_pattern_atoms(pattern)]
    if sizes is not None:
        ns = parse_range(sizes) if not isinstance(sizes, (list, tuple)) else list(sizes)
        where.append(f"n IN ({', '.join('?' * len(ns))})")
        args.extend(int(k) for k in ns)
    if ipr is not None:
        where.append("ipr" if ipr else "NOT ipr")
    if point_group:
        where.append("point_group = ?")
        args.append(point_group)
    if max_pairs is not None:
        where.append("pentagon_pairs <= ?")
        args.append(int(max_pairs))
    sql = ("SELECT 'C' || n AS formula, n, CASE WHEN ipr THEN isomer_ipr ELSE isomer_all END "
           "AS isomer, " + ", ".join(SHOWN_COLUMNS[3:]) + " FROM cages")
    if where:
        sql += " WHERE " + " AND ".join(where)
    sql += " ORDER BY n, spiral_key"
    if limit is not None:
        sql += f" LIMIT {int(limit)}"
    con = _connect(path)
    try:
        return con.execute(sql, args).df()
    finally:
        con.close()


def library_cages(n: int, ipr: bool = True, *, path=None, build: bool = True,
                  progress: bool = True, workers: int | None = 0):
    """Every cage of C_n (IPR only by default) from the library: the chooser's data source.

    Without a library, or with C_n not complete in it, ``build=True`` builds
    it first (with a progress bar; ``workers=0`` in this process, ``None`` a
    local Dask cluster); ``build=False`` raises :class:`LibraryError` instead.
    """
    p = Path(path) if path is not None else default_path()
    scope_ok = False
    if p.exists():
        con = _connect(p)
        try:
            done = complete_ranges(con)
        finally:
            con.close()
        scope_ok = (int(n), "all") in done or (ipr and (int(n), "ipr") in done)
    if not scope_ok:
        if not build:
            raise LibraryError(f"library {p}: C{n} ({'IPR' if ipr else 'all isomers'}) is not "
                               f"in it; build it with `cageprint library build C{n}"
                               f"{'' if ipr else ' --all'}`")
        build_library([int(n)], ipr=ipr, path=p, workers=workers, progress=progress)
    table = query_cages(p, sizes=[int(n)], ipr=True if ipr else None)
    if not ipr:  # all isomers: every cage by its all-isomer number (IPR ones too)
        table["isomer"] = table["isomer_all"]
    return table


def library_indices(n: int, charge: int = 0, path=None,
                    ipr: bool | None = None) -> dict[str, StabilityIndices]:
    """Stability indices of every stored C_n cage at ``charge`` (one of :data:`CHARGES`).

    Returns a mapping spiral key -> :class:`StabilityIndices`.
    """
    if int(charge) not in CHARGES:
        raise LibraryError(f"charge {charge}: the library keeps Hückel columns at charges "
                           f"{', '.join(map(str, CHARGES))}; compute others with "
                           "stability_indices(cage, charge)")
    q = _q(charge)
    extra = ("pi_energy", "gap_beta", "gap_beta") if int(charge) == 0 else (
        f"pi_{q}", f"gap_{q}", f"acceptor_{q}")
    sql = ("SELECT spiral_key, pentagon_pairs, pentagon_triples, pentagon_neighbours, "
           "hexagon_neighbours, hexagon_index, ipsi, pi_energy, gap_beta, "
           f"{extra[0]}, {extra[1]}, {extra[2]} FROM cages WHERE n = ?")
    if ipr is not None:
        sql += " AND ipr" if ipr else " AND NOT ipr"
    con = _connect(path)
    try:
        rows = con.execute(sql, [int(n)]).fetchall()
    finally:
        con.close()
    out = {}
    for key, pp, pt, pn, hn, hi, ipsi, pi0, gap0, pi1, gap1, acc in rows:
        out[key] = StabilityIndices(
            n=int(n), charge=int(charge), pentagon_pairs=pp, pentagon_triples=pt,
            pentagon_neighbours=tuple(map(int, pn.split())),
            hexagon_neighbours=tuple(map(int, hn.split())), hexagon_index=hi, ipsi=ipsi,
            pi_energy=pi0, gap=gap0, anion_pi_energy=pi1, anion_gap=gap1,
            acceptor_level=float("nan") if int(charge) == 0 else acc,
            anion_shell="closed" if gap1 > 1e-6 else "open",
        )
    return out


def library_energies(n: int, charge: int = 0, method: str = "GFN2-xTB", path=None,
                     spirals=None) -> dict[str, float]:
    """Converged energies (Hartree) of stored C_n cages: spiral key -> energy."""
    con = _connect(path)
    try:
        rows = con.execute("SELECT spiral_key, energy FROM energies WHERE n = ? AND charge = ? "
                           "AND method = ? AND converged", [int(n), int(charge), method]
                           ).fetchall()
    finally:
        con.close()
    out = {k: float(e) for k, e in rows}
    if spirals is not None:
        keys = {spiral_key(s) for s in spirals}
        out = {k: v for k, v in out.items() if k in keys}
    return out


def library_geometries(n: int, charge: int = 0, method: str = "GFN2-xTB", path=None,
                       spirals=None) -> dict[str, Any]:
    """Relaxed coordinates (Å, an (atoms, 3) array) of stored converged results."""
    con = _connect(path)
    try:
        rows = con.execute("SELECT spiral_key, xyz FROM energies WHERE n = ? AND charge = ? "
                           "AND method = ? AND converged AND xyz IS NOT NULL",
                           [int(n), int(charge), method]).fetchall()
    finally:
        con.close()
    keys = None if spirals is None else {spiral_key(s) for s in spirals}
    out = {}
    for k, text in rows:
        if keys is None or k in keys:
            lines = text.splitlines()
            out[k] = np.array([[float(v) for v in ln.split()[1:4]]
                               for ln in lines[2: 2 + int(lines[0])]])
    return out


def library_info(path=None) -> dict:
    """What the library holds: file, complete ranges, cage and energy counts."""
    p = Path(path) if path is not None else default_path()
    con = _connect(p)
    try:
        ranges = con.execute("SELECT n, scope, cages, ipr_cages, kit_version FROM ranges "
                             "ORDER BY n, scope").fetchall()
        cages = con.execute("SELECT count(*) FROM cages").fetchone()[0]
        energies = con.execute("SELECT count(*) FROM energies").fetchone()[0]
        partial = con.execute("SELECT n, scope, count(*), max(pieces_total) FROM pieces "
                              "GROUP BY n, scope ORDER BY n, scope").fetchall()
    finally:
        con.close()
    done = {(a, b) for a, b, *_ in ranges}
    return {
        "path": str(p), "size_bytes": p.stat().st_size, "cages": int(cages),
        "energies": int(energies),
        "ranges": [{"n": a, "scope": b, "cages": c, "ipr_cages": d, "kit_version": v}
                   for a, b, c, d, v in ranges],
        "partial": [{"n": a, "scope": b, "pieces_done": c, "pieces": t}
                    for a, b, c, t in partial if (a, b) not in done],
    }


def _sizes(pattern: str) -> tuple[int, ...]:
    out: list[int] = []
    for count, size in _TERM.findall(pattern):
        out += [int(size)] * int(count)
    return tuple(out)


def library_candidates(formula: str, ipr: bool = True, *, path=None, build: bool = True,
                       progress: bool = True, workers: int | None = 0) -> tuple[Candidate, ...]:
    """The candidates of a formula read from the library (built first when missing).

    Each candidate carries its 13C orbit sizes, IR/Raman counts, point group,
    spiral and the Hückel gap at the formula's cage charge (when it is one of
    :data:`CHARGES`); UV-vis transition energies are not stored, so
    ``transitions_beta`` is empty (the UV-vis comparison then uses the gap).
    """
    f = parse_cage_formula(formula)
    q = int(f.cage_charge)
    table = library_cages(f.cage_n, ipr, path=path, build=build, progress=progress,
                          workers=workers)
    gaps = None
    if q != 0 and q in CHARGES:
        con = _connect(path)
        try:
            rows = con.execute(f"SELECT spiral, gap_{_q(q)} FROM cages WHERE n = ?",
                               [f.cage_n]).fetchall()
        finally:
            con.close()
        gaps = dict(rows)
    out = []
    for r in table.itertuples(index=False):
        gap = float(r.gap_beta) if q == 0 else (None if gaps is None else float(gaps[r.spiral]))
        c = Candidate(
            formula=f.text, n=int(r.n), isomer=int(r.isomer), point_group=str(r.point_group),
            nmr_sizes=_sizes(r.nmr_pattern), ir_count=int(r.ir_active),
            raman_count=int(r.raman_active), gap_beta=gap, cage_charge=q,
            spiral=tuple(int(v) for v in r.spiral.split()),
        )
        c.memo(PAIRS_MEMO, Known(int(r.pentagon_pairs)))  # readers need no cage graph
        out.append(c)
    return tuple(out)
