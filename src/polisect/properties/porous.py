"""Porosity below the pixel size: dense phase properties turned into porous ones.

A bond phase of a castable is porous on a scale no micrograph resolves. Its pixels are
then one phase whose properties are those of the dense solid with a volume fraction p of
pores, estimated here with a mean-field scheme (two scales: the scheme below the pixel,
the image solver above it).

Schemes, for randomly placed pores of one shape in an isotropic solid:

``"mori-tanaka"``  (Mori & Tanaka 1973; Benveniste 1987) — the solid is the matrix that
                   the pores sit in, isolated pores. For spherical pores it equals the
                   Hashin–Shtrikman upper bound (Hashin & Shtrikman 1962, 1963) and, for
                   conduction, the Maxwell–Eucken form. The default.
``"differential"`` (Bruggeman 1935; McLaughlin 1977; Norris 1985) — pores added a little
                   at a time to the current porous solid; softer than Mori–Tanaka at
                   the same porosity, closer to partly interconnected porosity.

Pore shapes: ``"spherical"`` (the default) or ``"oblate"`` spheroids with an aspect ratio
(short/long axis, below 1) and random orientation — flat, crack-like pores lower the
stiffness and conductivity much more than round ones at the same porosity.

Expansion is unchanged by empty pores: a single solid with voids expands like the solid
(Levin 1967; Rosen & Hashin 1970), whatever the scheme.

These are estimates: a porous bond's properties depend on how its pores connect. Verify by
measurement (e.g. the modulus of a bond-only specimen) where results feed design.

References
----------
Mori, T. & Tanaka, K. (1973). Average stress in matrix and average elastic energy of
materials with misfitting inclusions. Acta Metall. 21, 571.
Benveniste, Y. (1987). A new approach to the application of Mori-Tanaka's theory in
composite materials. Mech. Mater. 6, 147.
Hashin, Z. & Shtrikman, S. (1963). A variational approach to the theory of the elastic
behaviour of multiphase materials. J. Mech. Phys. Solids 11, 127.
Bruggeman, D. A. G. (1935). Ann. Phys. 416, 636.
McLaughlin, R. (1977). A study of the differential scheme for composite materials.
Int. J. Eng. Sci. 15, 237.
Norris, A. N. (1985). A differential scheme for the effective moduli of composites.
Mech. Mater. 4, 1.
Eshelby, J. D. (1957). The determination of the elastic field of an ellipsoidal inclusion.
Proc. R. Soc. Lond. A 241, 376.
Coble, R. L. & Kingery, W. D. (1956). Effect of porosity on physical properties of
sintered alumina. J. Am. Ceram. Soc. 39, 377.
Levin, V. M. (1967). Thermal expansion coefficients of heterogeneous materials.
Mech. Solids 2, 58.
Rosen, B. W. & Hashin, Z. (1970). Effective thermal expansion coefficients and specific
heats of composite materials. Int. J. Eng. Sci. 8, 157.

Examples
--------
>>> from polisect import get_material
>>> from polisect.properties.porous import porous
>>> bond = porous(get_material("mullite"), 0.25)
>>> round(bond.youngs_modulus, 1), bond.expansion == get_material("mullite").expansion
(131.9, True)
"""

from __future__ import annotations

import math
from dataclasses import replace
from functools import lru_cache

import numpy as np
from scipy.integrate import solve_ivp

from ..core.errors import InputError
from ..core.materials import Material, get_material

PORE_SHAPES = ("spherical", "oblate")
SCHEMES = ("mori-tanaka", "differential")
MIN_ASPECT = 0.02
"""Smallest aspect ratio of an oblate pore the quadrature resolves (tested to 1e-6)."""
_NAMES = {"mori-tanaka": "Mori–Tanaka (Mori & Tanaka 1973; Benveniste 1987)",
          "differential": "differential scheme (Bruggeman 1935; McLaughlin 1977; Norris 1985)"}


