"""`fe`: the pixel-element system assembled as a sparse matrix, AMG-preconditioned CG.

The element matrices are built the textbook way, ``K_e = Σ_q w_q B_qᵀ L B_q`` over the
2^d Gauss points, independently of the mode form used by the matrix-free kernels, and
assembled on the periodic node grid (a 3^d-point stencil per node and component).

Singular parts are removed before the AMG hierarchy is built:

* nodes that touch only zero-property (pore) pixels have empty rows; they leave the system;
* every node-connected solid cluster (`topology.periodic_clusters`) is pinned: one node
  for conduction (the constant); for elasticity the translations at one node, and the
  periodic rotations (all of them for an island, the one about the axis of a cluster that
  wraps in one direction in 3D) at neighbouring nodes of the same pixel. A pinned dof
  keeps its place with an identity row and column, so the matrix keeps its node blocks
  (block smoothed aggregation, BSR) and the solution is zero there.

The dropped equations are implied by the others because the load is in the range of the
operator, so the reduced solution solves the full system. Parts hinged to a cluster at a
single node (2D) or edge (3D) keep a mechanism; CG copes with that consistent
semi-definite remainder.

References
----------
.. [1] Vaněk, P., Mandel, J. & Brezina, M. (1996). Algebraic multigrid by smoothed
   aggregation for second and fourth order elliptic problems. Computing 56, 179–196.
.. [2] Olson, L. N. & Schroder, J. B. (2018). PyAMG: algebraic multigrid solvers in
   Python v4.0. https://github.com/pyamg/pyamg
.. [3] Hughes, T. J. R. (2000). The Finite Element Method, ch. 3. Dover.
"""

from __future__ import annotations

import itertools

import numpy as np
import pyamg
import scipy.sparse as sp

from . import grid
from .cell import Cell, Load, Solution
from .cg import solve_system
from .topology import periodic_clusters


def _corners(dim: int) -> np.ndarray:
    return np.array(list(itertools.product((0, 1), repeat=dim)))


def shape_gradients(xi: np.ndarray) -> np.ndarray:
    """Derivatives ``∂N_c/∂x_i`` (2^d, d) of the bilinear/trilinear shape functions at *xi*."""
    corners = _corners(len(xi))
    values = np.where(corners == 1, xi, 1.0 - xi)           # φ_{c_k}(ξ_k)
    out = np.empty(corners.shape)
    for i in range(len(xi)):
        others = np.prod(np.delete(values, i, axis=1), axis=1)
        out[:, i] = (2 * corners[:, i] - 1) * others
    return out


