"""Bounds that hold for any isotropic arrangement of the phases.

Voigt/Reuss (Wiener) and Hashin–Shtrikman bounds on conductivity, bulk and shear
modulus for any number of phases, in 3D and in the transverse plane of a fibre (2D)
composite; Schapery's bounds on the thermal expansion of a two-phase composite.
Hollow particles enter as their shell material and their gas core (`core.constituents`).
"""

from __future__ import annotations

import numpy as np

from .core import MODES, Moduli, bulk_constraint, constituents, hs_form, shear_constraint


def _columns(particles, dim):
    parts = [p for p in constituents(particles, dim) if p.fraction > 0.0]
    f = np.array([p.fraction for p in parts])
    cols = {}
    for mode in MODES:
        if all(p.has(mode) for p in parts):
            cols[mode] = np.array([p.modulus(mode, dim) for p in parts])
    return f, cols


def voigt(particles, dim: int = 3) -> Moduli:
    """Arithmetic means (uniform field): upper bounds for any arrangement.

    Parameters
    ----------
    particles : sequence of `Particle`
    dim : {3, 2}
        3: isotropic 3D; 2: transverse plane of a fibre composite, where the bulk mode
        is the plane-strain transverse bulk modulus k_T.

    Returns
    -------
    Moduli
        Properties the particles lack are None.

    References
    ----------
    .. [1] Voigt, W. (1889). Ueber die Beziehung zwischen den beiden
       Elasticitätsconstanten isotroper Körper. Ann. Phys. 274, 573–587.
    .. [2] Wiener, O. (1912). Die Theorie des Mischkörpers für das Feld der stationären
       Strömung. Abh. Math.-Phys. Kl. Königl. Sächs. Ges. Wiss. 32, 509–604.

    Examples
    --------
    >>> from polisect.properties.schemes import Particle
    >>> voigt([Particle(0.5, conductivity=1.0), Particle(0.5, conductivity=3.0)]).conductivity
    2.0
    """
    f, cols = _columns(particles, dim)
    return Moduli(*(float(np.dot(f, cols[m])) if m in cols else None for m in MODES))


def reuss(particles, dim: int = 3) -> Moduli:
    """Harmonic means (uniform flux or stress): lower bounds for any arrangement.

    Parameters
    ----------
    particles : sequence of `Particle`
    dim : {3, 2}

    Returns
    -------
    Moduli

    References
    ----------
    .. [1] Reuss, A. (1929). Berechnung der Fließgrenze von Mischkristallen auf Grund
       der Plastizitätsbedingung für Einkristalle. Z. Angew. Math. Mech. 9, 49–58.
    .. [2] Wiener, O. (1912). Abh. Math.-Phys. Kl. Königl. Sächs. Ges. Wiss. 32, 509–604.

    Examples
    --------
    >>> from polisect.properties.schemes import Particle
    >>> reuss([Particle(0.5, conductivity=1.0), Particle(0.5, conductivity=3.0)]).conductivity
    1.5
    """
    f, cols = _columns(particles, dim)
    return Moduli(*(hs_form(f, cols[m], 0.0) if m in cols else None for m in MODES))


