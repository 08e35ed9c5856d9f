"""Effective conductivity tensor of a periodic pixel/voxel map."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ...core import tensors
from ...core.errors import InputError
from .cell import Cell, Load
from .fields import AXIS_NAMES, ConductivityFields
from .methods import Run, solve_loads
from .phases import conductivity_tensors, phase_image
from .results import HasFacts, SolverFacts, matrix


@dataclass(frozen=True, eq=False)
class ConductivityResult(HasFacts):
    """Effective conductivity and how it was computed.

    Attributes
    ----------
    tensor : (d, d) ndarray
        ⟨q⟩ = tensor · ⟨∇T⟩ (units of the phase conductivities), in the symmetric energy
        form (`methods.Run.energy_form`): the diagonal entry j is the mean flux along j
        under a unit mean gradient along j; off-diagonal entries differ from the mean
        fluxes by less than the solver tolerance times √(k_ii k_jj).
    facts : SolverFacts
        ``method``, ``iterations``, ``seconds``, ``residuals``, ``converged`` are also
        attributes of the result.
    fields : ConductivityFields or None
    fluctuations : tuple of (1, *grid) float32 ndarray, or None
        The solved temperature fluctuation of each load case, when asked for
        (``keep_fluctuations``): the start of a warm solve of the same image (``start``).
    """

    tensor: np.ndarray
    facts: SolverFacts
    fields: ConductivityFields | None = None
    fluctuations: tuple | None = None

    def mean(self) -> float:
        """Isotropic projection: the mean conductivity tr(k)/d."""
        return float(np.trace(self.tensor) / self.tensor.shape[0])

    def anisotropy(self) -> float:
        """‖k − mean·I‖ / ‖k‖ (0 when isotropic); see `tensors.tensor_anisotropy`."""
        return tensors.tensor_anisotropy(0.5 * (self.tensor + self.tensor.T))

    def to_dict(self) -> dict:
        return {"tensor": matrix(self.tensor), "mean": self.mean(),
                "anisotropy": self.anisotropy(), **self.facts.to_dict()}


def field_flags(names: Sequence[str], fields) -> list[bool]:
    """Which load cases keep their fields: all for True, none for False, or those named."""
    if fields is True or fields is False:
        return [bool(fields)] * len(names)
    wanted = set(fields)
    unknown = wanted - set(names)
    if unknown:
        raise InputError(f"fields for unknown load cases {sorted(unknown)}; choose from "
                         f"{list(names)} or pass fields=True")
    return [n in wanted for n in names]


def solve_scalar(labels: np.ndarray, k: np.ndarray, method: str, tol: float,
                 maxiter: int | None, flags: list[bool],
                 names: Sequence[str] | None = None,
                 criterion: str = "energy", starts: Sequence | None = None,
                 keep: bool = False) -> tuple[np.ndarray, Run]:
    """Effective tensor (energy form, `methods.Run.energy_form`) of the scalar problem with
    per-phase tensors *k* (P, d, d); *names* label its load cases in the live progress
    (default "gradient x", …); *starts* and *keep* as for `methods.solve_loads`."""
    dim = labels.ndim
    cell = Cell(labels, k.reshape(k.shape[0], 1, dim, 1, dim))
    loads = [Load(np.eye(dim)[i][None, :]) for i in range(dim)]
    names = names or [f"gradient {a}" for a in AXIS_NAMES[:dim]]
    run = solve_loads(cell, loads, method, tol, maxiter, flags, names, criterion, starts, keep)
    tensor = np.column_stack([s.mean_flux(cell, ld)[0] for s, ld in zip(run.solutions, loads)])
    return run.energy_form(tensor), run


def conductivity(labels, materials: Mapping, *, method: str = "auto", tol: float = 1e-6,
                 maxiter: int | None = None, fields=False,
                 criterion: str = "energy", start: ConductivityResult | None = None,
                 keep_fluctuations: bool = False) -> ConductivityResult:
    """Effective conductivity tensor of a periodic 2D or 3D phase map.

    One load case per axis: a unit mean temperature gradient with periodic fluctuations.

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
        Phase label of every pixel/voxel; periodic.
    materials : mapping label → Material
        Every label needs a ``conductivity`` (a number or a d×d tensor; 0 for a pore).
    method : {'auto', 'fft', 'fe', 'ms'}
        'fft' FFT-preconditioned CG; 'fe' assembled matrix with AMG-preconditioned CG
        (same equations); 'ms' Moulinec–Suquet basic scheme (no pores); 'auto' the
        fastest correct one.
    tol : float
        Accuracy to reach. 'fft'/'fe' with ``criterion="energy"``: the estimated relative
        error of the effective diagonal entries (off-diagonal entries within
        ``tol·√(k_ii k_jj)``), see `polisect.properties.solve.cg`; with
        ``criterion="residual"`` the relative residual ‖r‖/‖b‖; 'ms': its equilibrium
        error.
    maxiter : int, optional
    fields : bool or sequence of {'x', 'y', 'z'}
        Keep the temperature-gradient and heat-flux fields of all (True) or the named
        load cases.
    criterion : {'energy', 'residual'}
        Stopping rule of 'fft' and 'fe' (see *tol*).
    start : ConductivityResult, optional
        A result of the same labels (other conductivities, e.g. another temperature) kept
        with ``keep_fluctuations``: its fluctuations start CG (warm start, see
        `polisect.properties.solve.cg`); the answer is the same to the tolerance.
    keep_fluctuations : bool
        Keep the solved fluctuations (float32, one field per load case) to start another
        solve.

    Returns
    -------
    ConductivityResult

    References
    ----------
    .. [1] Leuschner, M. & Fritzen, F. (2018). Fourier-Accelerated Nodal Solvers (FANS)
       for homogenization problems. Comput. Mech. 62, 359–392.
    .. [2] Moulinec, H. & Suquet, P. (1998). Comput. Methods Appl. Mech. Engrg. 157, 69–94.

    Examples
    --------
    >>> import numpy as np
    >>> from polisect import Material
    >>> layers = np.zeros((8, 8), dtype=int); layers[:4] = 1
    >>> r = conductivity(layers, {0: Material(conductivity=1.0), 1: Material(conductivity=3.0)})
    >>> np.round(np.diag(r.tensor), 6)      # across the layers: harmonic; along: arithmetic
    array([1.5, 2. ])
    """
    image = phase_image(labels, materials)
    names = AXIS_NAMES[:image.dim]
    flags = field_flags(names, fields)
    k = conductivity_tensors(image)
    tensor, run = solve_scalar(image.labels, k, method, tol, maxiter, flags, None, criterion,
                               starts_of(start, "fluctuations", image.labels.shape, len(names)),
                               keep_fluctuations)
    out = None
    if any(flags):
        kept = [i for i, f in enumerate(flags) if f]
        grads = np.array([run.solutions[i].gradient[0] for i in kept])
        flux = _flux(k, image.labels, grads)
        grads[:, :, ~np.any(k.reshape(len(k), -1) != 0, axis=1)[image.labels]] = np.nan
        out = ConductivityFields(tuple(names[i] for i in kept), grads, flux)
    return ConductivityResult(tensor, SolverFacts.of(run), out,
                              run.fluctuations if keep_fluctuations else None)


def starts_of(result, name: str, shape: tuple[int, ...], count: int) -> tuple | None:
    """The kept fluctuations *name* of an earlier *result* as starts of *count* load cases
    on a grid of *shape*; None for no result, or fluctuations not kept or of another grid
    (a cold start then)."""
    kept = None if result is None else getattr(result, name, None)
    if kept is None or len(kept) != count or \
            any(x is not None and x.shape[1:] != shape for x in kept):
        return None
    return kept


def _flux(k: np.ndarray, labels: np.ndarray, grads: np.ndarray) -> np.ndarray:
    """``q = k ∇T`` per pixel for stacked gradient fields (n, d, *grid)."""
    flux = np.zeros_like(grads)
    for p in range(k.shape[0]):
        mask = labels == p
        flux[:, :, mask] = np.einsum("ij,ljm->lim", k[p], grads[:, :, mask])
    return flux
