"""What one worker computes: the library rows of one piece of the spiral tree.

Pure functions of their arguments, so they run the same in this process, in a
local Dask worker or on a remote one (which needs the same kit installed).
"""

from __future__ import annotations

import time
from dataclasses import dataclass

from ..stability.indices import stability_indices_at
from ..symmetry import fingerprint
from .pieces import Piece, cage_of, piece_spirals, plan_pieces
from .store import CHARGES, _q, spiral_key

__all__ = ["PieceResult", "cage_columns", "compute_piece", "warm_up"]


@dataclass(frozen=True)
class PieceResult:
    """Rows of one piece: ``columns`` maps a cage column to its list of values.

    ``seconds`` is the wall-clock time of the task, ``cpu_seconds`` the CPU time of
    the worker process that ran it (``time.process_time``), which does not grow
    when the worker waits for a core on a busy machine.
    """

    piece: Piece
    columns: dict
    count: int
    seconds: float
    cpu_seconds: float = 0.0


def cage_columns(cage) -> dict:
    """Library columns of one cage (fingerprint, indices, Hückel at :data:`CHARGES`).

    Examples
    --------
    >>> from cageprint.cage import Cage
    >>> row = cage_columns(Cage.from_spiral(20, range(1, 13)))
    >>> row["point_group"], row["pentagon_pairs"], row["nmr_pattern"]
    ('Ih', 30, '1x20')
    """
    fp = fingerprint(cage).columns()
    idx = stability_indices_at(cage, CHARGES)
    s0 = idx[0]
    row = {
        "n": int(cage.n), "spiral_key": spiral_key(cage.spiral),
        "spiral": " ".join(map(str, cage.spiral)), "ipr": s0.pentagon_pairs == 0,
        "point_group": fp["point_group"], "nmr_pattern": fp["nmr_pattern"],
        "nmr_lines": fp["nmr_lines"], "ir_active": fp["ir_active"],
        "raman_active": fp["raman_active"], "gap_beta": fp["gap_beta"],
        "pentagon_pairs": s0.pentagon_pairs, "pentagon_triples": s0.pentagon_triples,
        "pentagon_neighbours": " ".join(map(str, s0.pentagon_neighbours)),
        "hexagon_neighbours": " ".join(map(str, s0.hexagon_neighbours)),
        "hexagon_index": s0.hexagon_index, "ipsi": s0.ipsi, "pi_energy": s0.pi_energy,
    }
    for q, s in zip(CHARGES[1:], idx[1:], strict=True):
        row[f"pi_{_q(q)}"] = s.anion_pi_energy
        row[f"gap_{_q(q)}"] = s.anion_gap
        row[f"acceptor_{_q(q)}"] = s.acceptor_level
    return row


def compute_piece(piece: Piece) -> PieceResult:
    """Enumerate one piece and compute every cage's columns (a worker task)."""
    t0, c0 = time.perf_counter(), time.process_time()
    rows = [cage_columns(cage_of(piece.n, sp)) for sp in piece_spirals(piece).tolist()]
    cols: dict = {}
    for r in rows:
        for k, v in r.items():
            cols.setdefault(k, []).append(v)
    return PieceResult(piece, cols, len(rows), time.perf_counter() - t0,
                       time.process_time() - c0)


def warm_up() -> float:
    """Compile the search and symmetry kernels in this process (a worker setup step)."""
    t0 = time.perf_counter()
    for p in plan_pieces(36):
        for sp in piece_spirals(p).tolist()[:3]:
            cage_columns(cage_of(36, sp))
    return time.perf_counter() - t0
