"""Build the cage library on Dask: one task per piece of the spiral tree, stored as it arrives.

A local cluster using every core is the default (``workers=None``); a
scheduler address (``scheduler="tcp://host:8786"``) sends the same work to an
existing cluster, whose workers need the same kit installed; ``workers=0``
computes in this process without Dask.  A script that starts a local cluster
must run it under ``if __name__ == "__main__":`` (the worker processes import
the script).  Each worker compiles the search and symmetry kernels once, in a
setup step, before its first task.

Results are written to the library as each piece arrives, piece rows and cage
rows in one transaction; a rerun skips finished pieces, so a killed build
resumes where it stopped, and a second build of a finished range computes
nothing.
"""

from __future__ import annotations

import contextlib
import logging
import os
import re
import sys
import time
from dataclasses import dataclass, field

from ..cage import check_n
from ..errors import LibraryError
from .compute import compute_piece, warm_up
from .pieces import PIECE_PARTS, Piece, plan_pieces
from .store import (
    complete_ranges,
    default_path,
    done_pieces,
    finish_range,
    open_library,
    write_piece,
)

__all__ = ["RangeReport", "BuildReport", "parse_range", "build_library", "dask_client",
           "run_tasks"]


@dataclass(frozen=True)
class RangeReport:
    """What a build did for one cage size."""

    n: int
    scope: str
    pieces: int
    computed: int
    skipped: int
    cages: int | None


@dataclass(frozen=True)
class BuildReport:
    """What a build did: per cage size, and the time it took.

    ``cpu_seconds`` adds the CPU time (``time.process_time`` of the worker process
    that ran it) of every task computed, summed over workers; ``wall_seconds`` is
    the elapsed time of the whole build.
    """

    path: str
    ranges: tuple[RangeReport, ...]
    wall_seconds: float
    cpu_seconds: float
    workers: int
    scheduler: str
    load: tuple[float, float, float]
    stopped_early: bool = False
    notes: tuple[str, ...] = field(default=())

    @property
    def computed(self) -> int:
        return sum(r.computed for r in self.ranges)

    def summary(self) -> str:
        lines = [f"library {self.path}: {self.workers} worker(s) on {self.scheduler}, "
                 f"{self.wall_seconds:.1f} s wall, {self.cpu_seconds:.1f} s CPU in tasks "
                 f"(load {self.load[0]:.2f} {self.load[1]:.2f} {self.load[2]:.2f})"]
        for r in self.ranges:
            cages = "incomplete" if r.cages is None else f"{r.cages} cages"
            lines.append(f"  C{r.n} ({r.scope}): {cages}; pieces {r.computed} computed, "
                         f"{r.skipped} already in the library, of {r.pieces}")
        if self.stopped_early:
            lines.append("  stopped early: run the same build again to finish it")
        return "\n".join(lines)


def parse_range(text) -> list[int]:
    """Cage sizes named by ``"C60-C100"``, ``"C84"``, ``"60-70"`` or ``"C60,C70"``.

    Raises
    ------
    LibraryError
        On text that is not a size, a range or a comma list.

    Examples
    --------
    >>> parse_range("C60-C70")
    [60, 62, 64, 66, 68, 70]
    >>> parse_range("C84"), parse_range("C60,C70"), parse_range(80)
    ([84], [60, 70], [80])
    """
    if isinstance(text, int):
        return [check_n(text)]
    out: list[int] = []
    for part in str(text).replace(" ", "").split(","):
        m = re.fullmatch(r"[Cc]?(\d+)(?:-[Cc]?(\d+))?", part)
        if not m:
            raise LibraryError(f"range {text!r}: expected C60-C100, C84 or C60,C70; "
                               f"found {part!r}")
        lo = int(m.group(1))
        hi = int(m.group(2) or lo)
        if hi < lo:
            raise LibraryError(f"range {text!r}: {hi} < {lo}; give the smaller size first")
        sizes = [k for k in range(lo, hi + 1) if k % 2 == 0 and k >= 20 and k != 22]
        if not sizes:
            raise LibraryError(f"range {text!r}: no fullerene size in {lo}..{hi} "
                               "(even, at least 20, not 22)")
        out.extend(check_n(k) for k in sizes)
    return sorted(set(out))


class _WarmUp:
    """Worker plugin: compile the kernels once per worker process before its first task."""

    name = "cageprint-warm-up"
    idempotent = True

    def setup(self, worker=None):
        warm_up()


