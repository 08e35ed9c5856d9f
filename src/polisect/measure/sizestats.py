"""Size and shape statistics of a phase's particles, edge-corrected, with bootstrap intervals.

Every statistic is a weighted one: the weights are the Miles–Lantuéjoul edge weights of
the particles (`polisect.measure.particles.miles_lantuejoul_weights`; particles cut by the border
have weight 0), so number-weighted distributions are unbiased for the particle population
rather than for the particles that happen to fit in the frame. Area-weighted quantiles use
weight × filled area.

Quantiles are those of the weighted inverted empirical distribution function: the
smallest value whose cumulative weight reaches the fraction q (definition 1 of Hyndman &
Fan 1996, numpy's ``method="inverted_cdf"``).

Confidence intervals are nonparametric bootstrap percentile intervals over particles
(Efron & Tibshirani 1993): the measured particles are resampled with replacement
*n_boot* times, every statistic recomputed, and the 2.5 % and 97.5 % points of the
resampled values taken. They express the sampling error of the particle population
in the image, not the variation between sections.

Examples
--------
>>> import numpy as np
>>> from polisect.measure.particles import label_particles, measure_particles
>>> yy, xx = np.mgrid[:200, :200]
>>> mask = np.zeros((200, 200), bool)
>>> for cy in range(20, 200, 40):
...     for cx in range(20, 200, 40):
...         mask |= np.hypot(yy - cy, xx - cx) < 8
>>> s = size_statistics(measure_particles(label_particles(mask), 1.0), n_boot=200, seed=1)
>>> s.count, round(s.ecd_mean.value, 2), [round(c, 2) for c in s.ecd_mean.ci95]
(25, 15.68, [15.68, 15.68])
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np

from ..core.errors import InputError
from .particles import ParticleTable


@dataclass(frozen=True)
class SampleEstimate:
    """A statistic with its bootstrap 95 % percentile interval (``None`` if not computed)."""

    value: float
    ci95: tuple[float, float] | None = None

@dataclass(frozen=True)
class SizeStatistics:
    """Edge-corrected size and shape statistics of one phase's particles.

    Lengths in ``units`` ("um" or "px"). With "px", densities are per 10⁶ px² (the value
    per mm² that a 1 µm pixel would give), so the keys keep their names.

    Attributes
    ----------
    count : int
        Particles in the image, those cut by the border included.
    count_measured : int
        Particles not touching the border (used for the statistics).
    count_per_mm2 : float
        Miles–Lantuéjoul estimate of the number per unit area, Σw / frame area.
    ecd_mean, ecd_std : SampleEstimate
        Number-weighted mean and standard deviation of the equivalent circle diameter.
    ecd_d10, ecd_d50, ecd_d90 : SampleEstimate
        Number-weighted ECD quantiles.
    ecd_area_d10, ecd_area_d50, ecd_area_d90 : SampleEstimate
        Area-weighted ECD quantiles (the diameter below which 10/50/90 % of the area lies).
    aspect_ratio_mean, circularity_mean, solidity_mean : SampleEstimate
        Number-weighted means of the shape measures.
    hollow_fraction : SampleEstimate
        Number fraction of particles that enclose another phase.
    inner_outer_ratio_mean : SampleEstimate
        Mean inner/outer equivalent-diameter ratio of the hollow particles (NaN if none).
    units : str
    """

    count: int
    count_measured: int
    count_per_mm2: float
    ecd_mean: SampleEstimate
    ecd_std: SampleEstimate
    ecd_d10: SampleEstimate
    ecd_d50: SampleEstimate
    ecd_d90: SampleEstimate
    ecd_area_d10: SampleEstimate
    ecd_area_d50: SampleEstimate
    ecd_area_d90: SampleEstimate
    aspect_ratio_mean: SampleEstimate
    circularity_mean: SampleEstimate
    solidity_mean: SampleEstimate
    hollow_fraction: SampleEstimate
    inner_outer_ratio_mean: SampleEstimate
    units: str

def weighted_quantile(sorted_values: np.ndarray, weights: np.ndarray, q: float) -> np.ndarray:
    """Quantile *q* of the weighted inverted empirical distribution function.

    Parameters
    ----------
    sorted_values : ndarray, shape (n,)
        Values in increasing order.
    weights : ndarray, shape (..., n)
        Non-negative weights (one row per sample for many samples at once).
    q : float
        Probability in [0, 1].

    Returns
    -------
    ndarray, shape (...)
        Smallest value whose cumulative weight reaches q × the total weight.

    References
    ----------
    Hyndman, R. J. & Fan, Y. (1996). Sample quantiles in statistical packages. The American
    Statistician 50, 361–365 (definition 1).

    Examples
    --------
    >>> weighted_quantile(np.array([1.0, 2.0, 3.0]), np.array([1.0, 1.0, 2.0]), 0.5)
    np.float64(2.0)
    """
    c = np.cumsum(weights, axis=-1)
    reached = c >= q * c[..., -1:]
    return np.asarray(sorted_values)[np.argmax(reached, axis=-1)]


def _statistics(t: dict, w: np.ndarray, n: int) -> dict[str, np.ndarray]:
    """Every statistic for each row of weights *w* (shape (b, n)), particles sorted by ECD."""
    total = w.sum(axis=1)
    mean = (w @ t["ecd"]) / total
    var = (w * (t["ecd"][None, :] - mean[:, None]) ** 2).sum(axis=1) / total
    out = {"ecd_mean": mean, "ecd_std": np.sqrt(var * n / (n - 1)) if n > 1 else np.full_like(mean, np.nan)}
    wa = w * t["area_filled"]
    for q in (10, 50, 90):
        out[f"ecd_d{q}"] = weighted_quantile(t["ecd"], w, q / 100)
        out[f"ecd_area_d{q}"] = weighted_quantile(t["ecd"], wa, q / 100)
    for k in ("aspect_ratio", "circularity", "solidity"):
        out[f"{k}_mean"] = (w @ t[k]) / total
    wh = w * t["hollow"]
    hollow_total = wh.sum(axis=1)
    out["hollow_fraction"] = hollow_total / total
    with np.errstate(invalid="ignore", divide="ignore"):
        out["inner_outer_ratio_mean"] = (wh @ t["ratio"]) / hollow_total
    return out


def size_statistics(table: ParticleTable, n_boot: int = 1000, seed: int = 0) -> SizeStatistics:
    """Edge-corrected size and shape statistics with bootstrap 95 % intervals.

    Parameters
    ----------
    table : ParticleTable
        Measured particles of one phase (`polisect.measure.particles.measure_particles`).
    n_boot : int
        Bootstrap resamples (0: no intervals).
    seed : int
        Seed of the numpy random Generator; the same seed gives the same intervals.

    Returns
    -------
    SizeStatistics

    References
    ----------
    Miles, R. E. (1974). On the elimination of edge effects in planar sampling. In
    Stochastic Geometry (Harding & Kendall, eds.), Wiley, 228–247.
    Lantuéjoul, C. (1980). Microscopica Acta 5, 266–273.
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall
    (percentile interval, ch. 13).
    """
    if n_boot < 0:
        raise InputError(f"n_boot = {n_boot}: give 0 (no intervals) or a positive number of "
                         "bootstrap resamples, e.g. 1000")
    used = table.weight > 0
    order = np.argsort(table.ecd[used], kind="stable")
    t = {"ecd": table.ecd, "area_filled": table.area_filled, "aspect_ratio": table.aspect_ratio,
         "circularity": table.circularity, "solidity": table.solidity,
         "hollow": table.hollow.astype(float), "ratio": np.nan_to_num(table.inner_outer_ratio)}
    t = {k: v[used][order] for k, v in t.items()}
    w = table.weight[used][order]
    n = int(w.size)
    count_per_mm2 = float(table.weight.sum() / table.window_area * 1e6)
    names = [f.name for f in fields(SizeStatistics) if f.type == "SampleEstimate"]
    if n == 0:
        est = {k: SampleEstimate(math.nan) for k in names}
    else:
        point = {k: float(v[0]) for k, v in _statistics(t, w[None, :], n).items()}
        boot = _bootstrap(t, w, n, n_boot, seed) if n_boot else None
        est = {k: SampleEstimate(point[k], None if boot is None else _percentile_interval(boot[k]))
               for k in names}
    return SizeStatistics(count=table.count, count_measured=n, count_per_mm2=count_per_mm2,
                          units=table.units, **est)


def _percentile_interval(samples: np.ndarray) -> tuple[float, float]:
    finite = samples[np.isfinite(samples)]
    if finite.size == 0:
        return (math.nan, math.nan)
    lo, hi = np.percentile(finite, [2.5, 97.5])
    return (float(lo), float(hi))


def _bootstrap(t: dict, w: np.ndarray, n: int, n_boot: int, seed: int) -> dict[str, np.ndarray]:
    """Statistics of *n_boot* resamples with replacement, as multiplicities of the particles."""
    rng = np.random.default_rng(seed)
    block = max(1, 2_000_000 // n)
    parts = []
    for start in range(0, n_boot, block):
        b = min(block, n_boot - start)
        draws = rng.integers(0, n, size=(b, n)) + n * np.arange(b)[:, None]
        times = np.bincount(draws.ravel(), minlength=b * n).reshape(b, n)
        parts.append(_statistics(t, times * w[None, :], n))
    return {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}