def depolarization(aspect_ratio: float) -> tuple[float, float, float]:
    """Depolarization factors (N_a, N_a, N_c) of a spheroid, c the symmetry axis.

    Closed form for an oblate spheroid (aspect = c/a < 1), e² = 1 − aspect²:
    N_c = (1 − √(1 − e²) arcsin(e) / e) / e², N_a = (1 − N_c)/2; 1/3 each for a sphere.

    References
    ----------
    Stoner, E. C. (1945). The demagnetizing factors for ellipsoids. Phil. Mag. 36, 803.
    """
    w = _check_aspect(aspect_ratio)
    if w >= 1.0 - 1e-12:
        return (1 / 3, 1 / 3, 1 / 3)
    e = math.sqrt(1.0 - w * w)
    nc = (1.0 - w * math.asin(e) / e) / (e * e)
    na = 0.5 * (1.0 - nc)
    return (na, na, nc)


def _conduction_concentration(k: float, k_pore: float, aspect: float) -> float:
    """Orientation average of the dilute field concentration in a pore (scalar)."""
    if k == 0.0:
        return 1.0
    return float(np.mean([k / (k + n * (k_pore - k)) for n in depolarization(aspect)]))


def porous_conductivity(conductivity: float, porosity: float, pore_conductivity: float = 0.0,
                        pore_shape: str = "spherical", aspect_ratio: float = 1.0,
                        scheme: str = "mori-tanaka") -> float:
    """Conductivity of a solid with a fraction *porosity* of pores, W/(m·K).

    Mori–Tanaka: k* = k + p (k_p − k)⟨A⟩ / ((1 − p) + p⟨A⟩), ⟨A⟩ the orientation average
    of k/(k + N_i (k_p − k)) over the pore's depolarization factors N_i; for spheres the
    Maxwell–Eucken form k (2k + k_p − 2p(k − k_p)) / (2k + k_p + p(k − k_p)), the
    Hashin–Shtrikman upper bound. Differential: dk/dp = (k_p − k)⟨A⟩(k)/(1 − p).

    Parameters
    ----------
    conductivity : float
        The dense solid's conductivity, W/(m·K).
    porosity : float
        Pore volume fraction, 0 ≤ p < 1.
    pore_conductivity : float
        Conductivity of what fills the pores (gas, plus radiation at high temperature:
        `polisect.properties.radiation.pore_conductivity`), W/(m·K).
    pore_shape, aspect_ratio, scheme
        See the module docstring.

    References
    ----------
    Maxwell, J. C. (1873). A Treatise on Electricity and Magnetism, Art. 314.
    Hashin, Z. & Shtrikman, S. (1962). J. Appl. Phys. 33, 3125.
    Bruggeman, D. A. G. (1935). Ann. Phys. 416, 636.
    """
    p, shape, w, scheme = _check(porosity, pore_shape, aspect_ratio, scheme)
    k, kp = float(conductivity), float(pore_conductivity)
    if not (math.isfinite(k) and k >= 0 and math.isfinite(kp) and kp >= 0):
        raise InputError("porous conductivity needs a solid and a pore conductivity ≥ 0")
    if p == 0.0 or k == kp:
        return k
    if scheme == "mori-tanaka":
        a = _conduction_concentration(k, kp, w)
        return k + p * (kp - k) * a / ((1.0 - p) + p * a)

    def rate(t, y):
        return [(kp - y[0]) * _conduction_concentration(y[0], kp, w)]
    return float(_integrate(rate, [k], p)[0])


def porous_moduli(bulk_modulus: float, shear_modulus: float, porosity: float,
                  pore_shape: str = "spherical", aspect_ratio: float = 1.0,
                  scheme: str = "mori-tanaka") -> tuple[float, float]:
    """Bulk and shear modulus (GPa) of an isotropic solid with empty pores.

    Mori–Tanaka with empty pores: K* = (1 − p) K / ((1 − p) + p a_K),
    G* = (1 − p) G / ((1 − p) + p a_G), where a_K, a_G are the isotropic parts of the
    orientation-averaged dilute strain concentration (I − S)⁻¹ of a pore, S its Eshelby
    tensor. Spheres: a_K = (3K + 4G)/(4G), a_G = 5(3K + 4G)/(9K + 8G) (the
    Hashin–Shtrikman upper bound for a solid with voids). Differential:
    dK/dp = −K a_K(K, G)/(1 − p), dG/dp = −G a_G(K, G)/(1 − p).

    References
    ----------
    Eshelby, J. D. (1957). Proc. R. Soc. Lond. A 241, 376.
    Mori, T. & Tanaka, K. (1973). Acta Metall. 21, 571.
    Hashin, Z. & Shtrikman, S. (1963). J. Mech. Phys. Solids 11, 127.
    Norris, A. N. (1985). Mech. Mater. 4, 1.
    """
    p, shape, w, scheme = _check(porosity, pore_shape, aspect_ratio, scheme)
    K, G = float(bulk_modulus), float(shear_modulus)
    if not (K > 0 and G > 0 and math.isfinite(K) and math.isfinite(G)):
        raise InputError("porous moduli need a solid with bulk and shear modulus > 0")
    if p == 0.0:
        return K, G
    if scheme == "mori-tanaka":
        aK, aG = void_concentration(K, G, w)
        return (1 - p) * K / ((1 - p) + p * aK), (1 - p) * G / ((1 - p) + p * aG)

    def rate(t, y):
        aK, aG = void_concentration(y[0], y[1], w)
        return [-y[0] * aK, -y[1] * aG]
    K1, G1 = _integrate(rate, [K, G], p)
    return float(K1), float(G1)


