"""Effective properties of one model of a structure, as typed values.

Made by `polisect.properties.effective` from the solver results (a 2D section, a volume) and
by `polisect.model3d` (the 3D estimate, whose scalars are a `Spread` over realizations).
Units: conductivity W/(m·K), stiffness and moduli GPa (Voigt order, engineering shear
strains), expansion 1/K.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Spread:
    """A quantity over several realizations: the mean and its 95 % confidence interval.

    The interval is mean ± t·s/√n with Student's t for n − 1 degrees of freedom and s the
    standard deviation over the n realizations (None for a single realization).
    """

    mean: float
    ci95: tuple[float, float] | None
    values: tuple[float, ...]

    @classmethod
    def of(cls, values) -> "Spread":
        """The spread of *values*.

        Examples
        --------
        >>> s = Spread.of([1.0, 2.0, 3.0])
        >>> s.mean, round(s.ci95[1], 3)
        (2.0, 4.484)
        """
        from scipy import stats

        v = np.asarray(values, float)
        mean = float(v.mean())
        if v.size < 2:
            return cls(mean, None, tuple(v.tolist()))
        half = float(stats.t.ppf(0.975, v.size - 1)) * float(v.std(ddof=1)) / math.sqrt(v.size)
        return cls(mean, (mean - half, mean + half), tuple(v.tolist()))

    @property
    def half_width_pct(self) -> float | None:
        """Half-width of the interval over the mean, %."""
        if self.ci95 is None or self.mean == 0:
            return None
        return 50.0 * (self.ci95[1] - self.ci95[0]) / abs(self.mean)


def value_of(x: "float | Spread | None") -> float | None:
    """The number a scalar stands for: itself, or the mean of a `Spread`."""
    return x.mean if isinstance(x, Spread) else x


@dataclass(frozen=True)
class Solver:
    """How one effective property was computed (summed over load cases and realizations)."""

    method: str
    iterations: int
    seconds: float
    tolerance: float
    converged: bool
    residuals: tuple[tuple[float, ...], ...] | None = None
    realizations: int | None = None


@dataclass(frozen=True, eq=False)
class Conductivity:
    """Effective conductivity: the tensor, its isotropic part tr(k)/d and anisotropy."""

    tensor: np.ndarray
    mean: float | Spread
    anisotropy: float
    solver: Solver


@dataclass(frozen=True)
class AxialModuli:
    """Generalized plane strain: the axial moduli of the prismatic structure."""

    youngs_modulus: float
    poisson_ratio: float
    shear_modulus: float


@dataclass(frozen=True)
class ComparableModuli:
    """The moduli of a 2D solve that the 2D (cylinder) schemes give; None where not
    comparable. ``meaning`` says which moduli they are."""

    bulk_modulus: float | None = None
    shear_modulus: float | None = None
    youngs_modulus: float | None = None
    poisson_ratio: float | None = None
    meaning: str | None = None


@dataclass(frozen=True, eq=False)
class Elasticity:
    """Effective stiffness (Voigt, GPa) and the moduli of its nearest isotropic tensor."""

    stiffness: np.ndarray
    youngs_modulus: float | Spread
    poisson_ratio: float | Spread
    bulk_modulus: float | Spread
    shear_modulus: float | Spread
    anisotropy: float
    plane: str | None
    solver: Solver
    bulk_modulus_meaning: str | None = None
    prismatic_stiffness: np.ndarray | None = None
    axial: AxialModuli | None = None
    scheme_comparable: ComparableModuli | None = None


@dataclass(frozen=True, eq=False)
class Expansion:
    """Effective linear thermal expansion (1/K): tensor, tr(α)/d, axial part (prisms).

    ``comparable_mean`` is the value the 2D schemes give (2D sections only; None when the
    plane mode has no scheme counterpart); ``has_comparable`` says whether it applies.
    """

    tensor: np.ndarray
    mean: float | Spread
    axial: float | None
    anisotropy: float
    solver: Solver
    has_comparable: bool = False
    comparable_mean: float | None = None


@dataclass(frozen=True, eq=False)
class Effective:
    """Effective properties of one model of the structure.

    ``model`` says which (a 2D section as a prismatic structure, a 3D volume, or the 3D
    estimate from the section); ``note`` what a reader must know to use the numbers.
    """

    dimension: int
    plane: str | None
    model: str
    note: str | None
    axes: str
    conductivity: Conductivity | None = None
    elasticity: Elasticity | None = None
    expansion: Expansion | None = None


SCALARS = {"conductivity": ("conductivity", "mean"),
           "youngs_modulus": ("elasticity", "youngs_modulus"),
           "poisson_ratio": ("elasticity", "poisson_ratio"),
           "shear_modulus": ("elasticity", "shear_modulus"),
           "bulk_modulus": ("elasticity", "bulk_modulus"),
           "expansion": ("expansion", "mean")}
"""Isotropic scalar of an effective property → (block, attribute) of `Effective`."""


def scalar(effective: "Effective | None", name: str) -> float | None:
    """The isotropic scalar *name* of *effective* (the mean of a `Spread`), or None.

    Examples
    --------
    >>> scalar(None, "conductivity") is None
    True
    """
    block, attr = SCALARS[name]
    b = getattr(effective, block) if effective is not None else None
    return None if b is None else value_of(getattr(b, attr))
