"""Memory guard: the heavy steps of an analysis estimated and checked against the free
memory before any of them starts (`polisect.core.memory` holds the measuring and the check)."""

from __future__ import annotations

import numpy as np

from ..core import memory

#: Peak bytes per unknown of the Fourier-preconditioned solvers (fft, ms), fields included:
#: 2D conduction 1024² 266 MB, 3D stiffness 128³ 815 MB in the bench table.
FFT_BYTES_PER_DOF = 130


def solve_bytes(shape: tuple[int, ...], prop: str, method: str = "auto",
                fields: bool = True) -> float:
    """Peak bytes of one property's solve on a pixel/voxel map of *shape*.

    Parameters
    ----------
    shape : tuple of int
        2D or 3D map shape.
    prop : {'conductivity', 'elasticity', 'expansion'}
    method : {'auto', 'fft', 'fe', 'ms'}
    fields : bool
        Whether the local fields of a load case are kept for the maps.
    """
    from ..properties.solve.fe import memory_estimate

    n, dim = float(np.prod(shape)), len(shape)
    ncomp = 1 if prop == "conductivity" else dim
    if method == "fe":
        peak = memory_estimate(tuple(shape), ncomp)
    elif method == "ms":
        peak = FFT_BYTES_PER_DOF * n * (dim if ncomp == 1 else dim * (dim + 1) // 2)
    else:
        peak = FFT_BYTES_PER_DOF * n * ncomp
    nv = dim if ncomp == 1 else dim * (dim + 1) // 2
    return peak + (2 * 8.0 * n * nv if fields else 0.0)


def starts_bytes(shape: tuple[int, ...], properties) -> float:
    """Bytes of the solved fluctuations kept as warm starts (float32, every load case and
    component: 2D conduction 2 values a pixel, generalized plane strain 4 × 2 + 2
    antiplane, 3D conduction 3, 3D stiffness 6 × 3)."""
    n, dim = float(np.prod(shape)), len(shape)
    values = 0
    if "conductivity" in properties:
        values += dim
    if "elasticity" in properties or "expansion" in properties:
        values += 10 if dim == 2 else 18
    return 4.0 * n * values


def check_solves(shape: tuple[int, ...], properties, method: str = "auto",
                 fields: bool = True, keep_starts=False) -> None:
    """Refuse before solving when the largest of the solves of *properties* on a map of
    *shape* does not fit (the solves run one after another), with the fluctuations kept
    as warm starts (temperatures, the budget's segmentation term): of every solve when
    *keep_starts* is True, of the properties it names when it is a collection (as
    `polisect.properties.effective.solve_effective`'s ``keep_fluctuations``)."""
    if not properties:
        return
    need = max(solve_bytes(shape, p, method, fields) for p in properties)
    if keep_starts:
        need += starts_bytes(shape, [p for p in properties
                                     if keep_starts is True or p in keep_starts])
    size = "×".join(str(s) for s in shape)
    advice = ("use [solve] method = \"fft\" (it needs far less memory)" if method == "fe" else
              "crop the image or downsample it, or ask for fewer [solve] properties")
    memory.check_fits(need, f"solving {'/'.join(properties)} on {size} pixels", advice)


def estimate_3d_bytes(voxels: int, properties, method: str = "auto") -> float:
    """Peak bytes of one realization of the 3D estimate: the reconstruction's cube (labels,
    a Gaussian field and its transform) and the largest solve on it."""
    shape = (voxels,) * 3
    solve = max((solve_bytes(shape, p, method, fields=False) for p in properties), default=0.0)
    return float(voxels) ** 3 * 40.0 + solve


def check_estimate_3d(voxels: int, properties, method: str = "auto") -> None:
    """Refuse the 3D estimate before any work when one realization does not fit."""
    fit = voxels
    available = memory.available_bytes()
    while fit > 16 and available is not None and \
            estimate_3d_bytes(fit, properties, method) > available:
        fit = int(fit * 0.9)
    memory.check_fits(estimate_3d_bytes(voxels, properties, method),
               f"the 3D estimate ({voxels}³ voxels per realization)",
               f"lower --voxels ([solve] voxels) to {fit} or less, or ask for fewer properties",
               available)


def check_analysis(shape: tuple[int, ...], properties=(), method: str = "auto",
                   fields: bool = True, voxels: int | None = None,
                   keep_starts=False) -> None:
    """Every check of an analysis in one call, before any work on the image read: the phase
    map and measurements, each solve on the map of *shape*, and with *voxels* the 3D
    estimate; *keep_starts*: the solves' fluctuations kept as warm starts (see
    `check_solves`). Raises
    `InputError` with the figure and what to change."""
    size = "×".join(str(s) for s in shape)
    memory.check_fits(memory.phasemap_bytes(int(np.prod(shape))),
                      f"segmenting the {size}-pixel image",
                      "crop a region of interest or downsample it")
    check_solves(shape, tuple(properties), method, fields, keep_starts)
    if voxels is not None:
        check_estimate_3d(voxels, tuple(properties), method)
