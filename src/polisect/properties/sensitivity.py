"""Sensitivity of effective properties to each phase property, from the solved fields.

The effective tensors of the pixel-element discretization are energies of the unit load
cases. For conduction ``k*_IJ = (1/|Ω|) a(T_I, T_J)`` with ``a`` the fully integrated
bilinear form and ``T_I`` the solution under a unit mean gradient along I; the solution
minimises the energy, so a change ``dL`` of a phase's tensor changes the effective tensor,
to first order, at fixed fields [1]_:

    dk*_IJ = (1/|Ω|) ∫_p ∇T_I · dk_p · ∇T_J          (the energy share of phase p)

and likewise ``dC*_IJ = (1/|Ω|) ∫_p ε_I : dC_p : ε_J``. The integral is the discrete one
(every Gauss point: the element-mean gradient plus the hourglass modes of `solve.grid`), so
the derivative is that of the solver's own result, exact up to the solver tolerance.

The effective thermal stress follows from the mechanical solutions,
``β*_J = ⟨β : ε_J⟩`` with ``β = C α`` (Levin 1967; Rosen & Hashin 1970; Laws 1973), and
``α* = C*⁻¹ β*``. Its derivative needs the thermal field ``ε_θ`` (zero mean strain, unit
temperature change) as well:

    dβ*_J = ⟨dβ : ε_J⟩ − (1/|Ω|) a_dC(U_J, u_θ),     dα* = C*⁻¹ (dβ* − dC* α*).

Derivatives of a phase's own tensor with respect to its scalar properties (E, ν, α, k)
are central differences of the closed-form phase tensors (no solve). Derivatives of the
headline scalars (mean conductivity, isotropic E, ν, G, K, mean expansion) follow by the
chain rule from the tensor derivatives (central differences of the closed-form
projections, again without a solve).

Pores (zero conductivity or modulus) and phases given by a full stiffness tensor have no
derivatives here: a pore has no property to be uncertain about, and a tensor phase has no
E or ν.

References
----------
.. [1] Hill, R. (1963). Elastic properties of reinforced solids: some theoretical
   principles. J. Mech. Phys. Solids 11, 357–372 (the energy definition of the
   effective tensor; its stationarity gives the derivative at fixed fields).
.. [2] Levin, V. M. (1967). Thermal expansion coefficients of heterogeneous materials.
   Mech. Solids 2, 58–61.
.. [3] Rosen, B. W. & Hashin, Z. (1970). Effective thermal expansion coefficients and
   specific heats of composite materials. Int. J. Eng. Sci. 8, 157–173.
.. [4] Laws, N. (1973). On the thermostatics of composite materials. J. Mech. Phys.
   Solids 21, 9–17.
"""

from __future__ import annotations

import time
import warnings
from dataclasses import dataclass
from typing import Mapping

import numpy as np
from threadpoolctl import threadpool_limits

from ..core import tensors
from ..core.errors import InputError
from .solve import grid
from .solve.cell import Cell, Load
from .solve.cg import pcg
from .solve.elasticity import GPS, elastic_cell
from .solve.fft import FourierSolver
from .solve.methods import DEFAULT_MAXITER, check_settings
from .solve.phases import PhaseImage, check_plane, conductivity_tensors, elastic_phases, \
    phase_image

SLAB_PIXELS = 65536
"""Pixels per slab of the per-phase sums (bounds their memory)."""

RELATIVE_STEP = 1e-6
"""Relative step of the central differences on closed-form phase tensors and projections."""


