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
class QuantityFit:
    """Integral-range fit and adequacy of one quantity.

    Attributes
    ----------
    key : str
        The headline column it belongs to (``fraction_<phase>``, ``conductivity_W_mK``, …).
    value : float
        Its value on the whole image (the window of side 1).
    variance_area : float or None
        K = D²_Z·A₃, fitted (unit² · pixel area); ``None`` when no fit was possible.
    point_variance : float or None
        D²_Z = p(1 − p) for a fraction; unknown (``None``) for effective properties.
    integral_range_px : float or None
        A₃ = K / D²_Z in pixels (fractions only).
    exponent : float or None
        α of a free fit D²(A) ∝ A^−α (Kanit et al.'s generalization); 1 for the law above.
    fit_sides_px : tuple of int
        Window sides (shortest edge) used in the fit.
    whole_image_variance : float or None
        K / A_image: the variance of this quantity between whole images of this size.
    supported_error_pct : float or None
        Relative error of *value* at the study's confidence that this image supports.
    required_area_px : float or None
        Area (pixels; volume in voxels for 3D) needed for the target error.
    required_side_px : float or None
        Side of a square (cube) of that area.
    images_needed : int or None
        Number of images of the present size for the target error.
    gitman_smallest_side_px : int or None
        Smallest window side from which every size up to the largest tested passes the
        chi-square criterion of Gitman et al. (2007).
    verdict : str
        The adequacy in plain words.
    required_side_um : float or None
        ``required_side_px`` in µm, when the pixel size is known.
    """

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
    required_side_um: float | None = None

    @property
    def enough(self) -> bool | None:
        """Whether one image of this size meets the target (None: unknown)."""
        return None if self.images_needed is None else self.images_needed <= 1


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
    quantities: Mapping[str, QuantityFit]
    notes: tuple[str, ...]
    verdict: str
