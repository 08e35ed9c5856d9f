"""`fft`: matrix-free pixel-element operator, CG preconditioned in Fourier space.

The preconditioner is the same discrete operator for a homogeneous reference medium
``L0``; on the periodic grid it is diagonal in Fourier space (an ``nc × nc`` block per
frequency, `grid.reference_symbol`), so one application costs ``nc`` forward and ``nc``
inverse real FFTs. The zero frequency (the mean of the fluctuation) is set to zero.

Pores. Nodes that touch only zero-property pixels have zero rows and columns; the
preconditioned residual is multiplied by a 0/1 mask at those nodes (a projection onto
the nodes that carry the problem), so they stay exactly zero and never enter the Krylov
space. Solid islands and hinged parts leave a null space of rigid/constant modes in
which the right-hand side has no component (the system is consistent); CG never
amplifies it and no flux or stress depends on it.

References
----------
.. [1] Leuschner, M. & Fritzen, F. (2018). Fourier-Accelerated Nodal Solvers (FANS) for
   homogenization problems. Comput. Mech. 62, 359–392.
.. [2] Schneider, M., Ospald, F. & Kabel, M. (2016). Computational homogenization of
   elasticity on a staggered grid. Int. J. Numer. Methods Eng. 105, 693–720 (CG with a
   Fourier preconditioner for pores).
"""

from __future__ import annotations

import numpy as np
import scipy.fft

from ...core import tensors
from . import grid
from . import kernels
from . import progress
from .cell import Cell, Load, Solution
from .cg import solve_system


def workers() -> int:
    """Threads for the transforms and kernels (`kernels.threads`: ``POLISECT_THREADS`` or
    every core)."""
    return kernels.threads()


def forward(fields: np.ndarray) -> np.ndarray:
    """Real FFT of stacked fields (n, *grid) over the grid axes (one call, all cores)."""
    with progress.transform("forward"):
        return scipy.fft.rfftn(fields, axes=tuple(range(1, fields.ndim)), workers=workers())


def inverse(spectrum: np.ndarray, shape: tuple[int, ...], keep: bool = False) -> np.ndarray:
    """Inverse of `forward`: (n, *half) → (n, *shape). *spectrum* is destroyed unless *keep*.

    A complex inverse over the leading axes in place, then a real inverse along the last
    axis: 25–30 % faster than ``irfftn`` here (measured on 128³ and 1024²).
    """
    with progress.transform("inverse"):
        work = spectrum.copy() if keep else spectrum
        work = scipy.fft.ifftn(work, axes=tuple(range(1, len(shape))), workers=workers(),
                               overwrite_x=True)
        return scipy.fft.irfft(work, n=shape[-1], axis=-1, workers=workers(),
                               overwrite_x=True)


def default_reference(L: np.ndarray) -> np.ndarray:
    """Isotropic reference medium for the preconditioner.

    Conduction: ``k0 I`` with k0 the geometric mean of the extreme phase means (CG does
    not depend on the scale of a scalar reference). Elasticity: isotropic with
    ``G0 = √(G_min G_max)`` over the non-pore phases and ``K0 = G0 · min_p(K_p/G_p)``
    (isotropic projections; K is the in-plane K₂ in 2D). Only the ratio K0/G0 matters to
    CG; the smallest phase ratio took 6–19 % fewer iterations than the geometric means of
    K and G on Al/SiC, epoxy/glass and rubber/steel images with pores, 2D and 3D (measured).
    """
    nc, dim = L.shape[1], L.shape[2]
    phases = L[np.any(L.reshape(L.shape[0], -1) != 0.0, axis=1)]
    if nc == 1:
        means = [np.trace(p[0, :, 0, :]) / dim for p in phases] or [1.0]
        k0 = np.sqrt(min(means) * max(means))
        return (k0 * np.eye(dim)).reshape(1, dim, 1, dim)
    moduli = np.array([tensors.isotropic_projection(tensors.tensor_to_voigt(p))
                       for p in phases] or [(1.0, 1.0)])
    G0 = np.sqrt(moduli[:, 1].min() * moduli[:, 1].max())
    K0 = G0 * np.min(moduli[:, 0] / moduli[:, 1])
    return tensors.voigt_to_tensor(tensors.stiffness_from_bulk_shear(K0, G0, dim=dim))