@dataclass(frozen=True)
class QuantitySensitivity:
    """One headline scalar and its derivatives.

    Attributes
    ----------
    name : str
        'conductivity' (mean, tr k*/d), 'youngs_modulus', 'poisson_ratio',
        'shear_modulus', 'bulk_modulus' (of the nearest isotropic stiffness, as
        `ElasticityResult.isotropic`), 'expansion' (mean, tr α*/d) or 'axial_expansion'
        (generalized plane strain).
    value : float
    derivatives : mapping (label, property) → float
        ∂value/∂property of the phase with that label; *property* is a `Material` field
        name ('conductivity', 'youngs_modulus', 'poisson_ratio', 'expansion'). For a
        tensor-valued conductivity or expansion the property is its mean diagonal, the
        tensor scaled with it.
    """

    name: str
    value: float
    derivatives: Mapping[tuple[int, str], float]


@dataclass(frozen=True, eq=False)
class Sensitivities:
    """Effective tensors of one physics and their derivatives with respect to every
    phase property.

    Attributes
    ----------
    physics : str
        'conductivity' or 'elasticity' (with the expansion when asked for).
    plane : str or None
        Plane mode of a 2D elastic section; None otherwise.
    tensors : mapping str → ndarray
        'conductivity' (d, d); 'stiffness' the stiffness over the load cases (3D 6×6, 2D
        3×3, generalized plane strain 4×4 in the order xx, yy, xy, zz); 'expansion' the
        Voigt thermal strain per kelvin in the same order (engineering shear).
    tensor_derivatives : mapping str → mapping (label, property) → ndarray
        ∂tensor/∂property, same shapes as *tensors*.
    quantities : mapping str → QuantitySensitivity
    iterations : int
        CG iterations of the solves made here.
    seconds : float
        Wall time, solves and sums.
    """

    physics: str
    plane: str | None
    tensors: Mapping[str, np.ndarray]
    tensor_derivatives: Mapping[str, Mapping[tuple[int, str], np.ndarray]]
    quantities: Mapping[str, QuantitySensitivity]
    iterations: int
    seconds: float


@dataclass(frozen=True, eq=False)
class _PhaseData:
    """Per-phase data of one physics: centre tensor over the generalized gradient,
    cell tensor for the hourglass modes, thermal stress (or None)."""

    centre: np.ndarray         # (P, n, n)
    cell: np.ndarray           # (P, nc, d, nc, d)
    beta: np.ndarray | None    # (P, n)


def conductivity_sensitivity(labels, materials: Mapping, *, tol: float = 1e-8,
                             maxiter: int | None = None) -> Sensitivities:
    """Effective conductivity and its derivative with respect to each phase conductivity.

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
        Periodic phase map, as for `polisect.properties.solve.conductivity`.
    materials : mapping label → Material
    tol : float
        Relative residual of the CG solves (FFT-preconditioned, the ``fft`` method). The
        derivatives are exact up to about this tolerance.
    maxiter : int, optional

    Returns
    -------
    Sensitivities
        ``tensors['conductivity']`` equals the solver's effective tensor; quantity
        'conductivity' is its mean tr(k*)/d.

    References
    ----------
    .. [1] Hill, R. (1963). J. Mech. Phys. Solids 11, 357–372.

    Examples
    --------
    >>> import numpy as np
    >>> from polisect import Material
    >>> layers = np.zeros((8, 8), dtype=int); layers[:4] = 1
    >>> s = conductivity_sensitivity(layers, {0: Material(conductivity=1.0),
    ...                                       1: Material(conductivity=3.0)})
    >>> d = s.quantities["conductivity"].derivatives     # mean of harmonic and arithmetic
    >>> round(d[(0, "conductivity")], 6), round(d[(1, "conductivity")], 6)
    (0.8125, 0.3125)
    """
    start = time.perf_counter()
    check_settings("fft", tol, maxiter)
    image = phase_image(labels, materials)
    dim = image.dim

    def data(img: PhaseImage) -> _PhaseData:
        k = conductivity_tensors(img)
        return _PhaseData(k, k.reshape(k.shape[0], 1, dim, 1, dim), None)

    base = data(image)
    cell = Cell(image.labels, base.cell)
    loads = [Load(np.eye(dim)[i][None, :]) for i in range(dim)]
    fields, iterations = _solve(cell, loads, tol, maxiter)
    sums = _Sums(image.labels, fields, [ld.E for ld in loads], centre=_gradient_centre,
                 n_phases=cell.n_phases)
    k_eff = sums.mean_flux(base.centre)
    derivs = {}
    for key, d in _phase_derivatives(image, data, ("conductivity",)).items():
        derivs[key] = sums.energy(key[0], d, range(dim), range(dim))
    mean = _Derived("conductivity", lambda k: np.trace(k) / dim)
    return Sensitivities("conductivity", None, {"conductivity": k_eff},
                         {"conductivity": derivs},
                         {"conductivity": mean.of(k_eff, derivs)}, iterations,
                         time.perf_counter() - start)


