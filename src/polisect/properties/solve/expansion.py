"""Effective thermal expansion from the strain localisation of the stiffness solve.

With phase-wise uniform thermal stresses ``β_p = C_p:α_p`` (per kelvin), the effective
thermal stress at zero mean strain is ``β* = Σ_p f_p ⟨A⟩_pᵀ : β_p``, where ``⟨A⟩_p`` is the
phase average of the strain-localisation tensor, i.e. of the strain under the unit
mean-strain load cases the stiffness solve has already made (Levin 1967; Rosen & Hashin
1970; Laws 1973). Then ``α* = C*⁻¹ β*``. No further solve is needed, for any number of
phases.

The rule holds exactly in the discrete setting: the load vector of a pixel-constant
prestress ``τ`` pairs with a fluctuation ``x`` through the pixel-mean gradient,
``b_τᵀx = −Σ_p τ_p : Σ_{pixels of p} ∇x``, so by the symmetry of the operator the mean
stress of the eigenstrain problem is ``⟨σ_θ⟩_j = Σ_p τ_p : G_p^j`` with ``G_p^j`` the phase
sums of the pixel-mean strain of load case j (`ElasticityResult.phase_strains`). The direct
eigenstrain solve (``direct=True``) is kept; the two agree to solver tolerance (tests).

Accuracy. ``β*`` is linear in the fluctuations of the stiffness solve, not quadratic like
the stiffness, so it needs a tighter stop: the stiffness solved here for an expansion
stops at ``tol · LINEAR_FACTOR`` (energy rule). Measured relative errors of α* at an
energy tolerance t: 0.03–6 t on a porous one-solid body (2D, 3D) and the 2D bench image
of Al/SiC-like phases with pores; with the factor 10⁻² the error stays below ``tol``.
A stiffness passed in is used as it is (`polisect.properties.effective` solves it with
the same factor when the expansion is asked for).

What the plane modes mean for a 2D section:

* ``plane-strain``: the in-plane thermal strain at zero mean in-plane stress with
  ε_zz = 0 everywhere (an axially clamped section); a uniform isotropic solid gives
  (1 + ν)α, not α.
* ``plane-stress``: the in-plane thermal strain of a thin free plate (σ_zz = 0 in every
  pixel); a uniform solid gives α.
* ``generalized-plane-strain``: the transverse (in-plane) and axial expansion of the
  prismatic structure, free in every direction (zero mean in-plane and axial stress, ε_zz
  uniform); a uniform solid gives α.

References
----------
.. [1] Levin, V. M. (1967). Thermal expansion coefficients of heterogeneous materials.
   Mech. Solids 2, 58–61.
.. [2] Rosen, B. W. & Hashin, Z. (1970). Effective thermal expansion coefficients and
   specific heats of composite materials. Int. J. Eng. Sci. 8, 157–173.
.. [3] Laws, N. (1973). On the thermostatics of composite materials. J. Mech. Phys.
   Solids 21, 9–17.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ...core import tensors
from ...core.errors import InputError
from .cell import Load
from .elasticity import GPS, ElasticityResult, axial_map, elastic_cell, elastic_result
from .methods import solve_loads
from .phases import check_plane, elastic_phases, phase_image
from .results import HasFacts, SolverFacts, matrix

LINEAR_FACTOR = 1e-2
"""Energy tolerance of the stiffness solve relative to the expansion's (module notes)."""


@dataclass(frozen=True, eq=False)
class ExpansionResult(HasFacts):
    """Effective thermal expansion and how it was computed.

    Attributes
    ----------
    tensor : (d, d) ndarray
        Thermal strain per kelvin at zero mean stress (in 2D: in-plane, for the plane mode).
    plane : str or None
    facts : SolverFacts
        Includes the stiffness solves when the stiffness was computed here; with a
        stiffness given and no direct solve, no iterations.
    axial : float or None
        Generalized plane strain: the axial expansion α_zz of the prismatic structure.
    thermal_stress : ndarray
        ``−⟨σ⟩`` per kelvin at zero mean strain, Voigt (GPS: xx, yy, xy, zz).
    stiffness : ndarray
        The effective stiffness used for ``α* = S* (−⟨σ⟩)``, same order.
    """

    tensor: np.ndarray
    plane: str | None
    facts: SolverFacts
    axial: float | None
    thermal_stress: np.ndarray
    stiffness: np.ndarray

    def mean(self) -> float:
        """Isotropic projection: the mean linear expansion tr(α)/d (in-plane in 2D)."""
        return float(np.trace(self.tensor) / self.tensor.shape[0])

    def anisotropy(self) -> float:
        """‖α − mean·I‖ / ‖α‖ (`tensors.tensor_anisotropy`)."""
        return tensors.tensor_anisotropy(self.tensor)

    def to_dict(self) -> dict:
        return {"tensor": matrix(self.tensor), "mean": self.mean(), "axial": self.axial,
                "anisotropy": self.anisotropy(), "plane": self.plane, **self.facts.to_dict()}