def void_concentration(bulk_modulus: float, shear_modulus: float,
                       aspect_ratio: float = 1.0) -> tuple[float, float]:
    """Isotropic parts (a_K, a_G) of a randomly oriented void's dilute strain concentration.

    A void in an isotropic solid of moduli K, G under a remote strain ε strains on average
    by (I − S)⁻¹ : ε, S the Eshelby tensor of its shape. For a sphere a_K = (3K + 4G)/(4G),
    a_G = 5(3K + 4G)/(9K + 8G); for a spheroid S = P : C with Hill's polarization tensor P
    from a quadrature over the unit sphere. Orientation averaging keeps the isotropic parts,
    a_K = J :: A and a_G = (K_dev :: A)/5.

    References
    ----------
    Eshelby, J. D. (1957). Proc. R. Soc. Lond. A 241, 376.
    Mura, T. (1987). Micromechanics of Defects in Solids, 2nd ed., Nijhoff, §11.
    """
    K, G = float(bulk_modulus), float(shear_modulus)
    w = _check_aspect(aspect_ratio)
    if w >= 1.0 - 1e-12:
        return (3 * K + 4 * G) / (4 * G), 5 * (3 * K + 4 * G) / (9 * K + 8 * G)
    return _spheroid_void_concentration(round(K / G, 12), w)


@lru_cache(maxsize=4096)
def _spheroid_void_concentration(k_over_g: float, w: float) -> tuple[float, float]:
    # the moduli scale out of A = (I - P:C)^-1: compute with G = 1
    K, G = k_over_g, 1.0
    lam = K - 2 * G / 3
    d = np.eye(3)
    Isym = 0.5 * (np.einsum("ik,jl->ijkl", d, d) + np.einsum("il,jk->ijkl", d, d))
    C = lam * np.einsum("ij,kl->ijkl", d, d) + 2 * G * Isym
    P = _hill_tensor(lam, G, (1.0, 1.0, w))
    S = np.einsum("ijmn,mnkl->ijkl", P, C)
    A = _from_mandel(np.linalg.inv(_to_mandel(Isym - S)))
    J = np.einsum("ij,kl->ijkl", d, d) / 3.0
    aK = float(np.einsum("ijkl,klij", J, A))
    aG = float(np.einsum("ijkl,klij", Isym - J, A)) / 5.0
    return aK, aG


def _hill_tensor(lam: float, G: float, axes: tuple[float, float, float],
                 n_theta: int = 400, n_phi: int = 8) -> np.ndarray:
    """Hill's polarization tensor of an ellipsoid in an isotropic medium (Lamé λ, G):
    P = (a₁a₂a₃/4π) ∫ sym[ξ_j N_ik(ξ) ξ_l] / |a·ξ|³ dS(ξ) over unit ξ, with the inverse
    acoustic tensor N = (I − ξξ (λ + G)/(λ + 2G))/G (Mura 1987, §11). Gauss–Legendre in
    cos θ; in φ the integrand of a spheroid is a trigonometric polynomial of degree 4,
    which the trapezoidal rule on 8 points integrates exactly."""
    u, wu = _gauss_legendre(n_theta)
    phi = np.linspace(0.0, 2 * np.pi, n_phi, endpoint=False)
    s = np.sqrt(1 - u * u)
    xi = np.stack([np.outer(s, np.cos(phi)), np.outer(s, np.sin(phi)),
                   np.outer(u, np.ones_like(phi))], axis=-1).reshape(-1, 3)
    weight = np.outer(wu, np.full(n_phi, 2 * np.pi / n_phi)).ravel()
    a = np.asarray(axes, dtype=float)
    rho = np.sqrt(((a * xi) ** 2).sum(axis=1))
    weight = weight * np.prod(a) / (4 * np.pi) / rho ** 3
    N = (np.eye(3)[None] - np.einsum("qi,qk->qik", xi, xi) * (lam + G) / (lam + 2 * G)) / G
    H = np.einsum("qik,qj,ql,q->ijkl", N, xi, xi, weight, optimize=True)
    H = 0.5 * (H + H.transpose(1, 0, 2, 3))
    return 0.5 * (H + H.transpose(0, 1, 3, 2))


