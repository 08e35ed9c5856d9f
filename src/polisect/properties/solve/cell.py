"""The periodic cell problem every solver answers, and what a solve returns.

A `Cell` is a grid of compact phase indices with one gradient → flux tensor per phase;
a `Load` is an imposed mean gradient plus an optional per-phase prestress; a `Solution`
holds the phase sums of the element-mean gradient (enough for every effective tensor)
and, on request, the gradient field itself.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True, eq=False)
class Cell:
    """A periodic grid problem.

    Attributes
    ----------
    labels : (*grid) int32 ndarray
        Phase index 0 … n_phases − 1 of every pixel.
    L : (n_phases, nc, d, nc, d) ndarray
        Flux ``σ_ai = L_aibj g_bj`` of each phase; all zero for a pore.
    """

    labels: np.ndarray
    L: np.ndarray

    @property
    def shape(self) -> tuple[int, ...]:
        return self.labels.shape

    @property
    def dim(self) -> int:
        return self.labels.ndim

    @property
    def ncomp(self) -> int:
        return self.L.shape[1]

    @property
    def n_phases(self) -> int:
        return self.L.shape[0]

    @property
    def fractions(self) -> np.ndarray:
        """Area/volume fraction of each phase."""
        return np.bincount(self.labels.ravel(), minlength=self.n_phases) / self.labels.size

    @property
    def solid_phases(self) -> np.ndarray:
        """True for phases with a non-zero tensor."""
        return np.any(self.L.reshape(self.n_phases, -1) != 0.0, axis=1)

    @property
    def solid(self) -> np.ndarray:
        """Pixels with a non-zero tensor."""
        return self.solid_phases[self.labels]


@dataclass(frozen=True, eq=False)
class Load:
    """A load case: mean gradient *E* (nc, d) and optional prestress *tau* (n_phases, nc, d).

    *voigt* is the arithmetic mean of the load's own effective entry when it is not
    ``E:⟨L⟩:E`` (a load given by a prestress, e.g. the axial strain of generalized plane
    strain); the energy stopping rule of `cg.pcg` needs it.
    """

    E: np.ndarray
    tau: np.ndarray | None = None
    voigt: float | None = None

    def mean_energy(self, cell: Cell) -> float | None:
        """``S/N``: the load's effective diagonal entry at zero fluctuation (the Voigt
        mean), or None for a prestress without *voigt* (the residual rule is used)."""
        if self.voigt is not None:
            return float(self.voigt)
        if self.tau is not None:
            return None
        return float(np.einsum("p,paibj,ai,bj->", cell.fractions, cell.L, self.E, self.E))

    def sigma0(self, cell: Cell) -> np.ndarray:
        """The per-phase flux of the mean gradient, ``L:E + τ``, shape (n_phases, nc, d)."""
        out = np.einsum("paibj,bj->pai", cell.L, self.E)
        return out if self.tau is None else out + self.tau


@dataclass(frozen=True, eq=False)
class Solution:
    """Result of one load case.

    Attributes
    ----------
    phase_means : (n_phases, nc, d) ndarray
        ``Σ_{pixels of p} g / N``; summed over phases it is the mean gradient.
    iterations : int
    residuals : ndarray
        Convergence history (relative residual, or the equilibrium error for `ms`).
    converged : bool
    gradient : (nc, d, *grid) ndarray or None
        Element-mean (or pixel-centre, `ms`) gradient field, when asked for.
    cross : (m,) ndarray
        ``x_iᵀ r / N`` for the fluctuations ``x_i`` of the m load cases solved before
        (``r`` this solve's final residual), the correction of the energy-form tensor
        (`methods.Run.energy_form`); zeros for `ms`.
    energy_error : float or None
        Estimated relative error of this load's effective diagonal entry (`cg.pcg`).
    own : float
        ``xᵀr / N`` of this solve, the correction of its diagonal entry in the energy
        form: zero to rounding from a cold start, not from a warm one (`cg`).
    fluctuation : (nc, *grid) float32 ndarray or None
        The solved fluctuation, kept on request to start the same load case on the same
        image with other phase properties (`cg`, warm start).
    """

    phase_means: np.ndarray
    iterations: int
    residuals: np.ndarray
    converged: bool
    gradient: np.ndarray | None = None
    cross: np.ndarray = field(default_factory=lambda: np.zeros(0))
    energy_error: float | None = None
    own: float = 0.0
    fluctuation: np.ndarray | None = None

    def mean_flux(self, cell: Cell, load: Load) -> np.ndarray:
        """Mean flux ``⟨L:g + τ⟩``, shape (nc, d)."""
        return self.average(cell.L, load.tau, cell.fractions)

    def average(self, L: np.ndarray, tau: np.ndarray | None, fractions: np.ndarray) -> np.ndarray:
        """``⟨L:g + τ⟩`` for any per-phase linear map *L* (n_phases, …, nc, d)."""
        out = np.einsum("p...bj,pbj->...", L, self.phase_means)
        if tau is not None:
            out = out + np.einsum("p,p...->...", fractions, tau)
        return out
