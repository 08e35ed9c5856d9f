"""The pixel/voxel-element discretization shared by every solver of this package.

Nodes sit on pixel corners of a periodic grid (node ``x`` is the lower corner of pixel
``x``), so there are as many nodes as pixels. The unknown is a periodic nodal fluctuation
``u`` (``nc`` components: 1 for conduction, ``d`` for elasticity) around an imposed mean
gradient ``E``; each pixel is a bilinear (2D) or trilinear (3D) element with a constant
"gradient → flux" tensor ``L_{aibj}`` (``σ_ai = L_aibj g_bj + τ_ai``, with an optional
per-phase prestress ``τ`` for eigenstrains) and full 2×2 / 2×2×2 Gauss integration.

Mode form of the element operator
---------------------------------
Per axis, a node→pixel map is either the sum ``S f(i) = f(i) + f(i+1)`` or the difference
``D f(i) = f(i+1) − f(i)``. For bilinear shape functions on [0, 1] the 1D integrals are
``∫ N N = (S̄ᵀS̄ + DᵀD/12)``, ``∫ N' N = D·S̄``, ``∫ N' N' = DᵀD`` with ``S̄ = S/2``; the
two-point Gauss rule integrates all of them exactly. Hence the fully integrated element
bilinear form is, exactly,

    a(u, v) = Σ_m w_m Σ_{i,j ∉ m} L_aibj · (Q_{m∪i} u_b)(Q_{m∪j} v_a),

where ``m`` runs over the sets of axes (|m| < d) that carry a difference, ``Q_P`` applies
D on the axes in ``P`` and S on the others, and ``w_m = 1 / (4^{d−1−|m|} 12^{|m|})``.
``m = ∅`` is the centre-point gradient; the others are the hourglass modes that full
integration keeps. The matrix-free kernels evaluate this form (``2^d − 1`` quantities per
component, one pixel line at a time); `solve.fe` assembles the same element matrices by
the Gauss-point loop, and the tests check the two against each other.

Quantities are indexed ``a·2^d + P`` with the bit ``1 << (d − 1 − k)`` of ``P`` set when
axis ``k`` carries a difference.

References
----------
.. [1] Leuschner, M. & Fritzen, F. (2018). Fourier-Accelerated Nodal Solvers (FANS) for
   homogenization problems. Comput. Mech. 62, 359–392.
.. [2] Hughes, T. J. R. (2000). The Finite Element Method, ch. 3–4 (bilinear and
   trilinear elements, Gauss integration). Dover.
"""

from __future__ import annotations

import itertools

import numpy as np

GAUSS_LOW = 0.5 - 0.5 / np.sqrt(3.0)
"""Lower abscissa of the two-point Gauss rule on [0, 1] (the other is 1 − GAUSS_LOW)."""


def axis_bit(dim: int, axis: int) -> int:
    """Bit of pattern ``P`` that marks a difference along *axis*."""
    return 1 << (dim - 1 - axis)


def mode_weight(dim: int, hourglass_axes: int) -> float:
    """Weight ``w_m`` of a mode with ``|m| = hourglass_axes`` (sum/difference scaling)."""
    return 1.0 / (4.0 ** (dim - 1 - hourglass_axes) * 12.0 ** hourglass_axes)


def mode_matrix(L: np.ndarray) -> np.ndarray:
    """Per-phase matrix ``M[p, (a,P), (b,P')]`` of the element form in the mode basis.

    Parameters
    ----------
    L : (n_phases, nc, d, nc, d) ndarray
        Gradient → flux tensor of each phase.

    Returns
    -------
    M : (n_phases, nc·2^d, nc·2^d) ndarray
        Symmetric when every ``L`` has major symmetry.
    """
    n_phases, nc, dim = L.shape[0], L.shape[1], L.shape[2]
    nq = 2 ** dim
    M = np.zeros((n_phases, nc * nq, nc * nq))
    for m in range(nq):
        size = bin(m).count("1")
        if size == dim:
            continue
        w = mode_weight(dim, size)
        free = [k for k in range(dim) if not m & axis_bit(dim, k)]
        for i, j in itertools.product(free, free):
            Pi, Pj = m | axis_bit(dim, i), m | axis_bit(dim, j)
            for a, b in itertools.product(range(nc), range(nc)):
                M[:, a * nq + Pi, b * nq + Pj] += w * L[:, a, i, b, j]
    return M


