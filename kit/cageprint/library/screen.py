"""Energy screens on Dask and the stability cascade (indices for all, energies for the best).

The cascade for an endohedral formula such as Sc3N@C68:

1. the library holds the indices of every C_n cage (built first if missing);
2. the index estimate at the cluster's formal charge
   (:func:`cageprint.stability.prior.index_estimates`: fused pentagon pairs and
   the Hückel π energy of the cage anion) keeps the ``shortlist`` best cages;
3. those are relaxed with GFN2-xTB as bare cage anions at the formal charge, one
   Dask task per cage, each result stored in the library as it arrives (a rerun
   skips them): the ionic model (Campanera, Bo & Poblet, Angew. Chem. Int. Ed.
   2005) says a cage whose anion is much less stable is not formed;
4. for a cluster the model places (M3N or one metal, ``model="stepwise"``, the
   default for those), the cages whose anion lies within :data:`CLUSTER_WINDOW`
   of the lowest are relaxed again with the cluster inside, started from the
   relaxed anion cage with the metals over fused pentagon pairs, and the
   cluster energies rank them.  The anion alone cannot see whether three metals
   find three pentalene sites; the cluster model alone is blind to an unstable
   cage anion.  Measured on Sc3N@C68 (GFN2-xTB): the anions put C2v 6073 7 kJ/mol
   below D3 6140 (then 6102 at +51), the cluster model puts 6140 36 kJ/mol below
   6073, but 6149 and 6118 (anions +114 and +49) within 3 kJ/mol of 6140;
   any window from 7 to 51 kJ/mol gives 6140 first.

Energies of the cluster model are stored under the method name
``"GFN2-xTB + Sc3N"`` (charge 0), those of bare cages under ``"GFN2-xTB"``.
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass, replace

import numpy as np

from ..errors import LibraryError, StabilityError
from ..formula import parse_formula
from ..stability.endohedral import placeable
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
from .query import library_energies, library_geometries, library_indices, query_cages
from .store import open_library, spiral_key, write_energy

__all__ = ["SHORTLIST", "CLUSTER_WINDOW", "CLUSTER_MAX", "EnergyTask", "energy_screen",
           "CascadeRow", "CascadeResult", "cascade"]

#: cages relaxed by default in a cascade ("the best few dozen")
SHORTLIST = 36
#: window (kJ/mol above the lowest relaxed anion) of the cages relaxed again with their
#: cluster inside; about twice GFN2-xTB's typical error on isomer energies (from memory)
CLUSTER_WINDOW = 30.0
#: at most this many cages are relaxed with the cluster
CLUSTER_MAX = 8


@dataclass(frozen=True)
class EnergyTask:
    """One cage to relax: what a worker needs."""

    n: int
    spiral: tuple[int, ...]
    charge: int
    method: str = "GFN2-xTB"
    max_steps: int = MAX_STEPS
    formula: str | None = None
    #: start coordinates (Å) of the cage atoms, e.g. its relaxed anion; None: model geometry
    start: tuple[tuple[float, float, float], ...] | None = None

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
                                   max_steps=task.max_steps, strict=False,
                                   coords=None if task.start is None else np.array(task.start))
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
    #: relative energy of the bare anion, and (stepwise) of the cage with its cluster
    anion_kjmol: float | None = None
    cluster_kjmol: float | None = None


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
        both = any(r.cluster_kjmol is not None for r in self.rows)
        for r in self.rows[:top]:
            e = "not converged" if r.energy_kjmol is None else f"{r.energy_kjmol:+8.1f} kJ/mol"
            if both:
                a = "-" if r.anion_kjmol is None else f"{r.anion_kjmol:+.1f} kJ/mol"
                c = "not relaxed" if r.cluster_kjmol is None else f"{r.cluster_kjmol:+.1f} kJ/mol"
                e = f"anion {a:>13}, with cluster {c:>13}"
            lines.append(f"  isomer {r.isomer:>6} {r.point_group:<4} {r.pentagon_pairs:>2} fused "
                         f"pairs  estimate {r.estimate_kjmol:+7.1f}  {e}")
        return "\n".join(lines)


def cascade(formula: str, *, shortlist: int = SHORTLIST, ipr: bool = False, path=None,
            scheduler: str | None = None, workers: int | None = None, charge: int | None = None,
            method: str = "GFN2-xTB", model: str | None = None,
            window: float = CLUSTER_WINDOW, progress: bool = True) -> CascadeResult:
    """Indices for every cage of the formula's size, then energies of the ``shortlist`` best.

    Parameters
    ----------
    formula : str
        ``"Sc3N@C68"``; the cage charge is :func:`formal_charge` unless given.
    shortlist : int
        Cages relaxed as bare anions.
    ipr : bool
        Screen IPR cages only (default: every isomer).
    model : {"stepwise", "anion", "cluster"}, optional
        ``"stepwise"`` (default when the cluster can be placed: M3N or one metal):
        anions for the shortlist, then the cages within ``window`` kJ/mol of the
        lowest anion (at most :data:`CLUSTER_MAX`) with the cluster inside, ranked by
        those.  ``"anion"``: bare anions only (the default otherwise).
        ``"cluster"``: the whole shortlist with the cluster, from the model geometry.
    window : float
        kJ/mol above the lowest anion kept for the cluster step.
    """
    f = parse_formula(formula)
    n = f.cage_n
    q = formal_charge(formula) if charge is None else int(charge)
    can_place = placeable(f)
    if model is None:
        model = "stepwise" if can_place else "anion"
    if model not in ("stepwise", "anion", "cluster"):
        raise LibraryError(f"model: expected 'stepwise', 'anion' or 'cluster'; got {model!r}")
    if model != "anion" and not can_place:
        raise LibraryError(f"model {model!r}: {formula} has no cluster the kit can place "
                           "(M3N or one metal); use model='anion'")
    t0 = time.perf_counter()
    rep = build_library([n], ipr=ipr, path=path, scheduler=scheduler, workers=workers,
                        progress=progress)
    idx = library_indices(n, q, path, ipr=True if ipr else None)
    if not idx:
        raise LibraryError(f"library: no C{n} cages stored; the build did not finish")
    keys = list(idx)
    est = dict(zip(keys, index_estimates([idx[k] for k in keys]), strict=True))
    short = sorted(keys, key=lambda k: (est[k], k))[: max(1, int(shortlist))]

    def spiral(k):
        return tuple(int(v) for v in k.split())

    def run(tasks):
        return energy_screen(tasks, path=path, scheduler=scheduler, workers=workers,
                             progress=progress)

    done, anion, cluster = [], {}, {}
    if model in ("stepwise", "anion"):
        tasks = [EnergyTask(n, spiral(k), q, method) for k in short]
        done += run(tasks)
        anion = _relative(library_energies(n, q, tasks[0].label, path), short)
    if model != "anion":
        if model == "stepwise":
            ok = sorted((e, k) for k, e in anion.items())
            keep = [k for e, k in ok if e <= window][:CLUSTER_MAX]
            geo = library_geometries(n, q, method, path, spirals=[spiral(k) for k in keep])
            tasks = [EnergyTask(n, spiral(k), 0, method, formula=formula,
                                start=tuple(map(tuple, geo[k].tolist())) if k in geo else None)
                     for k in keep]
        else:
            tasks = [EnergyTask(n, spiral(k), 0, method, formula=formula) for k in short]
        done += run(tasks)
        relaxed = {t.spiral for t in tasks}
        cluster = _relative(library_energies(n, 0, tasks[0].label, path),
                            [k for k in short if spiral(k) in relaxed])
    inner_label = EnergyTask(n, (), 0, method, formula=formula).label
    label = {"anion": method, "cluster": inner_label,
             "stepwise": f"{method} anions, then {inner_label}"}[model]
    rank = cluster if model != "anion" else anion
    table = query_cages(path, sizes=[n]).set_index("spiral")
    rows = []
    for k in short:
        plain = " ".join(str(int(v)) for v in k.split())
        info = table.loc[plain]
        e = rank.get(k)
        rows.append(CascadeRow(
            isomer=int(info["isomer"]), spiral=plain, point_group=str(info["point_group"]),
            pentagon_pairs=int(info["pentagon_pairs"]), estimate_kjmol=round(est[k], 3),
            energy_kjmol=None if e is None else round(e, 3), converged=e is not None,
            anion_kjmol=None if k not in anion else round(anion[k], 3),
            cluster_kjmol=None if k not in cluster else round(cluster[k], 3),
        ))
    # ranked cages first (by the final step's energy), then the rest by their anion energy
    rows.sort(key=lambda r: (r.energy_kjmol is None, r.energy_kjmol or 0.0,
                             r.anion_kjmol is None, r.anion_kjmol or 0.0, r.estimate_kjmol))
    return CascadeResult(
        formula=formula, n=n, charge=q, method=label, candidates=len(idx), rows=tuple(rows),
        build_cpu_seconds=rep.cpu_seconds,
        energy_cpu_seconds=sum(r.cpu_seconds for r in done),
        wall_seconds=time.perf_counter() - t0, load=os.getloadavg(),
    )


def _relative(energies: dict, keys) -> dict:
    # kJ/mol above the lowest converged energy among ``keys``
    mine = {k: energies[k] for k in keys if k in energies}
    if not mine:
        return {}
    low = min(mine.values())
    return {k: (e - low) * KJMOL_PER_HARTREE for k, e in mine.items()}

