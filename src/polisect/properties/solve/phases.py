"""From a label image and a ``{label: Material}`` mapping to per-phase tensors.

Conventions: axes of the label array are x, y (, z). A 2D image is the section plane
x–y; z is the out-of-plane (axial) direction. Voigt order with engineering shear strains:
2D (xx, yy, xy), 3D (xx, yy, zz, yz, xz, xy).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ...core import tensors
from ...core.errors import InputError
from ...core.materials import Material

PLANE_MODES = ("plane-strain", "plane-stress", "generalized-plane-strain")
IN_PLANE = [0, 1, 5]
ANTIPLANE = [4, 3]        # (xz, yz): the x and y gradients of the axial displacement
COUPLING = [3, 4]         # yz, xz


@dataclass(frozen=True, eq=False)
class PhaseImage:
    """Compact phase indices and the materials in index order."""

    labels: np.ndarray
    keys: tuple
    materials: tuple

    @property
    def dim(self) -> int:
        return self.labels.ndim


def phase_image(labels, materials: Mapping) -> PhaseImage:
    """Check the label image and map its labels to compact indices 0 … P−1.

    Raises
    ------
    InputError
        When *labels* is not a 2D/3D integer array of at least 2 pixels per axis, or a
        label has no material.
    """
    labels = np.asarray(labels)
    if labels.ndim not in (2, 3):
        raise InputError(f"the label image must be 2D or 3D, got {labels.ndim} dimensions")
    if not np.issubdtype(labels.dtype, np.integer):
        raise InputError(f"the label image must hold integer phase labels, got {labels.dtype}")
    if min(labels.shape) < 2:
        raise InputError(f"the label image {labels.shape} needs at least 2 pixels per axis")
    values, compact = np.unique(labels, return_inverse=True)
    missing = [int(v) for v in values if int(v) not in materials]
    if missing:
        raise InputError(f"labels {missing} in the image have no material; give a Material "
                         f"for every label (known: {sorted(materials)})")
    found = tuple(int(v) for v in values)
    for key in found:
        if not isinstance(materials[key], Material):
            raise InputError(f"the entry for label {key} is not a Material")
    return PhaseImage(compact.reshape(labels.shape).astype(np.int32), found,
                      tuple(materials[k] for k in found))


def check_plane(plane: str | None, dim: int) -> str | None:
    """Validate the plane mode; None in 3D."""
    if dim == 3:
        return None
    if plane not in PLANE_MODES:
        raise InputError(f"plane {plane!r} is not known; use one of {', '.join(PLANE_MODES)}")
    return plane


def conductivity_tensors(image: PhaseImage) -> np.ndarray:
    """(P, d, d) conductivity of each phase (a 3×3 tensor on a 2D image: its x–y block)."""
    dim = image.dim
    out = []
    for key, m in zip(image.keys, image.materials):
        m.require("conductivity")
        k = np.asarray(m.conductivity, dtype=float)
        if k.ndim == 0:
            out.append(float(k) * np.eye(dim))
        elif k.shape == (3, 3) or (k.shape == (2, 2) and dim == 2):
            out.append(k[:dim, :dim])
        else:
            raise InputError(f"label {key}: a conductivity tensor must be {dim}x{dim} (or 3x3) "
                             f"for a {dim}D image, got shape {k.shape}")
    return np.array(out)


def _expansion(key, m: Material, size: int) -> np.ndarray:
    if m.expansion is None:
        if m.is_pore:
            return np.zeros((size, size))
        m.require("expansion")
    a = np.asarray(m.expansion, dtype=float)
    if a.ndim == 0:
        return float(a) * np.eye(size)
    if a.shape != (size, size):
        raise InputError(f"label {key}: the expansion tensor must be {size}x{size} here, "
                         f"got shape {a.shape}")
    if not np.allclose(a, a.T):
        raise InputError(f"label {key}: the expansion tensor must be symmetric")
    return a


def _stiffness6(key, m: Material) -> np.ndarray | None:
    """3D Voigt stiffness, or None when the material gives only a 3×3 in-plane matrix."""
    if m.stiffness is not None:
        return m.stiffness if m.stiffness.shape == (6, 6) else None
    if m.is_pore:
        return np.zeros((6, 6))
    m.require("youngs_modulus", "poisson_ratio")
    return tensors.isotropic_stiffness(m.youngs_modulus, m.poisson_ratio)


@dataclass(frozen=True, eq=False)
class ElasticPhases:
    """Per-phase elastic data of one physics mode.

    Attributes
    ----------
    stiffness : (P, nv, nv) ndarray
        Voigt stiffness of the solved problem (3×3 in-plane for 2D modes).
    thermal_stress : (P, nv) ndarray or None
        ``β = C α`` (reduced for the mode): the stress relieved per kelvin.
    axial : (P, 3) ndarray or None
        Plane strain and generalized plane strain: ``C[zz, in-plane]``, which gives the
        out-of-plane stress σ_zz of an in-plane strain (None when a phase gives only a
        3×3 stiffness).
    axial_stiffness : (P,) ndarray or None
        Generalized plane strain: ``C_zzzz``.
    axial_thermal_stress : (P,) ndarray or None
        Generalized plane strain: ``(C α)_zz``.
    antiplane : (P, 2, 2) ndarray or None
        Generalized plane strain: shear moduli of the axial (antiplane) problem in the
        (xz, yz) order, the conductivity-like tensor of the scalar problem.
    """

    stiffness: np.ndarray
    thermal_stress: np.ndarray | None = None
    axial: np.ndarray | None = None
    axial_stiffness: np.ndarray | None = None
    axial_thermal_stress: np.ndarray | None = None
    antiplane: np.ndarray | None = None


def elastic_phases(image: PhaseImage, plane: str | None, thermal: bool) -> ElasticPhases:
    """Stiffness (and thermal stress) of every phase for the 3D problem or a plane mode.

    Raises
    ------
    InputError
        Missing properties; a 3×3 stiffness outside plane strain/stress; in generalized
        plane strain, a phase that couples in-plane and antiplane deformation.
    """
    C, beta, axial, czz, bzz, anti = [], [], [], [], [], []
    for key, m in zip(image.keys, image.materials):
        C6 = _stiffness6(key, m)
        if C6 is None:
            if plane not in ("plane-strain", "plane-stress"):
                raise InputError(f"label {key}: a 3x3 stiffness is an in-plane matrix; it "
                                 "serves plane-strain or plane-stress only, give a 6x6 "
                                 "stiffness for 3D or generalized plane strain")
            C.append(m.stiffness)
            if thermal:
                beta.append(m.stiffness @ tensors.strain_to_voigt(_expansion(key, m, 2)))
            continue
        alpha = tensors.strain_to_voigt(_expansion(key, m, 3)) if thermal else np.zeros(6)
        b6 = C6 @ alpha
        if plane is None:
            C.append(C6)
            beta.append(b6)
        elif plane == "plane-stress":
            C.append(tensors.plane_stiffness(C6, "plane-stress"))
            out = [2, 3, 4]
            coupling = C6[np.ix_(IN_PLANE, out)]
            beta.append(b6[IN_PLANE] - coupling @ np.linalg.pinv(C6[np.ix_(out, out)]) @ b6[out])
        else:
            C.append(C6[np.ix_(IN_PLANE, IN_PLANE)])
            beta.append(b6[IN_PLANE])
        axial.append(C6[2, IN_PLANE])
        if plane == "generalized-plane-strain":
            rows = [0, 1, 2, 5]
            if np.any(C6[np.ix_(rows, COUPLING)] != 0.0) or np.any(alpha[COUPLING] != 0.0):
                raise InputError(f"label {key}: generalized plane strain needs the section "
                                 "plane to be a symmetry plane of every phase (no coupling "
                                 "between in-plane and axial shear); solve the 3D image instead")
            czz.append(C6[2, 2])
            bzz.append(b6[2])
            anti.append(C6[np.ix_(ANTIPLANE, ANTIPLANE)])
    gps = plane == "generalized-plane-strain"
    has_axial = plane in ("plane-strain", "generalized-plane-strain") and \
        len(axial) == len(image.keys)
    return ElasticPhases(np.array(C), np.array(beta) if thermal else None,
                         np.array(axial) if has_axial else None,
                         np.array(czz) if gps else None,
                         np.array(bzz) if gps and thermal else None,
                         np.array(anti) if gps else None)