def operator_terms(L: np.ndarray):
    """Sparse term list of the element form for the matrix-free kernels, by output row.

    Returns
    -------
    start : (nc·2^d + 1,) int64
        Terms of output quantity ``row`` are ``start[row]:start[row + 1]``.
    cols : (T,) int64
        Input quantity index ``a·2^d + P`` of each term.
    table : (n_coef, n_phases) float64
        Distinct coefficient vectors (one value per phase).
    cid : (T,) int64
        Row of *table* used by each term.
    """
    M = mode_matrix(L)
    rows, cols = np.nonzero(np.any(M != 0.0, axis=0))      # row-major: sorted by row
    start = np.searchsorted(rows, np.arange(M.shape[1] + 1)).astype(np.int64)
    values = M[:, rows, cols].T                            # (T, n_phases)
    if values.shape[0] == 0:
        return start, cols.astype(np.int64), np.zeros((0, L.shape[0])), np.zeros(0, np.int64)
    table, cid = np.unique(values, axis=0, return_inverse=True)
    return start, cols.astype(np.int64), np.ascontiguousarray(table), \
        cid.reshape(-1).astype(np.int64)


def _axis_factors(n: int, half: bool):
    """1D Fourier factors (|S|², |D|², 2 sin ξ) of one axis; *half* for the rfft axis."""
    k = np.arange(n // 2 + 1) if half else np.fft.fftfreq(n) * n
    xi = 2.0 * np.pi * k / n
    sine = 2.0 * np.sin(xi)
    return {"SS": 2.0 + 2.0 * np.cos(xi), "DD": 2.0 - 2.0 * np.cos(xi), "SD": sine, "DS": sine}


def reference_symbol(L0: np.ndarray, shape: tuple[int, ...]) -> np.ndarray:
    """Fourier symbol of the operator of a homogeneous medium ``L0`` on *shape*.

    For one term ``(a,P) × (b,P')`` the symbol is ``conj(q_P) q_P'`` with
    ``q_P = Π_k (e^{iξ_k} − 1 if k ∈ P else 1 + e^{iξ_k})``; per axis this is ``|S|²``,
    ``|D|²`` or ``∓2i sin ξ_k`` (``conj(D)S = −2i sin ξ``, ``conj(S)D = +2i sin ξ``); a
    term has as many axes of one kind as of the other because ``|P| = |P'|``, so the
    imaginary units cancel, ``(−i)ⁿ iⁿ = 1``, and the symbol is the real product of
    ``2 sin ξ_k`` factors.

    Parameters
    ----------
    L0 : (nc, d, nc, d) ndarray
    shape : tuple of int
        Grid shape; the symbol is laid out on the ``rfftn`` half spectrum.

    Returns
    -------
    K0 : (nc, nc, *half_shape) ndarray, real symmetric per frequency.
    """
    dim = len(shape)
    nc = L0.shape[0]
    nq = 2 ** dim
    factors = [_axis_factors(n, half=(k == dim - 1)) for k, n in enumerate(shape)]
    half_shape = shape[:-1] + (shape[-1] // 2 + 1,)
    K0 = np.zeros((nc, nc) + half_shape)
    M = mode_matrix(L0[None])[0]
    for r, c in zip(*np.nonzero(M)):
        a, P = divmod(int(r), nq)
        b, Q = divmod(int(c), nq)
        term = np.array(M[r, c])
        for k in range(dim):
            key = ("D" if P & axis_bit(dim, k) else "S") + ("D" if Q & axis_bit(dim, k) else "S")
            view = [1] * dim
            view[k] = -1
            term = term * factors[k][key].reshape(view)
        K0[a, b] += term
    return K0


def _shift(f: np.ndarray, axis: int, forward: bool) -> np.ndarray:
    return np.roll(f, -1 if forward else 1, axis=axis)


def apply_Q(f: np.ndarray, P: int, dim: int) -> np.ndarray:
    """``Q_P f`` (node field → pixel field) with numpy rolls; *f* has the grid shape."""
    out = f
    for k in range(dim):
        shifted = _shift(out, k, forward=True)
        out = shifted - out if P & axis_bit(dim, k) else shifted + out
    return out


def apply_Q_transpose(g: np.ndarray, P: int, dim: int) -> np.ndarray:
    """``Q_Pᵀ g`` (pixel field → node field)."""
    out = g
    for k in range(dim):
        shifted = _shift(out, k, forward=False)
        out = shifted - out if P & axis_bit(dim, k) else shifted + out
    return out


def _gradient_components(u: np.ndarray, E: np.ndarray):
    """``(a, i, g_ai)`` of the element-mean gradient ``E + ∇u``, one component at a time."""
    nc, grid = u.shape[0], u.shape[1:]
    dim = len(grid)
    scale = 0.5 ** (dim - 1)
    for a in range(nc):
        for i in range(dim):
            yield a, i, scale * apply_Q(u[a], axis_bit(dim, i), dim) + E[a][i]


def centre_gradient(u: np.ndarray, E: np.ndarray) -> np.ndarray:
    """Element-mean gradient ``E + ∇u`` of every pixel.

    Parameters
    ----------
    u : (nc, *grid) ndarray
        Nodal fluctuation.
    E : (nc, d) array_like
        Imposed mean gradient.

    Returns
    -------
    g : (nc, d, *grid) ndarray
    """
    g = np.empty((u.shape[0], u.ndim - 1) + u.shape[1:])
    for a, i, component in _gradient_components(u, E):
        g[a, i] = component
    return g


def centre_gradient_means(labels: np.ndarray, u: np.ndarray, E: np.ndarray,
                          n_phases: int) -> np.ndarray:
    """`phase_means` of `centre_gradient` computed one component at a time, without the
    whole gradient field (nc·d values a pixel: 72 bytes a voxel in 3D elasticity)."""
    flat = labels.ravel()
    G = np.empty((n_phases,) + np.shape(E))
    for a, i, component in _gradient_components(u, E):
        G[:, a, i] = _phase_sums(flat, component, n_phases)
    return G


def load_vector(labels: np.ndarray, sigma0: np.ndarray) -> np.ndarray:
    """Right-hand side ``b = −Σ_e ∫ ∇vᵀ σ₀`` for a per-phase constant flux ``σ₀``.

    Parameters
    ----------
    labels : (*grid) int ndarray
        Compact phase index of each pixel.
    sigma0 : (n_phases, nc, d) ndarray
        ``L:E + τ`` of each phase.

    Returns
    -------
    b : (nc, *grid) ndarray
    """
    grid = labels.shape
    dim = len(grid)
    nc = sigma0.shape[1]
    scale = 0.5 ** (dim - 1)
    b = np.zeros((nc,) + grid)
    for a in range(nc):
        for i in range(dim):
            values = sigma0[:, a, i]
            if np.any(values != 0.0):
                b[a] -= scale * apply_Q_transpose(values[labels], axis_bit(dim, i), dim)
    return b


def active_nodes(solid: np.ndarray) -> np.ndarray:
    """Nodes that touch at least one pixel with a non-zero property (others float)."""
    active = solid.copy()
    for axis in range(solid.ndim):
        active = active | np.roll(active, 1, axis=axis)
    return active


def phase_means(labels: np.ndarray, g: np.ndarray, n_phases: int) -> np.ndarray:
    """Volume-weighted phase sums ``Σ_{e ∈ p} g_e / N`` of a gradient field.

    Returns
    -------
    G : (n_phases, nc, d) ndarray
        ``Σ_p G_p`` is the mean gradient.
    """
    flat = labels.ravel()
    nc, dim = g.shape[:2]
    G = np.empty((n_phases, nc, dim))
    for a in range(nc):
        for i in range(dim):
            G[:, a, i] = _phase_sums(flat, g[a, i], n_phases)
    return G


def _phase_sums(flat: np.ndarray, field: np.ndarray, n_phases: int) -> np.ndarray:
    """``Σ_{e ∈ p} field_e / N`` per phase p of the flat labels *flat*."""
    return np.bincount(flat, weights=field.ravel(), minlength=n_phases) / flat.size
