"""Live progress of the iterative solvers, for whoever is watching (the web page).

The solvers report every iteration to an observer installed with `observe` for the
current context (thread or task); without one, a report costs a context-variable lookup.
Nothing in the solvers' results depends on it.

Examples
--------
>>> import numpy as np
>>> from polisect import Material
>>> from polisect.properties.solve import conductivity, progress
>>> seen = []
>>> labels = np.zeros((8, 8), dtype=int); labels[2:6, 2:6] = 1
>>> with progress.observe(seen.append):
...     r = conductivity(labels, {0: Material(conductivity=1.0), 1: Material(conductivity=5.0)})
>>> seen[0]["event"], seen[-1]["event"], seen[-1]["load_case"]
('load case', 'iteration', 2)
"""

from __future__ import annotations

import time
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Callable, Iterator

Observer = Callable[[dict], None]

_observer: ContextVar[Observer | None] = ContextVar("polisect_solver_observer", default=None)
_load: ContextVar[dict] = ContextVar("polisect_solver_load", default={})


@contextmanager
def observe(callback: Observer) -> Iterator[None]:
    """Send the solvers' progress to *callback* inside the block.

    *callback* receives dicts: ``{"event": "load case", "load_case": i, "load_cases": n,
    "method": m, "tolerance": t, "name": what is loaded or None}`` when a load case starts (i from 1), then
    ``{"event": "iteration", "iteration": k, "residual": r, ...}`` after every iteration
    (with the load-case keys repeated), and ``{"event": "transform", "kind": "forward" or
    "inverse", "seconds": s}`` after every Fourier transform of the solvers (the bench
    uses these to time the FFT floor inside the same solve). It must be quick; it runs
    in the solver's thread.
    """
    token = _observer.set(callback)
    try:
        yield
    finally:
        _observer.reset(token)


def load_case(index: int, total: int, method: str, tolerance: float,
              name: str | None = None) -> None:
    """A solver starts load case *index* (1-based) of *total*, called *name* (e.g.
    "gradient x", "strain xy", "axial shear xz")."""
    callback = _observer.get()
    if callback is None:
        return
    facts = {"load_case": index, "load_cases": total, "method": method, "tolerance": tolerance,
             "name": name}
    _load.set(facts)
    callback({"event": "load case", **facts})


def iteration(k: int, residual: float) -> None:
    """Iteration *k* of the current load case ended at relative *residual*."""
    callback = _observer.get()
    if callback is not None:
        callback({"event": "iteration", "iteration": k, "residual": float(residual),
                  **_load.get()})


@contextmanager
def transform(kind: str) -> Iterator[None]:
    """Time a Fourier transform (*kind* 'forward' or 'inverse') for the observer."""
    callback = _observer.get()
    if callback is None:
        yield
        return
    start = time.perf_counter()
    try:
        yield
    finally:
        callback({"event": "transform", "kind": kind,
                  "seconds": time.perf_counter() - start})
