"""The cage library file: an embedded DuckDB database (Parquet export for other tools).

Tables
------
``cages``
    One row per cage (key ``n`` + ``spiral_key``): identity (canonical
    spiral, isomer numbers among all and among IPR cages once a range is
    complete), fingerprint columns, stability indices with Hückel columns at
    the cage charges of :data:`CHARGES`, and the kit version that computed them.
``pieces``
    One row per finished piece of a build (``n``, scope ``"all"``/``"ipr"``,
    piece index): a rerun skips these, so a killed build resumes.
``ranges``
    One row per (``n``, scope) once every piece is in; isomer numbers are
    given then.
``energies``
    Computed energies (key ``n``, ``spiral_key``, method, charge) with
    convergence, timing and the final geometry as XYZ text.

Cage and piece rows of one piece are written in one transaction.  The file
lives in the user's cache folder (:func:`default_path`) unless a path is given.
DuckDB lets one process write a file at a time; readers open it read-only.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Sequence
from pathlib import Path

from .. import __version__
from ..errors import LibraryError

__all__ = [
    "CHARGES",
    "ENV_PATH",
    "SPIRAL_WIDTH",
    "CAGE_COLUMNS",
    "default_path",
    "spiral_key",
    "open_library",
    "write_piece",
    "finish_range",
    "done_pieces",
    "complete_ranges",
    "write_energy",
    "export_parquet",
]

#: cage charges (electrons donated by an inner cluster, as negative charges) with
#: Hückel columns in the library: empty, M2+ (Ca, Sm, Yb), M3+ (La, Y), M2C2, M3N
CHARGES = (0, -2, -3, -4, -6)
#: environment variable naming the library file (overrides the cache folder)
ENV_PATH = "CAGEPRINT_LIBRARY"
#: digits per pentagon position in the sortable spiral key
SPIRAL_WIDTH = 3


def _q(charge: int) -> str:
    return f"q{abs(int(charge))}"


#: (name, DuckDB type) of every cage column, in table order
CAGE_COLUMNS: tuple[tuple[str, str], ...] = (
    ("n", "INTEGER"), ("spiral_key", "VARCHAR"), ("spiral", "VARCHAR"), ("ipr", "BOOLEAN"),
    ("isomer_all", "INTEGER"), ("isomer_ipr", "INTEGER"),
    ("point_group", "VARCHAR"), ("nmr_pattern", "VARCHAR"), ("nmr_lines", "INTEGER"),
    ("ir_active", "INTEGER"), ("raman_active", "INTEGER"), ("gap_beta", "DOUBLE"),
    ("pentagon_pairs", "INTEGER"), ("pentagon_triples", "INTEGER"),
    ("pentagon_neighbours", "VARCHAR"), ("hexagon_neighbours", "VARCHAR"),
    ("hexagon_index", "DOUBLE"), ("ipsi", "DOUBLE"), ("pi_energy", "DOUBLE"),
) + tuple(
    (f"{k}_{_q(q)}", "DOUBLE") for q in CHARGES[1:] for k in ("pi", "gap", "acceptor")
) + (("kit_version", "VARCHAR"), ("scope", "VARCHAR"), ("piece", "INTEGER"))

_SCHEMA = [
    "CREATE TABLE IF NOT EXISTS cages ("
    + ", ".join(f"{c} {t}" for c, t in CAGE_COLUMNS) + ", PRIMARY KEY (n, spiral_key))",
    "CREATE TABLE IF NOT EXISTS pieces (n INTEGER, scope VARCHAR, piece INTEGER, "
    "piece_key VARCHAR, pieces_total INTEGER, cages INTEGER, seconds DOUBLE, "
    "kit_version VARCHAR, PRIMARY KEY (n, scope, piece))",
    "CREATE TABLE IF NOT EXISTS ranges (n INTEGER, scope VARCHAR, pieces INTEGER, "
    "cages INTEGER, ipr_cages INTEGER, kit_version VARCHAR, PRIMARY KEY (n, scope))",
    "CREATE TABLE IF NOT EXISTS energies (n INTEGER, spiral_key VARCHAR, method VARCHAR, "
    "charge INTEGER, energy DOUBLE, converged BOOLEAN, max_gradient DOUBLE, steps INTEGER, "
    "evaluations INTEGER, seconds DOUBLE, cpu_seconds DOUBLE, xyz VARCHAR, "
    "kit_version VARCHAR, message VARCHAR, PRIMARY KEY (n, spiral_key, method, charge))",
]


def default_path() -> Path:
    """Where the library lives: ``$CAGEPRINT_LIBRARY``, else the user's cache folder.

    Linux: ``$XDG_CACHE_HOME/cageprint/library.duckdb`` (``~/.cache`` by
    default); macOS: ``~/Library/Caches/cageprint``; Windows:
    ``%LOCALAPPDATA%\\cageprint``.
    """
    env = os.environ.get(ENV_PATH)
    if env:
        return Path(env).expanduser()
    if sys.platform == "win32":  # pragma: no cover - platform branch
        base = Path(os.environ.get("LOCALAPPDATA", Path.home() / "AppData" / "Local"))
    elif sys.platform == "darwin":  # pragma: no cover - platform branch
        base = Path.home() / "Library" / "Caches"
    else:
        base = Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache")
    return base / "cageprint" / "library.duckdb"


def spiral_key(spiral: Sequence[int]) -> str:
    """Zero-padded spiral text whose string order is the canonical (tuple) order.

    Examples
    --------
    >>> spiral_key([1, 7, 9, 11, 13, 15, 18, 20, 22, 24, 26, 32])
    '001 007 009 011 013 015 018 020 022 024 026 032'
    """
    return " ".join(f"{int(p):0{SPIRAL_WIDTH}d}" for p in spiral)


def open_library(path=None, read_only: bool = False):
    """Open (and create, unless ``read_only``) the library; returns a DuckDB connection.

    Raises
    ------
    LibraryError
        duckdb missing, a read-only open of a file that does not exist, or a
        file held by another process (one writer at a time).
    """
    try:
        # lazy: duckdb is an optional extra ([library]) with a large compiled core
        import duckdb
    except ImportError as exc:  # pragma: no cover - depends on the install
        raise LibraryError("the cage library needs the optional package duckdb; install it "
                           "with `pip install cageprint[library]`") from exc
    p = Path(path) if path is not None else default_path()
    if read_only and not p.exists():
        raise LibraryError(f"library {p}: no such file; build one with "
                           "`cageprint library build C60-C100`")
    if not read_only:
        p.parent.mkdir(parents=True, exist_ok=True)
    try:
        con = duckdb.connect(str(p), read_only=read_only)
    except Exception as exc:  # duckdb.IOException on a held lock, or a non-DuckDB file
        raise LibraryError(f"library {p}: cannot open ({' '.join(str(exc).split())}); is "
                           "another build writing it? Wait for it, or give another --path"
                           ) from exc
    if not read_only:
        for stmt in _SCHEMA:
            con.execute(stmt)
    return con


def write_piece(con, n: int, scope: str, piece: int, *, piece_key: str, pieces_total: int,
                columns: dict, seconds: float) -> int:
    """Store one finished piece (its cage rows and its piece row) in one transaction."""
    import pandas as pd  # core dependency; here only to hand columns to DuckDB

    names = [c for c, _ in CAGE_COLUMNS]
    frame = pd.DataFrame({c: columns[c] for c in names if c in columns})
    k = len(frame)
    frame["kit_version"] = __version__
    frame["scope"] = scope
    frame["piece"] = int(piece)
    for c in names:
        if c not in frame:
            frame[c] = None
    frame = frame[names]
    con.execute("BEGIN TRANSACTION")
    try:
        if k:
            con.register("_piece_rows", frame)
            # an IPR cage met again in an all-isomer build keeps its numbers
            con.execute("INSERT INTO cages SELECT * FROM _piece_rows ON CONFLICT (n, spiral_key) "
                        "DO UPDATE SET scope = CASE WHEN excluded.scope = 'all' THEN 'all' "
                        "ELSE cages.scope END")
            con.unregister("_piece_rows")
        con.execute("INSERT OR REPLACE INTO pieces VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                    [int(n), scope, int(piece), piece_key, int(pieces_total), k, float(seconds),
                     __version__])
        con.execute("COMMIT")
    except Exception:
        con.execute("ROLLBACK")
        raise
    return k


def done_pieces(con, n: int, scope: str) -> set[int]:
    """Indices of the pieces of (n, scope) already in the library."""
    rows = con.execute("SELECT piece FROM pieces WHERE n = ? AND scope = ?",
                       [int(n), scope]).fetchall()
    return {int(r[0]) for r in rows}


def complete_ranges(con) -> dict[tuple[int, str], int]:
    """(n, scope) -> number of cages, for every complete range."""
    rows = con.execute("SELECT n, scope, cages FROM ranges").fetchall()
    return {(int(a), str(b)): int(c) for a, b, c in rows}


def finish_range(con, n: int, scope: str, pieces_total: int) -> int:
    """Number the cages of a complete (n, scope) and record it; returns the cage count.

    Isomer numbers are ranks in canonical-spiral order: among all cages of C_n
    (scope ``"all"``) and among its IPR cages (either scope).
    """
    n = int(n)
    con.execute("BEGIN TRANSACTION")
    try:
        if scope == "all":
            con.execute("UPDATE cages SET isomer_all = r.k FROM (SELECT spiral_key, "
                        "row_number() OVER (ORDER BY spiral_key) AS k FROM cages WHERE n = ?) r "
                        "WHERE cages.n = ? AND cages.spiral_key = r.spiral_key", [n, n])
        con.execute("UPDATE cages SET isomer_ipr = r.k FROM (SELECT spiral_key, "
                    "row_number() OVER (ORDER BY spiral_key) AS k FROM cages "
                    "WHERE n = ? AND ipr) r "
                    "WHERE cages.n = ? AND cages.spiral_key = r.spiral_key", [n, n])
        where = "n = ?" if scope == "all" else "n = ? AND ipr"
        total = con.execute(f"SELECT count(*) FROM cages WHERE {where}", [n]).fetchone()[0]
        ipr = con.execute("SELECT count(*) FROM cages WHERE n = ? AND ipr", [n]).fetchone()[0]
        con.execute("INSERT OR REPLACE INTO ranges VALUES (?, ?, ?, ?, ?, ?)",
                    [n, scope, int(pieces_total), int(total), int(ipr), __version__])
        con.execute("COMMIT")
    except Exception:
        con.execute("ROLLBACK")
        raise
    return int(total)


def write_energy(con, result, xyz: bool = True) -> None:
    """Store one :class:`~cageprint.stability.energy.EnergyResult` (replacing an older one)."""
    con.execute(
        "INSERT OR REPLACE INTO energies VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
        [result.n, spiral_key(result.spiral), result.method, result.charge, result.energy,
         bool(result.converged), result.max_gradient, result.steps, result.evaluations,
         result.seconds, result.cpu_seconds, result.xyz() if xyz else None, __version__,
         result.message],
    )


def export_parquet(con, folder) -> list[Path]:
    """Write every table as ``<folder>/<table>.parquet``; returns the files."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    out = []
    for table in ("cages", "pieces", "ranges", "energies"):
        target = folder / f"{table}.parquet"
        con.execute(f"COPY {table} TO '{_sql_path(target)}' (FORMAT parquet)")
        out.append(target)
    return out


def _sql_path(p: Path) -> str:
    return str(p).replace("'", "''")
