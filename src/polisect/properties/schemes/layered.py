"""Concentric layered spheres and cylinders in an infinite medium under a remote field.

The exact fields of an n-layered sphere (3D) or circular cylinder (2D, plane strain)
in an unbounded reference medium, for the three remote loads the schemes need: a
uniform temperature gradient (``"conduction"``), a uniform volumetric strain
(``"bulk"``) and a uniform deviatoric strain (``"shear"``). In every layer the radial
functions are sums of powers of r (the Love / Christensen–Lo solutions); continuity of
the field and of its flux or traction at each interface gives one small linear system.
A void innermost layer (a gas core) is a traction-free cavity.

Radii are scaled so that the outermost layer ends at r = 1. Layer properties are
``(k,)`` for conduction and ``(B, G)`` for elasticity, where B is the 3D bulk modulus K
in 3D and the plane-strain transverse bulk modulus k_T = K + G/3 in 2D.

References
----------
.. [1] Christensen, R. M., & Lo, K. H. (1979). Solutions for effective shear properties
   in three phase sphere and cylinder models. J. Mech. Phys. Solids 27, 315–330.
.. [2] Herve, E., & Zaoui, A. (1993). n-layered inclusion-based micromechanical
   modelling. Int. J. Eng. Sci. 31, 1–10.
.. [3] Hashin, Z. (1962). The elastic moduli of heterogeneous materials. J. Appl. Mech.
   29, 143–150.
"""

from __future__ import annotations

import numpy as np

_REMOTE = {("conduction", 3): [1.0], ("conduction", 2): [1.0],
           ("bulk", 3): [1.0 / 3.0], ("bulk", 2): [0.5],
           ("shear", 3): [1.0, 0.0], ("shear", 2): [1.0, 0.0]}


def _shear_terms(dim: int, B: float, G: float) -> list[tuple[float, float, float]]:
    """Exponent n and the (U, V) coefficients of the four shear-mode solutions.

    3D: u_r = U(r) sin²θ cos2φ, u_θ = V(r) sinθ cosθ cos2φ, u_φ = −V(r) sinθ sin2φ
    (Christensen & Lo 1979). 2D plane strain: u_r = U(r) cos2θ, u_θ = −V(r) sin2θ.
    Regular solutions first, then the two that decay at infinity.
    """
    lam = B - 2.0 * G / 3.0 if dim == 3 else B - G
    nu = lam / (2.0 * (lam + G))
    if dim == 3:
        return [(1.0, 1.0, 1.0), (3.0, -6.0 * nu / (1 - 2 * nu), -(7 - 4 * nu) / (1 - 2 * nu)),
                (-4.0, 3.0, -2.0), (-2.0, (5 - 4 * nu) / (1 - 2 * nu), 2.0)]
    return [(1.0, 1.0, 1.0), (3.0, nu, (3 - 2 * nu) / 2.0),
            (-3.0, 1.0, -1.0), (-1.0, 2 * (1 - nu) / (1 - 2 * nu), 1.0)]


def basis(mode: str, dim: int, props, r: float) -> np.ndarray:
    """Columns: the independent solutions at radius *r*; rows: the continuous quantities.

    Rows are (field, flux) for conduction — T = R(r)cosθ, rows (R, kR′); (U, σ_rr) for
    bulk — u_r = U(r); (U, V, Σ_r, Σ_θ) for shear, Σ the radial functions of σ_rr and
    σ_rθ. The regular solutions come first.
    """
    if mode == "conduction":
        (k,) = props
        s = -2.0 if dim == 3 else -1.0
        return np.array([[r, r ** s], [k, k * s * r ** (s - 1.0)]])
    B, G = props
    if mode == "bulk":
        if dim == 3:
            return np.array([[r, r ** -2.0], [3.0 * B, -4.0 * G * r ** -3.0]])
        return np.array([[r, 1.0 / r], [2.0 * B, -2.0 * G / r ** 2]])
    lam = B - 2.0 * G / 3.0 if dim == 3 else B - G
    cols = []
    for n, a, b in _shear_terms(dim, B, G):
        U, V = a * r ** n, b * r ** n
        dU, dV = a * n * r ** (n - 1.0), b * n * r ** (n - 1.0)
        div = dU + (dim - 1) * U / r - dim * V / r
        cols.append([U, V, lam * div + 2.0 * G * dU, G * (2.0 * U / r + dV - V / r)])
    return np.array(cols).T


def _is_void(mode: str, props) -> bool:
    return props[0] == 0.0 if mode == "conduction" else props[1] == 0.0


