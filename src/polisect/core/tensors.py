"""Tensor helpers: isotropic stiffness, plane reductions, moduli, projections, Voigt/Mandel.

Conventions (the result JSON contract): stiffness matrices are in Voigt order with
engineering shear strains, 3D ``(xx, yy, zz, yz, xz, xy)`` (6×6) and 2D ``(xx, yy, xy)``
(3×3). In Mandel form the shear rows and columns carry a factor √2, so that the matrix
norm is the tensor norm and the matrix product is the tensor contraction.

In 2D the "bulk modulus" is the in-plane (areal) bulk modulus ``K₂ = σ_m / ε_v`` with
``σ_m = (σ_xx + σ_yy)/2`` and ``ε_v = ε_xx + ε_yy``; for an isotropic solid it is
``λ + G`` in plane strain and ``E / (2(1 − ν))`` in plane stress. The shear modulus is the
same ``G`` in every mode.

Examples
--------
>>> import numpy as np
>>> C = isotropic_stiffness(70.0, 0.33)
>>> K, G = isotropic_projection(C)
>>> np.allclose(E_nu_from_bulk_shear(K, G), (70.0, 0.33))
True
>>> np.allclose(plane_stiffness(C, "plane-strain"), isotropic_stiffness(70.0, 0.33, dim=2))
True
"""

from __future__ import annotations

import numpy as np

from .errors import InputError

PLANES = ("plane-strain", "plane-stress")

VOIGT_PAIRS = {
    2: ((0, 0), (1, 1), (0, 1)),
    3: ((0, 0), (1, 1), (2, 2), (1, 2), (0, 2), (0, 1)),
}
"""Index pairs (i, j) of each Voigt component, by dimension."""

_IN_PLANE = [0, 1, 5]      # xx, yy, xy within the 3D Voigt order
_OUT_OF_PLANE = [2, 3, 4]  # zz, yz, xz


def _check_plane(plane: str) -> str:
    if plane not in PLANES:
        raise InputError(f"plane {plane!r} is not known here; use one of {', '.join(PLANES)}")
    return plane


def _dim_of_voigt(C: np.ndarray) -> int:
    C = np.asarray(C)
    if C.shape == (6, 6):
        return 3
    if C.shape == (3, 3):
        return 2
    raise InputError(f"a Voigt stiffness matrix must be 3x3 (2D) or 6x6 (3D), got shape {C.shape}")


def _mandel_weights(dim: int) -> np.ndarray:
    n_normal = dim
    n_shear = len(VOIGT_PAIRS[dim]) - dim
    return np.concatenate([np.ones(n_normal), np.full(n_shear, np.sqrt(2.0))])


def stiffness_from_bulk_shear(K: float, G: float, dim: int = 3) -> np.ndarray:
    """Isotropic stiffness (Voigt, engineering shear) from bulk and shear moduli.

    Parameters
    ----------
    K, G : float
        Bulk and shear moduli; for ``dim=2`` K is the in-plane bulk modulus K₂.
    dim : {3, 2}
        3 gives the 6×6 matrix; 2 the 3×3 in-plane matrix ``[[K₂+G, K₂−G, 0],
        [K₂−G, K₂+G, 0], [0, 0, G]]``.

    Returns
    -------
    C : (6, 6) or (3, 3) ndarray
    """
    if dim == 2:
        return np.array([[K + G, K - G, 0.0], [K - G, K + G, 0.0], [0.0, 0.0, G]])
    if dim != 3:
        raise InputError(f"dimension must be 2 or 3, got {dim}")
    lam = K - 2.0 * G / 3.0
    C = np.zeros((6, 6))
    C[:3, :3] = lam
    C[[0, 1, 2], [0, 1, 2]] += 2.0 * G
    C[[3, 4, 5], [3, 4, 5]] = G
    return C


def isotropic_stiffness(E: float, nu: float, dim: int = 3) -> np.ndarray:
    """Isotropic stiffness matrix in Voigt form with engineering shear strains.

    Parameters
    ----------
    E : float
        Young's modulus (zero gives the zero matrix of a pore).
    nu : float
        Poisson's ratio, −1 < ν < 0.5.
    dim : {3, 2}
        3 gives the 6×6 matrix; 2 gives the 3×3 in-plane block (xx, yy, xy), which is
        the plane-strain stiffness. Use `plane_stiffness` for plane stress.

    Returns
    -------
    C : (6, 6) or (3, 3) ndarray

    Examples
    --------
    >>> isotropic_stiffness(1.0, 0.0, dim=2)
    array([[1. , 0. , 0. ],
           [0. , 1. , 0. ],
           [0. , 0. , 0.5]])
    """
    if dim not in (2, 3):
        raise InputError(f"dimension must be 2 or 3, got {dim}")
    C = stiffness_from_bulk_shear(*bulk_shear_from_E_nu(E, nu))
    return C if dim == 3 else C[np.ix_(_IN_PLANE, _IN_PLANE)]