def elasticity_sensitivity(labels, materials: Mapping, *, plane: str = GPS,
                           expansion: bool = False, tol: float = 1e-8,
                           maxiter: int | None = None) -> Sensitivities:
    """Effective stiffness (and expansion) and their derivatives with respect to each
    phase's Young's modulus, Poisson's ratio (and expansion coefficient).

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
    materials : mapping label → Material
        As for `polisect.properties.solve.elasticity` (and ``expansion`` when asked for).
    plane : {'generalized-plane-strain', 'plane-strain', 'plane-stress'}
        Plane mode of a 2D section; ignored in 3D.
    expansion : bool
        Also the thermal expansion (one more load case: the thermal eigenstrain).
    tol : float
        Relative residual of the CG solves (the ``fft`` method).
    maxiter : int, optional

    Returns
    -------
    Sensitivities
        Quantities 'youngs_modulus', 'poisson_ratio', 'shear_modulus', 'bulk_modulus' of
        the nearest isotropic stiffness (2D: of the reported in-plane stiffness, as
        `ElasticityResult.isotropic`), and with *expansion* 'expansion' (mean in-plane or
        3D linear expansion) and, in generalized plane strain, 'axial_expansion'.

    References
    ----------
    .. [1] Hill, R. (1963). J. Mech. Phys. Solids 11, 357–372.
    .. [2] Levin, V. M. (1967). Mech. Solids 2, 58–61.
    .. [3] Laws, N. (1973). J. Mech. Phys. Solids 21, 9–17.
    """
    start = time.perf_counter()
    check_settings("fft", tol, maxiter)
    image = phase_image(labels, materials)
    plane = check_plane(plane, image.dim)
    dim = image.dim
    gps = plane == GPS

    def data(img: PhaseImage) -> _PhaseData:
        ph = elastic_phases(img, plane, thermal=expansion)
        centre, beta = ph.stiffness, ph.thermal_stress
        if gps:
            P = centre.shape[0]
            full = np.zeros((P, 4, 4))
            full[:, :3, :3] = centre
            full[:, 3, :3] = full[:, :3, 3] = ph.axial
            full[:, 3, 3] = ph.axial_stiffness
            centre = full
            if expansion:
                beta = np.column_stack([beta, ph.axial_thermal_stress])
        cell = np.array([tensors.voigt_to_tensor(c) for c in ph.stiffness])
        return _PhaseData(centre, cell, beta)

    base = data(image)
    if np.any(base.centre.reshape(len(base.centre), -1) != 0.0, axis=1).sum() == 0:
        raise InputError("every phase is a pore: there is no stiffness to differentiate")
    ph = elastic_phases(image, plane, thermal=False)
    cell = elastic_cell(image, ph)
    nv = 6 if dim == 3 else 3
    loads = [Load(tensors.voigt_to_strain(e)) for e in np.eye(nv)]
    if gps:
        loads.append(Load(np.zeros((2, 2)), tau=tensors.voigt_to_stress(ph.axial)))
    n_mech = len(loads)
    if expansion:
        thermal = base.beta[:, :3] if gps else base.beta
        loads.append(Load(np.zeros((dim, dim)), tau=-tensors.voigt_to_stress(thermal)))
    fields, iterations = _solve(cell, loads, tol, maxiter)
    axial = [float(gps and i == 3) for i in range(len(loads))]
    sums = _Sums(image.labels, fields, [ld.E for ld in loads], centre=_strain_centre,
                 n_phases=cell.n_phases, axial=axial if gps else None)
    mech = range(n_mech)
    C = sums.mean_flux(base.centre)[:, :n_mech]
    props = ("youngs_modulus", "poisson_ratio") + (("expansion",) if expansion else ())
    dC, dalpha = {}, {}
    alpha = None
    if expansion:
        beta_eff = sums.phase_mean_dot(base.beta, mech)
        _check_load_bearing(C)
        alpha = np.linalg.solve(C, beta_eff)
    for key, d in _phase_derivatives(image, data, props).items():
        dC[key] = sums.energy(key[0], d, mech, mech)
        if expansion:
            dbeta = sums.phase_mean_dot(d.beta, mech, phase=key[0]) - \
                sums.energy(key[0], d, mech, [n_mech])[:, 0]
            dalpha[key] = np.linalg.solve(C, dbeta - dC[key] @ alpha)
    tensors_out = {"stiffness": C}
    derivs = {"stiffness": dC}
    moduli = _moduli_function(plane)
    quantities = {name: _Derived(name, lambda c, i=i: moduli(c)[i]).of(C, dC)
                  for i, name in enumerate(("youngs_modulus", "poisson_ratio",
                                            "shear_modulus", "bulk_modulus"))}
    if expansion:
        tensors_out["expansion"] = alpha
        derivs["expansion"] = dalpha
        quantities["expansion"] = _Derived("expansion", lambda a: np.mean(a[:dim])) \
            .of(alpha, dalpha)
        if gps:
            quantities["axial_expansion"] = _Derived("axial_expansion", lambda a: a[3]) \
                .of(alpha, dalpha)
    return Sensitivities("elasticity", plane, tensors_out, derivs, quantities, iterations,
                         time.perf_counter() - start)


