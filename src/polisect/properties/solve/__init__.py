"""Effective conductivity, stiffness and thermal expansion of periodic pixel/voxel maps.

One discretization (bilinear/trilinear pixel elements, periodic, full Gauss
integration, `solve.grid`) and three ways to solve it:

* ``fft`` — matrix-free operator, CG preconditioned in Fourier space by the same operator
  of a homogeneous reference medium (`solve.fft`);
* ``fe`` — the same operator assembled as a sparse matrix, smoothed-aggregation AMG
  preconditioned CG (`solve.fe`); ``fft`` and ``fe`` agree to solver tolerance;
* ``ms`` — the Moulinec–Suquet basic scheme on pixel-centre strains (`solve.ms`), a
  reference for finite contrast (it refuses pores).

Nothing here knows about images or files: inputs are integer label arrays and a
``{label: Material}`` mapping.

Examples
--------
>>> import numpy as np
>>> from polisect import Material
>>> from polisect.properties.solve import conductivity
>>> labels = np.zeros((16, 16), dtype=int); labels[4:12, 4:12] = 1
>>> r = conductivity(labels, {0: Material(conductivity=1.0), 1: Material(conductivity=10.0)})
>>> bool(np.allclose(r.tensor, r.tensor.T, atol=1e-6)), r.method
(True, 'fft')
"""

from .conductivity import ConductivityResult, conductivity
from .elasticity import ElasticityResult, elasticity
from .expansion import ExpansionResult, expansion
from .fields import ConductivityFields, ElasticFields
from .methods import METHODS
from .results import IsotropicModuli, SolverFacts

__all__ = ["conductivity", "elasticity", "expansion", "ConductivityResult",
           "ElasticityResult", "ExpansionResult", "ConductivityFields", "ElasticFields",
           "IsotropicModuli", "SolverFacts", "METHODS"]
