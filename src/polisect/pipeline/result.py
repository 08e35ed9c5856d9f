"""`Result`: everything one analysis found, as typed values.

The result is a tree of frozen dataclasses: report, comparison, batch tables and the page
read its attributes. Its JSON and CSV forms (``schema = "polisect.result/1"``) are made,
and read back, in one place only: `polisect.present.record`. Units are fixed by the
attribute's meaning: conductivity W/(m·K), moduli and stiffness GPa (Voigt order,
engineering shear strains), expansion 1/K, lengths µm (pixels when the pixel size is
unknown, ``units == "px"``).

Examples
--------
>>> from polisect.pipeline.result import Source
>>> Source(path=None, sha256=None, shape=(64, 64), pixel_size_um=0.5,
...        pixel_size_from="given").shape
(64, 64)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

from ..core.materials import Material
from ..measure.summary import Correlation, ParticleSummary, VolumeParticleSummary
from ..model3d.summary import Estimate3DRecord
from ..properties.fit import FitResult
from ..segment.segmentation import SegmentationSummary
from ..properties.records import Effective
from ..properties.schemes import Bound, Estimate
from ..properties.shock import ShockIndices
from ..trust.budget import Budget
from ..trust.measured import MeasuredComparison
from ..trust.records import WindowRecord


@dataclass(frozen=True)
class Source:
    """Where the section came from."""

    path: str | None
    sha256: str | None
    shape: tuple[int, ...]
    pixel_size_um: float | None
    pixel_size_from: str
    cropped_bottom_px: int = 0


@dataclass(frozen=True, eq=False)
class PhaseFraction:
    """One phase of the section with its measured fraction and 95 % interval.

    ``inside_particles`` is the part of the whole image occupied by this phase inside
    particles of another phase (e.g. the cores of hollow spheres), None when no phase
    forms particles. ``fitted`` holds the back-calculation when one of the phase's
    properties was given as "fit" (the material then carries the fitted value).
    """

    label: int
    name: str
    material: Material
    fraction: float
    fraction_ci95: tuple[float, float]
    relative_accuracy_pct: float | None = None
    fields: int = 0
    inside_particles: float | None = None
    fitted: FitResult | None = None


@dataclass(frozen=True, eq=False)
class SchemeTable:
    """Bounds and mean-field estimates of one dimension (2: cylinders, 3: spheres)."""

    estimates: Mapping[str, Estimate]
    bounds: Mapping[str, Bound]


@dataclass(frozen=True, eq=False)
class AtTemperature:
    """The section's effective properties solved with the phase properties at one
    temperature (°C), and the thermal-shock indices from them."""

    temperature_C: float
    effective: Effective
    shock: ShockIndices | None = None


@dataclass(frozen=True, eq=False)
class Verification:
    """The effective properties solved again with the second method (``[solve] verify``).

    Both solvers discretize the same equations, so they must agree to solver tolerance.
    ``differences`` holds, per property, the largest entry of |A − B| over the largest
    entry of |A| for the effective tensor; ``crop`` is the shape solved by both methods
    when the whole map was too large for the assembled solver (None: the whole map, the
    main solve compared as it is).
    """

    method: str
    second_method: str
    differences: Mapping[str, float]
    max_relative_difference: float
    tolerance: float
    seconds: float
    crop: tuple[int, ...] | None = None


@dataclass(frozen=True, eq=False)
class Result:
    """One analysed section (or volume).

    Attributes
    ----------
    source : Source
    phases : tuple of PhaseFraction
    version : str
        polisect version that made it.
    effective : Effective or None
        The section solved as it is (2D: a prismatic structure; 3D: the volume).
    effective_3d : Estimate3DRecord or None
        The 3D estimate from the section's statistics.
    effective_by_temperature : tuple of AtTemperature
        The section solved at each of ``[solve] temperatures_C``.
    effective_3d_by_temperature : tuple of AtTemperature
        The 3D estimate's volumes solved at each of ``[solve] temperatures_C`` (scalars
        are `Spread` over the realizations; no shock indices).
    particles : mapping phase name → ParticleSummary or VolumeParticleSummary, or None
    schemes, schemes_3d : SchemeTable or None
        Bounds and estimates for the model solved, and (2D sections) for spheres.
    shock : ShockIndices or None
    windows : WindowRecord or None
    correlation : mapping phase name → Correlation, or None
    measured : tuple of MeasuredComparison
        The lab's ``[[measured]]`` values beside the computed ones.
    uncertainty : mapping headline column → Budget
        The error budget of every headline number (``[uncertainty]``).
    segmentation : SegmentationSummary or None
        How a micrograph became the phase map (corrections, confidence, the fractions
        under a stated boundary movement); None for label and palette images.
    warnings, notes : tuple of str
    verification : Verification or None
        The second solver's agreement (``[solve] verify``).
    timings_s : mapping stage → seconds
    config_toml : str
        The run configuration as given.
    created : str
        ISO time stamp.
    """

    source: Source
    phases: tuple[PhaseFraction, ...]
    version: str
    config_toml: str = ""
    effective: Effective | None = None
    effective_3d: Estimate3DRecord | None = None
    effective_by_temperature: tuple[AtTemperature, ...] = ()
    particles: Mapping[str, ParticleSummary | VolumeParticleSummary] | None = None
    schemes: SchemeTable | None = None
    schemes_3d: SchemeTable | None = None
    shock: ShockIndices | None = None
    windows: WindowRecord | None = None
    correlation: Mapping[str, Correlation] | None = None
    measured: tuple[MeasuredComparison, ...] = ()
    uncertainty: Mapping[str, Budget] = field(default_factory=dict)
    segmentation: SegmentationSummary | None = None
    warnings: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    timings_s: Mapping[str, float] = field(default_factory=dict)
    created: str = ""
    verification: Verification | None = None
    effective_3d_by_temperature: tuple[AtTemperature, ...] = ()

    def phase(self, name: str) -> PhaseFraction:
        """The phase called *name* (KeyError when there is none)."""
        for p in self.phases:
            if p.name == name:
                return p
        raise KeyError(name)
