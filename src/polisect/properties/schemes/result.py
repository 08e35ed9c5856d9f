"""All bounds and estimates for one set of phases: `evaluate` and `SchemesResult`.

This is what the pipeline, the report and ``polisect estimate`` call. Phases are
``(name, Material, fraction)``; properties that some phase lacks are left out (None).
In 3D the particles are spheres. In 2D they are circular cylinders seen in their
transverse plane (a prismatic structure): ``bulk_modulus`` is then the plane-strain
transverse bulk modulus k_T = K + G/3, ``shear_modulus`` the transverse shear modulus
G_T, ``youngs_modulus`` and ``poisson_ratio`` the transverse E_T and ν_TT of the free
prism, and ``expansion`` its transverse expansion.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np

from ...core.errors import InputError
from ...core.materials import Material, get_material
from .bounds import hashin_shtrikman, reuss, schapery_bounds, voigt
from .core import Moduli, Particle, constituents
from .estimates import (composite_assemblage, differential, generalized_self_consistent,
                        mori_tanaka, self_consistent)
from .expansion import expansion_estimate, kerner, transverse_estimate, turner

@dataclass(frozen=True)
class Estimate:
    """Effective isotropic properties from one scheme; None where not available.

    Attributes
    ----------
    conductivity : float or None
        W/(m·K).
    bulk_modulus, shear_modulus, youngs_modulus : float or None
        GPa (2D: k_T, G_T, E_T).
    poisson_ratio : float or None
        (2D: ν_TT.)
    expansion : float or None
        Linear thermal expansion, 1/K (2D: transverse).
    """

    conductivity: float | None = None
    bulk_modulus: float | None = None
    shear_modulus: float | None = None
    youngs_modulus: float | None = None
    poisson_ratio: float | None = None
    expansion: float | None = None



PROPERTY_NAMES = tuple(f.name for f in fields(Estimate))
"""The properties an `Estimate` and the bounds speak of, in order."""


@dataclass(frozen=True)
class Bound:
    """Lower and upper bound on one property; None where no bound applies."""

    lower: float | None = None
    upper: float | None = None


@dataclass(frozen=True)
class Placement:
    """Where a computed value lies against its bounds.

    Attributes
    ----------
    value, lower, upper, tol : float
        The value, the bounds (None: unbounded side) and the relative tolerance.
    position : {"below", "within", "above"}
        "below"/"above" only when beyond the bound by more than ``tol`` times the scale
        of the bounds (the larger of |lower| and |upper|).
    excess : float
        Distance beyond the nearer bound relative to that scale; 0 when within.
    """

    value: float
    lower: float | None
    upper: float | None
    tol: float
    position: str
    excess: float

    @property
    def outside(self) -> bool:
        """True when the value is beyond a bound by more than the tolerance."""
        return self.position != "within"

    def warning(self, label: str) -> str | None:
        """A sentence for the report when the value is outside, else None."""
        if not self.outside:
            return None
        bound = self.lower if self.position == "below" else self.upper
        side = "lower" if self.position == "below" else "upper"
        return (f"{label} {self.value:.4g} is {self.position} the {side} bound "
                f"{bound:.4g} by {100 * self.excess:.2g} % of the bounds (tolerance "
                f"{100 * self.tol:.2g} %): check the phase properties, the segmentation, the "
                "solver convergence, or whether the structure is far from isotropic")


def place(value: float, lower: float | None, upper: float | None, tol: float = 0.01) -> Placement:
    """Place a computed value against its bounds, with a relative tolerance.

    Parameters
    ----------
    value : float
    lower, upper : float or None
        None leaves that side unbounded.
    tol : float
        Allowed excursion, relative to max(|lower|, |upper|): solver and discretization
        error, and the anisotropy of a finite section.

    Returns
    -------
    Placement

    Examples
    --------
    >>> place(10.3, 9.0, 10.0, tol=0.01).position
    'above'
    >>> place(10.05, 9.0, 10.0, tol=0.01).position
    'within'
    """
    scale = max(abs(lower or 0.0), abs(upper or 0.0)) or max(abs(value), 1e-300)
    if lower is not None and value < lower - tol * scale:
        return Placement(value, lower, upper, tol, "below", (lower - value) / scale)
    if upper is not None and value > upper + tol * scale:
        return Placement(value, lower, upper, tol, "above", (value - upper) / scale)
    return Placement(value, lower, upper, tol, "within", 0.0)


@dataclass(frozen=True)
class SchemesResult:
    """Bounds and mean-field estimates for one composite.

    Attributes
    ----------
    dim : int
        3 (spheres) or 2 (cylinders, transverse plane).
    matrix : str
        Phase used as matrix by the matrix-based schemes.
    phases : tuple of (name, fraction)
        Fractions after normalisation to a sum of 1.
    hollow : tuple of (name, inner/outer diameter ratio)
    schemes : tuple of (scheme name, Estimate)
    bounds : tuple of (property, Bound)
        Properties as in `Estimate`; Hashin–Shtrikman for conductivity and moduli,
        Schapery (3D) or Rosen–Hashin (2D) for a two-phase expansion.
    notes : tuple of str
        What a reader must know to use the numbers.
    """

    dim: int
    matrix: str
    phases: tuple
    hollow: tuple
    schemes: tuple
    bounds: tuple
    notes: tuple

    def scheme(self, name: str) -> Estimate:
        """The estimate of scheme *name* (KeyError when the scheme was left out)."""
        return dict(self.schemes)[name]

    def bound(self, prop: str) -> Bound:
        """The bounds on *prop* (an `Estimate` field name)."""
        return dict(self.bounds)[prop]

    def check(self, prop: str, value: float, tol: float = 0.01) -> Placement:
        """Place a computed *value* of *prop* against the bounds (see `place`)."""
        b = self.bound(prop)
        return place(value, b.lower, b.upper, tol)


def _isotropic(mat: Material, notes: list) -> tuple:
    """Conductivity, K, G and α of *mat* for the schemes (None where unavailable)."""
    k = mat.conductivity
    if k is not None and np.ndim(k) != 0:
        notes.append(f"{mat.name}: anisotropic conductivity tensor; conductivity left out "
                     "(the schemes need isotropic phases)")
        k = None
    K = G = None
    if mat.stiffness is not None:
        notes.append(f"{mat.name}: anisotropic stiffness; moduli left out "
                     "(the schemes need isotropic phases)")
    elif mat.youngs_modulus == 0.0:
        K = G = 0.0
    elif mat.youngs_modulus is not None and mat.poisson_ratio is not None:
        K, G = mat.bulk_modulus, mat.shear_modulus
    alpha = mat.expansion
    if alpha is not None and np.ndim(alpha) != 0:
        notes.append(f"{mat.name}: anisotropic expansion tensor; expansion left out")
        alpha = None
    if K == 0.0:
        alpha = 0.0
    return (None if k is None else float(k)), K, G, (None if alpha is None else float(alpha))


def check_fractions(phases, tol: float = 1e-3) -> list[float]:
    """Check that phase fractions lie in [0, 1] and sum to 1; return them normalised.

    Parameters
    ----------
    phases : sequence of (name, ..., fraction)
        The first item of each entry is the name, the last its fraction.
    tol : float
        Allowed difference of the sum from 1 (rounding of typed fractions).

    Returns
    -------
    list of float
        The fractions divided by their sum.

    Raises
    ------
    InputError
        A fraction outside [0, 1] or not a number, or a sum that misses 1 by more than
        *tol*; the message says by how much.

    Examples
    --------
    >>> check_fractions([("alumina", 0.6), ("air", 0.4)])
    [0.6, 0.4]
    """
    if not phases:
        raise InputError("no phases given: give at least one phase with its fraction")
    values = []
    for entry in phases:
        name, f = entry[0], entry[-1]
        try:
            f = float(f)
        except (TypeError, ValueError):
            raise InputError(f"phase {name!r}: fraction {f!r} is not a number") from None
        if not (0.0 <= f <= 1.0):
            raise InputError(f"phase {name!r}: fraction {f:g} is outside 0..1; give the volume "
                             "(area) fraction as a number between 0 and 1")
        values.append(f)
    total = math.fsum(values)
    if abs(total - 1.0) > tol:
        diff = total - 1.0
        how = f"{abs(diff):.4g} {'over' if diff > 0 else 'short of'} 1"
        listing = " + ".join(f"{e[0]} {v:g}" for e, v in zip(phases, values))
        raise InputError(f"phase fractions sum to {total:.4g} ({listing}), {how}: adjust them "
                         "so that they add up to 1")
    return [v / total for v in values]


def _validate(phases, matrix, dim, hollow):
    if dim not in (2, 3):
        raise InputError(f"dim must be 2 or 3, not {dim!r}")
    names = []
    for entry in phases:
        if len(entry) != 3 or not isinstance(entry[1], Material):
            raise InputError("each phase must be (name, Material, fraction)")
        if entry[0] in names:
            raise InputError(f"phase {entry[0]!r} is given twice: give each phase once")
        names.append(entry[0])
    if matrix is not None and matrix not in names:
        raise InputError(f"matrix {matrix!r} is not one of the phases ({', '.join(names)}): "
                         "name one of them")
    for name, ratio in hollow.items():
        if name not in names:
            raise InputError(f"hollow phase {name!r} is not one of the phases "
                             f"({', '.join(names)})")
        if not (0.0 <= ratio < 1.0):
            raise InputError(f"hollow phase {name!r}: inner/outer diameter ratio {ratio:g} must be "
                             "at least 0 and less than 1")
    return names


def evaluate(phases, *, matrix: str | None = None, dim: int = 3,
             hollow: dict | None = None) -> SchemesResult:
    """Bounds and estimates of conductivity, moduli and expansion for a composite.

    Parameters
    ----------
    phases : sequence of (name, Material, fraction)
        Isotropic phases; fractions sum to 1 (see `check_fractions`). A hollow phase's
        fraction is its envelope fraction, shell and core together.
    matrix : str, optional
        Phase the matrix-based schemes (Mori–Tanaka, differential, generalized
        self-consistent, composite assemblage, Kerner) use as matrix; by default the
        solid (not hollow) phase with the largest fraction.
    dim : {3, 2}
        3: spheres; 2: circular cylinders seen in their transverse plane.
    hollow : dict, optional
        Inclusion phase name → inner/outer diameter ratio; the core is gas (the library's
        ``air``) and carries no load.

    Returns
    -------
    SchemesResult

    Raises
    ------
    InputError
        Bad fractions, unknown matrix or hollow phase names, a hollow matrix.

    References
    ----------
    .. [1] Hashin, Z., & Shtrikman, S. (1963). J. Mech. Phys. Solids 11, 127–140.
    .. [2] Mori, T., & Tanaka, K. (1973). Acta Metall. 21, 571–574.
    .. [3] Hill, R. (1965). J. Mech. Phys. Solids 13, 213–222.
    .. [4] Norris, A. N. (1985). Mech. Mater. 4, 1–16.
    .. [5] Christensen, R. M., & Lo, K. H. (1979). J. Mech. Phys. Solids 27, 315–330.
    .. [6] Hashin, Z. (1962). J. Appl. Mech. 29, 143–150.
    .. [7] Levin, V. M. (1967). Mech. Solids 2, 58–61.

    Examples
    --------
    >>> from polisect import get_material
    >>> r = evaluate([("aluminium", get_material("aluminium"), 0.7),
    ...               ("silicon-carbide", get_material("silicon-carbide"), 0.3)])
    >>> lo, hi = r.bound("conductivity").lower, r.bound("conductivity").upper
    >>> lo <= r.scheme("self-consistent").conductivity <= hi
    True
    """
    phases = list(phases)
    hollow = {str(k): float(v) for k, v in (hollow or {}).items()}
    names = _validate(phases, matrix, dim, hollow)
    fractions = check_fractions(phases)
    if matrix is None:
        solid = [(f, -i) for i, (n, f) in enumerate(zip(names, fractions)) if n not in hollow]
        if not solid:
            raise InputError("every phase is hollow: the matrix-based schemes need a solid "
                             "matrix phase; name it and leave it out of the hollow phases")
        matrix = names[-max(solid)[1]]
    elif matrix in hollow:
        raise InputError(f"the matrix {matrix!r} cannot be hollow: hollow phases are inclusions")
    notes = []
    air = get_material("air").conductivity
    particles = []
    alphas = []
    for (name, mat, _), f in zip(phases, fractions):
        k, K, G, alpha = _isotropic(mat, notes)
        particles.append(Particle(f, k, K, G, hollow.get(name, 0.0), air, name))
        alphas.append(alpha)
    mi = names.index(matrix)
    ctx = _Context(particles, alphas, dim)
    lo, hi = hashin_shtrikman(particles, dim)
    rows = [("voigt", ctx.complete(voigt(particles, dim), expansion=False)),
            ("reuss", ctx.complete(reuss(particles, dim), expansion=False)),
            ("mori-tanaka", ctx.complete(mori_tanaka(particles, mi, dim))),
            ("self-consistent", ctx.complete(self_consistent(particles, dim))),
            ("differential", ctx.complete(differential(particles, mi, dim)))]
    inclusions = [p for i, p in enumerate(particles) if i != mi and p.fraction > 0.0]
    if len(inclusions) <= 1:
        rows.append(("generalized-self-consistent",
                     ctx.complete(generalized_self_consistent(particles, mi, dim))))
        rows.append(("composite-spheres" if dim == 3 else "composite-cylinders",
                     ctx.complete(composite_assemblage(particles, mi, dim))))
    else:
        notes.append("generalized self-consistent and composite assemblage left out: they are "
                     "defined for a matrix and one inclusion phase")
    rows += ctx.expansion_rows(particles[mi])
    notes += _standard_notes(dim, matrix, hollow, ctx)
    return SchemesResult(dim, matrix, tuple(zip(names, fractions)), tuple(hollow.items()),
                         tuple(rows), ctx.bounds(lo, hi), tuple(notes))


class _Context:
    """Constituent arrays shared by the rows: fractions, K, G, α (gas cores split off)."""

    def __init__(self, particles, alphas, dim):
        self.dim = dim
        parts, alpha = [], []
        for p, a in zip(particles, alphas):
            split = constituents([p], dim)
            parts += split
            alpha += [a] + [0.0] * (len(split) - 1)
        self.f = np.array([p.fraction for p in parts])
        self.elastic = all(p.has("bulk") for p in parts)
        self.K = np.array([p.bulk_modulus for p in parts], float) if self.elastic else None
        self.G = np.array([p.shear_modulus for p in parts], float) if self.elastic else None
        self.alpha = (np.array(alpha, float) if self.elastic and None not in alpha else None)
        self.two_phase = int(np.count_nonzero(self.f > 0)) == 2

    def complete(self, m: Moduli, expansion: bool = True) -> Estimate:
        """Add E, ν and α to the conductivity, bulk and shear modulus of a scheme."""
        if m.bulk is None or not self.elastic:
            return Estimate(m.conductivity)
        alpha = self.alpha if expansion else None
        E = nu = a = None
        if self.dim == 3:
            if m.shear is not None:
                E, nu = _young_poisson(m.bulk, m.shear)
            if alpha is not None:
                a = expansion_estimate(self.f, self.K, alpha, m.bulk)
            return Estimate(m.conductivity, m.bulk, m.shear, E, nu, a)
        t = transverse_estimate(self.f, self.K, self.G, alpha, m.bulk)
        if t is None:
            return Estimate(m.conductivity, m.bulk, m.shear, 0.0, None, None)
        if m.shear is not None:
            E, nu = t.transverse_moduli(m.shear)
        return Estimate(m.conductivity, m.bulk, m.shear, E, nu, t.transverse_expansion)

    def expansion_rows(self, matrix: Particle) -> list:
        """Turner and Kerner: particulate (3D) expansion formulas, left out in 2D."""
        if self.alpha is None or self.dim == 2:
            return []
        rows = [("turner", Estimate(expansion=turner(self.f, self.K, self.alpha)))]
        if matrix.shear_modulus:
            rows.append(("kerner", Estimate(expansion=kerner(self.f, self.K, self.alpha,
                                                             matrix.shear_modulus))))
        return rows

    def bounds(self, lo: Moduli, hi: Moduli) -> tuple:
        out = {"conductivity": Bound(lo.conductivity, hi.conductivity)}
        if lo.bulk is None or not self.elastic:
            return tuple((p, out.get(p, Bound())) for p in PROPERTY_NAMES)
        out["bulk_modulus"] = Bound(lo.bulk, hi.bulk)
        out["shear_modulus"] = Bound(lo.shear, hi.shear)
        if self.dim == 3:
            out["youngs_modulus"] = Bound(_young_poisson(lo.bulk, lo.shear)[0],
                                          _young_poisson(hi.bulk, hi.shear)[0])
            out["poisson_ratio"] = Bound(_young_poisson(lo.bulk, hi.shear)[1],
                                         _young_poisson(hi.bulk, lo.shear)[1])
        else:
            t_lo = transverse_estimate(self.f, self.K, self.G, self.alpha, lo.bulk)
            t_hi = transverse_estimate(self.f, self.K, self.G, self.alpha, hi.bulk)
            out["youngs_modulus"] = Bound(t_lo.transverse_moduli(lo.shear)[0] if t_lo else 0.0,
                                          t_hi.transverse_moduli(hi.shear)[0])
            out["poisson_ratio"] = Bound(t_lo.transverse_moduli(hi.shear)[1] if t_lo else -1.0,
                                         t_hi.transverse_moduli(lo.shear)[1])
        if self.alpha is not None and self.two_phase:
            out["expansion"] = self._expansion_bound(lo, hi)
        return tuple((p, out.get(p, Bound())) for p in PROPERTY_NAMES)

    def _expansion_bound(self, lo: Moduli, hi: Moduli) -> Bound:
        i, j = np.flatnonzero(self.f > 0)
        if self.K[i] == 0.0 or self.K[j] == 0.0:
            solid = self.alpha[j] if self.K[i] == 0.0 else self.alpha[i]
            return Bound(solid, solid)
        if self.dim == 3:
            return Bound(*schapery_bounds(self.f[i], self.K[i], self.G[i], self.alpha[i],
                                          self.f[j], self.K[j], self.G[j], self.alpha[j]))
        ends = [transverse_estimate(self.f, self.K, self.G, self.alpha, m.bulk) for m in (lo, hi)]
        if None in ends:
            return Bound()
        values = [t.transverse_expansion for t in ends]
        return Bound(min(values), max(values))


def _young_poisson(K: float, G: float) -> tuple[float, float | None]:
    """E = 9KG/(3K + G), ν = (3K − 2G)/(2(3K + G)); ν None for a void."""
    if 3.0 * K + G == 0.0:
        return 0.0, None
    return 9.0 * K * G / (3.0 * K + G), (3.0 * K - 2.0 * G) / (2.0 * (3.0 * K + G))


def _standard_notes(dim, matrix, hollow, ctx) -> list[str]:
    notes = ["bounds: Hashin–Shtrikman on conductivity, K and G, with E and nu from them; "
             + ("Schapery" if dim == 3 else "Rosen–Hashin") + " on a two-phase expansion; "
             "voigt and reuss are the wider Wiener bounds",
             f"matrix-based schemes (Mori–Tanaka, differential, generalized self-consistent, "
             f"composite assemblage, Kerner) use {matrix!r} as the matrix"]
    if dim == 2:
        notes.append("2D: K is the plane-strain transverse bulk modulus k_T = K + G/3; G, E, nu "
                     "and alpha are the transverse G_T, E_T, nu_TT and expansion of the free prism "
                     "(E_T and nu_TT use the axial terms of the comparison medium of each row); "
                     "Turner and Kerner, formulas for particles, are left out")
    if hollow:
        notes.append("hollow phases: the fraction is the envelope (shell and core); the bounds "
                     "count the gas core as a separate phase")
    if ctx.alpha is not None:
        if ctx.two_phase:
            notes.append("expansion of each scheme from its bulk modulus by Levin's exact "
                         "two-phase relation")
        else:
            notes.append("expansion of each scheme from its bulk modulus with Levin-type "
                         "comparison-medium factors (exact only for two phases); no expansion "
                         "bounds for more than two phases")
    return notes
