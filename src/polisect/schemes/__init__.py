from .core import Particle, Moduli
from .bounds import voigt, reuss, hashin_shtrikman, schapery_bounds
from .estimates import mori_tanaka, self_consistent, differential, composite_assemblage, generalized_self_consistent
from .expansion import levin, turner, kerner, expansion_estimate, transverse_estimate
from .result import Estimate, Bound, Placement, SchemesResult, evaluate, place, check_fractions