@lru_cache(maxsize=4)
def _gauss_legendre(n: int) -> tuple[np.ndarray, np.ndarray]:
    return np.polynomial.legendre.leggauss(n)


_PAIRS = ((0, 0), (1, 1), (2, 2), (1, 2), (0, 2), (0, 1))


def _to_mandel(T: np.ndarray) -> np.ndarray:
    w = np.array([1, 1, 1, math.sqrt(2), math.sqrt(2), math.sqrt(2)])
    M = np.array([[T[i, j, k, l] for (k, l) in _PAIRS] for (i, j) in _PAIRS])
    return M * np.outer(w, w)


def _from_mandel(M: np.ndarray) -> np.ndarray:
    w = np.array([1, 1, 1, math.sqrt(2), math.sqrt(2), math.sqrt(2)])
    M = M / np.outer(w, w)
    T = np.zeros((3, 3, 3, 3))
    for a, (i, j) in enumerate(_PAIRS):
        for b, (k, l) in enumerate(_PAIRS):
            for (p, q) in {(i, j), (j, i)}:
                for (r, s) in {(k, l), (l, k)}:
                    T[p, q, r, s] = M[a, b]
    return T


def _integrate(rate, y0, porosity):
    """Integrate dy/dp = rate/(1 − p) from 0 to *porosity*, in t = −ln(1 − p)."""
    t_end = -math.log1p(-porosity)
    sol = solve_ivp(rate, (0.0, t_end), y0, method="RK45", rtol=1e-8, atol=1e-12)
    if not sol.success:  # pragma: no cover - smooth right-hand side
        raise InputError(f"the differential scheme did not integrate: {sol.message}")
    return sol.y[:, -1]


