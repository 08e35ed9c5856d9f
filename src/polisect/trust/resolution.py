"""Resolution warnings: particles too small for their pixels, and narrow gaps between
high-contrast particles.

Two features of a phase map make the pixel-element solution unreliable whatever the
solver does:

* **small particles** — a particle fewer than `MIN_PIXELS_ACROSS` pixels across is a
  coarse staircase; the first-order discretization error grows as it shrinks;
* **narrow gaps** — two particles whose property differs strongly from the matrix
  (conducting or stiff particles, or pores) separated by less than `MIN_GAP_PIXELS`
  pixels: the gap is drawn as a contact or as a one-pixel ligament, and the effective
  property can be off by a large factor (spheres at contrast 10⁴ and f = 0.5, true gap
  0.49 voxel, voxelised at 32³: 200× too conductive; issue 16).

Gap widths come from the Euclidean distance transform of the space between the particles
of one group (all phases above the matrix by `HIGH_CONTRAST`, or all below it): for two
neighbouring pixels whose nearest particles are distinct, the gap is the sum of their
distances to those particles (0 for particles that touch, 1 for a one-pixel gap). Touching
particles are told apart by the distance-transform watershed of
`polisect.measure.particles.label_particles`. The map is periodic: it is wrapped around by
`MARGIN` pixels so that gaps across its edges are seen.

References
----------
.. [1] Maurer, C. R., Qi, R. & Raghavan, V. (2003). A linear time algorithm for computing
   exact Euclidean distance transforms of binary images in arbitrary dimensions. IEEE
   Trans. Pattern Anal. Mach. Intell. 25, 265–270 (the distance transform used by scipy).
.. [2] Beucher, S. & Lantuéjoul, C. (1979). Use of watersheds in contour detection.
   International Workshop on Image Processing, Rennes.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np
from scipy import ndimage as ndi

from ..core.errors import InputError
from ..measure.particles import label_particles

MIN_PIXELS_ACROSS = 10
"""A particle narrower than this (inscribed diameter, pixels) draws a warning. Common
practice (no source): spheres 27 voxels across at contrast 10⁴ are still 5 % off (issue 16),
so below 10 pixels the error of the particle's own contribution is tens of percent."""

MIN_GAP_PIXELS = 2.0
"""Gaps narrower than this between high-contrast particles draw a warning (issue 16)."""

HIGH_CONTRAST = 10.0
"""A phase whose property is at least this factor above or below the matrix's is
high-contrast."""

MARGIN = 16
"""Pixels of periodic wrap around the map (capped at the map's side): enough to see every
gap across an edge and the dip of a contact neck below the particles on both sides."""


@dataclass(frozen=True)
class ResolutionWarning:
    """One resolution problem and what to do about it.

    Attributes
    ----------
    kind : str
        'small-particles' or 'narrow-gaps'.
    phases : tuple of int
        Labels concerned.
    count : int
        Particles narrower than the limit, or gaps narrower than the limit.
    of : int
        Particles of those phases in the map.
    extreme : float
        Narrowest particle or gap, pixels.
    share : float
        'small-particles': share of the phase's area in them; 'narrow-gaps': share of the
        particles that have such a gap.
    message, advice : str
    """

    kind: str
    phases: tuple[int, ...]
    count: int
    of: int
    extreme: float
    share: float
    message: str
    advice: str


@dataclass(frozen=True, eq=False)
class ResolutionCheck:
    """Resolution of a phase map for the pixel-element solvers.

    Attributes
    ----------
    warnings : tuple of ResolutionWarning
    matrix : int
        Label of the matrix phase.
    widths : mapping label → ndarray
        Inscribed diameter, pixels, of every particle of each non-matrix phase.
    gaps : mapping tuple of labels → ndarray
        Width, pixels, of the narrowest gap between each pair of neighbouring particles of
        a high-contrast group (only pairs closer than `MIN_GAP_PIXELS` + 2 are listed).
    min_across, min_gap : float
        The limits used.
    """

    warnings: tuple[ResolutionWarning, ...]
    matrix: int
    widths: Mapping[int, np.ndarray]
    gaps: Mapping[tuple[int, ...], np.ndarray]
    min_across: float
    min_gap: float


