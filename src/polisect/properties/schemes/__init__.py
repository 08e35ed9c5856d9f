"""Analytical bounds and mean-field estimates of effective properties.

For any number of isotropic phases with given fractions — spheres in 3D, circular
cylinders seen in their transverse plane in 2D, solid or hollow — this package gives
bounds (Voigt/Reuss, Hashin–Shtrikman, Schapery) and estimates (Mori–Tanaka,
self-consistent, differential, generalized self-consistent, composite assemblages;
Levin, Turner and Kerner for expansion) of conductivity, bulk and shear modulus,
Young's modulus, Poisson's ratio and thermal expansion.

`evaluate` is the entry point of the pipeline (``polisect estimate`` calls it too, from
`polisect.apps.estimate`). Units: W/(m·K), GPa, 1/K.

Examples
--------
>>> from polisect import get_material
>>> from polisect.properties.schemes import evaluate
>>> r = evaluate([("alumina", get_material("alumina"), 0.9), ("air", get_material("air"), 0.1)])
>>> round(r.scheme("mori-tanaka").youngs_modulus, 1)
340.2
"""

from .bounds import hashin_shtrikman, reuss, schapery_bounds, voigt
from .core import Moduli, Particle
from .estimates import (composite_assemblage, differential, generalized_self_consistent,
                        mori_tanaka, self_consistent)
from .expansion import expansion_estimate, kerner, levin, transverse_estimate, turner
from .result import (Bound, Estimate, Placement, SchemesResult, check_fractions, evaluate,
                     place)

__all__ = ["Particle", "Moduli", "voigt", "reuss", "hashin_shtrikman", "schapery_bounds",
           "mori_tanaka", "self_consistent", "differential", "generalized_self_consistent",
           "composite_assemblage", "levin", "turner", "kerner", "expansion_estimate",
           "transverse_estimate", "evaluate", "SchemesResult", "Estimate", "Bound", "Placement",
           "place", "check_fractions"]