@contextlib.contextmanager
def dask_client(scheduler: str | None = None, workers: int | None = None):
    """A Dask client on ``scheduler`` or on a new local cluster of ``workers`` processes.

    The local cluster has one thread per worker (its dashboard, if bokeh is installed, on
    a free port); every worker
    compiles the kernels in a setup step.
    """
    try:
        # lazy: dask.distributed is an optional extra ([library]) and slow to import
        from dask.distributed import Client, LocalCluster
        from distributed.diagnostics.plugin import WorkerPlugin
    except ImportError as exc:  # pragma: no cover - depends on the install
        raise LibraryError("distributed builds need dask[distributed]; install it with "
                           "`pip install cageprint[library]`, or pass workers=0") from exc
    cluster = None
    if scheduler:
        try:
            client = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError) as exc:
            raise LibraryError(f"scheduler {scheduler}: cannot connect ({exc}); start one with "
                               "`dask scheduler` and `dask worker ADDRESS`") from exc
    else:
        n = int(workers or os.cpu_count() or 1)
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                               dashboard_address=":0", silence_logs=logging.ERROR)
        client = Client(cluster)
    try:
        plugin = type("CageprintWarmUp", (_WarmUp, WorkerPlugin), {})()
        client.register_plugin(plugin)
        yield client
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def run_tasks(fn, tasks, store, *, scheduler: str | None = None,
              workers: int | None = None) -> int:
    """Run ``fn`` on every task and hand each result to ``store`` as it arrives.

    ``workers=0`` runs them here in order; otherwise on Dask (see
    :func:`dask_client`).  Returns the number of Dask workers (0 here).
    """
    tasks = list(tasks)
    if not tasks:
        return 0
    if workers == 0:
        for t in tasks:
            store(fn(t))
        return 0
    from dask.distributed import as_completed  # lazy: optional extra, slow import

    with dask_client(scheduler, workers) as client:
        n = len(client.scheduler_info().get("workers", {}))
        for fut in as_completed(client.map(fn, tasks, pure=False)):
            store(fut.result())
            fut.release()
    return n


def _bar(total: int, progress, desc: str):
    if not progress:
        return None
    from tqdm.auto import tqdm  # core dependency; widget bar in JupyterLab, text elsewhere

    return tqdm(total=total, desc=desc, unit=" pieces", file=sys.stderr)


def build_library(sizes, *, ipr: bool = True, path=None, scheduler: str | None = None,
                  workers: int | None = None, progress: bool = True,
                  parts: int = PIECE_PARTS, stop_after: int | None = None) -> BuildReport:
    """Build (or complete) the library for the cage sizes given.

    Parameters
    ----------
    sizes : str, int or list of int
        ``"C60-C100"``, ``84``, ... (see :func:`parse_range`).
    ipr : bool
        IPR cages only (default), or every isomer (``False``, CLI ``--all``).
    path : str or Path, optional
        Library file; default :func:`~cageprint.library.store.default_path`.
    scheduler : str, optional
        Address of a running Dask scheduler; default a local cluster.
    workers : int, optional
        Local worker processes (default: every core); ``0`` computes in this
        process without Dask.
    progress : bool
        Show a progress bar (terminal or JupyterLab).
    parts : int
        About how many pieces one cage size is cut into.
    stop_after : int, optional
        Stop after storing this many pieces (a partial build; rerun to finish).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> lib = pathlib.Path(tempfile.mkdtemp()) / "lib.duckdb"
    >>> build_library("C20-C30", ipr=False, path=lib, workers=0, progress=False).computed
    5
    >>> build_library("C20-C30", ipr=False, path=lib, workers=0, progress=False).computed
    0
    """
    ns = parse_range(sizes) if not isinstance(sizes, (list, tuple)) else [check_n(k) for k in sizes]
    scope = "ipr" if ipr else "all"
    t0 = time.perf_counter()
    con = open_library(path)
    try:
        done_ranges = complete_ranges(con)
        plans: dict[int, tuple[list[Piece], set[int]] | None] = {}
        todo: list[Piece] = []
        for n in ns:
            if (n, scope) in done_ranges or (n, "all") in done_ranges:
                plans[n] = None
                continue
            pieces = plan_pieces(n, ipr, parts)
            have = done_pieces(con, n, scope)
            plans[n] = (pieces, have)
            todo.extend(p for p in pieces if p.index not in have)
        if stop_after is not None:
            todo = todo[: max(0, int(stop_after))]
        computed: dict[int, int] = {}
        cpu = 0.0
        bar = _bar(len(todo), progress and bool(todo), f"cage library {scope}")
        n_workers, where = 0, "this process"

        def store(res):
            nonlocal cpu
            plan = plans[res.piece.n]
            assert plan is not None  # only planned pieces are computed
            write_piece(con, res.piece.n, scope, res.piece.index, piece_key=res.piece.key,
                        pieces_total=len(plan[0]), columns=res.columns, seconds=res.seconds)
            computed[res.piece.n] = computed.get(res.piece.n, 0) + 1
            cpu += res.cpu_seconds
            if bar is not None:
                bar.update(1)

        try:
            n_workers = run_tasks(compute_piece, todo, store, scheduler=scheduler,
                                  workers=workers)
            if n_workers:
                where = scheduler or "a local cluster"
        finally:
            if bar is not None:
                bar.close()
        reports = []
        for n in ns:
            plan = plans[n]
            if plan is None:
                key = (n, scope) if (n, scope) in done_ranges else (n, "all")
                reports.append(RangeReport(n, scope, 0, 0, 0, done_ranges[key]))
                continue
            pieces, have = plan
            got = len(have) + computed.get(n, 0)
            cages = finish_range(con, n, scope, len(pieces)) if got == len(pieces) else None
            reports.append(RangeReport(n, scope, len(pieces), computed.get(n, 0), len(have),
                                       cages))
        stopped = any(r.cages is None for r in reports)
        return BuildReport(
            path=str(path) if path is not None else str(_default()), ranges=tuple(reports),
            wall_seconds=time.perf_counter() - t0, cpu_seconds=cpu, workers=n_workers,
            scheduler=where, load=os.getloadavg(), stopped_early=stopped,
        )
    finally:
        con.close()


def _default():
    return default_path()
