"""The 3D estimate from a section, as typed values (`polisect.model3d.reconstruct`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping


from ..properties.records import Effective


@dataclass(frozen=True)
class Versus2D:
    """A 3D estimate beside the 2D section's value of the same quantity (``quantity``: the
    name of the isotropic scalar, `polisect.properties.records.SCALARS`)."""

    quantity: str
    section_2d: float
    estimate_3d: float
    difference_pct: float
    sentence: str


@dataclass(frozen=True)
class VolumeRecord:
    """The reconstructed cube of the 3D estimate."""

    voxels: tuple[int, int, int]
    voxel_size: float
    box: float
    units: str
    d10: float
    d90: float
    d10_voxels: float
    box_over_d90: float
    compromise: str | None


@dataclass(frozen=True)
class FamilyRecord:
    """One particle family as the 3D estimate modelled it (spheres, hollow or not)."""

    label: int
    fraction: float
    sections: int
    sphere_mean: float
    sphere_volume_d10: float
    sphere_volume_d50: float
    sphere_volume_d90: float
    hollow_share: float
    hollow_ratio: float | None
    core_label: int | None
    aspect_ratio_mean: float
    solidity_mean: float


@dataclass(frozen=True)
class PackingRecord:
    """One reconstruction of the 3D estimate."""

    seed: int
    spheres: int
    method: str
    fractions: Mapping[str, float]
    seconds: float


@dataclass(frozen=True, eq=False)
class Estimate3DRecord:
    """The 3D estimate of a section's effective properties (scalars are `Spread`)."""

    effective: Effective
    realizations: int
    seed: int
    confidence: str
    volume: VolumeRecord
    units: str
    matrix_label: int
    families: tuple[FamilyRecord, ...]
    packings: tuple[PackingRecord, ...]
    versus_2d: tuple[Versus2D, ...]
    warnings: tuple[str, ...]
