"""Discretization error of a pixel/voxel result: coarsened re-solves and Richardson
extrapolation with the observed order.

A staircased interface makes the pixel-element solution converge at first order in the
pixel size (observed on arrays of discs and spheres, docs/methods.md). Solving the same
map with pixels 2 and 4 times larger gives q₁ (fine), q₂, q₄; with ``q_h = q + c hᵖ``

    p = log₂((q₄ − q₂) / (q₂ − q₁)),     error of the fine result  e₁ = (q₂ − q₁) / (2ᵖ − 1)

(Richardson 1911; the observed-order form as in Roache 1998, ch. 5). An observed order
above the expected first order is replaced by 1 (the larger estimate; two coarse levels of
a staircased map are seldom in the asymptotic range, and their differences scatter). When
the observed order is outside `ORDER_RANGE`, the differences change sign, or only one
coarse level could be solved, the estimate falls back to the stated bound
``|q₁ − q₂| · FALLBACK_FACTOR``.

Coarsening keeps the phase fractions: each coarse pixel takes the phase that covers most
of it, ties and conflicts resolved so that every phase keeps its pixel count to within
rounding (an area-preserving majority). Otherwise a first-order area change would be
mistaken for a discretization error.

References
----------
.. [1] Richardson, L. F. (1911). The approximate arithmetical solution by finite
   differences of physical problems involving differential equations. Phil. Trans. R.
   Soc. Lond. A 210, 307–357.
.. [2] Roache, P. J. (1998). Verification and Validation in Computational Science and
   Engineering, ch. 5 (observed order of convergence). Hermosa.
.. [3] Celik, I. B., Ghia, U., Roache, P. J., Freitas, C. J., Coleman, H. & Raad, P. E.
   (2008). Procedure for estimation and reporting of uncertainty due to discretization in
   CFD applications. J. Fluids Eng. 130, 078001.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Callable, Mapping

import numba
import numpy as np
from scipy import ndimage

from ..core.errors import InputError

ORDER_RANGE = (0.5, 3.0)
"""Observed orders accepted for the extrapolation; outside it the fallback bound is used."""

EXPECTED_ORDER = 1.0
"""Order of a staircased interface; an observed order above it is replaced by it (the
larger error estimate: pre-asymptotic coarse levels inflate the observed order), as in the
grid-convergence procedure of Celik et al. (2008)."""

FALLBACK_FACTOR = 2.0
"""Bound on the fine error, in units of |q₁ − q₂|, when the order is not trusted: first
order gives exactly |q₁ − q₂|; the factor 2 covers orders down to log₂(1.5) ≈ 0.58."""

MIN_COARSE_SIDE = 8
"""Coarse maps with a side below this many pixels are not solved."""

Evaluate = Callable[[np.ndarray], Mapping[str, float]]


@dataclass(frozen=True)
class DiscretizationEstimate:
    """Estimated discretization error of one quantity.

    Attributes
    ----------
    name : str
    value : float
        The fine result q₁.
    coarse : tuple of float
        q₂ (and q₄) on the maps coarsened by `factors`.
    factors : tuple of int
    observed_order : float or None
        p from the three levels; None with one coarse level or when undefined.
    error : float
        Estimated error of the fine result, q₁ − q_exact (signed: the fine result lies
        on the side of the coarse ones). With the fallback bound the sign is that of
        q₁ − q₂ and the magnitude the bound.
    extrapolated : float or None
        q₁ − error when the extrapolation was used.
    method : str
        'richardson' or 'bound'.
    note : str
        Plain words on how the estimate was made.
    """

    name: str
    value: float
    coarse: tuple[float, ...]
    factors: tuple[int, ...]
    observed_order: float | None
    error: float
    extrapolated: float | None
    method: str
    note: str

    @property
    def half_width(self) -> float:
        """|error|: the magnitude carried into the error budget (a bias of known sign)."""
        return abs(self.error)


@dataclass(frozen=True)
class DiscretizationStudy:
    """Estimates of every quantity and the cost of the coarse solves.

    Attributes
    ----------
    estimates : mapping name → DiscretizationEstimate
    shapes : tuple of tuple of int
        Fine and coarse map shapes.
    seconds : float
        Wall time of the coarsening and the coarse solves (those not *known*).
    """

    estimates: Mapping[str, DiscretizationEstimate]
    shapes: tuple[tuple[int, ...], ...]
    seconds: float


def coarsen(labels, factor: int) -> np.ndarray:
    """The same periodic map with pixels *factor* times larger, phase pixel counts kept.

    Fine pixel i along an axis of n pixels falls in coarse pixel ⌊i·m/n⌋ with
    m = round(n / factor), so a side that is not a multiple of *factor* still maps the
    whole cell. Each coarse pixel scores each phase by the share of it the phase covers
    (plus 10⁻³ of the share over its 3×3 neighbourhood, which breaks ties toward the
    surrounding phase); coarse pixels are then given phases in decreasing order of score,
    each phase up to its target count (its fine fraction times the coarse pixel count,
    largest remainders rounded up).

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
    factor : int
        At least 2.

    Returns
    -------
    ndarray of the input's dtype

    Raises
    ------
    InputError
        For a factor below 2 or a coarse side below 2 pixels.

    Examples
    --------
    >>> import numpy as np
    >>> fine = np.zeros((8, 8), dtype=int); fine[:4, :4] = 1
    >>> coarsen(fine, 2)
    array([[1, 1, 0, 0],
           [1, 1, 0, 0],
           [0, 0, 0, 0],
           [0, 0, 0, 0]])
    """
    labels = np.asarray(labels)
    if not isinstance(factor, (int, np.integer)) or factor < 2:
        raise InputError(f"coarsening factor {factor!r} must be an integer of at least 2")
    shape = tuple(max(1, int(round(n / factor))) for n in labels.shape)
    if min(shape) < 2:
        raise InputError(f"the map {labels.shape} is too small to coarsen by {factor}")
    values, compact = np.unique(labels, return_inverse=True)
    compact = compact.reshape(labels.shape)
    P = len(values)
    index = np.zeros(labels.shape, dtype=np.int64)
    for axis, (n, m) in enumerate(zip(labels.shape, shape)):
        view = [1] * labels.ndim
        view[axis] = n
        index = index * m + (np.arange(n) * m // n).reshape(view)
    N = math.prod(shape)
    counts = np.bincount((compact * N + index).ravel(), minlength=P * N).reshape(P, N)
    area = np.bincount(index.ravel(), minlength=N)
    share = (counts / area).reshape((P,) + shape)
    around = ndimage.uniform_filter(share, size=(1,) + (3,) * labels.ndim, mode="wrap")
    score = (share + 1e-3 * around).reshape(P, N)
    targets = _targets(np.bincount(compact.ravel(), minlength=P) / compact.size, N)
    order = np.argsort(-score.ravel(), kind="stable")
    out = _assign(order, N, targets)
    return values[out].reshape(shape).astype(labels.dtype)


def _targets(fractions: np.ndarray, N: int) -> np.ndarray:
    """Pixel counts per phase summing to N (largest remainders)."""
    raw = fractions * N
    out = np.floor(raw).astype(np.int64)
    rest = N - out.sum()
    out[np.argsort(-(raw - out), kind="stable")[:rest]] += 1
    return out


@numba.njit(cache=True)
def _assign(order, N, targets):
    out = np.full(N, -1, dtype=np.int64)
    left = targets.copy()
    placed = 0
    for flat in order:
        p, j = flat // N, flat % N
        if out[j] < 0 and left[p] > 0:
            out[j] = p
            left[p] -= 1
            placed += 1
            if placed == N:
                break
    return out


def richardson(name: str, fine: float, coarse: tuple[float, ...],
               factors: tuple[int, ...] = (2, 4)) -> DiscretizationEstimate:
    """Error of the fine result from the coarse results (refinement ratio 2 per level).

    Parameters
    ----------
    name : str
    fine : float
        q₁.
    coarse : tuple of float
        q₂, or q₂ and q₄.
    factors : tuple of int
        The coarsening factors of *coarse*: (2,) or (2, 4).

    Returns
    -------
    DiscretizationEstimate

    References
    ----------
    .. [1] Richardson, L. F. (1911). Phil. Trans. R. Soc. Lond. A 210, 307–357.
    .. [2] Roache, P. J. (1998). Verification and Validation in Computational Science and
       Engineering, ch. 5. Hermosa.

    Examples
    --------
    >>> e = richardson("k", 1.01, (1.02, 1.04))     # exactly first order, limit 1.00
    >>> round(e.observed_order, 6), round(e.error, 6), e.method
    (1.0, 0.01, 'richardson')
    """
    if tuple(factors) not in ((2,), (2, 4)) or len(coarse) != len(factors):
        raise InputError("coarse results must be those of the maps coarsened by 2, or by 2 "
                         "and 4")
    q1, q2 = float(fine), float(coarse[0])
    d1 = q2 - q1
    if d1 == 0.0:
        return DiscretizationEstimate(name, q1, tuple(coarse), tuple(factors), None, 0.0, q1,
                                      "richardson", "the coarse and fine results agree: no "
                                      "discretization error is visible")
    order = None
    if len(coarse) == 2:
        ratio = (float(coarse[1]) - q2) / d1
        if ratio > 0.0:
            order = math.log2(ratio)
            if ORDER_RANGE[0] <= order <= ORDER_RANGE[1]:
                used = min(order, EXPECTED_ORDER)
                error = d1 / (2.0 ** used - 1.0)
                how = (f"observed order {order:.2f}" if used == order else
                       f"observed order {order:.2f} above the expected first order, so first "
                       "order used (the larger, safer estimate)")
                return DiscretizationEstimate(
                    name, q1, tuple(coarse), tuple(factors), order, error, q1 - error,
                    "richardson", "Richardson extrapolation from pixels 1, 2 and 4 times the "
                    f"original, {how}")
        why = (f"the observed order {order:.2f} is outside {ORDER_RANGE[0]}–{ORDER_RANGE[1]}"
               if order is not None else "the coarse differences change sign (not yet "
               "in the range where the error falls steadily with the pixel size)")
    else:
        why = "only one coarse level could be solved, so the order was not observed"
    error = math.copysign(FALLBACK_FACTOR * abs(d1), d1)
    return DiscretizationEstimate(name, q1, tuple(coarse), tuple(factors), order, error, None,
                                  "bound", f"{why}; bound {FALLBACK_FACTOR:g}×|fine − "
                                  "coarse|")


def discretization_study(labels, evaluate: Evaluate, *,
                         fine: Mapping[str, float] | None = None,
                         factors: tuple[int, ...] = (2, 4),
                         known: Mapping[int, Mapping[str, float]] | None = None
                         ) -> DiscretizationStudy:
    """Estimate the discretization error of every quantity *evaluate* returns.

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
        The periodic phase map that was solved.
    evaluate : callable labels → mapping name → float
        Solves a map and returns the quantities, e.g. ``lambda m: {"k":
        conductivity(m, materials).mean()}``.
    fine : mapping name → float, optional
        The quantities of *labels* when already solved (saves the fine solve).
    factors : (2,) or (2, 4)
        Coarsening factors; 4 is dropped when its map would have a side below
        `MIN_COARSE_SIDE`.
    known : mapping factor → mapping name → float, optional
        The quantities of ``coarsen(labels, factor)`` when already solved (e.g. by the
        sensitivity solves of the error budget); those maps are not solved again.

    Returns
    -------
    DiscretizationStudy

    References
    ----------
    .. [1] Richardson, L. F. (1911). Phil. Trans. R. Soc. Lond. A 210, 307–357.
    """
    labels = np.asarray(labels)
    if tuple(factors) not in ((2,), (2, 4)):
        raise InputError(f"factors {factors!r}: use (2,) or (2, 4)")
    usable = tuple(f for f in factors if min(labels.shape) / f >= MIN_COARSE_SIDE)
    if not usable:
        raise InputError(f"the map {labels.shape} is too small for a coarsened solve (a "
                         f"side of at least {2 * MIN_COARSE_SIDE} pixels is needed)")
    start = time.perf_counter()
    known = known or {}
    maps = [coarsen(labels, f) for f in usable]
    coarse = [known[f] if f in known else evaluate(m) for f, m in zip(usable, maps)]
    seconds = time.perf_counter() - start
    fine = dict(fine) if fine is not None else dict(evaluate(labels))
    estimates = {name: richardson(name, value, tuple(c[name] for c in coarse), usable)
                 for name, value in fine.items()}
    return DiscretizationStudy(estimates, (labels.shape,) + tuple(m.shape for m in maps),
                               seconds)