def _check_load_bearing(C: np.ndarray) -> None:
    if np.linalg.cond(C) > 1e12:
        raise InputError("the solid phases do not carry load across the image (the effective "
                         "stiffness is singular), so a thermal expansion is not defined; check "
                         "the pore phase or use a larger window")


def _solve(cell: Cell, loads: list[Load], tol: float,
           maxiter: int | None) -> tuple[list[np.ndarray], int]:
    """Nodal fluctuation (nc, *grid) of every load case, FFT-preconditioned CG."""
    maxiter = maxiter or DEFAULT_MAXITER["fft"]
    solver = FourierSolver(cell, tol, maxiter)
    out, iterations = [], 0
    for load in loads:
        b = grid.load_vector(solver.labels, load.sigma0(cell)).ravel()
        x, info = pcg(solver.apply, solver.precondition, b, tol, maxiter)
        if not info.converged:
            warnings.warn(f"a sensitivity solve stopped after {info.iterations} iterations at "
                          f"a relative residual {info.residuals[-1]:.2e} above {tol:.0e}; the "
                          "derivatives are less accurate: raise maxiter", RuntimeWarning,
                          stacklevel=3)
        iterations += info.iterations
        out.append(x.reshape((cell.ncomp,) + cell.shape))
    return out, iterations


def _gradient_centre(u: np.ndarray, E: np.ndarray) -> np.ndarray:
    """Element-mean temperature gradient (d, *grid)."""
    return grid.centre_gradient(u, E)[0]


def _strain_centre(u: np.ndarray, E: np.ndarray) -> np.ndarray:
    """Element-mean Voigt strain (nv, *grid), engineering shear."""
    g = grid.centre_gradient(u, E)
    sym = np.moveaxis(0.5 * (g + np.swapaxes(g, 0, 1)), (0, 1), (-2, -1))
    return np.moveaxis(tensors.strain_to_voigt(sym), -1, 0)


