"""Solver facts shared by every result, and the isotropic-moduli summary."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np



@dataclass(frozen=True, eq=False)
class SolverFacts:
    """How a result was computed.

    Attributes
    ----------
    method : str
        'fft', 'fe' or 'ms' (the one actually used when 'auto' was asked for).
    iterations : int
        Total over the load cases.
    seconds : float
        Wall time including set-up.
    residuals : tuple of ndarray
        Convergence history of each load case (relative residual for 'fft'/'fe',
        equilibrium error for 'ms').
    tolerance : float
    converged : bool
        True when every load case reached the tolerance.
    """

    method: str
    iterations: int
    seconds: float
    residuals: tuple
    tolerance: float
    converged: bool

    @classmethod
    def of(cls, *parts) -> "SolverFacts":
        """Facts of several runs together (each a `methods.Run` or a `SolverFacts`), e.g.
        the in-plane and antiplane problems, or a stiffness and an expansion."""
        return cls(parts[0].method, sum(p.iterations for p in parts),
                   sum(p.seconds for p in parts), sum((tuple(p.residuals) for p in parts), ()),
                   parts[0].tolerance, all(p.converged for p in parts))

    def to_dict(self) -> dict:
        return {"method": self.method, "iterations": self.iterations,
                "seconds": round(self.seconds, 4), "tolerance": self.tolerance,
                "converged": self.converged,
                "residuals": [[float(f"{v:.3e}") for v in r] for r in self.residuals]}


@dataclass(frozen=True)
class IsotropicModuli:
    """Moduli of the nearest isotropic stiffness.

    Attributes
    ----------
    bulk_modulus : float
        3D bulk modulus K, or in 2D the in-plane (areal) bulk modulus K₂.
    shear_modulus : float
    youngs_modulus, poisson_ratio : float
        3D: of the isotropic solid. 2D: of the isotropic solid that has these in-plane
        moduli in the plane mode used (plane strain), or the in-plane (transverse) E and ν
        at zero out-of-plane stress (plane stress, generalized plane strain).
    """

    bulk_modulus: float
    shear_modulus: float
    youngs_modulus: float
    poisson_ratio: float

    def to_dict(self) -> dict:
        return {"bulk_modulus": self.bulk_modulus, "shear_modulus": self.shear_modulus,
                "youngs_modulus": self.youngs_modulus, "poisson_ratio": self.poisson_ratio}


def matrix(a: np.ndarray | None):
    """JSON form of an array (nested lists) or None."""
    return None if a is None else np.asarray(a).tolist()


class HasFacts:
    """Shortcuts to the `SolverFacts` of a result (``self.facts``)."""

    facts: SolverFacts

    @property
    def method(self) -> str:
        return self.facts.method

    @property
    def iterations(self) -> int:
        return self.facts.iterations

    @property
    def seconds(self) -> float:
        return self.facts.seconds

    @property
    def residuals(self) -> tuple:
        return self.facts.residuals

    @property
    def converged(self) -> bool:
        return self.facts.converged