def plane_stiffness(C6: np.ndarray, plane: str) -> np.ndarray:
    """Reduce a 3D Voigt stiffness to the 3×3 in-plane (xx, yy, xy) stiffness.

    Parameters
    ----------
    C6 : (6, 6) array_like
        3D stiffness, Voigt order with engineering shear strains.
    plane : {'plane-strain', 'plane-stress'}
        'plane-strain': ε_zz = γ_yz = γ_xz = 0, the in-plane block of C.
        'plane-stress': σ_zz = σ_yz = σ_xz = 0, the Schur complement
        C_ii − C_io C_oo⁺ C_oi (pseudo-inverse, so a pore gives zeros).

    Returns
    -------
    C3 : (3, 3) ndarray
    """
    C6 = np.asarray(C6, dtype=float)
    if C6.shape != (6, 6):
        raise InputError(f"plane_stiffness needs a 6x6 Voigt matrix, got shape {C6.shape}")
    inner = C6[np.ix_(_IN_PLANE, _IN_PLANE)]
    if _check_plane(plane) == "plane-strain":
        return inner
    coupling = C6[np.ix_(_IN_PLANE, _OUT_OF_PLANE)]
    outer = C6[np.ix_(_OUT_OF_PLANE, _OUT_OF_PLANE)]
    reduced = inner - coupling @ np.linalg.pinv(outer) @ coupling.T
    return 0.5 * (reduced + reduced.T)


def bulk_shear_from_E_nu(E: float, nu: float, plane: str | None = None) -> tuple[float, float]:
    """Bulk and shear moduli of an isotropic solid.

    Parameters
    ----------
    E, nu : float
        Young's modulus and Poisson's ratio.
    plane : {None, 'plane-strain', 'plane-stress'}
        None: 3D bulk modulus K = E / (3(1 − 2ν)). Otherwise the in-plane bulk modulus
        K₂ (see the module notes): E / (2(1 + ν)(1 − 2ν)) in plane strain,
        E / (2(1 − ν)) in plane stress.

    Returns
    -------
    K, G : float
        G = E / (2(1 + ν)) in all cases.
    """
    if not -1.0 < nu < 0.5:
        raise InputError(f"Poisson's ratio {nu} is outside (-1, 0.5)")
    G = E / (2.0 * (1.0 + nu))
    if plane is None:
        return E / (3.0 * (1.0 - 2.0 * nu)), G
    if _check_plane(plane) == "plane-strain":
        return E / (2.0 * (1.0 + nu) * (1.0 - 2.0 * nu)), G
    return E / (2.0 * (1.0 - nu)), G


def E_nu_from_bulk_shear(K: float, G: float, plane: str | None = None) -> tuple[float, float]:
    """Young's modulus and Poisson's ratio from bulk and shear moduli (inverse of
    `bulk_shear_from_E_nu`).

    Parameters
    ----------
    K, G : float
        Bulk modulus (3D, or the in-plane K₂ when *plane* is given) and shear modulus.
    plane : {None, 'plane-strain', 'plane-stress'}
        In 2D, the E and ν returned are those of the isotropic 3D solid that has these
        in-plane moduli under that plane assumption.

    Returns
    -------
    E, nu : float
        ``(0, nan)`` when both moduli are zero.
    """
    if plane is None:
        K3 = K
    elif _check_plane(plane) == "plane-strain":
        K3 = K - G / 3.0
    else:
        denom = K + G
        if denom == 0:
            return 0.0, float("nan")
        return 4.0 * K * G / denom, (K - G) / denom
    denom = 3.0 * K3 + G
    if denom == 0:
        return 0.0, float("nan")
    return 9.0 * K3 * G / denom, (3.0 * K3 - 2.0 * G) / (2.0 * denom)


def voigt_to_mandel(C: np.ndarray) -> np.ndarray:
    """Stiffness matrix from Voigt (engineering shear) to Mandel form (√2 on shears)."""
    C = np.asarray(C, dtype=float)
    w = _mandel_weights(_dim_of_voigt(C))
    return C * np.outer(w, w)


def mandel_to_voigt(M: np.ndarray) -> np.ndarray:
    """Stiffness matrix from Mandel form back to Voigt form (engineering shear)."""
    M = np.asarray(M, dtype=float)
    w = _mandel_weights(_dim_of_voigt(M))
    return M / np.outer(w, w)


def voigt_to_tensor(C: np.ndarray) -> np.ndarray:
    """Fourth-order stiffness C_ijkl, shape (d, d, d, d), from a Voigt matrix."""
    C = np.asarray(C, dtype=float)
    dim = _dim_of_voigt(C)
    T = np.zeros((dim,) * 4)
    for a, (i, j) in enumerate(VOIGT_PAIRS[dim]):
        for b, (k, l) in enumerate(VOIGT_PAIRS[dim]):
            for p, q in {(i, j), (j, i)}:
                for r, s in {(k, l), (l, k)}:
                    T[p, q, r, s] = C[a, b]
    return T


def tensor_to_voigt(T: np.ndarray) -> np.ndarray:
    """Voigt matrix (engineering shear) of a fourth-order tensor with minor symmetries."""
    T = np.asarray(T, dtype=float)
    pairs = VOIGT_PAIRS[T.shape[0]]
    return np.array([[T[i, j, k, l] for (k, l) in pairs] for (i, j) in pairs])


