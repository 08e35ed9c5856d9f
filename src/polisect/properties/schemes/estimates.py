"""Mean-field estimates: Mori–Tanaka, self-consistent, differential, generalized
self-consistent, and the composite sphere / cylinder assemblages.

All take a sequence of `Particle` (spheres in 3D, circular cylinders seen in their
transverse plane in 2D) and return `Moduli` (conductivity, bulk, shear; in 2D bulk is
the plane-strain transverse bulk modulus k_T and shear the transverse shear modulus
G_T). A property that a particle lacks is None in the result.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from . import layered
from .core import MODES, Moduli, constituents, constraint, equivalent, factors, mean_field, residual

_ELASTIC = ("bulk", "shear")


def _available(particles) -> list[str]:
    return [m for m in MODES if all(p.has(m) for p in particles)]


def _matrix_ref(matrix, dim) -> Moduli:
    return Moduli(*(matrix.modulus(m, dim) if matrix.has(m) else None for m in MODES))


def mori_tanaka(particles, matrix: int, dim: int = 3) -> Moduli:
    """Mori–Tanaka estimate (Maxwell's for conductivity), several inclusion phases.

    ``M = Σ f t_sig / Σ f t_eps`` with the dilute concentration factors of each
    inclusion in the matrix. For spheres of one kind it equals the Hashin–Shtrikman bound
    with the matrix as reference; hollow inclusions use their exact layered factors.

    Parameters
    ----------
    particles : sequence of `Particle`
    matrix : int
        Index of the matrix phase in *particles* (solid, not hollow).
    dim : {3, 2}

    Returns
    -------
    Moduli

    References
    ----------
    .. [1] Maxwell, J. C. (1873). A Treatise on Electricity and Magnetism, vol. 1,
       Clarendon Press, Oxford, art. 314.
    .. [2] Mori, T., & Tanaka, K. (1973). Average stress in matrix and average elastic
       energy of materials with misfitting inclusions. Acta Metall. 21, 571–574.
    .. [3] Benveniste, Y. (1987). A new approach to the application of Mori–Tanaka's
       theory in composite materials. Mech. Mater. 6, 147–157.

    Examples
    --------
    >>> from polisect.properties.schemes import Particle
    >>> ps = [Particle(0.8, conductivity=1.0), Particle(0.2, conductivity=10.0)]
    >>> round(mori_tanaka(ps, matrix=0).conductivity, 6)   # 1 + 3f(k − 1)/(k + 2 − f(k − 1))
    1.529412
    """
    ref = _matrix_ref(particles[matrix], dim)
    return Moduli(*(mean_field(particles, m, dim, ref) if m in _available(particles) else None
                    for m in MODES))


def _range(particles, mode, dim):
    """Least and greatest modulus of the phases present, gas cores included."""
    values = [p.modulus(mode, dim) for p in constituents(particles, dim) if p.fraction > 0.0]
    return min(values), max(values)


def _root(func, lo, hi, scale):
    """Root of *func* in [lo, hi]; the end nearer zero when the sign does not change."""
    f_lo, f_hi = func(lo), func(hi)
    if f_lo == 0.0 or f_lo * f_hi > 0.0 and abs(f_lo) <= abs(f_hi):
        return lo
    if f_hi == 0.0 or f_lo * f_hi > 0.0:
        return hi
    return brentq(func, lo, hi, xtol=1e-14 * scale, rtol=1e-13, maxiter=200)


def _sc_scalar(particles, mode, dim, others: Moduli):
    """Self-consistent modulus of one mode, other moduli of the medium fixed."""
    lo, hi = _range(particles, mode, dim) if mode != "bulk" else _bulk_range(particles, dim)
    if hi == lo:
        return lo

    def g(m):
        return residual(particles, mode, dim, _with(others, mode, m))

    if lo == 0.0 and not (mode == "bulk" and constraint("bulk", dim, others) > 0.0):
        lo = 1e-9 * hi
        if g(lo) <= 0.0:
            return 0.0
    return _root(g, lo, hi, hi)


def _bulk_range(particles, dim):
    values = [equivalent(p, "bulk", dim) for p in particles if p.fraction > 0.0]
    return min(values), max(values)


def _with(moduli: Moduli, mode: str, value: float) -> Moduli:
    parts = {m: moduli.get(m) for m in MODES}
    parts[mode] = value
    return Moduli(*(parts[m] for m in MODES))


def self_consistent(particles, dim: int = 3) -> Moduli:
    """Self-consistent estimate: every phase sees the effective medium.

    Bruggeman's symmetric medium for conductivity, ``Σ f (k_i − k)/(k_i + (d−1)k) = 0``;
    Hill's and Budiansky's for elasticity, the coupled bulk and shear conditions
    ``Σ f (t_sig − M t_eps) = 0`` in the medium (K, G). Solved by bracketing: the bulk
    condition is solved inside for each trial G, the shear condition outside, both with
    Brent's method in the range of the phase moduli. With a non-conducting or void phase
    the estimate is zero below its percolation threshold (conductivity: conducting
    fraction 1/3 in 3D, 1/2 in 2D; elasticity: solid fraction 1/2 in 3D).

    Parameters
    ----------
    particles : sequence of `Particle`
    dim : {3, 2}

    Returns
    -------
    Moduli

    References
    ----------
    .. [1] Bruggeman, D. A. G. (1935). Berechnung verschiedener physikalischer
       Konstanten von heterogenen Substanzen. Ann. Phys. (Leipzig) 416, 636–664.
    .. [2] Hill, R. (1965). A self-consistent mechanics of composite materials.
       J. Mech. Phys. Solids 13, 213–222.
    .. [3] Budiansky, B. (1965). On the elastic moduli of some heterogeneous materials.
       J. Mech. Phys. Solids 13, 223–227.

    Examples
    --------
    >>> from polisect.properties.schemes import Particle
    >>> ps = [Particle(0.5, conductivity=1.0), Particle(0.5, conductivity=0.0)]
    >>> round(self_consistent(ps).conductivity, 6)     # Bruggeman: (3f − 1)/2 · k
    0.25
    """
    modes = _available(particles)
    values = {}
    if "conduction" in modes:
        values["conduction"] = _sc_scalar(particles, "conduction", dim, Moduli())
    if "shear" in modes:
        values["bulk"], values["shear"] = _sc_elastic(particles, dim)
    return Moduli(*(values.get(m) for m in MODES))


def _sc_elastic(particles, dim):
    lo, hi = _range(particles, "shear", dim)

    def bulk_at(G):
        return _sc_scalar(particles, "bulk", dim, Moduli(shear=G))

    if hi == lo:
        return bulk_at(hi), hi

    def h(G):
        return residual(particles, "shear", dim, Moduli(bulk=bulk_at(G), shear=G))

    if lo == 0.0:
        lo = 1e-9 * hi
        if h(lo) <= 0.0:
            return bulk_at(0.0), 0.0
    G = _root(h, lo, hi, hi)
    return bulk_at(G), G


def differential(particles, matrix: int, dim: int = 3) -> Moduli:
    """Differential effective medium: inclusions added to the matrix a little at a time.

    With t = −ln(f_matrix) and inclusion kinds j in fixed proportions p_j,
    ``dM/dt = Σ p_j (t_sig,j − M t_eps,j)``, the factors taken in the current medium;
    integrated with `scipy.integrate.solve_ivp` (bulk and shear together). The matrix
    stays connected at every fraction, so a void matrix phase gives zero stiffness and
    void inclusions never do.

    Parameters
    ----------
    particles : sequence of `Particle`
    matrix : int
        Index of the matrix (host) phase.
    dim : {3, 2}

    Returns
    -------
    Moduli

    References
    ----------
    .. [1] McLaughlin, R. (1977). A study of the differential scheme for composite
       materials. Int. J. Eng. Sci. 15, 237–244.
    .. [2] Norris, A. N. (1985). A differential scheme for the effective moduli of
       composites. Mech. Mater. 4, 1–16.

    Examples
    --------
    >>> from polisect.properties.schemes import Particle
    >>> ps = [Particle(0.7, conductivity=1.0), Particle(0.3, conductivity=0.0)]
    >>> round(differential(ps, matrix=0).conductivity, 4)   # (1 − f)^(3/2) for insulators
    0.5857
    """
    modes = _available(particles)
    host = particles[matrix]
    guests = [p for i, p in enumerate(particles) if i != matrix and p.fraction > 0.0]
    start = {m: host.modulus(m, dim) for m in modes}
    if not guests or host.fraction >= 1.0:
        return Moduli(*(start.get(m) for m in MODES))
    rest = sum(p.fraction for p in guests)
    weights = [p.fraction / rest for p in guests]
    t_end = -math.log(host.fraction) if host.fraction > 0.0 else 40.0
    values = {}
    if "conduction" in modes:
        values["conduction"] = _dem(guests, weights, dim, ("conduction",), [start["conduction"]], t_end)[0]
    if "shear" in modes:
        values["bulk"], values["shear"] = _dem(guests, weights, dim, _ELASTIC,
                                               [start["bulk"], start["shear"]], t_end)
    return Moduli(*(values.get(m) for m in MODES))


def _dem(guests, weights, dim, modes, y0, t_end):
    scale = max(max(y0), max(max(p.modulus(m, dim) for m in modes) for p in guests), 1e-300)

    def rhs(_t, y):
        ref = Moduli(*(y[modes.index(m)] if m in modes else None for m in MODES))
        out = np.zeros(len(modes))
        for i, m in enumerate(modes):
            m0 = ref.get(m)
            if m0 + constraint(m, dim, ref) <= 1e-12 * scale:
                continue
            for p, w in zip(guests, weights):
                t_eps, t_sig = factors(p, m, dim, ref)
                out[i] += w * (t_sig - m0 * t_eps)
        return out

    sol = solve_ivp(rhs, (0.0, t_end), np.asarray(y0, float), method="RK45",
                    rtol=1e-10, atol=1e-13 * scale)
    if not sol.success:
        raise RuntimeError(f"differential scheme did not integrate: {sol.message}")
    return [max(float(v), 0.0) for v in sol.y[:, -1]]


def _two_phase(particles, matrix):
    present = [i for i, p in enumerate(particles) if p.fraction > 0.0]
    others = [i for i in present if i != matrix]
    if len(others) > 1:
        raise ValueError("defined for a matrix and one inclusion phase")
    return particles[matrix], (particles[others[0]] if others else None)


def _composite_layers(matrix, inclusion, mode, dim):
    a = inclusion.fraction ** (1.0 / dim)
    return inclusion.layers(mode, dim, scale=a) + [(matrix.props(mode, dim), 1.0)]


def composite_assemblage(particles, matrix: int, dim: int = 3) -> Moduli:
    """Hashin's composite spheres (3D) or Hashin–Rosen composite cylinders (2D).

    The space is filled with composite spheres (cylinders) of every size, each an
    inclusion — hollow or solid — in a matrix shell of the same volume ratio. The
    assemblage has exactly the conductivity and the bulk modulus (k_T in 2D) of one
    composite sphere, computed here from the layered solution; the shear modulus is
    fixed only between bounds and is None (see `generalized_self_consistent`).

    Parameters
    ----------
    particles : sequence of `Particle`
        The matrix and at most one inclusion phase with nonzero fraction.
    matrix : int
    dim : {3, 2}

    Returns
    -------
    Moduli

    References
    ----------
    .. [1] Hashin, Z. (1962). The elastic moduli of heterogeneous materials. J. Appl.
       Mech. 29, 143–150.
    .. [2] Hashin, Z., & Rosen, B. W. (1964). The elastic moduli of fiber-reinforced
       materials. J. Appl. Mech. 31, 223–232.

    Examples
    --------
    >>> from polisect.properties.schemes import Particle
    >>> ps = [Particle(0.7, bulk_modulus=70.0, shear_modulus=26.0),
    ...       Particle(0.3, bulk_modulus=220.0, shear_modulus=190.0)]
    >>> round(composite_assemblage(ps, matrix=0).bulk, 3)    # = HS lower bound here
    92.464
    """
    host, guest = _two_phase(particles, matrix)
    modes = _available(particles)
    values = {}
    for m in ("conduction", "bulk"):
        if m not in modes:
            continue
        if guest is None:
            values[m] = host.modulus(m, dim)
        elif host.fraction == 0.0:
            values[m] = equivalent(guest, m, dim)
        else:
            values[m] = layered.equivalent(_composite_layers(host, guest, m, dim), m, dim)
    return Moduli(values.get("conduction"), values.get("bulk"), None)


def generalized_self_consistent(particles, matrix: int, dim: int = 3) -> Moduli:
    """Generalized self-consistent estimate (three-phase model) of Christensen & Lo.

    A composite sphere (cylinder) — inclusion, hollow or solid, in its matrix shell —
    is embedded in the effective medium, whose shear modulus is the one for which the
    composite sphere causes no far-field disturbance (zero dipole term; in 3D the
    quadratic of Christensen & Lo, here its root from the layered solution by Brent's
    method). Conductivity and bulk modulus are those of the composite assemblage.

    Parameters
    ----------
    particles : sequence of `Particle`
        The matrix and at most one inclusion phase with nonzero fraction.
    matrix : int
    dim : {3, 2}
        2: transverse shear modulus G_T of the composite-cylinder model.

    Returns
    -------
    Moduli

    References
    ----------
    .. [1] Christensen, R. M., & Lo, K. H. (1979). Solutions for effective shear
       properties in three phase sphere and cylinder models. J. Mech. Phys. Solids 27,
       315–330.
    .. [2] Herve, E., & Zaoui, A. (1993). n-layered inclusion-based micromechanical
       modelling. Int. J. Eng. Sci. 31, 1–10.

    Examples
    --------
    >>> from polisect.properties.schemes import Particle
    >>> ps = [Particle(0.7, bulk_modulus=70.0, shear_modulus=26.0),
    ...       Particle(0.3, bulk_modulus=220.0, shear_modulus=190.0)]
    >>> round(generalized_self_consistent(ps, matrix=0).shear, 3)
    42.89
    """
    host, guest = _two_phase(particles, matrix)
    base = composite_assemblage(particles, matrix, dim)
    if "shear" not in _available(particles):
        return base
    if guest is None:
        return Moduli(base.conductivity, base.bulk, host.shear_modulus)
    if host.fraction == 0.0:
        return Moduli(base.conductivity, base.bulk, self_consistent([guest], dim).shear)
    if host.shear_modulus == 0.0:
        return Moduli(base.conductivity, 0.0, 0.0)
    layers = _composite_layers(host, guest, "shear", dim)
    lo, hi = _range(particles, "shear", dim)

    def h(G):
        ref = Moduli(bulk=base.bulk, shear=G)
        t_eps, t_sig = layered.factors(layers, "shear", dim, (base.bulk, G))
        return (t_sig - G * t_eps) / (G + constraint("shear", dim, ref))

    return Moduli(base.conductivity, base.bulk, _root(h, max(lo, 1e-9 * hi), hi, hi))
