"""`ms`: the Moulinec–Suquet basic scheme (continuous Green operator, fixed point).

Unknown: the gradient (strain) at pixel centres. With a homogeneous reference medium
``L0`` and its periodic Green operator ``Γ0``, the scheme iterates

    σ = L:ε + τ,   ε̂(ξ) ← ε̂(ξ) − Γ̂0(ξ):σ̂(ξ)  (ξ ≠ 0),   ε̂(0) = E,

until the equilibrium error ``√⟨|div σ|²⟩ / |⟨σ⟩|`` (in Fourier space, lengths scaled so
that the longest side of the cell is 1) falls below the tolerance. ``Γ̂0`` is applied as
``(Γ̂0 σ̂)_ai = sym(ξ_i N_ab(ξ) σ̂_bj ξ_j)`` with ``N = (L0_{aibj} ξ_i ξ_j)⁻¹``. On an
even grid the Nyquist wave number has no sign a real field can follow; where the sign
would change Γ̂0 (another component of ξ non-zero) that component is taken as 0, the
value of a real field's discrete derivative there, and where ξ then vanishes the strain
has no fluctuation (`wave_vectors`). With the continuous ξ there the iteration stalls, and
with ``Γ̂0 = L0⁻¹`` on all Nyquist frequencies a laminate loaded along its layers comes
out wrong (both tried). The reference medium is the mean of the extreme
phases: ``k0 = (k_min + k_max)/2`` for conduction, ``λ0 = (λ_min + λ_max)/2`` and
``μ0 = (μ_min + μ_max)/2`` for elasticity.

The scheme does not converge with an infinite contrast: a phase with a zero property (a
pore) is refused.

References
----------
.. [1] Moulinec, H. & Suquet, P. (1998). A numerical method for computing the overall
   response of nonlinear composites with complex microstructure. Comput. Methods Appl.
   Mech. Engrg. 157, 69–94.
.. [2] Moulinec, H. & Suquet, P. (1994). A fast numerical method for computing the
   linear and nonlinear mechanical properties of composites. C. R. Acad. Sci. Paris II
   318, 1417–1423.
"""

from __future__ import annotations

import numba as nb
import numpy as np

from ...core import tensors
from ...core.errors import InputError
from . import progress
from .cell import Cell, Load, Solution
from .fft import forward, inverse
from .kernels import Kernel
from .grid import phase_means


def _components(nc: int, dim: int) -> list[tuple[int, int]]:
    """Stored gradient components: all (0, i) for conduction, i ≤ j pairs for elasticity."""
    if nc == 1:
        return [(0, i) for i in range(dim)]
    return [(i, j) for i in range(dim) for j in range(i, dim)]


def reference_medium(L: np.ndarray) -> np.ndarray:
    """Moulinec–Suquet reference: the mean of the extreme phase moduli."""
    nc, dim = L.shape[1], L.shape[2]
    if nc == 1:
        eig = np.concatenate([np.linalg.eigvalsh(p[0, :, 0, :]) for p in L])
        return (0.5 * (eig.min() + eig.max()) * np.eye(dim)).reshape(1, dim, 1, dim)
    moduli = np.array([tensors.isotropic_projection(tensors.tensor_to_voigt(p)) for p in L])
    K, G = moduli[:, 0], moduli[:, 1]
    lam = K - (2.0 / 3.0 if dim == 3 else 1.0) * G
    lam0 = 0.5 * (lam.min() + lam.max())
    mu0 = 0.5 * (G.min() + G.max())
    K0 = lam0 + (2.0 / 3.0 if dim == 3 else 1.0) * mu0
    return tensors.voigt_to_tensor(tensors.stiffness_from_bulk_shear(K0, mu0, dim=dim))


