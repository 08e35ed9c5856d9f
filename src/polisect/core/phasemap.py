"""`PhaseMap`: integer labels (2D or 3D) with a voxel size and a table of phases.

Examples
--------
>>> import numpy as np
>>> from polisect import Material
>>> from polisect.core.phasemap import Phase, PhaseMap
>>> labels = np.zeros((4, 4), dtype=np.int32); labels[:, :1] = 1
>>> pm = PhaseMap(labels, (Phase(0, "matrix", Material(conductivity=1.0)),
...                        Phase(1, "fibre", Material(conductivity=5.0))), voxel_size_um=0.5)
>>> pm.fractions()
{0: 0.75, 1: 0.25}
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass, field

import numpy as np

from .atomic import atomic_write
from .errors import InputError
from .materials import Material


@dataclass(frozen=True)
class Phase:
    """One row of the phase table.

    Parameters
    ----------
    label : int
        Integer value of this phase in the label array.
    name : str
        Name shown in results (e.g. ``"SiC"``, ``"pore"``).
    material : Material
        Its properties.
    particles : bool or None
        Whether particle statistics are wanted for it; ``None`` lets the analysis decide
        (every phase but the one with the largest fraction).
    """

    label: int
    name: str
    material: Material
    particles: bool | None = None


@dataclass(frozen=True, eq=False)
class PhaseMap:
    """A segmented section (2D) or volume (3D).

    Parameters
    ----------
    labels : ndarray of int
        Phase label of every pixel, shape (ny, nx) or (nz, ny, nx).
    phases : tuple of Phase
        Every label present in *labels* must appear here.
    voxel_size_um : float or None
        Edge of one pixel or voxel in micrometres; ``None`` when unknown.
    """

    labels: np.ndarray
    phases: tuple[Phase, ...]
    voxel_size_um: float | None = None
    _counts: dict = field(default=None, repr=False, compare=False)

    def __post_init__(self):
        labels = np.asarray(self.labels)
        if labels.ndim not in (2, 3):
            raise InputError(f"a phase map must be 2D or 3D, got an array of shape {labels.shape}")
        if min(labels.shape) < 2:
            raise InputError(f"a phase map of shape {labels.shape} is too small to analyse; "
                             "use an image at least a few pixels wide in every direction")
        if not np.issubdtype(labels.dtype, np.integer):
            raise InputError("phase labels must be integers")
        object.__setattr__(self, "labels", labels)
        object.__setattr__(self, "phases", tuple(self.phases))
        known = {p.label for p in self.phases}
        if len(known) != len(self.phases):
            raise InputError("two [[phase]] entries share one label; give each phase its own label")
        present, counts = np.unique(labels, return_counts=True)
        missing = sorted(set(present.tolist()) - known)
        if missing:
            raise InputError(f"the phase map holds labels {missing} that no [[phase]] entry "
                             f"describes (described: {sorted(known)}); add a [[phase]] with "
                             "that label or correct the label image")
        object.__setattr__(self, "_counts", dict(zip(present.tolist(), counts.tolist())))
        if self.voxel_size_um is not None and not (self.voxel_size_um > 0):
            raise InputError(f"pixel size {self.voxel_size_um} µm must be positive")

    @property
    def ndim(self) -> int:
        return self.labels.ndim

    @property
    def shape(self) -> tuple[int, ...]:
        return self.labels.shape

    @property
    def materials(self) -> dict[int, Material]:
        """label → Material, the form the solvers take."""
        return {p.label: p.material for p in self.phases}

    def phase(self, key: int | str) -> Phase:
        """The phase with this label or name."""
        for p in self.phases:
            if p.label == key or p.name == key:
                return p
        raise KeyError(key)

    def fractions(self) -> dict[int, float]:
        """Area (2D) or volume (3D) fraction of every phase, label → fraction."""
        n = self.labels.size
        return {p.label: self._counts.get(p.label, 0) / n for p in self.phases}

    def window(self, index: tuple[slice, ...]) -> "PhaseMap":
        """The same phase table on a sub-window ``labels[index]`` (a view, not a copy)."""
        return PhaseMap(self.labels[index], self.phases, self.voxel_size_um)

    def save(self, path: str | os.PathLike) -> None:
        """Write the labels as a TIFF with the phase table in its description (atomic)."""
        import tifffile

        meta = {"polisect": "phasemap/1", "voxel_size_um": self.voxel_size_um,
                "phases": [{"label": p.label, "name": p.name, "material": p.material.to_dict(),
                            "particles": p.particles} for p in self.phases]}
        kwargs = {}
        if self.voxel_size_um:
            per_cm = 1e4 / self.voxel_size_um
            kwargs = {"resolution": (per_cm, per_cm), "resolutionunit": "CENTIMETER"}
        data = self.labels.astype(np.uint16 if self.labels.max() < 65536 else np.int32)
        atomic_write(path, lambda tmp: tifffile.imwrite(tmp, data, description=json.dumps(meta),
                                                          metadata=None, **kwargs))

    @classmethod
    def load(cls, path: str | os.PathLike) -> "PhaseMap":
        """Read a phase map written by `save`."""
        import tifffile

        with tifffile.TiffFile(path) as tif:
            labels = tif.asarray()
            desc = tif.pages[0].description
        try:
            meta = json.loads(desc)
            assert meta.get("polisect") == "phasemap/1"
        except (ValueError, AssertionError):
            raise InputError(f"{path}: not a polisect phase map (no phase table in the TIFF "
                             "description); read it as a label image with [image] kind = 'labels'")
        phases = []
        for p in meta["phases"]:
            m = dict(p["material"])
            name = m.pop("name", p["name"])
            phases.append(Phase(p["label"], p["name"], Material(name=name, **m), p["particles"]))
        return cls(labels.astype(np.int32), tuple(phases), meta["voxel_size_um"])