def expansion(labels, materials: Mapping, *, plane: str = GPS, method: str = "auto",
              tol: float = 1e-6, maxiter: int | None = None,
              stiffness: ElasticityResult | None = None, direct: bool = False,
              criterion: str = "energy") -> ExpansionResult:
    """Effective linear thermal expansion of a periodic 2D or 3D phase map.

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
    materials : mapping label → Material
        Elastic properties as for `elasticity` and ``expansion`` (1/K, a number or a
        tensor; not needed for pores).
    plane : {'generalized-plane-strain', 'plane-strain', 'plane-stress'}
        See the module notes for what each mode means; ignored in 3D.
    method, tol, maxiter
        As for `elasticity`.
    stiffness : ElasticityResult, optional
        The effective stiffness of the same image, materials and plane mode, to avoid
        solving for it again.
    direct : bool
        Solve the eigenstrain problem (one more load case) instead of using the strain
        localisation of the stiffness solve (see the module notes); for checks.
    criterion : {'energy', 'residual'}
        Stopping rule of 'fft' and 'fe' (see `conductivity`); the eigenstrain load of
        ``direct`` always stops on the residual.

    Returns
    -------
    ExpansionResult

    Raises
    ------
    InputError
        When the solid does not form a load-bearing network (singular stiffness), or
        *stiffness* belongs to another plane mode or dimension.

    References
    ----------
    .. [1] Levin, V. M. (1967). Mech. Solids 2, 58–61.

    Examples
    --------
    >>> import numpy as np
    >>> from polisect import Material
    >>> m = {0: Material(youngs_modulus=70.0, poisson_ratio=0.3, expansion=2e-5)}
    >>> x = expansion(np.zeros((4, 4), dtype=int), m, plane="plane-strain")
    >>> round(x.mean() / 2e-5, 9)       # (1 + ν) α with ε_zz = 0
    1.3
    """
    image = phase_image(labels, materials)
    plane = check_plane(plane, image.dim)
    phases = elastic_phases(image, plane, thermal=True)
    own = stiffness is None
    if own:
        stiffness = elastic_result(image, plane, method, stiffness_tolerance(tol, criterion),
                                   maxiter, False, criterion)
    elif not isinstance(stiffness, ElasticityResult) or stiffness.plane != plane or \
            stiffness.stiffness.shape[0] != (6 if image.dim == 3 else 3):
        raise InputError("the stiffness given belongs to another problem; pass the "
                         f"ElasticityResult of this image with plane={plane!r}")
    cell = elastic_cell(image, phases)
    runs = ()
    if direct or stiffness.phase_strains is None:
        beta, run = _direct(cell, phases, plane, method, tol, maxiter)
        runs = (run,)
    else:
        beta = localised_thermal_stress(stiffness.phase_strains, phases, cell.fractions,
                                        plane == GPS)
    C = stiffness.load_stiffness
    if np.linalg.cond(C) > 1e12:
        raise InputError("the solid phases do not carry load across the image (the effective "
                         "stiffness is singular), so a thermal expansion is not defined; check "
                         "the pore phase or use a larger window")
    alpha = np.linalg.solve(C, beta)
    nv = 6 if image.dim == 3 else 3
    facts = SolverFacts.of(*((stiffness.facts,) if own else ()), *runs) if own or runs \
        else SolverFacts(stiffness.facts.method, 0, 0.0, (), stiffness.facts.tolerance,
                         stiffness.facts.converged)
    return ExpansionResult(tensors.voigt_to_strain(alpha[:nv]), plane, facts,
                           float(alpha[3]) if plane == GPS else None, beta, C)


def stiffness_tolerance(tol: float, criterion: str = "energy") -> float:
    """Tolerance of a stiffness solve whose localisation gives an expansion to *tol*."""
    return tol * LINEAR_FACTOR if criterion == "energy" else tol


def localised_thermal_stress(strains: np.ndarray, phases, fractions: np.ndarray,
                             gps: bool) -> np.ndarray:
    """``β*_j = Σ_p β_p : G_p^j`` (+ the axial thermal stress on the axial load of
    generalized plane strain), Voigt over the load cases; see the module notes.

    Parameters
    ----------
    strains : (n_loads, n_phases, d, d) ndarray
        `ElasticityResult.phase_strains`.
    """
    beta = tensors.voigt_to_stress(phases.thermal_stress)            # (P, d, d)
    out = np.einsum("pai,jpai->j", beta, strains)
    if gps:
        out[-1] += float(fractions @ phases.axial_thermal_stress)
    return out


def _direct(cell, phases, plane, method, tol, maxiter):
    """``β* = −⟨σ⟩`` of the eigenstrain problem at zero mean strain (one solve)."""
    load = Load(np.zeros((cell.dim, cell.dim)),
                tau=-tensors.voigt_to_stress(phases.thermal_stress))
    run = solve_loads(cell, [load], method, tol, maxiter, [False], ["thermal eigenstrain"])
    solution = run.solutions[0]
    mean = tensors.stress_to_voigt(solution.mean_flux(cell, load))
    if plane == GPS:
        mean = np.append(mean, solution.average(axial_map(phases.axial),
                                                -phases.axial_thermal_stress, cell.fractions))
    return -mean, run
