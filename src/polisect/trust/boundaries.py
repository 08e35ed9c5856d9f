"""Effective properties under moved class boundaries: two extreme maps that bound them.

A segmentation that reports its uncertainty (`polisect.segment.uncertainty`) names, for
every pixel near a class boundary, the class it would take on the other side. Any
assignment of those pixels gives a phase map between two extremes: every boundary pixel
given to the class of its pair (nominal, alternative) with the *lower* property value, or
to the one with the *higher*. The effective conductivity is monotone in the local
conductivity: by the energy minimum principle

    k*·E·E = min over periodic fluctuations v of ⟨(E + ∇v)·k(x)(E + ∇v)⟩,

a minimum over fields of an energy that grows with k(x) at every point, so raising k(x)
anywhere cannot lower k* (Milton 2002, §13.1; Torquato 2002, §17.1). The same holds
pixel by pixel for the discrete (pixel-element) problem, which minimises the same energy
over a subspace. The two extreme maps therefore bound k* over every assignment of the
boundary pixels, including each single perturbed map of
`BoundaryUncertainty.maps`. Likewise the effective stiffness (minimum of the strain
energy) is monotone when the two stiffness tensors of every swapped pair are ordered
(C₁ − C₂ positive semi-definite): always for a pore against a solid, and for two
isotropic solids of equal Poisson's ratio ordered by E; the isotropic moduli E, G, K of
`ElasticityResult.isotropic` are increasing functions of the stiffness in that order
(projections with positive semi-definite weights, and E = 9KG/(3K + G)). For two solids
with different Poisson's ratios, ordered by E, the range is an approximation, and for
Poisson's ratio and the thermal expansion there is no monotonicity at all: the larger
deviation of the two maps is then an estimate, and is labelled so.

The half-width is ``max(|q_high − q|, |q − q_low|)`` with q the value of the nominal
map. It is the range under the stated boundary movement (e.g. thresholds ± a few grey
levels), not a statistical interval; the budget carries it beside the 95 % half-widths
of the other sources and says so.

References
----------
.. [1] Milton, G. W. (2002). The Theory of Composites, ch. 13 (variational principles).
   Cambridge University Press.
.. [2] Torquato, S. (2002). Random Heterogeneous Materials, ch. 17 (variational
   principles for the effective conductivity and stiffness). Springer.
.. [3] Hill, R. (1963). Elastic properties of reinforced solids: some theoretical
   principles. J. Mech. Phys. Solids 11, 357–372.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ..core.errors import InputError

MONOTONE = ("conductivity", "youngs_modulus", "shear_modulus", "bulk_modulus")
"""Quantities that are monotone in the phase property the maps are ordered by."""


@dataclass(frozen=True)
class BoundaryRange:
    """One effective quantity on the nominal map and on the two extreme maps.

    Attributes
    ----------
    name : str
    value : float
        On the nominal map.
    low, high : float
        On the map with every boundary pixel given to the lower / higher class of its pair
        (for a quantity that is not monotone the value on that map, whichever is larger).
    kind : str
        'bound' (the range holds every assignment of the boundary pixels) or 'estimate'.
    note : str
        Plain words on what the range is.
    """

    name: str
    value: float
    low: float
    high: float
    kind: str
    note: str

    @property
    def half_width(self) -> float:
        """max(|high − value|, |value − low|): the budget's segmentation component."""
        return max(abs(self.high - self.value), abs(self.value - self.low))


def extreme_maps(labels, alternative, order: Mapping[int, float]) -> tuple[np.ndarray,
                                                                             np.ndarray]:
    """The two extreme assignments of the boundary pixels.

    Parameters
    ----------
    labels : int array_like
        The nominal phase map.
    alternative : int array_like, same shape
        The other class of every boundary pixel, −1 elsewhere
        (`BoundaryUncertainty.alternative`).
    order : mapping label → float
        The property the classes are ordered by (e.g. each phase's conductivity). Equal
        values keep the nominal class.

    Returns
    -------
    low, high : ndarray of int32
        Every boundary pixel given to the lower (higher) class of its pair.

    Raises
    ------
    InputError
        When a label of the maps has no value in *order*.

    Examples
    --------
    >>> low, high = extreme_maps([[0, 1, 1]], [[1, 0, -1]], {0: 1.0, 1: 5.0})
    >>> low.tolist(), high.tolist()
    ([[0, 0, 1]], [[1, 1, 1]])
    """
    labels = np.asarray(labels).astype(np.int32)
    alternative = np.asarray(alternative).astype(np.int32)
    if labels.shape != alternative.shape:
        raise InputError(f"the alternative classes {alternative.shape} must have the shape "
                         f"of the phase map {labels.shape}")
    present = set(np.unique(labels).tolist()) | set(np.unique(alternative[alternative >= 0])
                                                     .tolist())
    missing = sorted(present - set(order))
    if missing:
        raise InputError(f"labels {missing} have no property value to order the classes by")
    keys = np.array(sorted(present), dtype=np.int64)
    table = np.zeros(int(keys.max()) + 1)
    table[keys] = [float(order[int(k)]) for k in keys]
    swing = alternative >= 0
    other = np.where(swing, alternative, labels)
    mine, theirs = table[labels], table[other]
    low = np.where(swing & (theirs < mine), other, labels).astype(np.int32)
    high = np.where(swing & (theirs > mine), other, labels).astype(np.int32)
    return low, high


def boundary_ranges(nominal: Mapping[str, float], low: Mapping[str, float],
                    high: Mapping[str, float], *, rigorous: bool = True,
                    where: str = "") -> dict[str, BoundaryRange]:
    """The range of every quantity of *nominal* over the two extreme maps.

    Parameters
    ----------
    nominal, low, high : mapping name → float
        The quantities solved on the nominal map and on the two extreme maps of
        `extreme_maps` (quantity names as `polisect.trust.records.SCALARS`).
    rigorous : bool
        Whether the ordering of every swapped pair is one in which the monotone quantities
        (`MONOTONE`) are monotone (False, e.g., for two solids ordered by E whose Poisson's
        ratios differ).
    where : str
        Words on how the maps were solved (e.g. "on the map coarsened by 2"), for the note.

    Returns
    -------
    dict name → BoundaryRange
        Quantities missing from *low* or *high* are left out.

    Examples
    --------
    >>> r = boundary_ranges({"conductivity": 2.0}, {"conductivity": 1.9},
    ...                     {"conductivity": 2.3})["conductivity"]
    >>> r.kind, round(r.half_width, 6)
    ('bound', 0.3)
    """
    out = {}
    for name, q in nominal.items():
        if name not in low or name not in high:
            continue
        lo, hi = float(low[name]), float(high[name])
        bound = rigorous and name in MONOTONE
        what = ("bound over every assignment of the boundary pixels (energy minimum "
                "principle)" if bound else "estimate: the larger deviation of the two extreme "
                "assignments (no monotonicity for this quantity or ordering)")
        out[name] = BoundaryRange(name, float(q), min(lo, hi) if bound else lo,
                                  max(lo, hi) if bound else hi, "bound" if bound else
                                  "estimate", what + (f", {where}" if where else ""))
    return out
