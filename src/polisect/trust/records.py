"""The window-size study of a section, as typed values (`polisect.trust.windows`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping


from .sectionstats import Gitman


@dataclass(frozen=True)
class LevelStats:
    """One quantity over the windows of one size."""

    n: int
    mean: float
    sd: float | None
    gitman: Gitman | None


@dataclass(frozen=True)
class WindowLevelRecord:
    """All windows of one size."""

    side_px: tuple[int, ...]
    area_px: int
    n_windows: int
    n_solved: int
    quantities: Mapping[str, LevelStats]


@dataclass(frozen=True)
class QuantityFitRecord:
    """Integral-range fit and adequacy of one quantity (see `polisect.trust.windows`)."""

    key: str
    value: float
    variance_area: float | None
    point_variance: float | None
    integral_range_px: float | None
    exponent: float | None
    fit_sides_px: tuple[int, ...]
    whole_image_variance: float | None
    supported_error_pct: float | None
    required_area_px: float | None
    required_side_px: float | None
    images_needed: int | None
    gitman_smallest_side_px: int | None
    verdict: str
    required_side_um: float | None
    enough: bool | None


@dataclass(frozen=True)
class WindowRecord:
    """The window-size study of one section."""

    edges: str
    target_error_pct: float
    confidence: float
    shape: tuple[int, ...]
    pixel_size_um: float | None
    particle_diameter_px: float
    min_side_px: int
    fit_min_side_px: float
    properties: tuple[str, ...]
    levels: tuple[WindowLevelRecord, ...]
    quantities: Mapping[str, QuantityFitRecord]
    notes: tuple[str, ...]
    verdict: str