def element_matrices(L: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Element matrices and the element-mean gradient operator by Gauss integration.

    Parameters
    ----------
    L : (n_phases, nc, d, nc, d) ndarray

    Returns
    -------
    K : (n_phases, 2^d·nc, 2^d·nc) ndarray
        Local dof order (corner, component), corners in C order of their offsets.
    B_mean : (nc·d, 2^d·nc) ndarray
        Mean over the element of the gradient operator.
    """
    n_phases, nc, dim = L.shape[:3]
    nn = 2 ** dim
    flat = L.reshape(n_phases, nc * dim, nc * dim)
    K = np.zeros((n_phases, nn * nc, nn * nc))
    B_mean = np.zeros((nc * dim, nn * nc))
    weight = 0.5 ** dim
    for xi in itertools.product((grid.GAUSS_LOW, 1.0 - grid.GAUSS_LOW), repeat=dim):
        dN = shape_gradients(np.array(xi))
        B = np.zeros((nc * dim, nn * nc))
        for a in range(nc):
            B[a * dim:(a + 1) * dim, a::nc] = dN.T
        K += weight * np.einsum("ri,prs,sj->pij", B, flat, B)
        B_mean += weight * B
    return K, B_mean


def assemble(labels: np.ndarray, K: np.ndarray) -> sp.csr_matrix:
    """Global periodic matrix, dof ``node·nc + component``, node = C-order pixel index."""
    shape, dim, n = labels.shape, labels.ndim, labels.size
    nn = 2 ** dim
    nc = K.shape[1] // nn
    axes = tuple(range(dim))
    offsets = list(itertools.product((-1, 0, 1), repeat=dim))
    index = np.arange(n, dtype=np.int32).reshape(shape)
    data = np.zeros((n, nc, len(offsets), nc))
    cols = np.empty((n, nc, len(offsets), nc), dtype=np.int32)
    for oi, o in enumerate(offsets):
        neighbour = np.roll(index, tuple(-np.array(o)), axis=axes).ravel()
        for b in range(nc):
            cols[:, :, oi, b] = (neighbour * nc + b)[:, None]
    corners = _corners(dim)
    for ci, c in enumerate(corners):
        # phase of the pixel whose corner c is this node
        phase = np.roll(labels, tuple(c), axis=axes).ravel()
        for cj, c2 in enumerate(corners):
            block = K[:, ci * nc:(ci + 1) * nc, cj * nc:(cj + 1) * nc]
            data[:, :, offsets.index(tuple(c2 - c)), :] += block[phase]
    width = len(offsets) * nc
    indptr = np.arange(0, n * nc * width + 1, width, dtype=np.int64)
    A = sp.csr_matrix((data.ravel(), cols.ravel(), indptr), shape=(n * nc, n * nc))
    A.sum_duplicates()
    A.eliminate_zeros()
    return A


def memory_estimate(shape: tuple[int, ...], ncomp: int) -> float:
    """Rough peak bytes of `AMGSolver` (assembly, reduced copy and hierarchy)."""
    n = int(np.prod(shape))
    nnz = n * ncomp * ncomp * 3 ** len(shape)
    return 4.0 * nnz * 12.0 + 10.0 * n * ncomp * 8.0


def pinned_dofs(solid: np.ndarray, nc: int) -> np.ndarray:
    """Dofs fixed to zero so that every solid cluster is held (see module notes)."""
    shape, dim = solid.shape, solid.ndim
    pins = []
    for cluster in periodic_clusters(solid):
        p = np.array(cluster.pixel)
        fixed = [(p, a) for a in range(nc)]
        rank = len(cluster.winding)
        unit = np.eye(dim, dtype=int)
        if nc > 1 and rank == 0:
            fixed += [(p + unit[0], 1)] if dim == 2 else \
                     [(p + unit[0], 1), (p + unit[0], 2), (p + unit[1], 2)]
        elif nc > 1 and dim == 3 and rank == 1:
            w = cluster.winding[0]
            k = int(np.argmin(np.abs(w)))
            fixed.append((p + unit[k], int(np.argmax(np.abs(np.cross(w, unit[k]))))))
        for node, a in fixed:
            pins.append(np.ravel_multi_index(tuple(node % np.array(shape)), shape) * nc + a)
    return np.unique(np.array(pins, dtype=np.int64))


class AMGSolver:
    """Smoothed-aggregation AMG preconditioned CG on the assembled system of a `Cell`."""

    method = "fe"

    def __init__(self, cell: Cell, tol: float, maxiter: int):
        self.cell = cell
        self.tol = tol
        self.maxiter = maxiter
        nc = cell.ncomp
        self.K, self.B_mean = element_matrices(cell.L)
        A = assemble(cell.labels, self.K)
        solid = cell.solid
        self.kept = np.flatnonzero(np.repeat(grid.active_nodes(solid).ravel(), nc))
        free = np.ones(self.kept.size)
        free[np.searchsorted(self.kept, pinned_dofs(solid, nc))] = 0.0
        self.free = free
        A = A[self.kept][:, self.kept]
        A = sp.diags(free) @ A @ sp.diags(free) + sp.diags(1.0 - free)
        self.A = A.tobsr(blocksize=(nc, nc)) if nc > 1 else A.tocsr()
        near_null = np.zeros((self.kept.size, nc))
        near_null[np.arange(self.kept.size), self.kept % nc] = free
        self.hierarchy = pyamg.smoothed_aggregation_solver(
            self.A, B=near_null, symmetry="symmetric",
            smooth=("jacobi", {"weighting": "local"}))
        self._M = self.hierarchy.aspreconditioner(cycle="V")

    def apply(self, x: np.ndarray, out: np.ndarray) -> float:
        out[:] = self.A @ x
        return float(x @ out)

    def precondition(self, r: np.ndarray, out: np.ndarray) -> float:
        out[:] = self._M.matvec(r)
        return float(r @ out)

    def load_vector(self, load: Load) -> np.ndarray:
        """Assembled right-hand side ``−Σ_e B̄ᵀ σ₀`` (full dof numbering)."""
        cell = self.cell
        nc, dim = cell.ncomp, cell.dim
        element = -np.einsum("rj,pr->pj", self.B_mean,
                             load.sigma0(cell).reshape(cell.n_phases, -1))
        b = np.zeros(cell.shape + (nc,))
        for ci, c in enumerate(_corners(dim)):
            part = element[:, ci * nc:(ci + 1) * nc][cell.labels]
            b += np.roll(part, tuple(c), axis=tuple(range(dim)))
        return b.ravel()

    def solve(self, load: Load, fields: bool = False, earlier: list | None = None,
              criterion: str = "energy", start: np.ndarray | None = None,
              keep: bool = False) -> Solution:
        """Solve one load case (*earlier*, *start*, *keep*: as for `FourierSolver.solve`;
        the start is taken at the kept dofs, zero at the pinned ones)."""
        cell = self.cell
        b = self.load_vector(load)[self.kept] * self.free
        x0 = None if start is None else \
            np.moveaxis(np.asarray(start, dtype=np.float64), 0, -1).ravel()[self.kept] * self.free
        x, info, cross, own = solve_system(self.apply, self.precondition, b, self, load,
                                           earlier, criterion, x0)
        u = np.zeros(cell.labels.size * cell.ncomp)
        u[self.kept] = x
        u = np.moveaxis(u.reshape(cell.shape + (cell.ncomp,)), -1, 0)
        g = grid.centre_gradient(u, load.E)
        return Solution(grid.phase_means(cell.labels, g, cell.n_phases), info.iterations,
                        info.residuals, info.converged, g if fields else None, cross,
                        info.energy_error, own, u.astype(np.float32) if keep else None)
