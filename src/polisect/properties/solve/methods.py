"""Choosing a solver for a cell and running a list of load cases with it."""

from __future__ import annotations

import dataclasses
import time
import warnings
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ...core.choices import SOLVE_METHODS
from ...core.errors import InputError
from . import progress
from .cell import Cell, Load, Solution
from .cg import CRITERIA
from .fe import AMGSolver
from .fft import FourierSolver
from .ms import MSSolver

METHODS = SOLVE_METHODS
SOLVERS = {"fft": FourierSolver, "fe": AMGSolver, "ms": MSSolver}
DEFAULT_MAXITER = {"fft": 5000, "fe": 1000, "ms": 20000}


def check_settings(method: str, tol: float, maxiter: int | None,
                   criterion: str = "energy") -> None:
    """Raise `InputError` for an unknown method or criterion, or a tolerance outside (0, 1)."""
    if criterion not in CRITERIA:
        raise InputError(f"criterion {criterion!r} is not known; use one of "
                         f"{', '.join(CRITERIA)}")
    if method not in METHODS:
        raise InputError(f"method {method!r} is not known; use one of {', '.join(METHODS)}")
    if not (isinstance(tol, (int, float)) and 0.0 < tol < 1.0):
        raise InputError(f"tolerance {tol!r} must be a number between 0 and 1, e.g. 1e-6")
    if maxiter is not None and (not isinstance(maxiter, (int, np.integer)) or maxiter < 1):
        raise InputError(f"maxiter {maxiter!r} must be a positive integer")


def choose_method(method: str, cell: Cell) -> str:
    """The concrete method for *method* (``'auto'`` → ``'fft'``).

    ``fft`` is the fastest correct method for every case of `polisect bench`: it beats
    ``fe`` on 2D conduction and by more on elasticity and in 3D, and it converges with
    pores, where ``ms`` cannot be used at all (see the bench table in docs/methods.md).
    """
    return "fft" if method == "auto" else method


@dataclass(frozen=True, eq=False)
class Run:
    """Solutions of the load cases of one property and the facts of the run."""

    solutions: tuple[Solution, ...]
    method: str
    seconds: float
    tolerance: float

    @property
    def iterations(self) -> int:
        return int(sum(s.iterations for s in self.solutions))

    @property
    def residuals(self) -> tuple[np.ndarray, ...]:
        return tuple(s.residuals for s in self.solutions)

    @property
    def converged(self) -> bool:
        return all(s.converged for s in self.solutions)

    @property
    def fluctuations(self) -> tuple:
        """The kept fluctuations of the load cases (`Solution.fluctuation`), the start of a
        warm solve."""
        return tuple(s.fluctuation for s in self.solutions)

    def take_fields(self) -> tuple["Run", list]:
        """This run without its gradient fields, and the fields (so that a caller can free
        each one as soon as it has used it)."""
        fields = [s.gradient for s in self.solutions]
        bare = tuple(dataclasses.replace(s, gradient=None) for s in self.solutions)
        return dataclasses.replace(self, solutions=bare), fields

    def energy_form(self, C: np.ndarray) -> np.ndarray:
        """The symmetric energy form of a tensor whose column j came from load case j.

        Column j of *C* is the mean flux of solution j, ``C_ij = L̄_ij − b_iᵀx_j/N``, whose
        off-diagonal error is linear in the error of ``x_j``. The energy form
        ``⟨(E_i + ∇x_i):L:(E_j + ∇x_j)⟩ = C_ij − x_iᵀr_j/N`` (i < j, ``r_j`` the final
        residual of j) errs by ``e_iᵀAe_j/N`` only, so ``|ΔC_ij| ≤ √(ΔC_ii ΔC_jj)``; the
        diagonal ``C_jj − x_jᵀr_j/N`` is ``J(x_j)/N`` (`cg`, warm start; the correction
        vanishes for CG iterates from zero). The earlier fluctuations
        are kept in half precision (2 bytes a value, relative rounding 5e-4), which
        perturbs only the small correction: its effect is below 1e-3 of the solver error.
        """
        out = np.array(C, dtype=float)
        for j, s in enumerate(self.solutions):
            out[j, j] = C[j, j] - s.own
            for i, correction in enumerate(s.cross[:j]):
                out[i, j] = out[j, i] = C[i, j] - correction
        return out


def solve_loads(cell: Cell, loads: list[Load], method: str, tol: float, maxiter: int | None,
                fields: list[bool], names: Sequence[str] | None = None,
                criterion: str = "energy", starts: Sequence | None = None,
                keep: bool = False) -> Run:
    """Solve every load case on *cell* with one solver set up once.

    *names* label the load cases in the live progress (`solve.progress`); *criterion*
    is the stopping rule of `cg.pcg` ('energy' or 'residual'). *starts* holds a start
    fluctuation (nc, *grid) or None per load case (warm start, `cg`); *keep* keeps every
    solved fluctuation in single precision (`Run.fluctuations`).

    Warns (RuntimeWarning) when a load case stops at *maxiter* before the tolerance.
    """
    check_settings(method, tol, maxiter, criterion)
    name = choose_method(method, cell)
    start = time.perf_counter()
    solver = SOLVERS[name](cell, tol, maxiter or DEFAULT_MAXITER[name])
    solutions = []
    earlier: list[np.ndarray] = []
    labels = names if names is not None else [None] * len(loads)
    starts = list(starts) if starts is not None else [None] * len(loads)
    if len(starts) != len(loads):
        raise ValueError(f"{len(starts)} starts for {len(loads)} load cases")
    for index, (load, want, label, x0) in enumerate(zip(loads, fields, labels, starts),
                                                    start=1):
        progress.load_case(index, len(loads), name, tol, label)
        solutions.append(solver.solve(load, want, earlier, criterion, start=x0, keep=keep))
    del earlier
    solutions = tuple(solutions)
    seconds = time.perf_counter() - start
    for s in solutions:
        if not s.converged:
            warnings.warn(f"the {name!r} solver stopped after {s.iterations} iterations before "
                          f"reaching the tolerance {tol:.0e} (relative residual "
                          f"{s.residuals[-1]:.2e}); raise maxiter or the tolerance, or try "
                          "another method",
                          RuntimeWarning, stacklevel=3)
    return Run(solutions, name, seconds, tol)