def surface_values(layers, mode: str, dim: int, ref) -> np.ndarray:
    """Values of the basis rows at r = 1 for *layers* inside the medium *ref*.

    Parameters
    ----------
    layers : list of (props, outer radius)
        From the centre out; the last radius is 1. Leading void layers form a cavity.
    mode : {"conduction", "bulk", "shear"}
    dim : {2, 3}
    ref : tuple
        Properties of the surrounding medium (not void).

    Returns
    -------
    ndarray
        (field, flux) rows of `basis` evaluated on the outer surface, for a unit remote
        field.
    """
    inner = None
    solid = list(layers)
    while solid and _is_void(mode, solid[0][0]):
        inner = solid.pop(0)[1]
    nb = 2 if mode != "shear" else 4
    nh = nb // 2
    # unknown blocks: (props, first column index, regular-only flag)
    blocks, col = [], 0
    for i, (props, _) in enumerate(solid):
        regular_only = i == 0 and inner is None
        blocks.append((props, col, regular_only))
        col += nh if regular_only else nb
    out_col = col
    n_unknown = col + nh
    rows_a, rows_b = [], []
    if inner is not None:
        first = solid[0][0] if solid else ref
        phi = basis(mode, dim, first, inner)[nh:]
        a = np.zeros((nh, n_unknown))
        b = np.zeros(nh)
        if solid:
            a[:, 0:nb] = phi
        else:
            a[:, out_col:] = phi[:, nh:]
            b -= phi[:, :nh] @ _REMOTE[mode, dim]
        rows_a.append(a)
        rows_b.append(b)
    for i, (props, c0, regular_only) in enumerate(blocks):
        r = solid[i][1]
        a = np.zeros((nb, n_unknown))
        b = np.zeros(nb)
        phi_in = basis(mode, dim, props, r)
        if regular_only:
            a[:, c0:c0 + nh] = phi_in[:, :nh]
        else:
            a[:, c0:c0 + nb] = phi_in
        if i + 1 < len(blocks):
            nxt, c1, _ = blocks[i + 1]
            a[:, c1:c1 + nb] = -basis(mode, dim, nxt, r)
        else:
            phi_out = basis(mode, dim, ref, r)
            a[:, out_col:] = -phi_out[:, nh:]
            b += phi_out[:, :nh] @ _REMOTE[mode, dim]
        rows_a.append(a)
        rows_b.append(b)
    coef = np.linalg.solve(np.vstack(rows_a), np.concatenate(rows_b))
    full = np.concatenate([_REMOTE[mode, dim], coef[out_col:]])
    return basis(mode, dim, ref, 1.0) @ full


def averages(values: np.ndarray, mode: str, dim: int) -> tuple[float, float]:
    """Mean field and mean flux (modulus units) over the unit sphere or disc.

    From the surface values alone (divergence theorem): for the shear mode in 3D
    ⟨ε⟩ = (2U + 3V)/5 and ⟨σ⟩/2 = (2Σ_r + 3Σ_θ)/10; in 2D (U + V)/2 and (Σ_r + Σ_θ)/4.
    """
    if mode == "conduction":
        return float(values[0]), float(values[1])
    if mode == "bulk":
        return float(dim * values[0]), float(values[1])
    U, V, Sr, St = values
    if dim == 3:
        return float((2 * U + 3 * V) / 5.0), float((2 * Sr + 3 * St) / 10.0)
    return float((U + V) / 2.0), float((Sr + St) / 4.0)


def factors(layers, mode: str, dim: int, ref) -> tuple[float, float]:
    """Dilute concentration factors ``(t_eps, t_sig)`` of a layered particle in *ref*.

    References
    ----------
    .. [1] Herve, E., & Zaoui, A. (1993). n-layered inclusion-based micromechanical
       modelling. Int. J. Eng. Sci. 31, 1–10.

    Examples
    --------
    >>> t_eps, t_sig = factors([((10.0,), 1.0)], "conduction", 3, (1.0,))
    >>> round(t_eps, 6), round(t_sig, 6)     # 3 k0/(k + 2 k0) (Maxwell 1873)
    (0.25, 2.5)
    """
    return averages(surface_values(layers, mode, dim, ref), mode, dim)


def equivalent(layers, mode: str, dim: int) -> float:
    """Conductivity or bulk modulus of the homogeneous particle equivalent to *layers*.

    The interior field of a layered sphere or cylinder under a radial (bulk) or dipolar
    (conduction) load is fixed by one surface value, so the ratio of mean flux to mean
    field is a property of the particle alone (Hashin 1962).

    References
    ----------
    .. [1] Hashin, Z. (1962). The elastic moduli of heterogeneous materials. J. Appl.
       Mech. 29, 143–150.

    Examples
    --------
    >>> K, G = 200.0, 120.0          # a hollow sphere, inner/outer radius ratio 0.5
    >>> round(equivalent([((0.0, 0.0), 0.5), ((K, G), 1.0)], "bulk", 3), 4)
    151.3514
    >>> c = 0.5 ** 3                 # Lamé's thick sphere: 4GK(1 − c)/(4G + 3Kc)
    >>> round(4 * G * K * (1 - c) / (4 * G + 3 * K * c), 4)
    151.3514
    """
    outer = layers[-1][0]
    if _is_void(mode, outer):
        return 0.0
    t_eps, t_sig = factors(layers, mode, dim, outer)
    return t_sig / t_eps
