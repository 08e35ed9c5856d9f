"""Phases as the schemes see them, and the dilute concentration factors they share.

A *particle* is one phase of a composite with its envelope fraction: a homogeneous
sphere (3D) or circular cylinder (2D, transverse plane), or a hollow one whose core is
gas. Every mean-field scheme is written with the same two numbers per particle and
mode, the dilute concentration factors in a reference medium:

``t_eps``   the particle's mean field (temperature gradient, volumetric or deviatoric
            strain) per unit remote field;
``t_sig``   its mean flux or stress per unit remote field, in modulus units, so that a
            homogeneous particle of modulus M has ``t_sig = M * t_eps``.

Three modes: ``"conduction"`` (modulus k), ``"bulk"`` (K in 3D, the plane-strain
transverse bulk modulus k_T = K + G/3 in 2D) and ``"shear"`` (G; in 2D the transverse
shear modulus G_T).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import layered

MODES = ("conduction", "bulk", "shear")
HOLLOW_MIN = 1e-3
"""Inner/outer diameter ratios below this are solid particles (core fraction ≤ 1e-6)."""


@dataclass(frozen=True)
class Particle:
    """One phase: fraction, isotropic properties and, optionally, a gas-filled core.

    Parameters
    ----------
    fraction : float
        Volume fraction (3D) or area fraction (2D) of the particle envelope, the core
        of a hollow particle included.
    conductivity : float, optional
        W/(m·K).
    bulk_modulus, shear_modulus : float, optional
        3D isotropic K and G, GPa (0 for a pore). The 2D schemes use the plane-strain
        transverse bulk modulus K + G/3 from these.
    hollow : float
        Inner/outer diameter ratio of a hollow particle, 0 ≤ hollow < 1; below
        `HOLLOW_MIN` the particle is solid.
    core_conductivity : float
        Conductivity of the gas in the core of a hollow particle, W/(m·K).
    name : str
        Label used in messages.
    """

    fraction: float
    conductivity: float | None = None
    bulk_modulus: float | None = None
    shear_modulus: float | None = None
    hollow: float = 0.0
    core_conductivity: float = 0.0
    name: str = ""

    @property
    def is_hollow(self) -> bool:
        """True for a hollow particle (diameter ratio at least `HOLLOW_MIN`)."""
        return self.hollow >= HOLLOW_MIN

    def has(self, mode: str) -> bool:
        """True when the particle has the properties *mode* needs."""
        if mode == "conduction":
            return self.conductivity is not None
        return self.bulk_modulus is not None and self.shear_modulus is not None

    def modulus(self, mode: str, dim: int) -> float:
        """The particle material's modulus in *mode* (k, K or k_T, or G)."""
        if mode == "conduction":
            return float(self.conductivity)
        if mode == "bulk":
            return bulk_for_dim(self.bulk_modulus, self.shear_modulus, dim)
        return float(self.shear_modulus)

    def props(self, mode: str, dim: int) -> tuple:
        """Layer properties of the particle material: ``(k,)`` or ``(B, G)``."""
        if mode == "conduction":
            return (float(self.conductivity),)
        return (bulk_for_dim(self.bulk_modulus, self.shear_modulus, dim), float(self.shear_modulus))

    def layers(self, mode: str, dim: int, scale: float = 1.0) -> list:
        """``[(props, outer radius), ...]`` from the centre out, outer radius *scale*."""
        if not self.is_hollow:
            return [(self.props(mode, dim), scale)]
        core = (self.core_conductivity,) if mode == "conduction" else (0.0, 0.0)
        return [(core, self.hollow * scale), (self.props(mode, dim), scale)]


@dataclass(frozen=True)
class Moduli:
    """Effective (or reference) conductivity, bulk and shear modulus; None when unknown.

    In 2D, ``bulk`` is the plane-strain transverse bulk modulus k_T and ``shear`` the
    transverse shear modulus G_T.
    """

    conductivity: float | None = None
    bulk: float | None = None
    shear: float | None = None

    def get(self, mode: str) -> float | None:
        """The modulus of *mode*."""
        return {"conduction": self.conductivity, "bulk": self.bulk, "shear": self.shear}[mode]


def bulk_for_dim(K: float, G: float, dim: int) -> float:
    """K in 3D; the plane-strain transverse bulk modulus k_T = K + G/3 in 2D (Hill 1964)."""
    return float(K) if dim == 3 else float(K) + float(G) / 3.0


def bulk_constraint(G0: float, dim: int) -> float:
    """Hill's constraint modulus for the bulk mode: 4G/3 (spheres) or G (cylinders)."""
    return 4.0 * G0 / 3.0 if dim == 3 else G0


def shear_constraint(B0: float, G0: float, dim: int) -> float:
    """Constraint modulus for the shear mode of a sphere (3D) or cylinder (2D).

    ζ = G(9K + 8G)/(6(K + 2G)) in 3D; ζ = G k_T/(k_T + 2G) in 2D (Hashin 1965).
    """
    if G0 == 0.0:
        return 0.0
    if dim == 3:
        return G0 * (9.0 * B0 + 8.0 * G0) / (6.0 * (B0 + 2.0 * G0))
    return G0 * B0 / (B0 + 2.0 * G0)


