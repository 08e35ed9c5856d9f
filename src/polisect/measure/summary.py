"""Particle and correlation summaries of a section or volume, as typed values.

Lengths are µm (pixels when the pixel size is unknown, ``units == "px"``); densities per
mm² and mm³ (per 10⁶ px² and 10⁹ px³ then).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from .morphology import PhaseParticles
from .particles3d import VolumeParticles
from .sizestats import weighted_quantile
from .stereology import CorrelationFunction


@dataclass(frozen=True)
class SizeQuantiles:
    """Number-weighted size statistics with 95 % intervals (``ci95`` by statistic name)."""

    mean: float | None
    std: float | None
    d10: float | None
    d50: float | None
    d90: float | None
    weighted_d10: float | None
    weighted_d50: float | None
    weighted_d90: float | None
    ci95: Mapping[str, tuple | None] = field(default_factory=dict)


@dataclass(frozen=True)
class SphereSizes:
    """Sphere diameters unfolded from the section (Saltykov)."""

    mean: float | None
    d50: float | None
    volume_fraction: float | None
    class_edges: tuple[float, ...]
    number_per_volume: tuple[float, ...]


@dataclass(frozen=True)
class ParticleSummary:
    """Particle statistics of one phase of a 2D section (lengths in ``units``).

    With ``units == "px"`` every length is in pixels and every per-mm density is per 1000
    pixels (what a 1 µm pixel would give).
    """

    label: int
    split_touching: bool
    units: str
    count: int
    count_measured: int
    count_per_mm2: float | None
    ecd: SizeQuantiles
    aspect_ratio_mean: float | None
    circularity_mean: float | None
    solidity_mean: float | None
    hollow_fraction: float | None
    inner_outer_ratio_mean: float | None
    shape_ci95: Mapping[str, tuple | None]
    spheres: SphereSizes | None
    number_per_mm3: float | None
    mean_free_path: float | None
    mean_intercept: float | None
    surface_density: float | None
    contiguity: float | None
    nearest_neighbour_mean: float | None
    clark_evans: float | None
    nearest_neighbour_n: int | None


@dataclass(frozen=True)
class VolumeParticleSummary:
    """Particle statistics of one phase of a voxel volume (true 3D sizes)."""

    label: int
    units: str
    count: int
    count_measured: int
    number_per_mm3: float | None
    sphere: SizeQuantiles
    hollow_fraction: float | None
    inner_outer_ratio_mean: float | None


@dataclass(frozen=True)
class Correlation:
    """Two-point correlation summary of one phase."""

    correlation_length: float | None
    units: str
    fraction: float


def number(x) -> float | None:
    """*x* as a float, or None when it is missing or not finite."""
    return float(x) if x is not None and math.isfinite(x) else None


def _interval(ci) -> tuple | None:
    return None if ci is None else (number(ci[0]), number(ci[1]))


def summarize_particles(pp: PhaseParticles) -> ParticleSummary:
    """The summary of one phase's particles in a 2D section (`phase_particles`)."""
    size, sph, sp, nn = pp.size, pp.spheres, pp.spacing, pp.neighbours
    ecd = {k: getattr(size, f"ecd_{k}") for k in ("mean", "std", "d10", "d50", "d90")}
    area = {k: getattr(size, f"ecd_area_{k}") for k in ("d10", "d50", "d90")}
    shape = {k: getattr(size, k) for k in SHAPE_STATISTICS}
    per_mm3 = sph.number_per_volume * 1e9
    return ParticleSummary(
        label=pp.label, split_touching=pp.split_touching, units=size.units, count=size.count,
        count_measured=size.count_measured, count_per_mm2=size.count_per_mm2,
        ecd=SizeQuantiles(*(number(e.value) for e in ecd.values()),
                          *(number(e.value) for e in area.values()),
                          ci95={k: _interval(e.ci95) for k, e in ecd.items()}),
        **{k: number(e.value) for k, e in shape.items()},
        shape_ci95={k: _interval(e.ci95) for k, e in shape.items()},
        spheres=SphereSizes(number(sph.mean_diameter), number(sph.d50),
                            number(sph.volume_fraction), tuple(sph.edges.tolist()),
                            tuple(sph.number_density.tolist())),
        number_per_mm3=float(per_mm3) if math.isfinite(per_mm3) else None,
        mean_free_path=number(sp.mean_free_path), mean_intercept=number(sp.mean_intercept),
        surface_density=number(sp.surface_density),
        contiguity=number(sp.contiguity) if sp.contiguity is not None else None,
        nearest_neighbour_mean=number(nn.mean), clark_evans=number(nn.clark_evans),
        nearest_neighbour_n=nn.n_used)


SHAPE_STATISTICS = ("aspect_ratio_mean", "circularity_mean", "solidity_mean", "hollow_fraction",
                    "inner_outer_ratio_mean")
"""The shape statistics of `SizeStatistics` a summary carries, with their intervals."""


def summarize_volume_particles(vp: VolumeParticles) -> VolumeParticleSummary:
    """The summary of one phase's particles in a voxel volume (`volume_particles`):
    number-weighted sphere-equivalent diameters with the Miles–Lantuéjoul weights, their
    volume-weighted quantiles, and the hollow share."""
    keep = vp.weight > 0
    w, d = vp.weight[keep], vp.esd[keep]
    order = np.argsort(d, kind="stable")
    d, w = d[order], w[order]
    total = float(w.sum())
    hollow = vp.hollow[keep][order]
    ratio = vp.inner_outer_ratio[keep][order]
    if total > 0:
        mean = float(np.sum(w * d) / total)
        std = float(math.sqrt(np.sum(w * (d - mean) ** 2) / total))
        by_number = [float(weighted_quantile(d, w, p)) for p in (0.1, 0.5, 0.9)]
        by_volume = [float(weighted_quantile(d, w * d ** 3, p)) for p in (0.1, 0.5, 0.9)]
        hollow_fraction = float(np.sum(w * hollow) / total)
        ratio_mean = (float(np.sum(w * hollow * ratio) / np.sum(w * hollow))
                      if np.any(hollow) else None)
    else:
        mean = std = hollow_fraction = ratio_mean = None
        by_number = by_volume = [None] * 3
    return VolumeParticleSummary(
        vp.label, vp.units, int(vp.volume.size), int(keep.sum()),
        total / vp.box_volume * 1e9, SizeQuantiles(mean, std, *by_number, *by_volume),
        hollow_fraction, ratio_mean)


def summarize_correlation(c: CorrelationFunction) -> Correlation:
    """The summary of a phase's two-point correlation."""
    return Correlation(c.correlation_length, c.units, c.fraction)
