"""Effective stiffness of a periodic pixel/voxel map: 3D, plane strain, plane stress and
generalized plane strain.

Plane modes of a 2D section (x–y plane, z out of plane):

* ``plane-strain``: ε_zz = γ_yz = γ_xz = 0; the stiffness is the in-plane block of C.
* ``plane-stress``: σ_zz = σ_yz = σ_xz = 0 in every pixel; each phase's stiffness is
  condensed before the solve.
* ``generalized-plane-strain``: the section of a prismatic (columnar) structure: the
  in-plane fields plus a uniform axial strain ε_zz chosen so that the mean axial stress
  vanishes. Four in-plane load cases (ε_xx, ε_yy, γ_xy, ε_zz) give the 4×4 block of the
  prismatic stiffness; the antiplane problem — the scalar problem with the shear moduli
  in place of k — gives its axial shear block (γ_xz, γ_yz).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ...core import tensors
from .cell import Cell, Load
from .conductivity import field_flags, solve_scalar, starts_of
from .fields import VOIGT_NAMES, ElasticFields
from .methods import solve_loads
from .phases import ElasticPhases, PhaseImage, check_plane, elastic_phases, phase_image
from .results import HasFacts, IsotropicModuli, SolverFacts, matrix

GPS = "generalized-plane-strain"
PRISMATIC_ORDER = [0, 1, 5, 2]    # (xx, yy, xy, zz) within the 3D Voigt order


@dataclass(frozen=True, eq=False)
class ElasticityResult(HasFacts):
    """Effective stiffness and how it was computed.

    Attributes
    ----------
    stiffness : ndarray
        Voigt matrix, engineering shear strains: 3D (xx, yy, zz, yz, xz, xy) 6×6; 2D
        (xx, yy, xy) 3×3 in the plane mode used (for generalized plane strain: at zero
        mean axial stress).
    plane : str or None
        Plane mode of a 2D section; None in 3D.
    facts : SolverFacts
    prismatic_stiffness : (6, 6) ndarray or None
        Generalized plane strain: the full stiffness of the prismatic structure (z the
        prism axis), in-plane/axial block and antiplane shear block.
    fields : ElasticFields or None
    phase_strains : (n_loads, n_phases, nc, d) ndarray or None
        Phase sums ``Σ_{pixels of p} g / N`` of the total displacement gradient under each unit
        load case (order of `load_stiffness`): ``f_p`` times the phase averages of the
        strain-localisation tensor, which give the thermal expansion without another
        solve (`expansion`).
    fluctuations, antiplane_fluctuations : tuple of (nc, *grid) float32 ndarray, or None
        The solved displacement fluctuations of the load cases (and of the two antiplane
        loads of generalized plane strain), when asked for (``keep_fluctuations``): the
        start of a warm solve of the same image (``start``).
    """

    stiffness: np.ndarray
    plane: str | None
    facts: SolverFacts
    prismatic_stiffness: np.ndarray | None = None
    fields: ElasticFields | None = None
    phase_strains: np.ndarray | None = None
    fluctuations: tuple | None = None
    antiplane_fluctuations: tuple | None = None

    @property
    def load_stiffness(self) -> np.ndarray:
        """Stiffness over the load cases of the problem (GPS: xx, yy, xy, zz)."""
        if self.prismatic_stiffness is None:
            return self.stiffness
        return self.prismatic_stiffness[np.ix_(PRISMATIC_ORDER, PRISMATIC_ORDER)]

    def isotropic(self) -> IsotropicModuli:
        """Moduli of the nearest isotropic tensor (`tensors.isotropic_projection`)."""
        K, G = tensors.isotropic_projection(0.5 * (self.stiffness + self.stiffness.T))
        plane = None if self.plane is None else \
            ("plane-strain" if self.plane == "plane-strain" else "plane-stress")
        E, nu = tensors.E_nu_from_bulk_shear(K, G, plane)
        return IsotropicModuli(K, G, E, nu)

    def anisotropy(self) -> float:
        """Relative distance from isotropy (`tensors.stiffness_anisotropy`)."""
        return tensors.stiffness_anisotropy(0.5 * (self.stiffness + self.stiffness.T))

    def axial_moduli(self) -> dict | None:
        """Generalized plane strain: axial Young's modulus E_z, Poisson's ratio ν_zp
        (transverse contraction under axial stress, mean of x and y) and axial shear
        modulus G_zp (mean of the antiplane block). None otherwise."""
        if self.prismatic_stiffness is None:
            return None
        S = np.linalg.pinv(self.prismatic_stiffness)
        Ez = 1.0 / S[2, 2] if S[2, 2] > 0 else 0.0
        return {"youngs_modulus": Ez, "poisson_ratio": -0.5 * (S[0, 2] + S[1, 2]) * Ez,
                "shear_modulus": 0.5 * (self.prismatic_stiffness[3, 3]
                                        + self.prismatic_stiffness[4, 4])}

    def to_dict(self) -> dict:
        out = {"stiffness": matrix(self.stiffness), "plane": self.plane,
               "isotropic": self.isotropic().to_dict(), "anisotropy": self.anisotropy()}
        if self.prismatic_stiffness is not None:
            out["prismatic_stiffness"] = matrix(self.prismatic_stiffness)
            out["axial"] = self.axial_moduli()
        return {**out, **self.facts.to_dict()}


def elastic_cell(image: PhaseImage, phases: ElasticPhases) -> Cell:
    return Cell(image.labels, np.array([tensors.voigt_to_tensor(c) for c in phases.stiffness]))


def axial_map(axial: np.ndarray) -> np.ndarray:
    """(P, 2, 2) map from the in-plane displacement gradient to σ_zz, ``C[zz, in-plane]``."""
    out = np.empty((axial.shape[0], 2, 2))
    out[:, 0, 0] = axial[:, 0]
    out[:, 1, 1] = axial[:, 1]
    out[:, 0, 1] = out[:, 1, 0] = axial[:, 2]
    return out


def elasticity(labels, materials: Mapping, *, plane: str = GPS, method: str = "auto",
               tol: float = 1e-6, maxiter: int | None = None, fields=False,
               criterion: str = "energy", start: ElasticityResult | None = None,
               keep_fluctuations: bool = False, field_dtype=np.float64) -> ElasticityResult:
    """Effective stiffness of a periodic 2D or 3D phase map.

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
        Phase label of every pixel/voxel; periodic.
    materials : mapping label → Material
        ``youngs_modulus`` and ``poisson_ratio`` (0 modulus for a pore), or a Voigt
        ``stiffness`` (6×6; a 3×3 in-plane matrix serves plane strain/stress only).
    plane : {'generalized-plane-strain', 'plane-strain', 'plane-stress'}
        Plane mode of a 2D image (see the module notes); ignored in 3D.
    method : {'auto', 'fft', 'fe', 'ms'}
    tol : float
        As for `conductivity`: with ``criterion="energy"`` the estimated relative error of
        the diagonal entries of the stiffness over the load cases (off-diagonal entries
        within ``tol·√(C_ii C_jj)``).
    maxiter : int, optional
    fields : bool or sequence of load names
        Keep strain and stress fields of all (True) or the named unit-strain load cases
        ('xx', 'yy', 'xy', …, 'zz' for the axial load of generalized plane strain).
    criterion : {'energy', 'residual'}
        Stopping rule of 'fft' and 'fe' (see `conductivity`).
    start : ElasticityResult, optional
        A result of the same labels and plane mode (other phase stiffnesses, e.g. another
        temperature) kept with ``keep_fluctuations``: its fluctuations start CG (warm
        start, `polisect.properties.solve.cg`).
    keep_fluctuations : bool
        Keep the solved fluctuations (float32) to start another solve.
    field_dtype : numpy dtype
        Storage of the kept strain and stress fields: float64 (default), or float32 for
        maps that are only drawn (half the memory of the fields: 56 instead of 112 bytes a
        pixel and load case in generalized plane strain).

    Returns
    -------
    ElasticityResult

    References
    ----------
    .. [1] Leuschner, M. & Fritzen, F. (2018). Comput. Mech. 62, 359–392.
    .. [2] Adams, D. F. & Doner, D. R. (1967). Transverse normal loading of a unidirectional
       composite. J. Compos. Mater. 1, 152–164 (generalized plane strain sections).

    Examples
    --------
    >>> import numpy as np
    >>> from polisect import Material
    >>> uniform = np.zeros((4, 4, 4), dtype=int)
    >>> r = elasticity(uniform, {0: Material(youngs_modulus=70.0, poisson_ratio=0.3)})
    >>> round(r.isotropic().youngs_modulus, 6), round(r.isotropic().poisson_ratio, 6)
    (70.0, 0.3)
    """
    image = phase_image(labels, materials)
    return elastic_result(image, check_plane(plane, image.dim), method, tol, maxiter, fields,
                          criterion, start, keep_fluctuations, field_dtype)


def elastic_result(image: PhaseImage, plane: str | None, method: str, tol: float,
                   maxiter: int | None, fields, criterion: str = "energy",
                   start: ElasticityResult | None = None,
                   keep: bool = False, field_dtype=np.float64) -> ElasticityResult:
    """`elasticity` on a checked `PhaseImage` (*start*, *keep*, *field_dtype*: its
    ``start``, ``keep_fluctuations`` and ``field_dtype``)."""
    if start is not None and start.plane != plane:
        start = None
    phases = elastic_phases(image, plane, thermal=False)
    cell = elastic_cell(image, phases)
    dim = image.dim
    names = VOIGT_NAMES[dim]
    loads = [Load(tensors.voigt_to_strain(e)) for e in np.eye(len(names))]
    if plane == GPS:
        names = names + ("zz",)
        loads.append(Load(np.zeros((2, 2)), tau=tensors.voigt_to_stress(phases.axial),
                          voigt=float(cell.fractions @ phases.axial_stiffness)))
    flags = field_flags(names, fields)
    run = solve_loads(cell, loads, method, tol, maxiter, flags,
                      [f"{'axial ' if plane == GPS and n == 'zz' else ''}strain {n}"
                       for n in names], criterion,
                      starts_of(start, "fluctuations", image.labels.shape, len(loads)), keep)
    kept = run.fluctuations if keep else None
    run, grads = run.take_fields()
    C = np.column_stack([tensors.stress_to_voigt(s.mean_flux(cell, ld))
                         for s, ld in zip(run.solutions, loads)])
    strains = np.array([s.phase_means for s in run.solutions])
    if plane != GPS:
        C = run.energy_form(C)
        out_fields = _fields(cell, phases, grads, loads, names, flags, C, zz_tau=None,
                             dtype=field_dtype)
        return ElasticityResult(C, plane, SolverFacts.of(run), fields=out_fields,
                                phase_strains=strains, fluctuations=kept)
    zz = [s.average(axial_map(phases.axial), phases.axial_stiffness if name == "zz" else None,
                    cell.fractions) for s, name in zip(run.solutions, names)]
    C4 = run.energy_form(np.vstack([C, zz]))                   # rows/cols xx, yy, xy, zz
    antiplane, anti_run = solve_scalar(image.labels, phases.antiplane, method, tol, maxiter,
                                       [False, False], ["axial shear xz", "axial shear yz"],
                                       criterion, starts_of(start, "antiplane_fluctuations",
                                                            image.labels.shape, 2), keep)
    prismatic = np.zeros((6, 6))
    prismatic[np.ix_(PRISMATIC_ORDER, PRISMATIC_ORDER)] = C4
    prismatic[np.ix_([4, 3], [4, 3])] = antiplane
    condensed = C4[:3, :3] - np.outer(C4[:3, 3], C4[3, :3]) / C4[3, 3] if C4[3, 3] > 0 \
        else C4[:3, :3]
    out_fields = _fields(cell, phases, grads, loads, names, flags, C4,
                         zz_tau=phases.axial_stiffness, dtype=field_dtype)
    return ElasticityResult(condensed, plane, SolverFacts.of(run, anti_run), prismatic, out_fields,
                            strains, kept, anti_run.fluctuations if keep else None)


def _fields(cell: Cell, phases: ElasticPhases, grads: list, loads, names, flags,
            load_stiffness, zz_tau, dtype=np.float64) -> ElasticFields | None:
    """Strain and stress fields of the kept load cases; each gradient in *grads* is
    dropped from the list once used, and the outputs are filled in place, so the peak
    memory stays near the size of the outputs."""
    if not any(flags):
        return None
    kept = [i for i, f in enumerate(flags) if f]
    solid = cell.solid
    nv = len(VOIGT_NAMES[cell.dim])
    strain = np.empty((len(kept), nv) + cell.shape, dtype=dtype)
    stress = np.zeros((len(kept), nv) + cell.shape, dtype=dtype)
    stress_zz = None if phases.axial is None else np.zeros((len(kept),) + cell.shape,
                                                            dtype=dtype)
    for slot, i in enumerate(kept):
        g = grads[i]
        grads[i] = None
        eps = strain[slot]
        eps[:] = np.moveaxis(tensors.strain_to_voigt(
            np.moveaxis(0.5 * (g + np.swapaxes(g, 0, 1)), (0, 1), (-2, -1))), -1, 0)
        del g
        tau = loads[i].tau
        sig = stress[slot]
        for p in range(cell.n_phases):
            mask = cell.labels == p
            sig[:, mask] = phases.stiffness[p] @ eps[:, mask]
            if tau is not None:
                sig[:, mask] += tensors.stress_to_voigt(tau[p])[:, None]
            if stress_zz is not None:
                stress_zz[slot][mask] = phases.axial[p] @ eps[:, mask]
                if names[i] == "zz":
                    stress_zz[slot][mask] += zz_tau[p]
        eps[:, ~solid] = np.nan
    return ElasticFields(tuple(names[i] for i in kept), strain, stress, stress_zz,
                         load_stiffness, tuple(names))
