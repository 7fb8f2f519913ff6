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

__all__ = [
    "BOHR_PER_ANGSTROM",
    "KJMOL_PER_HARTREE",
    "GRAD_TOL",
    "MAX_STEPS",
    "METHODS",
    "EnergyResult",
    "relax_cage",
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

    @property
    def energy_kjmol(self) -> float:
        return self.energy * KJMOL_PER_HARTREE

    def xyz(self) -> str:
        """Plain XYZ text of the final geometry, the method and energy in the comment."""
        state = "relaxed" if self.converged else "NOT converged"
        comment = (f"C{self.n} isomer {self.isomer} charge {self.charge:+d} {self.method} "
                   f"E = {self.energy:.8f} Eh ({state}, max gradient {self.max_gradient:.1e})")
        return to_xyz(self.n, np.asarray(self.coords), comment)

    def to_dict(self) -> dict:
        d = {k: getattr(self, k) for k in self.__dataclass_fields__}
        d["spiral"] = list(self.spiral)
        d["coords"] = [list(c) for c in self.coords]
        return d

    @classmethod
    def from_dict(cls, d: dict) -> EnergyResult:
        d = dict(d)
        d["spiral"] = tuple(int(s) for s in d["spiral"])
        d["coords"] = tuple(tuple(float(v) for v in c) for c in d["coords"])
        return cls(**d)


def _calculator(method: str, n: int, coords_bohr: np.ndarray, charge: int, uhf: int):
    # lazy: tblite is an optional extra ([energy]) with a compiled library
    try:
        from tblite.interface import Calculator
    except ImportError as exc:  # pragma: no cover - depends on the install
        raise StabilityError(
            "energies need the optional package tblite; install it with "
            "`pip install cageprint[energy]`"
        ) from exc
    if method not in METHODS:
        raise StabilityError(f"method: expected one of {', '.join(METHODS)}; got {method!r}")
    calc = Calculator(method, np.full(n, 6), coords_bohr, charge=float(charge), uhf=int(uhf))
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
    calc = _calculator(method, int(cage.n), x, charge, _uhf(cage.n, charge))
    try:
        res = calc.singlepoint()
    except Exception as exc:  # tblite raises its own runtime error class
        raise StabilityError(f"{_label(cage, charge, method)}: SCF failed: {exc}") from exc
    return float(res.get("energy")), np.asarray(res.get("gradient"))


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
    calc = _calculator(method, n, x0 * BOHR_PER_ANGSTROM, charge, uhf)
    state = {"res": None, "evals": 0}
    t0, c0 = time.perf_counter(), time.process_time()

    def fun(flat):
        calc.update(positions=flat.reshape(n, 3))
        try:
            res = calc.singlepoint(state["res"]) if state["res"] is not None else calc.singlepoint()
        except Exception as exc:
            raise StabilityError(
                f"{_label(cage, charge, method)}: SCF did not converge at step "
                f"{state['evals']}: {exc}"
            ) from exc
        state["res"] = res
        state["evals"] += 1
        return float(res.get("energy")), np.asarray(res.get("gradient")).ravel()

    opt = minimize(fun, x0.ravel() * BOHR_PER_ANGSTROM, jac=True, method="L-BFGS-B",
                   options={"maxiter": int(max_steps), "gtol": float(grad_tol), "ftol": 1e-13,
                            "maxcor": 30})
    e, g = fun(opt.x)
    gmax = float(np.abs(g).max())
    converged = gmax < grad_tol
    out = EnergyResult(
        n=n, spiral=tuple(int(s) for s in cage.spiral), isomer=_isomer(cage), method=method,
        charge=int(charge), uhf=uhf, energy=e, converged=converged, max_gradient=gmax,
        steps=int(opt.nit), evaluations=state["evals"],
        seconds=time.perf_counter() - t0, cpu_seconds=time.process_time() - c0,
        coords=tuple(tuple(map(float, r)) for r in (opt.x.reshape(n, 3) / BOHR_PER_ANGSTROM)),
        grad_tol=float(grad_tol), message=str(opt.message),
    )
    if strict and not converged:
        raise StabilityError(
            f"{_label(cage, charge, method)}: relaxation did not converge in {opt.nit} steps "
            f"(largest gradient {gmax:.2e} Eh/Bohr > grad_tol {grad_tol:g}); raise max_steps "
            "or grad_tol, or pass strict=False to keep the partial result"
        )
    return out


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