def hashin_shtrikman(particles, dim: int = 3) -> tuple[Moduli, Moduli]:
    """Hashin–Shtrikman lower and upper bounds for isotropic multiphase composites.

    Conductivity: ``[Σ f/(k + (d−1)k₀)]⁻¹ − (d−1)k₀`` with k₀ the least (lower) or
    greatest (upper) phase conductivity. Bulk: the same form with constraint 4G₀/3 (3D)
    or G₀ (2D, k_T). Shear: constraint ζ(K₀, G₀), with K₀ and G₀ the extreme phase
    values taken separately, which keeps the bounds valid when the phases are not
    well ordered (Walpole 1966). A pore makes every lower bound zero.

    Parameters
    ----------
    particles : sequence of `Particle`
    dim : {3, 2}
        2: transverse bounds of fibre composites, on k_T and G_T (Hashin 1965).

    Returns
    -------
    (lower, upper) : tuple of Moduli

    References
    ----------
    .. [1] Hashin, Z., & Shtrikman, S. (1962). A variational approach to the theory of
       the effective magnetic permeability of multiphase materials. J. Appl. Phys. 33,
       3125–3131.
    .. [2] Hashin, Z., & Shtrikman, S. (1963). A variational approach to the theory of
       the elastic behaviour of multiphase materials. J. Mech. Phys. Solids 11, 127–140.
    .. [3] Walpole, L. J. (1966). On bounds for the overall elastic moduli of
       inhomogeneous systems — I. J. Mech. Phys. Solids 14, 151–162.
    .. [4] Hashin, Z. (1965). On elastic behaviour of fibre reinforced materials of
       arbitrary transverse phase geometry. J. Mech. Phys. Solids 13, 119–134.

    Examples
    --------
    >>> from polisect.properties.schemes import Particle
    >>> lo, hi = hashin_shtrikman([Particle(0.5, conductivity=1.0), Particle(0.5, conductivity=3.0)])
    >>> round(lo.conductivity, 6), round(hi.conductivity, 6)
    (1.75, 1.875)
    """
    f, cols = _columns(particles, dim)
    out = []
    for pick in (np.min, np.max):
        values = {}
        if "conduction" in cols:
            values["conduction"] = hs_form(f, cols["conduction"], (dim - 1) * pick(cols["conduction"]))
        if "bulk" in cols:
            B0, G0 = pick(cols["bulk"]), pick(cols["shear"])
            values["bulk"] = hs_form(f, cols["bulk"], bulk_constraint(G0, dim))
            values["shear"] = hs_form(f, cols["shear"], shear_constraint(B0, G0, dim))
        out.append(Moduli(*(values.get(m) for m in MODES)))
    return out[0], out[1]


def schapery_bounds(f1: float, K1: float, G1: float, alpha1: float,
                    f2: float, K2: float, G2: float, alpha2: float) -> tuple[float, float]:
    """Schapery's bounds on the thermal expansion of an isotropic two-phase composite.

    α = α₂ + (α₁ − α₂)(1/K − 1/K₂)/(1/K₁ − 1/K₂), evaluated at the Hashin–Shtrikman
    bounds K = K₂ + f₁/[1/(K₁ − K₂) + f₂/(K₂ + 4G₀/3)] with G₀ = min G and max G; the
    smaller bulk bound gives the bound nearer the expansion of the more compliant
    phase. Equal bulk moduli give the rule of mixtures; a pore leaves the solid's α.

    Parameters
    ----------
    f1, K1, G1, alpha1 : float
        Fraction, bulk and shear modulus (GPa) and expansion (1/K) of phase 1.
    f2, K2, G2, alpha2 : float
        The same for phase 2; f1 + f2 = 1.

    Returns
    -------
    (lower, upper) : tuple of float
        1/K.

    References
    ----------
    .. [1] Schapery, R. A. (1968). Thermal expansion coefficients of composite
       materials based on energy principles. J. Compos. Mater. 2, 380–404.

    Examples
    --------
    >>> lo, hi = schapery_bounds(0.5, 70.0, 26.0, 23e-6, 0.5, 220.0, 190.0, 4e-6)
    >>> round(lo * 1e6, 3), round(hi * 1e6, 3)
    (10.038, 12.291)
    """
    if K1 == 0.0 or K2 == 0.0:
        alpha = alpha1 if K2 == 0.0 else alpha2
        return alpha, alpha
    if K1 == K2:
        mean = f1 * alpha1 + f2 * alpha2
        return mean, mean
    values = []
    for G0 in (min(G1, G2), max(G1, G2)):
        K = K2 + f1 / (1.0 / (K1 - K2) + f2 / (K2 + 4.0 * G0 / 3.0))
        values.append(alpha2 + (alpha1 - alpha2) * (1.0 / K - 1.0 / K2) / (1.0 / K1 - 1.0 / K2))
    return min(values), max(values)
