"""polisect: polished sections of particle composites to trustworthy numbers.

A polished section (SEM or optical micrograph, labelled phase map or voxel stack) goes
in; phase fractions, particle statistics and effective conductivity, thermal expansion
and stiffness come out, with analytical bounds beside them and a statement of how far
the numbers can be trusted.
"""

from .core.errors import InputError
from .core.materials import Material, library, get_material

__version__ = "0.1.0"

__all__ = ["InputError", "Material", "library", "get_material", "__version__"]