def inverse_symbol(K0: np.ndarray) -> np.ndarray:
    """Per-frequency inverse of the reference symbol, zero at the zero frequency."""
    nc = K0.shape[0]
    if nc == 1:
        with np.errstate(divide="ignore"):
            inv = np.where(K0 > 0.0, 1.0 / np.where(K0 > 0.0, K0, 1.0), 0.0)
        return inv
    stacked = np.moveaxis(K0, (0, 1), (-2, -1)).copy()
    origin = (0,) * (K0.ndim - 2)
    stacked[origin] = np.eye(nc)
    inv = np.linalg.inv(stacked)
    inv[origin] = 0.0
    return np.ascontiguousarray(np.moveaxis(inv, (-2, -1), (0, 1)))


class FourierSolver:
    """FFT-preconditioned CG on the pixel-element system of a `Cell`.

    Parameters
    ----------
    cell : Cell
    tol : float
        Relative residual ‖r‖₂/‖b‖₂ at which CG stops.
    maxiter : int
    reference : (nc, d, nc, d) ndarray, optional
        Reference medium; `default_reference` when omitted.
    """

    method = "fft"

    def __init__(self, cell: Cell, tol: float, maxiter: int, reference: np.ndarray | None = None):
        self.cell = cell
        self.tol = tol
        self.maxiter = maxiter
        self.labels = np.ascontiguousarray(cell.labels, dtype=np.int32)
        self.start, self.cols, self.table, self.cid = grid.operator_terms(cell.L)
        L0 = default_reference(cell.L) if reference is None else reference
        # single precision: the preconditioner need only be symmetric positive definite,
        # not exact (mixed precision halves its largest array; iterations unchanged, tests)
        self.kinv = inverse_symbol(grid.reference_symbol(L0, cell.shape)).astype(np.float32)
        self._kinv_flat = self.kinv.reshape(cell.ncomp, cell.ncomp, -1)
        self._kernel = kernels.apply_2d if cell.dim == 2 else kernels.apply_3d
        self._chunks = max(1, min(cell.shape[0], workers()))
        self.mask = np.broadcast_to(grid.active_nodes(cell.solid),
                                    (cell.ncomp,) + cell.shape).astype(np.uint8).ravel()

    def apply(self, x: np.ndarray, out: np.ndarray) -> float:
        """``out = A x`` on flat arrays of length nc·N; returns ``x·Ax``."""
        shape = (self.cell.ncomp,) + self.cell.shape
        return self._kernel(x.reshape(shape), self.labels, self.table, self.cid, self.start,
                            self.cols, out.reshape(shape), self._chunks)

    def precondition(self, r: np.ndarray, out: np.ndarray) -> float:
        """``out = K0⁻¹ r`` through the Fourier transform (all components in one call),
        zero at floating nodes; returns ``r·out``."""
        nc, shape = self.cell.ncomp, self.cell.shape
        spectrum = forward(r.reshape((nc,) + shape))
        kernels.fourier_multiply(spectrum.reshape(nc, -1), self._kinv_flat)
        z = inverse(spectrum, shape)
        return kernels.store_dot(z.reshape(-1), out, r, self.mask)

    def solve(self, load: Load, fields: bool = False, earlier: list | None = None,
              criterion: str = "energy", start: np.ndarray | None = None,
              keep: bool = False) -> Solution:
        """Solve one load case.

        *earlier* holds the fluctuations of the load cases solved before (float16); the
        energy-form corrections against them are computed, then this fluctuation is
        appended (see `methods.Run.energy_form`). *start* (nc, *grid) is the fluctuation
        CG starts from (warm start, `cg`; zero at floating nodes); *keep* keeps the
        solved fluctuation in the solution (float32).
        """
        cell = self.cell
        b = grid.load_vector(self.labels, load.sigma0(cell)).ravel()
        x0 = None if start is None else np.asarray(start, dtype=np.float64).ravel() * self.mask
        x, info, cross, own = solve_system(self.apply, self.precondition, b, self, load,
                                           earlier, criterion, x0)
        u = x.reshape((cell.ncomp,) + cell.shape)
        g = grid.centre_gradient(u, load.E)
        return Solution(grid.phase_means(self.labels, g, cell.n_phases), info.iterations,
                        info.residuals, info.converged, g if fields else None, cross,
                        info.energy_error, own, u.astype(np.float32) if keep else None)

