"""Energy screens on Dask and the stability cascade (indices for all, energies for the best).

The cascade for an endohedral formula such as Sc3N@C68:

1. the library holds the indices of every C_n cage (built first if missing);
2. the index estimate at the cluster's formal charge
   (:func:`cageprint.stability.prior.index_estimates`: fused pentagon pairs and
   the Hückel π energy of the cage anion) keeps the ``shortlist`` best cages;
3. those are relaxed with GFN2-xTB, one Dask task per cage, each result stored
   in the library as it arrives (a rerun skips them): with the cluster inside
   for an M3N formula (``model="cluster"``: the metals sit over fused pentagon
   pairs, which the bare anion cannot show), else as the bare cage anion
   (``model="anion"``);
4. the relaxed energies rank the shortlist.

Energies of the cluster model are stored under the method name
``"GFN2-xTB + Sc3N"`` (charge 0), those of bare cages under ``"GFN2-xTB"``.
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass, replace

from ..errors import LibraryError, StabilityError
from ..formula import parse_formula
from ..stability.energy import (
    KJMOL_PER_HARTREE,
    MAX_STEPS,
    EnergyResult,
    relax_cage,
    relax_endohedral,
)
from ..stability.indices import formal_charge
from ..stability.prior import index_estimates
from .build import _bar, build_library, run_tasks
from .pieces import cage_of
from .query import library_energies, library_indices, query_cages
from .store import open_library, spiral_key, write_energy

__all__ = ["SHORTLIST", "EnergyTask", "energy_screen", "CascadeRow", "CascadeResult",
           "cascade"]

#: cages relaxed by default in a cascade ("the best few dozen")
SHORTLIST = 36


@dataclass(frozen=True)
class EnergyTask:
    """One cage to relax: what a worker needs."""

    n: int
    spiral: tuple[int, ...]
    charge: int
    method: str = "GFN2-xTB"
    max_steps: int = MAX_STEPS
    formula: str | None = None

    @property
    def label(self) -> str:
        """Method name as stored: ``"GFN2-xTB"``, or ``"GFN2-xTB + Sc3N"`` with the cluster."""
        return self.method if self.formula is None else \
            f"{self.method} + {self.formula.split('@')[0]}"


def _relax(task: EnergyTask):
    cage = cage_of(task.n, task.spiral)
    try:
        if task.formula is not None:
            res = relax_endohedral(cage, task.formula, method=task.method,
                                   max_steps=task.max_steps, strict=False)
        else:
            res = relax_cage(cage, charge=task.charge, method=task.method,
                             max_steps=task.max_steps, strict=False)
    except StabilityError as exc:  # SCF failure: kept as a record, not a crash of the screen
        res = EnergyResult(task.n, tuple(task.spiral), 0, task.method, task.charge,
                           (task.n - task.charge) % 2, float("nan"), False, float("nan"),
                           0, 0, 0.0, 0.0, (), message=str(exc))
    return replace(res, method=task.label)


def energy_screen(tasks, *, path=None, scheduler: str | None = None,
                  workers: int | None = None, progress: bool = True) -> list[EnergyResult]:
    """Relax every task's cage (skipping those with a converged energy stored); store each.

    Returns the results of the tasks computed now, in arrival order.
    """
    tasks = list(tasks)
    con = open_library(path)
    try:
        have = set()
        for t in {(t.n, t.charge, t.label) for t in tasks}:
            rows = con.execute("SELECT spiral_key FROM energies WHERE n = ? AND charge = ? AND "
                               "method = ? AND converged", list(t)).fetchall()
            have |= {(t[0], t[1], t[2], r[0]) for r in rows}
        todo = [t for t in tasks if (t.n, t.charge, t.label, spiral_key(t.spiral)) not in have]
        out: list[EnergyResult] = []
        bar = _bar(len(todo), progress and bool(todo), "energies")

        def store(res: EnergyResult):
            if res.coords:
                write_energy(con, res)
            else:
                con.execute("INSERT OR REPLACE INTO energies (n, spiral_key, method, charge, "
                            "converged, message) VALUES (?, ?, ?, ?, false, ?)",
                            [res.n, spiral_key(res.spiral), res.method, res.charge, res.message])
            out.append(res)
            if bar is not None:
                bar.update(1)

        try:
            run_tasks(_relax, todo, store, scheduler=scheduler, workers=workers)
        finally:
            if bar is not None:
                bar.close()
        return out
    finally:
        con.close()


@dataclass(frozen=True)
class CascadeRow:
    """One shortlisted cage: identity, index estimate, computed relative energy."""

    isomer: int
    spiral: str
    point_group: str
    pentagon_pairs: int
    estimate_kjmol: float
    energy_kjmol: float | None
    converged: bool


@dataclass(frozen=True)
class CascadeResult:
    """The outcome of a cascade; ``rows`` in order of computed energy (lowest first)."""

    formula: str
    n: int
    charge: int
    method: str
    candidates: int
    rows: tuple[CascadeRow, ...]
    build_cpu_seconds: float
    energy_cpu_seconds: float
    wall_seconds: float
    load: tuple[float, float, float]

    @property
    def best(self) -> CascadeRow:
        return self.rows[0]

    def summary(self, top: int = 10) -> str:
        lines = [f"{self.formula}: {self.candidates} C{self.n} cages, index estimate at charge "
                 f"{self.charge:+d}, {len(self.rows)} relaxed with {self.method}",
                 f"CPU: {self.build_cpu_seconds:.1f} s library build (this run), "
                 f"{self.energy_cpu_seconds:.1f} s energies (this run); "
                 f"{self.wall_seconds:.1f} s wall; load {self.load[0]:.2f}"]
        for r in self.rows[:top]:
            e = "not converged" if r.energy_kjmol is None else f"{r.energy_kjmol:+8.1f} kJ/mol"
            lines.append(f"  isomer {r.isomer:>6} {r.point_group:<4} {r.pentagon_pairs:>2} fused "
                         f"pairs  estimate {r.estimate_kjmol:+7.1f}  {e}")
        return "\n".join(lines)


def cascade(formula: str, *, shortlist: int = SHORTLIST, ipr: bool = False, path=None,
            scheduler: str | None = None, workers: int | None = None, charge: int | None = None,
            method: str = "GFN2-xTB", model: str | None = None,
            progress: bool = True) -> CascadeResult:
    """Indices for every cage of the formula's size, then energies of the ``shortlist`` best.

    Parameters
    ----------
    formula : str
        ``"Sc3N@C68"``; the cage charge is :func:`formal_charge` unless given.
    shortlist : int
        Cages relaxed.
    ipr : bool
        Screen IPR cages only (default: every isomer).
    model : {"cluster", "anion"}, optional
        Relax with the cluster inside, or the bare cage anion; default
        ``"cluster"`` for an M3N formula, else ``"anion"``.
    """
    f = parse_formula(formula)
    n = f.cage_n
    q = formal_charge(formula) if charge is None else int(charge)
    t0 = time.perf_counter()
    rep = build_library([n], ipr=ipr, path=path, scheduler=scheduler, workers=workers,
                        progress=progress)
    idx = library_indices(n, q, path, ipr=True if ipr else None)
    if not idx:
        raise LibraryError(f"library: no C{n} cages stored; the build did not finish")
    keys = list(idx)
    est = dict(zip(keys, index_estimates([idx[k] for k in keys]), strict=True))
    short = sorted(keys, key=lambda k: (est[k], k))[: max(1, int(shortlist))]
    inner = dict(f.inner)
    if model is None:
        model = "cluster" if inner.get("N") == 1 and sum(inner.values()) == 4 else "anion"
    if model not in ("cluster", "anion"):
        raise LibraryError(f"model: expected 'cluster' or 'anion'; got {model!r}")
    with_cluster = formula if model == "cluster" and inner else None
    tasks = [EnergyTask(n, tuple(int(v) for v in k.split()), 0 if with_cluster else q, method,
                        formula=with_cluster) for k in short]
    done = energy_screen(tasks, path=path, scheduler=scheduler, workers=workers,
                         progress=progress)
    label = tasks[0].label
    energies = library_energies(n, tasks[0].charge, label, path)
    table = query_cages(path, sizes=[n]).set_index("spiral")
    low = min((energies[k] for k in short if k in energies), default=None)
    rows = []
    for k in short:
        plain = " ".join(str(int(v)) for v in k.split())
        info = table.loc[plain]
        e = energies.get(k)
        rows.append(CascadeRow(
            isomer=int(info["isomer"]), spiral=plain, point_group=str(info["point_group"]),
            pentagon_pairs=int(info["pentagon_pairs"]), estimate_kjmol=round(est[k], 3),
            energy_kjmol=None if e is None or low is None else round(
                (e - low) * KJMOL_PER_HARTREE, 3),
            converged=e is not None,
        ))
    rows.sort(key=lambda r: (r.energy_kjmol is None, r.energy_kjmol or 0.0, r.estimate_kjmol))
    return CascadeResult(
        formula=formula, n=n, charge=q, method=label, candidates=len(idx), rows=tuple(rows),
        build_cpu_seconds=rep.cpu_seconds,
        energy_cpu_seconds=sum(r.cpu_seconds for r in done),
        wall_seconds=time.perf_counter() - t0, load=os.getloadavg(),
    )