def resolution_check(labels, values: Mapping[int, float] | None = None, *,
                     matrix: int | None = None, names: Mapping[int, str] | None = None,
                     min_across: float = MIN_PIXELS_ACROSS, min_gap: float = MIN_GAP_PIXELS,
                     high_contrast: float = HIGH_CONTRAST,
                     pixel_size_um: float | None = None) -> ResolutionCheck:
    """Warn about particles too small and gaps too narrow for the pixel size.

    Parameters
    ----------
    labels : (nx, ny) or (nx, ny, nz) int array_like
        Periodic phase map.
    values : mapping label → float, optional
        The property whose contrast matters (conductivity or Young's modulus; 0 for a
        pore). Without it every non-matrix phase counts as high-contrast.
    matrix : int, optional
        The matrix label; the most abundant phase when omitted.
    names : mapping label → str, optional
        Phase names for the messages.
    min_across : float
        Smallest inscribed diameter, pixels, a particle should have.
    min_gap : float
        Smallest gap, pixels, between high-contrast particles.
    high_contrast : float
        Property ratio (either way) that makes a phase high-contrast.
    pixel_size_um : float, optional
        Pixel size, for lengths in µm in the messages.

    Returns
    -------
    ResolutionCheck

    References
    ----------
    .. [1] Maurer, C. R., Qi, R. & Raghavan, V. (2003). IEEE Trans. Pattern Anal. Mach.
       Intell. 25, 265–270.
    """
    labels = np.asarray(labels)
    if labels.ndim not in (2, 3) or not np.issubdtype(labels.dtype, np.integer):
        raise InputError("the resolution check needs a 2D or 3D integer label map")
    if not (min_across > 0 and min_gap > 0 and high_contrast > 1):
        raise InputError("min_across and min_gap must be positive and high_contrast above 1")
    present = [int(v) for v in np.unique(labels)]
    if matrix is None:
        matrix = int(present[int(np.argmax([np.sum(labels == v) for v in present]))])
    elif matrix not in present:
        raise InputError(f"matrix label {matrix} is not in the map (labels {present})")
    if values is not None:
        missing = [v for v in present if v not in values]
        if missing:
            raise InputError(f"labels {missing} have no property value; give one per label")
    names = dict(names or {})
    name = lambda v: names.get(v, f"phase {v}")
    wrap = tuple(min(n, MARGIN) for n in labels.shape)
    padded = np.pad(labels, [(w, w) for w in wrap], mode="wrap")
    centre = tuple(slice(w, w + n) for w, n in zip(wrap, labels.shape))
    warnings, widths, gaps = [], {}, {}
    particles = {v: label_particles(padded == v, split_touching=True)
                 for v in present if v != matrix}
    for phase, ids in particles.items():
        across, area, inside = _widths(ids, padded == phase, centre)
        widths[phase] = across[inside]
        small = inside & (across < min_across)
        if np.any(small):
            share = float(area[small].sum() / max(area[inside].sum(), 1))
            warnings.append(_small_warning(phase, name, small, inside, across, share,
                                           min_across, pixel_size_um))
    for group in _groups(present, matrix, values, high_contrast):
        ids = np.zeros(padded.shape, dtype=np.int64)
        for phase in group:
            own = particles[phase]
            ids[own > 0] = own[own > 0] + ids.max()
        widths_pair, narrow_ids, n_particles = _gaps(ids, centre, min_gap)
        gaps[group] = widths_pair
        narrow = widths_pair[widths_pair < min_gap]
        if narrow.size:
            warnings.append(_gap_warning(group, name, narrow, narrow_ids, n_particles, min_gap,
                                         values, matrix, pixel_size_um))
    return ResolutionCheck(tuple(warnings), matrix, widths, gaps, float(min_across),
                           float(min_gap))


def _groups(present, matrix, values, high_contrast) -> list[tuple[int, ...]]:
    """High-contrast phases, grouped by side: above the matrix, below it."""
    others = [v for v in present if v != matrix]
    if values is None:
        return [tuple(others)] if others else []
    m = float(values[matrix])
    above = tuple(v for v in others if (m == 0 and values[v] > 0) or
                  (m > 0 and values[v] >= high_contrast * m))
    below = tuple(v for v in others if m > 0 and values[v] <= m / high_contrast)
    return [g for g in (above, below) if g]


def _widths(ids: np.ndarray, mask: np.ndarray, centre: tuple[slice, ...]):
    """Inscribed diameter 2·max(EDT) − 1, area, and whether the centroid is in the
    original cell, for every particle of *ids*."""
    n = int(ids.max())
    if n == 0:
        return np.zeros(0), np.zeros(0), np.zeros(0, dtype=bool)
    dist = ndi.distance_transform_edt(mask)
    index = np.arange(1, n + 1)
    across = 2.0 * np.asarray(ndi.maximum(dist, ids, index)) - 1.0
    area = np.asarray(ndi.sum(np.ones(ids.shape), ids, index))
    inside = _inside(ids, index, centre)
    return across, area, inside


