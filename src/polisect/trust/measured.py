"""Measured values beside the computed ones: how far apart, in units of the uncertainty.

A lab measures conductivity (laser flash, hot wire), Young's or shear modulus (resonance,
ultrasound) and expansion (dilatometer) on the same batch. Each ``[[measured]]`` value is
set beside the computed value of the same property at the same temperature — from the
section's model (a 2D section solved as a prismatic structure, or a volume) and from the
3D estimate when it ran — and beside the Hashin–Shtrikman bounds of the isotropic 3D
composite with the section's fractions, which hold for any isotropic arrangement of the
phases (Hashin & Shtrikman 1962, 1963).

The difference is given as z = (computed − measured) / u, with u the measurement's stated
standard uncertainty (the computed value's own uncertainty is not included here; it is the
error budget's). |z| ≤ 2 agrees at about 95 %; a measured value outside the bounds means the
phase map or the phase properties are wrong, not the solver.

References
----------
.. [1] Hashin, Z., Shtrikman, S. (1962). A variational approach to the theory of the
   effective magnetic permeability of multiphase materials. J. Appl. Phys. 33, 3125-3131.
.. [2] Hashin, Z., Shtrikman, S. (1963). A variational approach to the theory of the
   elastic behaviour of multiphase materials. J. Mech. Phys. Solids 11, 127-140.
.. [3] JCGM 100:2008 (GUM). Evaluation of measurement data — Guide to the expression of
   uncertainty in measurement (standard uncertainty, coverage factor 2 for about 95 %).

Examples
--------
>>> agreement(2.3, 2.1, 0.2)
'agrees within 1 standard uncertainty'
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping, Sequence

from ..properties.records import SCALARS, Effective, Spread, scalar
from ..properties.schemes import Bound

ROOM_C = 20.0
"""The temperature of an analysis without [solve] temperatures_C."""

MATCH_K = 5.0
"""A measurement within this many kelvin of a solved temperature is compared with it."""

_SCALAR = {"conductivity": "conductivity", "youngs_modulus": "youngs_modulus",
           "shear_modulus": "shear_modulus", "expansion": "expansion",
           "mean_expansion": "expansion"}
"""Measured property → the isotropic scalar of `Effective` computed for it."""

_BOUND = {"conductivity": "conductivity", "youngs_modulus": "youngs_modulus",
          "shear_modulus": "shear_modulus", "expansion": "expansion",
          "mean_expansion": "expansion"}
"""Measured property → the `Estimate` field of its bounds."""


@dataclass(frozen=True)
class MeasuredComparison:
    """One measured value beside the computed ones.

    Attributes
    ----------
    property : str
        ``conductivity``, ``youngs_modulus``, ``shear_modulus``, ``expansion`` or
        ``mean_expansion`` (units W/(m·K), GPa, 1/K).
    value, uncertainty : float, float or None
        As measured (standard uncertainty).
    temperature_C : float
    method : str
    section : float or None
        Computed on the section's model at that temperature (None: not computed there).
    estimate_3d : float or None
        Computed by the 3D estimate at that temperature (None: not computed there).
    lower, upper : float or None
        Hashin–Shtrikman bounds of the isotropic 3D composite (room temperature values).
    z_section, z_3d : float or None
        (computed − measured) / uncertainty.
    verdict : str
        The comparison in words.
    """

    property: str
    value: float
    uncertainty: float | None
    temperature_C: float
    method: str
    section: float | None
    estimate_3d: float | None
    lower: float | None
    upper: float | None
    z_section: float | None
    z_3d: float | None
    verdict: str


def agreement(computed: float, measured: float, uncertainty: float | None) -> str:
    """How a computed value stands to a measured one, in words."""
    if not uncertainty:
        diff = 100.0 * (computed - measured) / abs(measured) if measured else float("nan")
        return f"differs by {diff:+.1f} % (no uncertainty given for the measurement)"
    return _z_words((computed - measured) / uncertainty, "standard uncertaint")


def _z_words(z: float, unit: str) -> str:
    """*z* in whole multiples of an uncertainty; *unit* is its name without the ending
    ('standard uncertaint' → 'standard uncertainty' / 'uncertainties')."""
    for k in (1, 2, 3):
        if abs(z) <= k:
            return f"agrees within {k} {unit}{'y' if k == 1 else 'ies'}"
    return f"differs by {abs(z):.1f} {unit}ies ({'above' if z > 0 else 'below'})"


def compare_measured(measured, by_temperature: dict[float, Effective],
                     effective_3d: Effective | None = None,
                     bounds: dict[str, Bound] | None = None,
                     by_temperature_3d: dict[float, Effective] | None = None
                     ) -> tuple[MeasuredComparison, ...]:
    """Set every measured value beside the computed ones.

    Parameters
    ----------
    measured : sequence of `polisect.read.config.MeasuredValue`
    by_temperature : dict
        Temperature (°C) → the section's `Effective` solved at it.
    effective_3d : Effective, optional
        The 3D estimate (at room temperature).
    bounds : dict, optional
        `Estimate` field → `Bound` of the isotropic 3D composite.
    by_temperature_3d : dict, optional
        Temperature (°C) → the 3D estimate's `Effective` solved at it; a measured value
        within `MATCH_K` of one of them is compared with it (else with *effective_3d* at
        room temperature).

    Returns
    -------
    tuple of MeasuredComparison
    """
    out = []
    for m in measured:
        name = _SCALAR[m.property]
        section = _nearest(by_temperature, m.temperature_C, name)
        e3 = _nearest(by_temperature_3d or {}, m.temperature_C, name)
        if e3 is None and effective_3d is not None and abs(m.temperature_C - ROOM_C) <= MATCH_K:
            e3 = scalar(effective_3d, name)
        b = (bounds or {}).get(_BOUND[m.property])
        lower = upper = None
        if b is not None and abs(m.temperature_C - ROOM_C) <= MATCH_K:
            lower, upper = b.lower, b.upper
        z2 = None if section is None or not m.uncertainty else (section - m.value) / m.uncertainty
        z3 = None if e3 is None or not m.uncertainty else (e3 - m.value) / m.uncertainty
        out.append(MeasuredComparison(m.property, m.value, m.uncertainty, m.temperature_C,
                                      m.method, section, e3, lower, upper, z2, z3,
                                      _verdict(m, section, e3, lower, upper, by_temperature)))
    return tuple(out)


def _nearest(by_temperature: dict[float, Effective], temperature: float,
             name: str) -> float | None:
    """The scalar *name* of the effective properties solved within `MATCH_K` of
    *temperature*, or None."""
    eff = _solved_at(by_temperature, temperature)
    return None if eff is None else scalar(eff, name)


def _solved_at(by_temperature: Mapping[float, Effective], temperature: float
               ) -> Effective | None:
    """The effective properties solved nearest *temperature*, if within `MATCH_K`."""
    at = min(by_temperature, key=lambda t: abs(t - temperature), default=None)
    return None if at is None or abs(at - temperature) > MATCH_K else by_temperature[at]


def _verdict(m, section, e3, lower, upper, by_temperature) -> str:
    parts = []
    if section is not None:
        parts.append(f"the section's model {agreement(section, m.value, m.uncertainty)}")
    elif by_temperature:
        solved = ", ".join(f"{t:g}" for t in sorted(by_temperature))
        parts.append(f"not computed at {m.temperature_C:g} °C (solved at {solved} °C); add "
                     "it to [solve] temperatures_C")
    else:
        parts.append(f"{m.property.replace('_', ' ')} was not computed; add it to [solve] "
                     "properties")
    if e3 is not None:
        parts.append(f"the 3D estimate {agreement(e3, m.value, m.uncertainty)}")
    if lower is not None and upper is not None and not lower <= m.value <= upper:
        parts.append(f"the measured value lies outside the bounds of any isotropic composite "
                     f"of these phases ({lower:.4g}–{upper:.4g}): check the phase map (pores "
                     "missed or over-counted) and the phase properties")
    return "; ".join(parts)


@dataclass(frozen=True)
class BatchMeasured:
    """One measured value beside a batch's mean of the computed ones.

    Attributes
    ----------
    property, value, uncertainty, temperature_C, method
        As measured (`MeasuredComparison`).
    n : int
        Sections with a computed value at that temperature (the section's model).
    section_mean : float or None
        Their mean.
    section_ci95 : (float, float) or None
        95 % interval of that mean, Student t over the sections (n ≥ 2).
    z_section : float or None
        (mean − measured) / u_c with the combined standard uncertainty
        u_c = √(u² + s²/n): the measurement's u and the standard error of the batch mean
        (u alone for one section).
    n_3d, estimate_3d_mean, estimate_3d_ci95, z_3d
        The same for the 3D estimate; with one section its interval and standard error are
        those over the realizations.
    verdict : str
    """

    property: str
    value: float
    uncertainty: float | None
    temperature_C: float
    method: str
    n: int
    section_mean: float | None
    section_ci95: tuple[float, float] | None
    z_section: float | None
    n_3d: int
    estimate_3d_mean: float | None
    estimate_3d_ci95: tuple[float, float] | None
    z_3d: float | None
    verdict: str


def compare_batch(measured, sections: Sequence[Mapping[float, Effective]],
                  sections_3d: Sequence[Mapping[float, Effective]] = ()
                  ) -> tuple[BatchMeasured, ...]:
    """Set every measured value beside a batch's mean of the computed values.

    Parameters
    ----------
    measured : sequence of `polisect.read.config.MeasuredValue` (or anything with its
        attributes)
    sections : sequence of dict
        Per section: temperature (°C) → the section's `Effective` solved at it.
    sections_3d : sequence of dict
        Per section with a 3D estimate: temperature → its `Effective` (scalars `Spread`).

    Returns
    -------
    tuple of BatchMeasured

    References
    ----------
    JCGM 100:2008 (GUM): combined standard uncertainty of independent components, root sum
    of squares. ASTM E562: Student-t interval of a mean over sections.

    Examples
    --------
    >>> from polisect.read.config import MeasuredValue
    >>> from polisect.properties.records import Conductivity
    >>> import numpy as np
    >>> def eff(k):
    ...     return Effective(2, None, "", None, "", Conductivity(np.eye(2) * k, k, 0.0, None))
    >>> (b,) = compare_batch([MeasuredValue("conductivity", 2.0, 0.3)], [{20.0: eff(2.3)},
    ...                      {20.0: eff(2.5)}])
    >>> b.n, round(b.section_mean, 2), round(b.z_section, 2)
    (2, 2.4, 1.26)
    """
    out = []
    for m in measured:
        name = _SCALAR[m.property]
        values = [v for v in (_nearest(s, m.temperature_C, name) for s in sections)
                  if v is not None]
        spreads = [_nearest_spread(s, m.temperature_C, name) for s in sections_3d]
        spreads = [x for x in spreads if x is not None]
        mean2, ci2, se2 = _batch_mean(values)
        mean3, ci3, se3 = _batch_mean([x.mean for x in spreads])
        if len(spreads) == 1 and spreads[0].ci95 is not None:
            ci3, se3 = spreads[0].ci95, _standard_error(spreads[0])
        z2 = _z(mean2, se2, m)
        z3 = _z(mean3, se3, m)
        parts = []
        if mean2 is None:
            parts.append(f"no section computed the {m.property.replace('_', ' ')} at "
                         f"{m.temperature_C:g} °C")
        else:
            parts.append(f"the batch mean of the section's model {_words(z2, mean2, m)}")
        if mean3 is not None:
            parts.append(f"the 3D estimate's {_words(z3, mean3, m)}")
        out.append(BatchMeasured(m.property, m.value, m.uncertainty, m.temperature_C,
                                 m.method, len(values), mean2, ci2, z2, len(spreads), mean3,
                                 ci3, z3, "; ".join(parts)))
    return tuple(out)


def merge_measured(explicit, batch_wide) -> tuple:
    """The measured values of a batch: *batch_wide* (the batch's measured-values file) and
    *explicit* (the run configuration's ``[[measured]]``), the configuration's entry winning
    where both give the same property within `MATCH_K` of the same temperature; repeats
    (same property, temperature, value, uncertainty and method) once."""
    def same(a, b) -> bool:
        return a.property == b.property and abs(a.temperature_C - b.temperature_C) <= MATCH_K

    kept = [m for m in batch_wide if not any(same(m, e) for e in explicit)]
    seen, out = set(), []
    for m in list(explicit) + kept:
        key = (m.property, m.temperature_C, m.value, m.uncertainty, m.method)
        if key not in seen:
            seen.add(key)
            out.append(m)
    return tuple(out)


def _nearest_spread(by_temperature: Mapping[float, Effective], temperature: float,
                    name: str) -> Spread | None:
    """`_nearest` for a 3D estimate: the `Spread` of the scalar (a plain number becomes a
    spread of one value)."""
    eff = _solved_at(by_temperature, temperature)
    if eff is None:
        return None
    block, attr = SCALARS[name]
    x = getattr(getattr(eff, block), attr) if getattr(eff, block) is not None else None
    if x is None or isinstance(x, Spread):
        return x
    return Spread(float(x), None, (float(x),))


def _batch_mean(values) -> tuple[float | None, tuple[float, float] | None, float | None]:
    """Mean, Student-t 95 % interval and standard error of per-section values (interval
    and standard error None below two sections)."""
    if not values:
        return None, None, None
    s = Spread.of(values)
    return s.mean, s.ci95, _standard_error(s)


def _standard_error(s: Spread) -> float | None:
    """s/√n of the values of a `Spread` (None for one value)."""
    n = len(s.values)
    if n < 2:
        return None
    mean = sum(s.values) / n
    return math.sqrt(sum((v - mean) ** 2 for v in s.values) / (n - 1) / n)


def _z(mean: float | None, se: float | None, m) -> float | None:
    """(mean − measured) / √(u² + se²), or None without a mean or any uncertainty."""
    if mean is None:
        return None
    u2 = (m.uncertainty or 0.0) ** 2 + (se or 0.0) ** 2
    return (mean - m.value) / math.sqrt(u2) if u2 > 0 else None


def _words(z: float | None, mean: float, m) -> str:
    if z is None:
        return agreement(mean, m.value, None)
    return _z_words(z, "combined standard uncertaint")
