"""The error budget of a headline number: its sources side by side, combined, and the
action that would reduce the largest.

Each component is a ± half-width at about 95 % in the quantity's unit, or None when it was
not assessed:

* ``sampling`` — the field-to-field confidence interval (Student t, ASTM E562 style);
* ``window`` — the window-size (representative volume) term of the window study;
* ``segmentation`` — the spread of the result under a stated movement of the class
  boundaries (for an effective property the range over two extreme maps,
  `trust.boundaries`: a bound or an estimate of that movement, not a statistical interval);
* ``discretization`` — the estimated error of the pixel solution (`trust.discretization`;
  a bias of estimated sign, carried as its magnitude);
* ``material`` — first-order propagation of the phase properties' stated standard
  uncertainties with the sensitivities of `properties.sensitivity`, times the coverage
  factor 1.96 (normal, 95 %) [1]_;
* ``model_2d_3d`` — the difference between the section's prismatic (2D) result and the 3D
  estimate (a model discrepancy, carried as its magnitude).

The assessed components are treated as independent and combined as the root-sum-square
(the law of propagation of uncertainty for uncorrelated inputs, [1]_ §5.1). Not assessed
components are left out of the sum and named in the notes: the combined value is then a
lower estimate.

References
----------
.. [1] JCGM 100:2008. Evaluation of measurement data — Guide to the expression of
   uncertainty in measurement (GUM), §5.1 and §6.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping

from ..core.errors import InputError
from ..properties.sensitivity import QuantitySensitivity, Sensitivities
from .boundaries import BoundaryRange
from .discretization import DiscretizationEstimate

COMPONENTS = ("sampling", "window", "segmentation", "discretization", "material",
              "model_2d_3d")
"""Component names, in the order of the budget table."""

COVERAGE = 1.96
"""Coverage factor from a standard uncertainty to a 95 % half-width (normal distribution)."""

ADVICE = {
    "sampling": "Measure more fields: the field-to-field interval shrinks as one over the "
                "square root of their number.",
    "window": "Analyse larger fields (a lower magnification or stitched fields), so that each "
              "holds more particles; the window study says how large.",
    "segmentation": "Improve the segmentation: add annotations (strokes) where the phases are "
                    "confused, or image with more contrast between them.",
    "discretization": "Use finer pixels (a higher magnification), so that the particles and "
                      "the gaps between them span more pixels.",
    "material": "Measure {what} instead of relying on a typical value; where it is a bond or "
                "interface property, measure it on the product itself.",
    "model_2d_3d": "Build a 3D model (the 3D estimate from the section, serial sections or a "
                   "tomogram): the section solved in 2D describes a prismatic structure.",
}
"""The action that reduces each component, in plain words."""


@dataclass(frozen=True)
class MaterialTerm:
    """The material-data component of one quantity.

    Attributes
    ----------
    half_width : float
        1.96 × √Σ (∂q/∂θ · u_θ)², in the quantity's unit.
    contributions : mapping (label, property) → float
        The half-width each phase property gives alone (1.96 |∂q/∂θ| u_θ).
    largest : tuple (label, property) or None
    unassessed : tuple of (label, property)
        Uncertainties given for properties the quantity has no sensitivity to here (a
        pore, a property the physics does not use).
    """

    half_width: float
    contributions: Mapping[tuple[int, str], float]
    largest: tuple[int, str] | None
    unassessed: tuple[tuple[int, str], ...]


def material_term(sensitivity: QuantitySensitivity,
                  uncertainties: Mapping[int, Mapping[str, float]], *,
                  coverage: float = COVERAGE) -> MaterialTerm:
    """First-order propagation of the phase properties' standard uncertainties.

    Parameters
    ----------
    sensitivity : QuantitySensitivity
        From `properties.sensitivity` (derivatives keyed by (label, property)).
    uncertainties : mapping label → mapping property → float
        Standard uncertainty of each phase property in the property's unit, e.g.
        ``{1: {"conductivity": 3.0, "youngs_modulus": 10.0}}``.
    coverage : float
        Factor from the combined standard uncertainty to the half-width.

    Returns
    -------
    MaterialTerm

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1.2 (law of propagation of uncertainty).

    Examples
    --------
    >>> from polisect.properties.sensitivity import QuantitySensitivity
    >>> s = QuantitySensitivity("conductivity", 10.0, {(0, "conductivity"): 0.6,
    ...                                                (1, "conductivity"): 0.02})
    >>> t = material_term(s, {0: {"conductivity": 1.0}, 1: {"conductivity": 20.0}})
    >>> round(t.half_width, 4), t.largest
    (1.4134, (0, 'conductivity'))
    """
    if not (math.isfinite(coverage) and coverage > 0):
        raise InputError(f"coverage factor {coverage!r} must be a positive number")
    contributions, unassessed = {}, []
    for label, props in uncertainties.items():
        for prop, u in props.items():
            if not (isinstance(u, (int, float)) and math.isfinite(u) and u >= 0):
                raise InputError(f"the uncertainty of {prop} of phase {label} is {u!r}; give "
                                 "a standard uncertainty ≥ 0 in the property's unit")
            key = (label, prop)
            if key in sensitivity.derivatives:
                contributions[key] = coverage * abs(sensitivity.derivatives[key]) * u
            elif u > 0:
                unassessed.append(key)
    half = math.hypot(*contributions.values())
    largest = max(contributions, key=contributions.get) if contributions and half > 0 else None
    return MaterialTerm(half, contributions, largest, tuple(unassessed))


def material_terms(sensitivities, uncertainties: Mapping[int, Mapping[str, float]], *,
                   coverage: float = COVERAGE) -> dict[str, MaterialTerm]:
    """`material_term` of every quantity of one or more `Sensitivities` results.

    Parameters
    ----------
    sensitivities : Sensitivities or iterable of Sensitivities
        E.g. the conductivity and the elasticity results of one section.
    uncertainties : mapping label → mapping property → float
        Standard uncertainties, as for `material_term`.
    coverage : float

    Returns
    -------
    dict quantity name → MaterialTerm
    """
    items = [sensitivities] if isinstance(sensitivities, Sensitivities) else list(sensitivities)
    return {name: material_term(q, uncertainties, coverage=coverage)
            for s in items for name, q in s.quantities.items()}


def model_2d_3d_term(section_value: float, estimate_3d: float) -> float:
    """|prismatic (2D) result − 3D estimate|: the model discrepancy carried in the budget."""
    return abs(float(section_value) - float(estimate_3d))


@dataclass(frozen=True)
class Budget:
    """The error budget of one headline quantity.

    Attributes
    ----------
    quantity : str
    value : float
    unit : str
    components : mapping name → float or None
        ± half-width at ~95 % in *unit* for every name of `COMPONENTS`; None when not
        assessed.
    combined : float or None
        Root-sum-square of the assessed components (they are taken as independent);
        None when none was assessed.
    largest : str or None
        Name of the largest component.
    advice : str
        The action that would reduce the largest component.
    notes : tuple of str
        How the combination was made and what it leaves out.
    """

    quantity: str
    value: float
    unit: str
    components: Mapping[str, float | None]
    combined: float | None
    largest: str | None
    advice: str
    notes: tuple[str, ...]

    def relative(self) -> dict[str, float | None]:
        """Components and the combined value as fractions of |value| (None when not
        assessed or the value is 0)."""
        scale = abs(self.value)
        out = {k: (None if v is None or scale == 0 else v / scale)
               for k, v in self.components.items()}
        out["combined"] = None if self.combined is None or scale == 0 else \
            self.combined / scale
        return out


def error_budget(quantity: str, value: float, *, unit: str = "",
                 sampling: float | None = None, window: float | None = None,
                 segmentation: float | BoundaryRange | None = None,
                 discretization: float | DiscretizationEstimate | None = None,
                 material: float | MaterialTerm | None = None,
                 model_2d_3d: float | None = None,
                 phase_names: Mapping[int, str] | None = None) -> Budget:
    """Put the sources of uncertainty of one quantity side by side and combine them.

    Parameters
    ----------
    quantity : str
        Name of the quantity (e.g. the headline column it belongs to).
    value : float
    unit : str
    sampling, window : float, optional
        ± half-widths at ~95 % in the quantity's unit.
    segmentation : float or BoundaryRange, optional
        ± half-width under the stated movement of the class boundaries; with a
        `BoundaryRange` (an effective property solved on the extreme maps) the notes say
        whether it is a bound or an estimate.
    discretization : float or DiscretizationEstimate, optional
        Its magnitude is carried.
    material : float or MaterialTerm, optional
        With a `MaterialTerm` the advice names the phase property that dominates it.
    model_2d_3d : float, optional
        See `model_2d_3d_term`.
    phase_names : mapping label → str, optional
        For the advice on material data.

    Returns
    -------
    Budget

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1 (combination of uncorrelated components).

    Examples
    --------
    >>> b = error_budget("conductivity", 12.0, unit="W/(m·K)", sampling=0.3,
    ...                  discretization=0.4)
    >>> round(b.combined, 6), b.largest
    (0.5, 'discretization')
    """
    value = float(value)
    if not math.isfinite(value):
        raise InputError(f"the value of {quantity} is {value}; a budget needs a finite number")
    term = material if isinstance(material, MaterialTerm) else None
    seg_range = segmentation if isinstance(segmentation, BoundaryRange) else None
    given = {"sampling": sampling, "window": window,
             "segmentation": seg_range.half_width if seg_range is not None else segmentation,
             "discretization": discretization.half_width
             if isinstance(discretization, DiscretizationEstimate) else discretization,
             "material": term.half_width if term is not None else material,
             "model_2d_3d": model_2d_3d}
    components = {}
    for name in COMPONENTS:
        v = given[name]
        if v is not None:
            v = float(v)
            if not (math.isfinite(v) and v >= 0):
                raise InputError(f"the {name} term of {quantity} is {v}; give a half-width "
                                 "≥ 0 in the quantity's unit, or None when not assessed")
        components[name] = v
    assessed = {k: v for k, v in components.items() if v is not None}
    missing = [k for k in COMPONENTS if components[k] is None]
    notes = []
    if not assessed:
        return Budget(quantity, value, unit, components, None, None,
                      "No source of uncertainty was assessed for this number; treat it as "
                      "unverified.", ("nothing assessed",))
    combined = math.hypot(*assessed.values())
    notes.append("combined as the root-sum-square of the assessed components, taken as "
                 "independent")
    if missing:
        notes.append(f"not assessed: {', '.join(missing)} (the combined value leaves them out)")
    if components["discretization"] is not None or components["model_2d_3d"] is not None:
        notes.append("discretization and 2D-versus-3D are systematic: their estimated "
                     "magnitudes are carried as half-widths")
    if seg_range is not None:
        notes.append(f"segmentation: the range under the stated boundary movement, not a "
                     f"95 % interval ({seg_range.note})")
    largest = max(assessed, key=assessed.get)
    if assessed[largest] == 0.0:
        return Budget(quantity, value, unit, components, combined, None,
                      "Every assessed component is zero.", tuple(notes))
    advice = ADVICE[largest]
    if largest == "material":
        advice = advice.format(what=_material_words(term, phase_names))
    return Budget(quantity, value, unit, components, combined, largest, advice, tuple(notes))


def _material_words(term: MaterialTerm | None, phase_names: Mapping[int, str] | None) -> str:
    if term is None or term.largest is None:
        return "the phase properties with the largest stated uncertainty"
    label, prop = term.largest
    name = (phase_names or {}).get(label, f"phase {label}")
    words = {"youngs_modulus": "Young's modulus", "poisson_ratio": "Poisson's ratio",
             "expansion": "thermal expansion"}.get(prop, prop.replace("_", " "))
    return f"the {words} of {name}"