def _inside(ids: np.ndarray, index: np.ndarray, centre: tuple[slice, ...]) -> np.ndarray:
    """Particles whose centroid lies in the original cell (each counted once)."""
    com = np.atleast_2d(np.asarray(ndi.center_of_mass(np.ones(ids.shape), ids, index)))
    inside = np.ones(len(index), dtype=bool)
    for axis, s in enumerate(centre):
        inside &= (com[:, axis] >= s.start - 0.5) & (com[:, axis] < s.stop - 0.5)
    return inside


def _gaps(ids: np.ndarray, centre: tuple[slice, ...], min_gap: float):
    """Narrowest gap of every pair of neighbouring particles seen from the original cell.

    Returns the gap widths (pairs closer than min_gap + 2), the particle ids with a gap
    below *min_gap*, and the number of particles in the cell.
    """
    n = int(ids.max())
    if n < 2:
        return np.zeros(0), np.zeros(0, dtype=np.int64), int(n)
    dist, nearest = ndi.distance_transform_edt(ids == 0, return_indices=True)
    owner = ids[tuple(nearest)]
    in_centre = np.zeros(ids.shape, dtype=bool)
    in_centre[centre] = True
    best: dict[tuple[int, int], float] = {}
    for axis in range(ids.ndim):
        a = [slice(None)] * ids.ndim
        b = [slice(None)] * ids.ndim
        a[axis], b[axis] = slice(0, -1), slice(1, None)
        a, b = tuple(a), tuple(b)
        width = dist[a] + dist[b]
        keep = (owner[a] != owner[b]) & (width < min_gap + 2.0) & in_centre[a]
        pairs = np.sort(np.stack([owner[a][keep], owner[b][keep]]), axis=0)
        for (i, j), w in zip(pairs.T, width[keep]):
            key = (int(i), int(j))
            if w < best.get(key, np.inf):
                best[key] = float(w)
    widths = np.array(list(best.values()))
    narrow = sorted({i for key, w in best.items() if w < min_gap for i in key})
    inside = _inside(ids, np.arange(1, n + 1), centre)
    return widths, np.array(narrow, dtype=np.int64), int(inside.sum())


def _length(px: float, pixel_size_um: float | None) -> str:
    text = f"{px:.3g} px"
    return text if pixel_size_um is None else f"{text} ({px * pixel_size_um:.3g} µm)"


def _small_warning(phase, name, small, inside, across, share, min_across, pixel_size_um):
    count, of = int(small.sum()), int(inside.sum())
    smallest = float(across[small].min())
    return ResolutionWarning(
        "small-particles", (phase,), count, of, smallest, share,
        f"{count} of {of} particles of {name(phase)} ({share:.0%} of its area) are narrower "
        f"than {min_across:g} pixels across (smallest {_length(smallest, pixel_size_um)}): "
        "their shape is a coarse staircase and the effective properties carry a "
        "discretization error that grows as they shrink.",
        "Image at a higher magnification (smaller pixels), so that these particles span at "
        f"least {min_across:g} pixels, and compare with the discretization estimate.")


def _gap_warning(group, name, narrow, narrow_ids, n_particles, min_gap, values, matrix,
                 pixel_size_um):
    phases = " and ".join(name(v) for v in group)
    side = "" if values is None else (
        " (much more conducting or stiffer than the matrix)"
        if values[group[0]] > values[matrix] else " (much less conducting or stiff than the "
        "matrix, e.g. pores)")
    share = min(1.0, len(narrow_ids) / max(n_particles, 1))
    return ResolutionWarning(
        "narrow-gaps", tuple(group), int(narrow.size), int(n_particles), float(narrow.min()),
        share,
        f"{narrow.size} gaps between particles of {phases}{side} are narrower than "
        f"{min_gap:g} pixels (narrowest {_length(float(narrow.min()), pixel_size_um)}; 0 means "
        "the particles touch in the map). Such a gap is drawn as a contact or a one-pixel "
        "ligament, and the effective property can be wrong by a large factor (200× for "
        "touching-voxel spheres at contrast 10⁴).",
        "Image at a higher magnification so that the gaps span at least "
        f"{min_gap:g} pixels, or check on the sample whether these particles really touch; "
        "the discretization estimate does not capture this error.")