def wave_vectors(shape: tuple[int, ...]) -> np.ndarray:
    """Wave vectors ξ (d, m) of the rfftn half spectrum, the longest cell side scaled to 1.

    On an even axis the Nyquist wave number ±π has no sign a real field can follow; where
    another component is non-zero the sign changes Γ̂0 (its ξ_k ξ_l terms), so there the
    Nyquist component is set to 0 (a real field's discrete derivative at Nyquist is 0).
    Alone (ξ = (±π, 0, 0) and permutations) it is kept: Γ̂0 is even there.
    """
    dim = len(shape)
    scale = max(shape)
    axes, nyq = [], []
    for k, n in enumerate(shape):
        idx = np.arange(n // 2 + 1) if k == dim - 1 else np.fft.fftfreq(n) * n
        axes.append(2.0 * np.pi * idx * scale / n)
        nyq.append(2 * np.abs(idx) == n)
    xi = np.array([g.ravel() for g in np.meshgrid(*axes, indexing="ij")])
    at_nyquist = np.array([g.ravel() for g in np.meshgrid(*nyq, indexing="ij")])
    nonzero = xi != 0.0
    for k in range(dim):
        others = np.any(np.delete(nonzero, k, axis=0), axis=0)
        xi[k, at_nyquist[k] & others] = 0.0
    return np.ascontiguousarray(xi)


@Kernel(split=(0, 1, 4))
def _local_law(eps, labels, Lc, tauc, sig):
    """``σ_c = Σ_c' Lc[p, c, c'] ε_c' + τ_c[p]`` per pixel (flat arrays (nv, N))."""
    nv, n = eps.shape
    for x in nb.prange(n):
        p = labels[x]
        for c in range(nv):
            s = tauc[p, c]
            for c2 in range(nv):
                s += Lc[p, c, c2] * eps[c2, x]
            sig[c, x] = s


@nb.njit(inline="always", cache=True)
def _pick(a, v0, v1, v2):
    if a == 0:
        return v0
    if a == 1:
        return v1
    return v2


@nb.njit(cache=True, fastmath=True)
def _green_one(eps_hat, sig_hat, xi, N, comp_a, comp_i, f):
    """`_green_update` at one frequency *f*; returns ``|σ̂·ξ|²``."""
    nc = N.shape[0]
    v0 = 0j
    v1 = 0j
    v2 = 0j
    for c in range(sig_hat.shape[0]):
        a = comp_a[c]
        i = comp_i[c]
        t = sig_hat[c, f] * xi[i, f]
        if a == 0:
            v0 += t
        elif a == 1:
            v1 += t
        else:
            v2 += t
        if nc > 1 and a != i:
            t = sig_hat[c, f] * xi[a, f]
            if i == 0:
                v0 += t
            elif i == 1:
                v1 += t
            else:
                v2 += t
    u0 = N[0, 0, f] * v0
    u1 = 0j
    u2 = 0j
    if nc > 1:
        u0 += N[0, 1, f] * v1
        u1 = N[1, 0, f] * v0 + N[1, 1, f] * v1
    if nc > 2:
        u0 += N[0, 2, f] * v2
        u1 += N[1, 2, f] * v2
        u2 = N[2, 0, f] * v0 + N[2, 1, f] * v1 + N[2, 2, f] * v2
    for c in range(sig_hat.shape[0]):
        a = comp_a[c]
        i = comp_i[c]
        if nc == 1:
            eps_hat[c, f] -= xi[i, f] * u0
        else:
            eps_hat[c, f] -= 0.5 * (xi[i, f] * _pick(a, u0, u1, u2)
                                    + xi[a, f] * _pick(i, u0, u1, u2))
    return abs(v0) ** 2 + abs(v1) ** 2 + abs(v2) ** 2


@Kernel(split=())
def _green_update(eps_hat, sig_hat, xi, N, comp_a, comp_i, weight, null):
    """``ε̂ ← ε̂ − Γ̂0 σ̂`` at every non-zero frequency (``ε̂ = 0`` where the effective
    wave vector vanishes); returns ``Σ w |σ̂·ξ|²``."""
    err = 0.0
    for f in nb.prange(1, sig_hat.shape[1]):
        if null[f]:
            for c in range(sig_hat.shape[0]):
                eps_hat[c, f] = 0.0
        else:
            err += weight[f] * _green_one(eps_hat, sig_hat, xi, N, comp_a, comp_i, f)
    return err


class MSSolver:
    """Moulinec–Suquet basic scheme on a `Cell` (pixel-centre unknowns).

    Raises
    ------
    InputError
        When a phase has a zero property.
    """

    method = "ms"

    def __init__(self, cell: Cell, tol: float, maxiter: int):
        if not cell.solid_phases.all():
            raise InputError("a phase has a zero property (a pore): the Moulinec-Suquet basic "
                             "scheme ('ms') does not converge at infinite contrast; use "
                             "method='fft' (or 'fe'), which handle pores")
        self.cell, self.tol, self.maxiter = cell, tol, maxiter
        nc, dim, shape = cell.ncomp, cell.dim, cell.shape
        comps = _components(nc, dim)
        self.comp_a = np.array([c[0] for c in comps], dtype=np.int64)
        self.comp_i = np.array([c[1] for c in comps], dtype=np.int64)
        factor = np.array([2.0 if nc > 1 and a != i else 1.0 for a, i in comps])
        self.Lc = np.ascontiguousarray(np.array(
            [[cell.L[:, a, i, b, j] for (b, j) in comps] for (a, i) in comps]
        ).transpose(2, 0, 1) * factor[None, None, :])
        self.labels = np.ascontiguousarray(cell.labels.ravel(), dtype=np.int32)
        L0 = reference_medium(cell.L)
        self.xi = wave_vectors(shape)
        self.null = np.ascontiguousarray(~np.any(self.xi != 0.0, axis=0))
        self.null[0] = False
        acoustic = np.einsum("aibj,im,jm->abm", L0, self.xi, self.xi)
        acoustic[:, :, self.null | (np.arange(self.null.size) == 0)] = np.eye(nc)[:, :, None]
        self.N = np.ascontiguousarray(np.moveaxis(
            np.linalg.inv(np.moveaxis(acoustic, -1, 0)), 0, -1))
        self.half_shape = shape[:-1] + (shape[-1] // 2 + 1,)
        last = np.arange(shape[-1] // 2 + 1)
        w_last = np.where((last == 0) | (2 * last == shape[-1]), 1.0, 2.0)
        self.weight = np.ascontiguousarray(np.broadcast_to(w_last, self.half_shape).ravel())
        self._factor = factor

    def solve(self, load: Load, fields: bool = False, earlier: list | None = None,
              criterion: str = "energy", start: np.ndarray | None = None,
              keep: bool = False) -> Solution:
        """Run the fixed point for one load case (it stops on its equilibrium error; the
        fields are not Galerkin iterates, so *earlier* and *criterion* are not used, and
        it always starts from the uniform strain: *start* and *keep* are not used)."""
        cell = self.cell
        nv, shape, n = len(self.comp_a), cell.shape, cell.labels.size
        tau = np.zeros((cell.n_phases, nv)) if load.tau is None else \
            np.ascontiguousarray(load.tau[:, self.comp_a, self.comp_i])
        E = np.array([load.E[a, i] for a, i in zip(self.comp_a, self.comp_i)])
        eps = np.broadcast_to(E[:, None], (nv, n)).copy()
        sig = np.empty_like(eps)
        eps_hat = np.zeros((nv,) + self.half_shape, dtype=np.complex128)
        history, converged, iterations = [], False, 0
        while True:
            _local_law(eps, self.labels, self.Lc, tau, sig)
            sig_hat = forward(sig.reshape((nv,) + shape))
            mean = sig_hat.reshape(nv, -1)[:, 0].real
            norm = np.sqrt(np.sum(self._factor * mean ** 2))
            eps_hat.reshape(nv, -1)[:, 0] = E * n
            err2 = _green_update(eps_hat.reshape(nv, -1), sig_hat.reshape(nv, -1), self.xi,
                                 self.N, self.comp_a, self.comp_i, self.weight, self.null)
            history.append(np.sqrt(err2) / norm if norm > 0 else 0.0)
            progress.iteration(iterations, history[-1])
            if history[-1] <= self.tol or iterations >= self.maxiter:
                converged = history[-1] <= self.tol
                break
            eps = inverse(eps_hat, shape, keep=True).reshape(nv, n)
            iterations += 1
        g = np.empty((cell.ncomp, cell.dim) + shape)
        for c, (a, i) in enumerate(zip(self.comp_a, self.comp_i)):
            g[a, i] = eps[c].reshape(shape)
            g[i if cell.ncomp > 1 else a, a if cell.ncomp > 1 else i] = g[a, i]
        return Solution(phase_means(cell.labels, g, cell.n_phases), iterations,
                        np.asarray(history), converged, g if fields else None)
