"""Preconditioned conjugate gradients with a residual history (used by `fft` and `fe`).

References
----------
.. [1] Hestenes, M. R. & Stiefel, E. (1952). Methods of conjugate gradients for solving
   linear systems. J. Res. Natl. Bur. Stand. 49, 409–436.
.. [2] Saad, Y. (2003). Iterative Methods for Sparse Linear Systems, 2nd ed., Alg. 9.1.
   SIAM.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from . import kernels
from . import progress

Apply = Callable[[np.ndarray, np.ndarray], float]


@dataclass(frozen=True)
class CGInfo:
    """Facts of one CG solve.

    Attributes
    ----------
    iterations : int
    residuals : ndarray
        ‖r_k‖₂ / ‖b‖₂ for k = 0 … iterations.
    converged : bool
    """

    iterations: int
    residuals: np.ndarray
    converged: bool


def pcg(apply_A: Apply, apply_M: Apply, b: np.ndarray, tol: float,
        maxiter: int) -> tuple[np.ndarray, CGInfo]:
    """Solve ``A x = b`` (A symmetric positive semi-definite, b in its range) from x = 0.

    Parameters
    ----------
    apply_A, apply_M : callable ``(x, out) -> float``
        Operator and preconditioner on flat float64 arrays: write ``A x`` (``M⁻¹ x``) into
        *out* and return ``x·out``, which the callers compute on the fly.
    b : (n,) ndarray
    tol : float
        Stop when ‖r‖₂ ≤ tol ‖b‖₂.
    maxiter : int

    Returns
    -------
    x : (n,) ndarray
    info : CGInfo
    """
    x = np.zeros_like(b)
    norm_b = np.sqrt(kernels.dot(b, b))
    if norm_b == 0.0:
        return x, CGInfo(0, np.zeros(1), True)
    r = b.copy()
    z = np.empty_like(b)
    ap = np.empty_like(b)
    rz = apply_M(r, z)
    p = z.copy()
    history = [1.0]
    converged = False
    iterations = 0
    while iterations < maxiter:
        pap = apply_A(p, ap)
        if pap <= 0.0:
            break
        alpha = rz / pap
        rr = kernels.step(x, r, p, ap, alpha)
        iterations += 1
        history.append(np.sqrt(rr) / norm_b)
        progress.iteration(iterations, history[-1])
        if history[-1] <= tol:
            converged = True
            break
        rz_new = apply_M(r, z)
        kernels.new_direction(p, z, rz_new / rz)
        rz = rz_new
    return x, CGInfo(iterations, np.asarray(history), converged)