def strain_to_voigt(eps: np.ndarray) -> np.ndarray:
    """Voigt vector (engineering shear, γ = 2ε) of a symmetric strain tensor (..., d, d)."""
    eps = np.asarray(eps, dtype=float)
    pairs = VOIGT_PAIRS[eps.shape[-1]]
    return np.stack([eps[..., i, j] * (1.0 if i == j else 2.0) for i, j in pairs], axis=-1)


def voigt_to_strain(v: np.ndarray) -> np.ndarray:
    """Symmetric strain tensor (..., d, d) from its Voigt vector (engineering shear)."""
    v = np.asarray(v, dtype=float)
    dim = {3: 2, 6: 3}[v.shape[-1]]
    eps = np.zeros(v.shape[:-1] + (dim, dim))
    for a, (i, j) in enumerate(VOIGT_PAIRS[dim]):
        value = v[..., a] * (1.0 if i == j else 0.5)
        eps[..., i, j] = value
        eps[..., j, i] = value
    return eps


def stress_to_voigt(sig: np.ndarray) -> np.ndarray:
    """Voigt vector of a symmetric stress tensor (..., d, d) (no shear factor)."""
    sig = np.asarray(sig, dtype=float)
    pairs = VOIGT_PAIRS[sig.shape[-1]]
    return np.stack([sig[..., i, j] for i, j in pairs], axis=-1)


def voigt_to_stress(v: np.ndarray) -> np.ndarray:
    """Symmetric stress tensor (..., d, d) from its Voigt vector (no shear factor)."""
    v = np.asarray(v, dtype=float)
    dim = {3: 2, 6: 3}[v.shape[-1]]
    sig = np.zeros(v.shape[:-1] + (dim, dim))
    for a, (i, j) in enumerate(VOIGT_PAIRS[dim]):
        sig[..., i, j] = v[..., a]
        sig[..., j, i] = v[..., a]
    return sig


def _isotropic_basis(dim: int) -> tuple[np.ndarray, np.ndarray]:
    """Mandel matrices of the spherical (J) and deviatoric (K) projectors."""
    ones = np.zeros(len(VOIGT_PAIRS[dim]))
    ones[:dim] = 1.0
    J = np.outer(ones, ones) / dim
    return J, np.eye(len(ones)) - J


def isotropic_projection(C: np.ndarray) -> tuple[float, float]:
    """Bulk and shear moduli of the isotropic tensor nearest to *C* (Frobenius norm).

    The projection onto the spherical and deviatoric projectors J and K in Mandel form:
    ``dim·K_iso = J::C / J::J`` and ``2 G_iso = K::C / K::K``. For a 6×6 matrix this is
    the 3D (K, G); for a 3×3 in-plane matrix the 2D analogue (in-plane K₂, G), whose
    E and ν follow from `E_nu_from_bulk_shear` with the plane mode used.

    Parameters
    ----------
    C : (6, 6) or (3, 3) array_like
        Voigt stiffness, engineering shear.

    Returns
    -------
    K, G : float

    References
    ----------
    .. [1] Moakher, M. & Norris, A. N. (2006). The closest elastic tensor of arbitrary
       symmetry to an elasticity tensor of lower symmetry. J. Elasticity 85, 215–263.
    """
    M = voigt_to_mandel(C)
    dim = _dim_of_voigt(M)
    J, K = _isotropic_basis(dim)
    return float(np.sum(J * M) / dim), float(np.sum(K * M) / (2.0 * np.sum(K * K)))


def isotropic_part(C: np.ndarray) -> np.ndarray:
    """The nearest isotropic stiffness (Voigt, same shape as *C*)."""
    M = voigt_to_mandel(C)
    dim = _dim_of_voigt(M)
    K_iso, G_iso = isotropic_projection(C)
    J, K = _isotropic_basis(dim)
    return mandel_to_voigt(dim * K_iso * J + 2.0 * G_iso * K)


def stiffness_anisotropy(C: np.ndarray) -> float:
    """Relative distance of a stiffness from isotropy, ‖C − C_iso‖ / ‖C‖ (Mandel norm).

    Zero for an isotropic tensor; it grows with the directional dependence. A cubic or
    square-symmetric tensor is not isotropic and gives a positive value.

    Returns
    -------
    float
        0 for the zero tensor (a fully porous image).
    """
    M = voigt_to_mandel(C)
    norm = np.linalg.norm(M)
    if norm == 0:
        return 0.0
    return float(np.linalg.norm(M - voigt_to_mandel(isotropic_part(C))) / norm)


def tensor_anisotropy(T: np.ndarray) -> float:
    """Relative deviator norm of a second-order tensor, ‖T − (tr T / d) I‖ / ‖T‖.

    Used for conductivity and expansion tensors; zero when isotropic.
    """
    T = np.asarray(T, dtype=float)
    norm = np.linalg.norm(T)
    if norm == 0:
        return 0.0
    mean = np.trace(T) / T.shape[0]
    return float(np.linalg.norm(T - mean * np.eye(T.shape[0])) / norm)