def porous(material: Material, porosity: float, *, pore_shape: str = "spherical",
           aspect_ratio: float | None = None, scheme: str = "mori-tanaka",
           pore_conductivity: float | None = None) -> Material:
    """The *material* with a volume fraction *porosity* of pores below the pixel size.

    Conductivity and moduli come from the chosen scheme; the expansion coefficients are
    the solid's (empty pores do not change them). The result holds plain values at the
    material's temperature (tables are dropped: evaluate the dense material at a
    temperature with `Material.at`, then make it porous), its sources say what was done,
    and stated uncertainties are scaled with the values.

    Parameters
    ----------
    material : Material
        The dense solid, isotropic (scalar conductivity, E and ν).
    porosity : float
        Pore volume fraction inside the phase, 0 ≤ p < 1.
    pore_shape : {"spherical", "oblate"}
    aspect_ratio : float, optional
        Short/long axis of oblate pores, `MIN_ASPECT` ≤ aspect < 1 (required for oblate).
    scheme : {"mori-tanaka", "differential"}
    pore_conductivity : float, optional
        What the pores conduct, W/(m·K); default the library's air at the material's
        temperature (20 °C when not stated), without radiation — pass
        `radiation.pore_conductivity(...).total` to include it.

    Returns
    -------
    Material
    """
    p, shape, w, scheme = _check(porosity, pore_shape,
                                 1.0 if pore_shape == "spherical" and aspect_ratio is None
                                 else aspect_ratio, scheme)
    if material.stiffness is not None or (material.conductivity is not None
                                          and np.ndim(material.conductivity) != 0):
        raise InputError(f"material {material.name!r}: porosity below the pixel needs an "
                         "isotropic solid (scalar conductivity, E and nu), not a tensor")
    if material.is_pore:
        raise InputError(f"material {material.name!r} is a pore already; porosity applies "
                         "to a solid phase")
    temperature = 20.0 if material.temperature_C is None else material.temperature_C
    kp_note = ""
    if pore_conductivity is None and material.conductivity is not None:
        air = get_material("air").at(temperature, properties=("conductivity",))
        pore_conductivity = air.conductivity
        kp_note = f"air at {temperature:g} °C, {pore_conductivity:.4g} W/(m·K)"
    elif pore_conductivity is not None:
        kp_note = f"{float(pore_conductivity):.4g} W/(m·K)"
    shape_text = "spherical pores" if shape == "spherical" else (
        f"randomly oriented oblate pores of aspect ratio {w:g}")
    how = f"porosity {p:g} ({shape_text}) by the {_NAMES[scheme]}"
    values, sources, unc = {}, dict(material.sources), {}
    if material.conductivity is not None:
        k = porous_conductivity(material.conductivity, p, pore_conductivity, shape, w, scheme)
        values["conductivity"] = k
        sources["conductivity"] = (f"{material.sources.get('conductivity', material.source)}; "
                                   f"{how}, pores conducting {kp_note}")
        if "conductivity" in material.uncertainty and material.conductivity > 0:
            unc["conductivity"] = material.uncertainty["conductivity"] * k / material.conductivity
    if material.youngs_modulus is not None and material.poisson_ratio is not None:
        K, G = porous_moduli(material.bulk_modulus, material.shear_modulus, p, shape, w, scheme)
        E, nu = 9 * K * G / (3 * K + G), (3 * K - 2 * G) / (2 * (3 * K + G))
        values["youngs_modulus"], values["poisson_ratio"] = E, nu
        for prop in ("youngs_modulus", "poisson_ratio"):
            sources[prop] = f"{material.sources.get(prop, material.source)}; {how}"
        if "youngs_modulus" in material.uncertainty:
            unc["youngs_modulus"] = (material.uncertainty["youngs_modulus"] * E
                                     / material.youngs_modulus)
    for prop in ("expansion", "mean_expansion"):
        if prop in material.uncertainty:
            unc[prop] = material.uncertainty[prop]
    if material.expansion is not None:
        sources["expansion"] = (f"{material.sources.get('expansion', material.source)}; "
                                "unchanged by empty pores (Levin 1967; Rosen & Hashin 1970)")
    return replace(material, name=material.name, source=f"{material.source}; {how}",
                   sources=sources, uncertainty=unc, tables={}, temperature_C=temperature,
                   **values)


def _check_aspect(aspect_ratio) -> float:
    try:
        w = float(aspect_ratio)
    except (TypeError, ValueError):
        raise InputError(f"aspect_ratio {aspect_ratio!r} is not a number") from None
    if not (MIN_ASPECT <= w <= 1.0):
        raise InputError(f"aspect_ratio {w:g} of an oblate pore must lie in [{MIN_ASPECT}, 1] "
                         "(short over long axis)")
    return w


def _check(porosity, pore_shape, aspect_ratio, scheme):
    try:
        p = float(porosity)
    except (TypeError, ValueError):
        raise InputError(f"porosity {porosity!r} is not a number") from None
    if not (0.0 <= p < 1.0) or not math.isfinite(p):
        raise InputError(f"porosity {p:g} must be a volume fraction, 0 ≤ p < 1 (0.25 for 25 %)")
    if pore_shape not in PORE_SHAPES:
        raise InputError(f"pore_shape {pore_shape!r} is not one of {', '.join(PORE_SHAPES)}")
    if scheme not in SCHEMES:
        raise InputError(f"porosity scheme {scheme!r} is not one of {', '.join(SCHEMES)}")
    if pore_shape == "spherical":
        if aspect_ratio is not None and float(aspect_ratio) != 1.0:
            raise InputError("aspect_ratio is for pore_shape = \"oblate\"; spherical pores "
                             "have aspect ratio 1")
        return p, pore_shape, 1.0, scheme
    if aspect_ratio is None:
        raise InputError("pore_shape = \"oblate\" needs aspect_ratio (short over long axis, "
                         "e.g. 0.2)")
    w = _check_aspect(aspect_ratio)
    if w >= 1.0:
        raise InputError("an oblate pore needs aspect_ratio < 1; use pore_shape = "
                         "\"spherical\" for 1")
    return p, pore_shape, w, scheme
