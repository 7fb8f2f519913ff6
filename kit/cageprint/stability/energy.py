"""Computed energies of cages: GFN2-xTB through ``tblite``, relaxed with L-BFGS.

What is done, in order:

1. start from the kit's model geometry (spring-relaxed topological coordinates
   with 1.40 / 1.45 Å bonds, exactly symmetric; :mod:`cageprint.symmetry.geometry`);
2. minimise the GFN2-xTB energy of the cage (neutral, or the anion at the
   formal charge of its inner cluster) with scipy's L-BFGS-B on the analytic
   gradient, each SCF started from the previous wavefunction, until the
   largest gradient component is below :data:`GRAD_TOL` (Hartree/Bohr).

No cluster atoms are included: an endohedral cage is modelled as its bare
anion (the ionic model; Campanera, Bo & Poblet, Angew. Chem. Int. Ed. 2005).
The symmetry kept by the model start is not imposed: L-BFGS may lower it.
An odd number of electrons is run as a doublet (``uhf=1``), an even one as a
closed shell.

``tblite`` is an optional dependency (extra ``[energy]``); it is imported
when a calculation starts, so the rest of the kit works without it.

References
----------
C. Bannwarth, S. Ehlert, S. Grimme, "GFN2-xTB - an accurate and broadly
parametrized self-consistent tight-binding quantum chemical method",
J. Chem. Theory Comput. 15, 1652 (2019).
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize

from ..errors import StabilityError
from ..symmetry import symmetric_geometry, to_xyz
from .endohedral import SYMBOLS, place_cluster

__all__ = [
    "BOHR_PER_ANGSTROM",
    "KJMOL_PER_HARTREE",
    "GRAD_TOL",
    "MAX_STEPS",
    "METHODS",
    "EnergyResult",
    "relax_atoms",
    "relax_cage",
    "relax_endohedral",
    "single_point",
    "relative_energies",
]

#: CODATA 2018: 1 Bohr = 0.529177210903 Å
BOHR_PER_ANGSTROM = 1.0 / 0.529177210903
#: CODATA 2018: 1 Hartree = 2625.4996394799 kJ/mol
KJMOL_PER_HARTREE = 2625.4996394799
#: converged when the largest gradient component is below this (Hartree/Bohr)
GRAD_TOL = 5e-4
#: most L-BFGS iterations before a relaxation counts as not converged
MAX_STEPS = 400
#: methods tblite offers for carbon cages
METHODS = ("GFN2-xTB", "GFN1-xTB")


@dataclass(frozen=True)
class EnergyResult:
    """One relaxed (or single-point) energy of one cage.

    Attributes
    ----------
    n, spiral, isomer : cage identity (``isomer`` may be 0 when unknown)
    method : str
        ``"GFN2-xTB"`` (tblite).
    charge : int
        Charge of the cage in the calculation (``-6`` for an M3N@C2n cage).
    uhf : int
        Unpaired electrons.
    energy : float
        Total energy, Hartree.
    converged : bool
        Gradient below ``grad_tol`` within ``max_steps``.
    max_gradient : float
        Largest gradient component at the end, Hartree/Bohr.
    steps, evaluations : int
        L-BFGS iterations and energy+gradient evaluations.
    seconds, cpu_seconds : float
        Wall-clock and CPU time of the whole relaxation.
    coords : tuple of (x, y, z)
        Final geometry, Å.
    message : str
        What the optimiser said.
    model : str
        ``"bare cage"`` (the cage, or its anion) or ``"cage + Sc3N"`` (cluster inside).
    elements : tuple of str
        Element of every atom in ``coords`` when not all carbon (cluster atoms last).
    """

    n: int
    spiral: tuple[int, ...]
    isomer: int
    method: str
    charge: int
    uhf: int
    energy: float
    converged: bool
    max_gradient: float
    steps: int
    evaluations: int
    seconds: float
    cpu_seconds: float
    coords: tuple[tuple[float, float, float], ...]
    grad_tol: float = GRAD_TOL
    message: str = ""
    model: str = "bare cage"
    elements: tuple[str, ...] = ()

    @property
    def energy_kjmol(self) -> float:
        return self.energy * KJMOL_PER_HARTREE

    def xyz(self) -> str:
        """Plain XYZ text of the final geometry, the method and energy in the comment."""
        state = "relaxed" if self.converged else "NOT converged"
        comment = (f"C{self.n} isomer {self.isomer} ({self.model}) charge {self.charge:+d} "
                   f"{self.method} E = {self.energy:.8f} Eh ({state}, max gradient "
                   f"{self.max_gradient:.1e})")
        if not self.elements:
            return to_xyz(self.n, np.asarray(self.coords), comment)
        lines = [str(len(self.coords)), comment]
        lines += [f"{e:<2} {a:12.6f}{b:12.6f}{c:12.6f}"
                  for e, (a, b, c) in zip(self.elements, self.coords, strict=True)]
        return "\n".join(lines) + "\n"

    def to_dict(self) -> dict:
        d = {k: getattr(self, k) for k in self.__dataclass_fields__}
        d["spiral"] = list(self.spiral)
        d["coords"] = [list(c) for c in self.coords]
        d["elements"] = list(self.elements)
        return d

    @classmethod
    def from_dict(cls, d: dict) -> EnergyResult:
        d = dict(d)
        d["spiral"] = tuple(int(s) for s in d["spiral"])
        d["coords"] = tuple(tuple(float(v) for v in c) for c in d["coords"])
        d["elements"] = tuple(d.get("elements", ()))
        return cls(**d)


def _calculator(method: str, numbers, coords_bohr: np.ndarray, charge: int, uhf: int):
    try:
        # lazy: tblite is an optional extra ([energy]) with a compiled library
        from tblite.interface import Calculator
    except ImportError as exc:  # pragma: no cover - depends on the install
        raise StabilityError(
            "energies need the optional package tblite; install it with "
            "`pip install cageprint[energy]`"
        ) from exc
    if method not in METHODS:
        raise StabilityError(f"method: expected one of {', '.join(METHODS)}; got {method!r}")
    calc = Calculator(method, np.asarray(numbers), coords_bohr, charge=float(charge),
                      uhf=int(uhf))
    calc.set("verbosity", 0)
    return calc


def _uhf(n: int, charge: int) -> int:
    return (n - int(charge)) % 2


def _label(cage, charge: int, method: str) -> str:
    iso = getattr(cage, "isomer", 0) if getattr(cage, "_isomer_all", 1) is not None else 0
    return f"C{cage.n} isomer {iso} (charge {charge:+d}, {method})"


def single_point(cage, coords, *, charge: int = 0, method: str = "GFN2-xTB"):
    """Energy (Hartree) and gradient (Hartree/Bohr, ``(n, 3)``) at ``coords`` (Å).

    Raises
    ------
    StabilityError
        If tblite is missing or the SCF does not converge.
    """
    x = np.asarray(coords, dtype=float) * BOHR_PER_ANGSTROM
    calc = _calculator(method, np.full(int(cage.n), 6), x, charge, _uhf(cage.n, charge))
    try:
        res = calc.singlepoint()
    except Exception as exc:  # tblite raises its own runtime error class
        raise StabilityError(f"{_label(cage, charge, method)}: SCF failed: {exc}") from exc
    return float(res.get("energy")), np.asarray(res.get("gradient"))


def relax_atoms(numbers, coords, *, charge: int = 0, uhf: int = 0, method: str = "GFN2-xTB",
                grad_tol: float = GRAD_TOL, max_steps: int = MAX_STEPS, label: str = "atoms"):
    """Relax any set of atoms (Å) with tblite energies and gradients (L-BFGS-B).

    Returns ``(energy, max_gradient, coords_angstrom, steps, evaluations, message,
    seconds, cpu_seconds)``; raises :class:`StabilityError` when an SCF fails.
    """
    numbers = np.asarray(numbers)
    x0 = np.asarray(coords, dtype=float)
    calc = _calculator(method, numbers, x0 * BOHR_PER_ANGSTROM, charge, uhf)
    state = {"res": None, "evals": 0}
    t0, c0 = time.perf_counter(), time.process_time()

    def fun(flat):
        calc.update(positions=flat.reshape(-1, 3))
        try:
            res = calc.singlepoint(state["res"]) if state["res"] is not None else calc.singlepoint()
        except Exception as exc:
            raise StabilityError(
                f"{label}: SCF did not converge at step {state['evals']}: {exc}"
            ) from exc
        state["res"] = res
        state["evals"] += 1
        return float(res.get("energy")), np.asarray(res.get("gradient")).ravel()

    opt = minimize(fun, x0.ravel() * BOHR_PER_ANGSTROM, jac=True, method="L-BFGS-B",
                   options={"maxiter": int(max_steps), "gtol": float(grad_tol), "ftol": 1e-13,
                            "maxcor": 30})
    e, g = fun(opt.x)
    return (e, float(np.abs(g).max()), opt.x.reshape(-1, 3) / BOHR_PER_ANGSTROM, int(opt.nit),
            state["evals"], str(opt.message), time.perf_counter() - t0, time.process_time() - c0)


def _result(cage, out, *, charge, uhf, method, grad_tol, model="bare cage", elements=(),
            strict=True) -> EnergyResult:
    e, gmax, x, steps, evals, msg, wall, cpu = out
    converged = gmax < grad_tol
    res = EnergyResult(
        n=int(cage.n), spiral=tuple(int(s) for s in cage.spiral), isomer=_isomer(cage),
        method=method, charge=int(charge), uhf=int(uhf), energy=e, converged=converged,
        max_gradient=gmax, steps=steps, evaluations=evals, seconds=wall, cpu_seconds=cpu,
        coords=tuple((float(a), float(b), float(c)) for a, b, c in x),
        grad_tol=float(grad_tol), message=msg, model=model, elements=tuple(elements),
    )
    if strict and not converged:
        raise StabilityError(
            f"{_label(cage, charge, method)}: relaxation did not converge in {steps} steps "
            f"(largest gradient {gmax:.2e} Eh/Bohr > grad_tol {grad_tol:g}); raise max_steps "
            "or grad_tol, or pass strict=False to keep the partial result"
        )
    return res


def relax_cage(cage, *, charge: int = 0, method: str = "GFN2-xTB", grad_tol: float = GRAD_TOL,
               max_steps: int = MAX_STEPS, coords=None, strict: bool = True) -> EnergyResult:
    """Relax ``cage`` with GFN2-xTB energies and gradients (L-BFGS) and return the result.

    Parameters
    ----------
    cage : Cage
    charge : int
        Cage charge (``formal_charge(formula)`` for an endohedral cage).
    method : str
        ``"GFN2-xTB"`` (default) or ``"GFN1-xTB"``.
    grad_tol : float
        Largest gradient component (Hartree/Bohr) that counts as converged.
    max_steps : int
        Most L-BFGS iterations.
    coords : array_like, optional
        Start geometry in Å; default the model geometry.
    strict : bool
        Raise :class:`StabilityError` if not converged (default); with
        ``False`` the result comes back with ``converged=False``.

    Raises
    ------
    StabilityError
        tblite missing, SCF failure, or (``strict``) no convergence within
        ``max_steps`` (raise ``max_steps`` or ``grad_tol``).
    """
    n = int(cage.n)
    x0 = np.asarray(symmetric_geometry(cage).coords if coords is None else coords, dtype=float)
    uhf = _uhf(n, charge)
    out = relax_atoms(np.full(n, 6), x0, charge=charge, uhf=uhf, method=method,
                      grad_tol=grad_tol, max_steps=max_steps,
                      label=_label(cage, charge, method))
    return _result(cage, out, charge=charge, uhf=uhf, method=method, grad_tol=grad_tol,
                   strict=strict)


def relax_endohedral(cage, formula: str, *, method: str = "GFN2-xTB",
                     grad_tol: float = GRAD_TOL, max_steps: int = MAX_STEPS,
                     strict: bool = True, coords=None) -> EnergyResult:
    """Relax the cage with its cluster inside (M3N or one metal; :mod:`.endohedral`).

    ``coords`` (Å) start the cage from a given geometry, e.g. its relaxed anion
    (default: the kit's symmetric model geometry).

    The whole molecule is neutral; electrons are paired when their number is
    even, else one is unpaired.
    """
    numbers, x0 = place_cluster(cage, formula, coords)
    uhf = int(sum(numbers)) % 2
    out = relax_atoms(numbers, x0, charge=0, uhf=uhf, method=method, grad_tol=grad_tol,
                      max_steps=max_steps, label=f"{formula} isomer {_isomer(cage)}")
    return _result(cage, out, charge=0, uhf=uhf, method=method, grad_tol=grad_tol,
                   model=f"cage + {formula.split('@')[0]}",
                   elements=tuple(SYMBOLS[z] for z in numbers), strict=strict)


def _isomer(cage) -> int:
    try:
        return int(cage.isomer)
    except Exception:  # pragma: no cover - a cage outside the numbered lists
        return 0


def relative_energies(results) -> list[float]:
    """Energies relative to the lowest (kJ/mol), in the order given.

    Every result must share n, charge and method; non-converged ones give ``nan``.

    Raises
    ------
    StabilityError
        If the results mix cage sizes, charges or methods.

    Examples
    --------
    >>> a = EnergyResult(2, (), 1, "GFN2-xTB", 0, 0, -1.0, True, 0.0, 0, 0, 0.0, 0.0, ())
    >>> b = EnergyResult(2, (), 2, "GFN2-xTB", 0, 0, -1.001, True, 0.0, 0, 0, 0.0, 0.0, ())
    >>> [round(v, 2) for v in relative_energies([a, b])]
    [2.63, 0.0]
    """
    results = list(results)
    kinds = {(r.n, r.charge, r.method) for r in results}
    if len(kinds) > 1:
        raise StabilityError(
            "relative energies: results mix cage size, charge or method "
            f"({sorted(kinds)}); compare like with like"
        )
    ok = [r.energy for r in results if r.converged]
    if not ok:
        return [float("nan")] * len(results)
    low = min(ok)
    return [(r.energy - low) * KJMOL_PER_HARTREE if r.converged else float("nan")
            for r in results]


def threads_hint() -> str:
    """The OpenMP thread setting tblite will use (``OMP_NUM_THREADS``, or unset)."""
    return os.environ.get("OMP_NUM_THREADS", "unset")