def _hourglass_patterns(dim: int) -> list[int]:
    """Mode patterns with differences on two or more axes (zero for a linear field)."""
    return [P for P in range(2 ** dim) if bin(P).count("1") >= 2]


class _Sums:
    """Per-phase second moments of the generalized gradients of all load cases.

    For load case I: the centre vector c_I (element-mean gradient or Voigt strain, plus
    the uniform axial strain of generalized plane strain) and the hourglass quantities
    h_I = Q_P u_I (|P| ≥ 2). Per phase the Gram matrices (1/N) Σ_e c cᵀ and
    (1/N) Σ_e h hᵀ over all load cases hold every energy the derivatives need (the
    element form has no centre–hourglass cross terms, `solve.grid`). They are summed
    over slabs of about `SLAB_PIXELS` pixels along the first axis, so the memory stays
    bounded whatever the image size. The products run on one BLAS thread: beside the
    solver's FFT and numba threads, two BLAS threads on two cores were 30× slower
    (spin-waiting; measured on 84 × 22 000 blocks).
    """

    def __init__(self, labels: np.ndarray, fields: list[np.ndarray], means: list[np.ndarray],
                 centre, n_phases: int, axial: list[float] | None = None):
        dim = labels.ndim
        self.nq = 2 ** dim
        self.patterns = _hourglass_patterns(dim)
        self.n_loads = len(fields)
        n = labels.size
        nx = labels.shape[0]
        step = max(1, SLAB_PIXELS // (n // nx))
        self.centre_gram = self.hour_gram = self.means = None
        for s in range(0, nx, step):
            e = min(nx, s + step)
            rows = np.arange(s, e + 1)
            cs, hs = [], []
            for I, (u, E) in enumerate(zip(fields, means)):
                slab = u.take(rows, axis=1, mode="wrap")
                cs.extend(row[:e - s].ravel() for row in centre(slab, E))
                if axial is not None:
                    cs.append(np.full((e - s) * (n // nx), axial[I]))
                hs.extend(grid.apply_Q(slab[a], P, dim)[:e - s].ravel()
                          for a in range(slab.shape[0]) for P in self.patterns)
            cs, hs = np.array(cs), np.array(hs)
            flat = labels[s:e].ravel()
            if self.means is None:
                self.n_centre = len(cs) // self.n_loads
                self.n_hour = len(hs) // self.n_loads
                self.centre_gram = np.zeros((n_phases, len(cs), len(cs)))
                self.hour_gram = np.zeros((n_phases, len(hs), len(hs)))
                self.means = np.zeros((n_phases, len(cs)))
            with threadpool_limits(1, user_api="blas"):
                for p in np.unique(flat):
                    mask = flat == p
                    c, h = cs[:, mask], hs[:, mask]
                    self.centre_gram[p] += c @ c.T / n
                    self.hour_gram[p] += h @ h.T / n
                    self.means[p] += c.sum(axis=1) / n

    def _centre(self, I: int) -> slice:
        return slice(I * self.n_centre, (I + 1) * self.n_centre)

    def _hour(self, I: int) -> slice:
        return slice(I * self.n_hour, (I + 1) * self.n_hour)

    def mean_flux(self, centre: np.ndarray) -> np.ndarray:
        """``⟨C c_J⟩`` for every load case J (columns): the solver's effective tensor."""
        return np.column_stack([sum(centre[p] @ self.means[p][self._centre(J)]
                                    for p in range(len(self.means)))
                                for J in range(self.n_loads)])

    def phase_mean_dot(self, beta: np.ndarray, loads, phase: int | None = None) -> np.ndarray:
        """``⟨β · c_J⟩`` over all phases (or one) for the load cases *loads*."""
        phases = range(len(self.means)) if phase is None else [phase]
        return np.array([sum(beta[p] @ self.means[p][self._centre(J)] for p in phases)
                         for J in loads])

    def energy(self, phase: int, d: _PhaseData, rows, cols) -> np.ndarray:
        """``(1/N) a_dL(U_I, U_J)`` over *phase* for I in *rows*, J in *cols* (dL has
        major symmetry, so the order of the pair does not matter)."""
        Gc, Gh = self.centre_gram[phase], self.hour_gram[phase]
        hg = _hourglass_matrix(d.cell[phase], self.patterns, self.nq)
        out = np.empty((len(rows), len(cols)))
        for a, I in enumerate(rows):
            for b, J in enumerate(cols):
                out[a, b] = np.sum(d.centre[phase] * Gc[self._centre(I), self._centre(J)]) + \
                    np.sum(hg * Gh[self._hour(I), self._hour(J)])
        return out


def _hourglass_matrix(L: np.ndarray, patterns: list[int], nq: int) -> np.ndarray:
    """Block of the element form (`grid.mode_matrix`) on the hourglass quantities."""
    M = grid.mode_matrix(L[None])[0]
    nc = L.shape[0]
    index = [a * nq + P for a in range(nc) for P in patterns]
    return M[np.ix_(index, index)]


def _phase_derivatives(image: PhaseImage, data, props) -> dict[tuple[int, str], _PhaseData]:
    """∂(phase data)/∂property of every phase that has the property, by central
    differences of the closed-form phase tensors (only the differentiated phase changes)."""
    out = {}
    for index, (key, m) in enumerate(zip(image.keys, image.materials)):
        for prop in props:
            value = getattr(m, prop)
            if value is None or (prop in ("youngs_modulus", "poisson_ratio")
                                 and m.stiffness is not None):
                continue
            scale = float(np.trace(value) / len(value)) if np.ndim(value) == 2 else float(value)
            if scale == 0.0 or (m.is_pore and prop != "conductivity"):
                continue
            step = RELATIVE_STEP * abs(scale) if prop != "poisson_ratio" else RELATIVE_STEP
            sides = []
            for sign in (1.0, -1.0):
                changed = value * (1.0 + sign * step / scale) if np.ndim(value) == 2 \
                    else value + sign * step
                mats = list(image.materials)
                mats[index] = m.replace(**{prop: changed})
                sides.append(data(PhaseImage(image.labels, image.keys, tuple(mats))))
            up, down = sides
            beta = None if up.beta is None else (up.beta - down.beta) / (2 * step)
            out[(key, prop)] = _PhaseData((up.centre - down.centre) / (2 * step),
                                          (up.cell - down.cell) / (2 * step), beta)
    return out


def _moduli_function(plane: str | None):
    """Stiffness over the load cases → (E, ν, G, K) of the reported stiffness's nearest
    isotropic tensor, as `ElasticityResult.isotropic` (GPS: condensed at zero axial stress)."""
    mode = None if plane is None else ("plane-strain" if plane == "plane-strain"
                                       else "plane-stress")

    def moduli(C: np.ndarray) -> np.ndarray:
        if plane == GPS:
            C = C[:3, :3] - np.outer(C[:3, 3], C[3, :3]) / C[3, 3]
        K, G = tensors.isotropic_projection(0.5 * (C + C.T))
        E, nu = tensors.E_nu_from_bulk_shear(K, G, mode)
        return np.array([E, nu, G, K])
    return moduli


@dataclass(frozen=True)
class _Derived:
    """A scalar function of an effective tensor, differentiated by the chain rule."""

    name: str
    function: object

    def of(self, tensor: np.ndarray, derivs: Mapping) -> QuantitySensitivity:
        f = self.function
        value = float(f(tensor))
        out = {}
        for key, d in derivs.items():
            norm = np.linalg.norm(d)
            if norm == 0.0:
                out[key] = 0.0
                continue
            h = RELATIVE_STEP * max(np.linalg.norm(tensor), 1e-300) / norm
            out[key] = float((f(tensor + h * d) - f(tensor - h * d)) / (2 * h))
        return QuantitySensitivity(self.name, value, out)