def constraint(mode: str, dim: int, ref: Moduli) -> float:
    """Constraint modulus M' of a reference medium: dilute factor (M0 + M')/(M + M')."""
    if mode == "conduction":
        return (dim - 1) * ref.conductivity
    if mode == "bulk":
        return bulk_constraint(ref.shear, dim)
    return shear_constraint(ref.bulk, ref.shear, dim)


def hs_form(fractions, moduli, c: float) -> float:
    """``[Σ f/(M + c)]⁻¹ − c``: the Hashin–Shtrikman-type mean with constraint modulus c.

    c = 0 gives the harmonic (Reuss) mean, c = ∞ the arithmetic (Voigt) mean; a phase
    with M + c = 0 makes the result 0. Evaluated as the weighted mean Σ w M / Σ w with
    w = f/(M + c), which is the same number without cancellation at large c.
    """
    f = np.asarray(fractions, float)
    m = np.asarray(moduli, float)
    if np.isinf(c):
        return float(np.dot(f, m))
    keep = f > 0
    if np.any(m[keep] + c <= 0.0):
        return 0.0
    w = f[keep] / (m[keep] + c)
    return float(np.dot(w, m[keep]) / np.sum(w))


def factors(p: Particle, mode: str, dim: int, ref: Moduli) -> tuple[float, float]:
    """Dilute concentration factors ``(t_eps, t_sig)`` of particle *p* in medium *ref*.

    Closed forms for homogeneous spheres and cylinders (Maxwell 1873; Eshelby 1957);
    the layered solution for hollow ones (Herve & Zaoui 1993). The reference medium must
    not be void in *mode*.

    References
    ----------
    .. [1] Maxwell, J. C. (1873). A Treatise on Electricity and Magnetism, vol. 1,
       Clarendon Press, Oxford, art. 314.
    .. [2] Eshelby, J. D. (1957). The determination of the elastic field of an
       ellipsoidal inclusion, and related problems. Proc. R. Soc. Lond. A 241, 376–396.
    .. [3] Herve, E., & Zaoui, A. (1993). n-layered inclusion-based micromechanical
       modelling. Int. J. Eng. Sci. 31, 1–10.
    """
    if p.is_hollow and mode == "shear":
        return layered.factors(p.layers(mode, dim), mode, dim, _ref_props(mode, ref))
    m = equivalent(p, mode, dim)
    c = constraint(mode, dim, ref)
    m0 = ref.get(mode)
    t_eps = (m0 + c) / (m + c)
    return t_eps, m * t_eps


def equivalent(p: Particle, mode: str, dim: int) -> float:
    """Modulus of the homogeneous particle equivalent to *p* in *mode*.

    Exact for conduction and bulk, where a coated sphere or cylinder acts outside as a
    homogeneous one (Hashin 1962); for a solid particle its own modulus.
    """
    if not p.is_hollow:
        return p.modulus(mode, dim)
    if mode == "shear":
        raise ValueError("a hollow particle has no equivalent shear modulus")
    return layered.equivalent(p.layers(mode, dim), mode, dim)


def _ref_props(mode: str, ref: Moduli) -> tuple:
    return (ref.conductivity,) if mode == "conduction" else (ref.bulk, ref.shear)


def mean_field(particles, mode: str, dim: int, ref: Moduli) -> float:
    """``Σ f t_sig / Σ f t_eps`` over *particles* with factors in *ref*.

    With the matrix as *ref* this is the Mori–Tanaka estimate (Benveniste 1987); with a
    fictitious reference the Hashin–Shtrikman-type mean.
    """
    if constraint(mode, dim, ref) + ref.get(mode) <= 0.0:
        return 0.0
    num = den = 0.0
    for p in particles:
        t_eps, t_sig = factors(p, mode, dim, ref)
        num += p.fraction * t_sig
        den += p.fraction * t_eps
    return num / den


def residual(particles, mode: str, dim: int, ref: Moduli) -> float:
    """``Σ f (t_sig − M t_eps) / (M + M')`` with M the reference modulus of *mode*.

    Zero at the self-consistent point. For a homogeneous particle the term is
    ``f (M_i − M)/(M_i + M')``, free of the common factor M + M' that vanishes with the
    reference stiffness; a void particle in a medium of zero constraint gives −∞.
    """
    m0 = ref.get(mode)
    c = constraint(mode, dim, ref)
    total = 0.0
    for p in particles:
        if p.fraction == 0.0:
            continue
        if p.is_hollow and mode == "shear":
            t_eps, t_sig = factors(p, mode, dim, ref)
            total += p.fraction * (t_sig - m0 * t_eps) / (m0 + c)
            continue
        m = equivalent(p, mode, dim)
        if m + c <= 0.0:
            return -np.inf
        total += p.fraction * (m - m0) / (m + c)
    return total


def constituents(particles, dim: int) -> list[Particle]:
    """Split hollow particles into shell material and gas core, the phases of the bounds.

    The core takes the fraction f·ρ^d of a hollow particle of envelope fraction f and
    diameter ratio ρ (d = 3 spheres, 2 cylinders); it carries no load.
    """
    out = []
    for p in particles:
        if not p.is_hollow:
            out.append(p)
            continue
        core = p.fraction * p.hollow ** dim
        out.append(Particle(p.fraction - core, p.conductivity, p.bulk_modulus, p.shear_modulus,
                            name=p.name))
        out.append(Particle(core, p.core_conductivity if p.conductivity is not None else None,
                            0.0, 0.0, name=f"{p.name} core"))
    return out
