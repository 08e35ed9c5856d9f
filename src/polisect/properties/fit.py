"""Back-calculation of one unknown phase property from one measured effective property.

A bond phase's modulus or conductivity is rarely known: it is porous, impure, and cannot be
tested alone. Given one measured effective value of the composite, the unknown phase value θ
is found so that the effective property of the phase map, solved with θ, equals the
measurement: Newton's method on q*(θ) = q_measured, with the derivative ∂q*/∂θ from the
phase's share of the stored energy of the solved fields (exact to first order from one solve;
`polisect.properties.sensitivity`). A few solves suffice: q*(θ) is monotonic and smooth in a
phase property.

The interval of θ follows from the measurement's standard uncertainty u to first order:
u_θ = u / |∂q*/∂θ|, reported at 95 % (coverage 1.96). It says nothing about the other
sources of error of q* (phase map, pixel size, model): the error budget's.

References
----------
.. [1] Hill, R. (1963). Elastic properties of reinforced solids: some theoretical
   principles. J. Mech. Phys. Solids 11, 357-372 (effective moduli as energy averages).
.. [2] JCGM 100:2008 (GUM), §5.1: first-order propagation of a standard uncertainty.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ..core.errors import InputError
from ..core.materials import Material

FITTABLE = {"conductivity": ("conductivity",),
            "youngs_modulus": ("youngs_modulus", "shear_modulus"),
            "poisson_ratio": ("youngs_modulus", "shear_modulus"),
            "expansion": ("expansion",)}
"""Phase property that can be fitted → the measured effective properties it can be fitted to."""

COVERAGE = 1.96
MAX_STEPS = 12
REL_TOL = 1e-6


@dataclass(frozen=True)
class FitResult:
    """A phase property back-calculated from a measured effective property.

    Attributes
    ----------
    label : int
        The phase.
    property : str
        The phase property fitted (a `Material` field).
    value : float
        Its value; the computed effective property then equals the measurement.
    interval : (float, float)
        95 % interval from the measurement's uncertainty (first order).
    target : str
        The measured effective property it was fitted to.
    measured, uncertainty : float, float or None
    model : str
        The model the effective property was computed with.
    steps : int
        Solves made.
    derivative : float
        ∂q*/∂θ at the solution.
    """

    label: int
    property: str
    value: float
    interval: tuple[float, float]
    target: str
    measured: float
    uncertainty: float | None
    model: str
    steps: int
    derivative: float


def fit_phase_property(labels, materials: Mapping[int, Material], label: int, prop: str,
                       target: str, measured: float, uncertainty: float | None = None, *,
                       plane: str = "generalized-plane-strain", model: str = "",
                       tol: float = 1e-8) -> FitResult:
    """Find the value of one phase property that reproduces one measured effective property.

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
        The phase map, indexed as the solvers take it.
    materials : mapping label → Material
        Every phase's material; the fitted phase's value of *prop* is the first guess.
    label : int
        The phase whose property is unknown.
    prop : {'conductivity', 'youngs_modulus', 'poisson_ratio', 'expansion'}
    target : {'conductivity', 'youngs_modulus', 'shear_modulus', 'expansion'}
        The measured effective property (isotropic part: tr k*/d, the nearest isotropic
        stiffness's moduli, tr α*/d).
    measured : float
        Its measured value (W/(m·K), GPa, 1/K).
    uncertainty : float, optional
        Its standard uncertainty; gives the interval.
    plane : str
        Plane mode of a 2D map (see `polisect.properties.solve.elasticity`).
    model : str
        Words for the model the fit goes through (stored with the result).
    tol : float
        Solver tolerance.

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        When *prop* cannot be fitted to *target*, or when no value reproduces the
        measurement (it lies beyond what the phase can reach with the others fixed).

    Examples
    --------
    >>> import numpy as np
    >>> labels = np.zeros((16, 16), dtype=int); labels[8:] = 1          # two layers
    >>> mats = {0: Material(conductivity=1.0), 1: Material(conductivity=1.0)}
    >>> f = fit_phase_property(labels, mats, 1, "conductivity", "conductivity", 2.0)
    >>> round(f.value, 4)      # ((1 + k)/2 + 2k/(1 + k))/2 = 2 (Wiener): k = 1 + 2√2
    3.8284
    """
    if prop not in FITTABLE or target not in FITTABLE[prop]:
        raise InputError(f"{prop} of a phase cannot be fitted to a measured {target}; it can "
                         f"be fitted to a measured {' or '.join(FITTABLE.get(prop, ('?',)))}")
    if label not in materials:
        raise InputError(f"no phase with label {label} in the map")
    theta = getattr(materials[label], prop)
    if theta is None or not np.isscalar(theta) or not np.isfinite(theta) or theta <= 0:
        theta = _FIRST_GUESS[prop]
    steps = 0
    derivative = float("nan")
    for steps in range(1, MAX_STEPS + 1):
        value, derivative = _solve(labels, materials, label, prop, theta, target, plane, tol)
        if not np.isfinite(derivative) or derivative == 0:
            raise InputError(f"the measured {target} does not depend on the {prop} of phase "
                             f"{label} here (no share of the stored energy); it cannot be "
                             "fitted from this measurement")
        step = (measured - value) / derivative
        new = theta + step
        if prop == "poisson_ratio":
            new = min(max(new, -0.99), 0.499)
        elif new <= 0:
            new = theta / 4.0
        converged = abs(new - theta) <= REL_TOL * abs(theta)
        theta = float(new)
        if converged:
            break
    else:
        raise InputError(f"no {prop} of phase {label} reproduces the measured {target} "
                         f"{measured:g} within {MAX_STEPS} solves: the measurement lies beyond "
                         "what this phase can give with the others fixed — check the phase "
                         "map and the other phases' values")
    value, derivative = _solve(labels, materials, label, prop, theta, target, plane, tol)
    if abs(value - measured) > 1e-3 * abs(measured):
        raise InputError(f"the {prop} of phase {label} cannot reproduce the measured {target} "
                         f"{measured:g} (closest {value:g}); check the phase map and the other "
                         "phases' values")
    half = COVERAGE * uncertainty / abs(derivative) if uncertainty else 0.0
    return FitResult(label, prop, theta, (theta - half, theta + half), target, measured,
                     uncertainty, model, steps + 1, derivative)


_FIRST_GUESS = {"conductivity": 1.0, "youngs_modulus": 100.0, "poisson_ratio": 0.25,
                "expansion": 5e-6}


def _solve(labels, materials, label, prop, theta, target, plane, tol):
    """The effective *target* and its derivative with respect to phase *label*'s *prop*."""
    from .sensitivity import conductivity_sensitivity, elasticity_sensitivity

    mats = dict(materials)
    mats[label] = mats[label].replace(**{prop: theta})
    if target == "conductivity":
        s = conductivity_sensitivity(labels, mats, tol=tol)
    else:
        s = elasticity_sensitivity(labels, mats, plane=plane, tol=tol,
                                   expansion=target == "expansion")
    q = s.quantities[target]
    return q.value, q.derivatives.get((label, prop), 0.0)
