"""Thermal expansion of composites: Levin's exact relation, Turner, Kerner, and the
transverse and axial response of fibre (prismatic, 2D) composites.

Levin (1967) showed that the expansion of a two-phase composite follows exactly from its
effective bulk modulus. For more phases it follows from the phase concentration
factors: ``3K*α* = Σ f a_r 3K_r α_r`` with a_r the mean volumetric strain of phase r per
unit overall volumetric strain (Levin's theorem for isotropic phases). Here the a_r of a
Hashin–Shtrikman-type comparison medium ``a_r ∝ 1/(K_r + K′)`` are used, with K′ chosen
to reproduce the effective bulk modulus of the scheme at hand: exact for two phases,
and the scheme's own factors for Mori–Tanaka (K′ = 4G_m/3, which is Kerner's formula)
and the Hashin–Shtrikman bounds.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from .core import hs_form


def levin(K_eff: float, K1: float, alpha1: float, K2: float, alpha2: float) -> float:
    """Levin's exact expansion of a two-phase composite from its bulk modulus.

    α* = α₁ + (α₂ − α₁)(1/K* − 1/K₁)/(1/K₂ − 1/K₁), for isotropic phases and any
    isotropic arrangement; K* may be a bound, an estimate or a measured value.

    Parameters
    ----------
    K_eff : float
        Effective bulk modulus, GPa (in 2D plane strain the transverse k_T, with the
        plane-strain in-plane expansions (1 + ν)α of the phases in place of α).
    K1, alpha1, K2, alpha2 : float
        Bulk moduli (GPa) and expansions (1/K) of the two phases; K1 ≠ K2.

    Returns
    -------
    float
        1/K.

    References
    ----------
    .. [1] Levin, V. M. (1967). On the coefficients of thermal expansion of
       heterogeneous materials. Mech. Solids 2, 58–61 (Izv. Akad. Nauk SSSR, Mekh.
       Tverd. Tela).

    Examples
    --------
    >>> round(levin(120.0, 70.0, 23e-6, 220.0, 4e-6) * 1e6, 4)
    11.3889
    """
    return alpha1 + (alpha2 - alpha1) * (1.0 / K_eff - 1.0 / K1) / (1.0 / K2 - 1.0 / K1)


def turner(fractions, K, alpha) -> float:
    """Turner's expansion: every phase at the same strain, stresses in balance.

    α = Σ f K α / Σ f K (the uniform-strain, Voigt-type estimate).

    Parameters
    ----------
    fractions, K, alpha : array_like
        Phase fractions, bulk moduli (GPa) and expansions (1/K).

    Returns
    -------
    float

    References
    ----------
    .. [1] Turner, P. S. (1946). Thermal-expansion stresses in reinforced plastics.
       J. Res. Natl. Bur. Stand. 37, 239–250.

    Examples
    --------
    >>> round(turner([0.5, 0.5], [70.0, 220.0], [23e-6, 4e-6]) * 1e6, 4)
    8.5862
    """
    f, K, a = (np.asarray(x, float) for x in (fractions, K, alpha))
    return float(np.sum(f * K * a) / np.sum(f * K))


def kerner(fractions, K, alpha, G_matrix: float) -> float:
    """Kerner's expansion of spheres in a matrix of shear modulus G_m.

    α = Σ f α K/(3K + 4G_m) / Σ f K/(3K + 4G_m): the expansion of the composite sphere
    model; for two phases it is Levin's relation with the Mori–Tanaka (Hashin–Shtrikman,
    matrix as reference) bulk modulus.

    Parameters
    ----------
    fractions, K, alpha : array_like
        All phases, the matrix included.
    G_matrix : float
        Shear modulus of the matrix, GPa.

    Returns
    -------
    float

    References
    ----------
    .. [1] Kerner, E. H. (1956). The elastic and thermo-elastic properties of composite
       media. Proc. Phys. Soc. B 69, 808–813.

    Examples
    --------
    >>> round(kerner([0.5, 0.5], [70.0, 220.0], [23e-6, 4e-6], 26.0) * 1e6, 4)
    12.2908
    """
    f, K, a = (np.asarray(x, float) for x in (fractions, K, alpha))
    w = f * K / (3.0 * K + 4.0 * G_matrix)
    return float(np.sum(w * a) / np.sum(w))


def comparison_constraint(fractions, moduli, effective: float) -> float:
    """The constraint c ≥ 0 with ``[Σ f/(M + c)]⁻¹ − c = effective``.

    0 when *effective* is at or below the harmonic mean, ∞ at or above the arithmetic
    mean; any value when the phases have equal moduli.
    """
    f = np.asarray(fractions, float)
    m = np.asarray(moduli, float)
    scale = float(np.max(m)) if np.max(m) > 0 else 1.0
    if np.ptp(m) <= 1e-12 * scale:
        return scale
    if effective <= hs_form(f, m, 0.0) * (1 + 1e-12):
        return 0.0
    if effective >= float(np.dot(f, m)) * (1 - 1e-12):
        return np.inf

    def g(s):
        return hs_form(f, m, scale * s / (1.0 - s)) - effective

    s = brentq(g, 0.0, 1.0 - 1e-15, xtol=1e-15, rtol=1e-14)
    return scale * s / (1.0 - s)


def expansion_estimate(fractions, K, alpha, K_eff: float) -> float:
    """Expansion of an isotropic composite of spheres from its effective bulk modulus.

    ``α* = Σ f α K/(K + K′) / Σ f K/(K + K′)`` with K′ the comparison constraint that
    reproduces *K_eff*; Levin's exact relation for two phases, Turner at the Voigt and
    the rule of mixtures of the solids at the Reuss bulk modulus. A void phase (K = 0)
    carries no weight.

    Parameters
    ----------
    fractions, K, alpha : array_like
        Phase fractions, bulk moduli (GPa) and expansions (1/K).
    K_eff : float
        Effective bulk modulus of the scheme, GPa.

    Returns
    -------
    float

    References
    ----------
    .. [1] Levin, V. M. (1967). Mech. Solids 2, 58–61.
    .. [2] Benveniste, Y., & Dvorak, G. J. (1990). On a correspondence between
       mechanical and thermal effects in two-phase composites. In: Weng, G. J., Taya,
       M., Abé, H. (eds.), Micromechanics and Inhomogeneity, Springer, New York, 65–81.

    Examples
    --------
    >>> round(expansion_estimate([0.5, 0.5], [70.0, 220.0], [23e-6, 4e-6], 120.0) * 1e6, 4)
    11.3889
    """
    f, K, a = (np.asarray(x, float) for x in (fractions, K, alpha))
    c = comparison_constraint(f, K, K_eff)
    if np.isinf(c):
        w = f * K
    elif c == 0.0:
        w = f * (K > 0)
    else:
        w = f * K / (K + c)
    return float(np.sum(w * a) / np.sum(w))


@dataclass(frozen=True)
class Transverse:
    """Response of a prismatic (fibre) composite seen in its transverse section.

    Attributes
    ----------
    k_T, l, n : float
        Hill's moduli: σ_T = k_T (ε_xx + ε_yy) + l ε_zz, σ_zz = l (ε_xx + ε_yy) + n ε_zz
        with σ_T = (σ_xx + σ_yy)/2, GPa.
    axial_modulus, axial_poisson : float
        E_A = n − l²/k_T and ν_A = l/(2k_T).
    transverse_expansion, axial_expansion : float or None
        Free expansion (zero mean stress) across and along the prisms, 1/K.
    """

    k_T: float
    l: float
    n: float
    axial_modulus: float
    axial_poisson: float
    transverse_expansion: float | None
    axial_expansion: float | None

    def transverse_moduli(self, G_T: float) -> tuple[float, float]:
        """Transverse Young's modulus and Poisson's ratio for a transverse shear G_T.

        E_T = 4k_T G_T/(k_T + ψG_T), ν_TT = (k_T − ψG_T)/(k_T + ψG_T),
        ψ = 1 + 4k_T ν_A²/E_A (Hill 1964).
        """
        psi = 1.0 + 4.0 * self.k_T * self.axial_poisson ** 2 / self.axial_modulus
        den = self.k_T + psi * G_T
        return 4.0 * self.k_T * G_T / den, (self.k_T - psi * G_T) / den


def transverse_estimate(fractions, K, G, alpha, kT_eff: float) -> Transverse | None:
    """Axial moduli and free expansions of a fibre composite from its k_T.

    Generalized plane strain: in every phase the axial strain is the same and the
    transverse areal strain follows the comparison medium of constraint c that
    reproduces *kT_eff*: ε_r = (Λ − λ_r ε_zz + 3K_r α_r ΔT)/(k_r + c). For two phases
    this is exact for any arrangement (Hill 1964; Rosen & Hashin 1970), as Levin's
    relation is in 3D.

    Parameters
    ----------
    fractions, K, G : array_like
        Phase fractions and 3D bulk and shear moduli, GPa.
    alpha : array_like or None
        Phase expansions, 1/K; None leaves the expansions out.
    kT_eff : float
        Effective plane-strain transverse bulk modulus of the scheme, GPa.

    Returns
    -------
    Transverse or None
        None when the composite has no transverse stiffness.

    References
    ----------
    .. [1] Hill, R. (1964). Theory of mechanical properties of fibre-strengthened
       materials: I. Elastic behaviour. J. Mech. Phys. Solids 12, 199–212.
    .. [2] Rosen, B. W., & Hashin, Z. (1970). Effective thermal expansion coefficients
       and specific heats of composite materials. Int. J. Eng. Sci. 8, 157–173.
    .. [3] Levin, V. M. (1967). Mech. Solids 2, 58–61.

    Examples
    --------
    >>> t = transverse_estimate([1.0], [100.0], [60.0], [5e-6], 120.0)
    >>> round(t.axial_modulus, 4), round(t.axial_poisson, 4), t.transverse_expansion
    (150.0, 0.25, 5e-06)
    """
    f, K, G = (np.asarray(x, float) for x in (fractions, K, G))
    if kT_eff <= 0.0:
        return None
    k = K + G / 3.0
    lam = K - 2.0 * G / 3.0
    n = K + 4.0 * G / 3.0
    t = 3.0 * K * (np.zeros_like(K) if alpha is None else np.asarray(alpha, float))
    c = comparison_constraint(f, k, kT_eff)
    if np.isinf(c):
        A, B, C = np.ones_like(k), np.zeros_like(k), np.zeros_like(k)
    else:
        g = 1.0 / (k + max(c, 1e-9 * float(np.max(k))))
        S = np.sum(f * g)
        A = g / S
        B = g * (np.sum(f * g * lam) / S - lam)
        C = g * (t - np.sum(f * g * t) / S)
    k_eff = float(np.sum(f * k * A))
    l_eff = 0.5 * (float(np.sum(f * (k * B + lam))) + float(np.sum(f * lam * A)))
    n_eff = float(np.sum(f * (lam * B + n)))
    E_A = n_eff - l_eff ** 2 / k_eff
    alpha_T = alpha_A = None
    if alpha is not None:
        rhs = np.array([np.sum(f * (t - k * C)), np.sum(f * (t - lam * C))])
        e, w = np.linalg.solve(np.array([[k_eff, l_eff], [l_eff, n_eff]]), rhs)
        alpha_T, alpha_A = float(e / 2.0), float(w)
    return Transverse(k_eff, l_eff, n_eff, E_A, l_eff / (2.0 * k_eff), alpha_T, alpha_A)
