"""Preconditioned conjugate gradients that stop on the accuracy of the effective property.

The effective property of a load case is an energy. For a load with mean gradient ``E``
the diagonal entry of the effective tensor is ``C_jj = (S − bᵀx*)/N`` with ``S/N`` the
arithmetic (Voigt) mean ``E:⟨L⟩:E``; CG started from zero keeps ``bᵀx_k = ‖x_k‖²_A``
(Galerkin orthogonality), so the entry computed from the iterate ``x_k`` exceeds the exact
one by exactly ``‖x* − x_k‖²_A / N`` — the error is quadratic in the solution error.

Stopping rule ("energy", the default). CG's own coefficients give
``‖x_k‖²_A = Σ_{i<k} α_i γ_i`` (``γ_i = r_iᵀM⁻¹r_i``) and, for a delay ``d``,

    ‖x* − x_{k−d}‖²_A = Σ_{i=k−d}^{k−1} α_i γ_i + ‖x* − x_k‖²_A

(Strakoš & Tichý 2002, eq. 4.9; it holds to working accuracy in finite precision, their
section 5). The window sum ``W_k`` is a lower bound of the error of ``x_{k−d}`` and a
good estimate when the error fell well over the window. CG returns ``x_k`` as soon as

    W_k ≤ tol · (S − ‖x_k‖²_A),      d = max(5, ⌊k/3⌋),

i.e. when the estimated relative error of the effective diagonal entry is below ``tol``
for the earlier iterate ``x_{k−d}``; the iterate returned is ``d`` steps better (the
A-norm error decreases monotonically). The delay grows with ``k`` because the plateaus
of CG on high-contrast images last longer the longer it runs: a fixed delay of 5, 10 or
20 steps underestimated the error 10²–10⁴-fold on 2D images with contrast 10³–10⁶ and
pores, ``k/3`` stayed within the tolerance on every case measured except a 3D image with
rigid (10⁶) particles and pores, where it stopped at 28 × tol, i.e. 3·10⁻⁵ at the
default ``tol`` (measured against solves to a relative residual of 10⁻¹¹; the tests keep
the default within 10⁻⁴ of tight solves). Off-diagonal entries computed in the energy
form (`methods.Run.energy_form`) err by ``e_iᵀAe_j/N``, so ``|ΔC_ij| ≤ √(ΔC_ii ΔC_jj)``.

Loads without a known ``S`` (an eigenstrain alone) and ``criterion="residual"`` stop on
``‖r_k‖₂ ≤ tol ‖b‖₂``.

Warm start. From a start ``x₀`` (the solution of the same image with other phase
properties, e.g. the previous temperature) CG solves for the correction: ``A d = r₀``,
``r₀ = b − A x₀``, from ``d = 0``, and returns ``x_k = x₀ + d_k``. Its error
``x* − x₀ − d_k`` is the error of the correction, so the window sum above bounds
``‖x* − x_k‖²_A`` exactly as before. What changes is the effective entry: ``bᵀx_k`` is no
longer ``‖x_k‖²_A``, and the entry must come from the energy functional

    J(x) = S − 2bᵀx + xᵀAx = S − bᵀx − xᵀr,     r = b − Ax.

With ``Ax* = b``, ``J(x) = S − x*ᵀAx* + (x − x*)ᵀA(x − x*)``, so
``J(x) − J(x*) = ‖x − x*‖²_A`` — the same one-sided, quadratic error as the cold start
(``J(x*) = S − bᵀx*`` is N times the exact entry). Along the iterations,
``J(x₀ + d) = J(x₀) − 2r₀ᵀd + dᵀAd`` and CG from zero keeps ``r₀ᵀd_k = ‖d_k‖²_A``, so
``J(x_k) = J(x₀) − ‖d_k‖²_A``: the stopping rule is the cold one with ``J(x₀)`` in place of
``S``. The entry computed from the mean flux is ``(S − bᵀx)/N`` and differs from
``J(x)/N`` by ``xᵀr/N``; `solve_system` returns that correction (zero to rounding for a
cold start), which `methods.Run.energy_form` subtracts from the diagonal. A start whose
residual is below ``EXACT_START ‖b‖₂`` is returned as it is (zero iterations): its
relative energy error is of order κ·EXACT_START², negligible for any condition number
κ < 10¹⁸.

References
----------
.. [1] Hestenes, M. R. & Stiefel, E. (1952). Methods of conjugate gradients for solving
   linear systems. J. Res. Natl. Bur. Stand. 49, 409–436.
.. [2] Saad, Y. (2003). Iterative Methods for Sparse Linear Systems, 2nd ed., Alg. 9.1.
   SIAM.
.. [3] Strakoš, Z. & Tichý, P. (2002). On error estimation in the conjugate gradient
   method and why it works in finite precision computations. Electron. Trans. Numer.
   Anal. 13, 56–80.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from . import kernels
from . import progress
from .cell import Load

Apply = Callable[[np.ndarray, np.ndarray], float]

CRITERIA = ("energy", "residual")
VANISHING = 1e-12
"""An effective entry below ``VANISHING`` times its Voigt value (no load path, e.g. a pore
layer across the cell) is resolved to that fraction of the Voigt value, not relative to
itself."""
MIN_DELAY = 5
"""Smallest delay ``d`` of the error estimate (iterations); d = max(5, ⌊k/3⌋)."""
EXACT_START = 1e-12
"""A start with ``‖b − Ax₀‖₂ ≤ EXACT_START ‖b‖₂`` is taken as the solution (see the module
notes)."""


@dataclass(frozen=True)
class CGInfo:
    """Facts of one CG solve.

    Attributes
    ----------
    iterations : int
    residuals : ndarray
        ‖r_k‖₂ / ‖b‖₂ for k = 0 … iterations.
    converged : bool
    energy_error : float or None
        Estimated relative error of the load's effective diagonal entry at the stop
        (energy rule only).
    """

    iterations: int
    residuals: np.ndarray
    converged: bool
    energy_error: float | None = None


def pcg(apply_A: Apply, apply_M: Apply, b: np.ndarray, tol: float, maxiter: int,
        energy: float | None = None, criterion: str = "energy",
        residual: np.ndarray | None = None,
        x0: np.ndarray | None = None) -> tuple[np.ndarray, CGInfo]:
    """Solve ``A x = b`` (A symmetric positive semi-definite, b in its range) from x = 0 or
    from a start *x0* (CG on the correction, see the module notes).

    Parameters
    ----------
    apply_A, apply_M : callable ``(x, out) -> float``
        Operator and preconditioner on flat float64 arrays: write ``A x`` (``M⁻¹ x``) into
        *out* and return ``x·out``, which the callers compute on the fly.
    b : (n,) ndarray
    tol : float
        Energy rule: relative error of the effective diagonal entry (see the module notes);
        residual rule: ‖r‖₂ ≤ tol ‖b‖₂.
    maxiter : int
    energy : float, optional
        ``S``: the energy of the uniform state of the load in the units of ``bᵀx``
        (N times the Voigt mean). Without it the residual rule is used.
    criterion : {'energy', 'residual'}
    residual : (n,) ndarray, optional
        Filled with the final residual ``b − Ax`` (used by the energy-form tensor).
    x0 : (n,) ndarray, optional
        Start (any float dtype); zero when omitted.

    Returns
    -------
    x : (n,) ndarray
    info : CGInfo
    """
    norm_b = np.sqrt(kernels.dot(b, b))
    r = residual if residual is not None else np.empty_like(b)
    if x0 is None:
        x = np.zeros_like(b)
        r[:] = b
        start = 1.0
    else:
        x = np.array(x0, dtype=b.dtype)
        ax = np.empty_like(b)
        apply_A(x, ax)
        bx = kernels.dot(b, x)
        np.subtract(b, ax, out=r)              # *residual* may be *b* itself
        del ax
        start = np.sqrt(kernels.dot(r, r)) / norm_b if norm_b > 0.0 else 0.0
        if energy is not None:
            energy = energy - bx - kernels.dot(x, r)                         # J(x₀)
    if norm_b == 0.0 or start <= (EXACT_START if x0 is not None else 0.0):
        return x, CGInfo(0, np.array([start]), True, 0.0 if energy is not None else None)
    use_energy = criterion == "energy" and energy is not None and energy > 0.0
    z = np.empty_like(b)
    ap = z              # one buffer: z is used up in p before A p is written, and A p
    rz = apply_M(r, z)  # before the next z
    p = z.copy()
    history = [start]
    norm_x = [0.0]                 # ‖x_k − x₀‖²_A = Σ_{i<k} α_i γ_i
    estimate = None
    converged = False
    iterations = 0
    while iterations < maxiter:
        pap = apply_A(p, ap)
        if pap <= 0.0:
            break
        alpha = rz / pap
        rr = kernels.step(x, r, p, ap, alpha)
        iterations += 1
        norm_x.append(norm_x[-1] + alpha * rz)
        history.append(np.sqrt(rr) / norm_b)
        progress.iteration(iterations, history[-1])
        if use_energy:
            estimate = relative_energy_error(norm_x, energy)
            if estimate is not None and estimate <= tol:
                converged = True
                break
        elif history[-1] <= tol:
            converged = True
            break
        rz_new = apply_M(r, z)
        kernels.new_direction(p, z, rz_new / rz)
        rz = rz_new
    return x, CGInfo(iterations, np.asarray(history), converged,
                     None if not use_energy else estimate)


def solve_system(apply_A: Apply, apply_M: Apply, b: np.ndarray, solver, load: Load,
                 earlier: list | None, criterion: str, x0: np.ndarray | None = None):
    """`pcg` on one load case with the energy of its uniform state (from the start *x0* when
    given), then the energy-form corrections ``x_iᵀ r / N`` against the *earlier*
    fluctuations (appending this one) and its own ``xᵀr / N`` (see the module notes).

    *b* is overwritten with the final residual (it serves as CG's residual vector: one
    full-length vector less at the peak).

    Returns
    -------
    x, info, cross, own
    """
    n = solver.cell.labels.size
    voigt = load.mean_energy(solver.cell)
    r = b
    x, info = pcg(apply_A, apply_M, b, solver.tol, solver.maxiter,
                  None if voigt is None else voigt * n, criterion, residual=r, x0=x0)
    cross = np.zeros(0)
    if earlier is not None:
        cross = np.array([mixed_dot(e, r) / n for e in earlier])
        earlier.append(x.astype(np.float16))
    return x, info, cross, kernels.dot(x, r) / n


def mixed_dot(single: np.ndarray, double: np.ndarray, block: int = 1 << 16) -> float:
    """``Σ single·double`` of a low-precision and a float64 vector, summed in double
    precision over blocks (no full-length double copy)."""
    return float(sum(np.dot(single[i:i + block].astype(np.float64), double[i:i + block])
                     for i in range(0, single.size, block)))


def relative_energy_error(norm_x: list[float], energy: float) -> float | None:
    """``W_k / max(S − ‖x_k‖²_A, VANISHING·S)`` from the energies ``‖x_i‖²_A``
    (i = 0 … k), or None before the first ``MIN_DELAY`` steps (see the module notes)."""
    k = len(norm_x) - 1
    delay = max(MIN_DELAY, k // 3)
    if k < delay:
        return None
    remaining = max(energy - norm_x[k], VANISHING * energy)
    return (norm_x[k] - norm_x[k - delay]) / remaining
