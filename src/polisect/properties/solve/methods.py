"""Choosing a solver for a cell and running a list of load cases with it."""

from __future__ import annotations

import time
import warnings
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ...core.choices import SOLVE_METHODS
from ...core.errors import InputError
from . import progress
from .cell import Cell, Load, Solution
from .fe import AMGSolver
from .fft import FourierSolver
from .ms import MSSolver

METHODS = SOLVE_METHODS
SOLVERS = {"fft": FourierSolver, "fe": AMGSolver, "ms": MSSolver}
DEFAULT_MAXITER = {"fft": 5000, "fe": 1000, "ms": 20000}


def check_settings(method: str, tol: float, maxiter: int | None) -> None:
    """Raise `InputError` for an unknown method or a tolerance outside (0, 1)."""
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


def solve_loads(cell: Cell, loads: list[Load], method: str, tol: float, maxiter: int | None,
                fields: list[bool], names: Sequence[str] | None = None) -> Run:
    """Solve every load case on *cell* with one solver set up once.

    *names* label the load cases in the live progress (`solve.progress`).

    Warns (RuntimeWarning) when a load case stops at *maxiter* before the tolerance.
    """
    check_settings(method, tol, maxiter)
    name = choose_method(method, cell)
    start = time.perf_counter()
    solver = SOLVERS[name](cell, tol, maxiter or DEFAULT_MAXITER[name])
    solutions = []
    labels = names if names is not None else [None] * len(loads)
    for index, (load, want, label) in enumerate(zip(loads, fields, labels), start=1):
        progress.load_case(index, len(loads), name, tol, label)
        solutions.append(solver.solve(load, want))
    solutions = tuple(solutions)
    seconds = time.perf_counter() - start
    for s in solutions:
        if not s.converged:
            warnings.warn(f"the {name!r} solver stopped after {s.iterations} iterations at a "
                          f"relative residual {s.residuals[-1]:.2e} above the tolerance "
                          f"{tol:.0e}; raise maxiter or the tolerance, or try another method",
                          RuntimeWarning, stacklevel=3)
    return Run(solutions, name, seconds, tol)
