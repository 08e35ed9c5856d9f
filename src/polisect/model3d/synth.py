"""Synthetic periodic microstructures and SEM-like renderings of them.

Every structure here is periodic (it tiles the plane or space without seams), so the
same arrays serve the periodic solvers, the morphology tests and the demo images.

* `rsa_discs`, `rsa_spheres`: random sequential addition of non-overlapping discs
  (2D) or spheres (3D), optionally with a size distribution, a minimum gap and a
  hollow core; `compose` places several such families (particles, pores, hollow
  shells) into one label array.
* `laminate`, `checkerboard`, `square_array_disc`: structures with known effective
  properties (see CHECKS.md).
* `render_sem`: a grey-level image of a label array (grey level per phase, blur,
  noise, optional instrument information band), as a backscattered-electron
  micrograph of a polished section would look.

Coordinates are pixel indices ``(row, column)`` (``(plane, row, column)`` in 3D); a
pixel belongs to a particle when the periodic distance from its index to the centre
is smaller than the radius.

Random sequential addition follows Widom (1966) and Feder (1980); see `compose`.

Examples
--------
>>> from polisect.model3d.synth import rsa_discs
>>> p = rsa_discs((128, 128), 0.3, 6.0, seed=1)
>>> round(float((p.labels == 1).mean()), 2)
0.3
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np
from scipy import ndimage

from ..core.errors import InputError
from .packing import SequentialAddition, paint, window

__all__ = ["Inclusions", "Packing", "compose", "rsa_discs", "rsa_spheres", "laminate",
           "checkerboard", "square_array_disc", "render_sem"]


@dataclass(frozen=True)
class Inclusions:
    """One family of particles for `compose`.

    Parameters
    ----------
    label : int
        Label written into the particles (the shell, for hollow particles).
    fraction : float
        Target area (2D) or volume (3D) fraction of the whole particles, cores
        included, 0 < fraction < 1.
    radius : float
        Mean outer radius, pixels.
    size_sd : float
        Standard deviation of the outer radius, pixels; radii are lognormal with mean
        *radius* and this standard deviation (0: all equal).
    hollow_ratio : float or None
        Inner/outer diameter ratio of hollow particles (0 < ratio < 1); ``None`` for
        solid particles.
    core_label : int or None
        Label of the cores of hollow particles (required when *hollow_ratio* is set).
    min_gap : float
        Smallest surface-to-surface distance to other particles, pixels. Between two
        families the mean of their gaps is kept.
    """

    label: int
    fraction: float
    radius: float
    size_sd: float = 0.0
    hollow_ratio: float | None = None
    core_label: int | None = None
    min_gap: float = 0.0

    def __post_init__(self):
        if not 0 < self.fraction < 1:
            raise InputError(f"particle fraction {self.fraction} must lie between 0 and 1")
        if not self.radius >= 0.5:
            raise InputError(f"particle radius {self.radius} px is too small; use at least 0.5 px")
        if self.size_sd < 0 or self.min_gap < 0:
            raise InputError("size_sd and min_gap must not be negative")
        if self.hollow_ratio is not None:
            if not 0 < self.hollow_ratio < 1:
                raise InputError(f"hollow_ratio {self.hollow_ratio} must lie between 0 and 1 "
                                 "(inner diameter / outer diameter)")
            if self.core_label is None:
                raise InputError("hollow particles need a core_label (the phase inside them)")


@dataclass(frozen=True, eq=False)
class Packing:
    """A label array with the particles that were placed in it.

    Attributes
    ----------
    labels : ndarray of int32
        Label of every pixel (voxel).
    centres : ndarray, shape (n, ndim)
        Particle centres in pixel coordinates, each in ``[0, shape)``.
    radii : ndarray, shape (n,)
        Outer radii, pixels.
    inner_radii : ndarray, shape (n,)
        Core radii of hollow particles, pixels (0 for solid particles).
    family : ndarray of int, shape (n,)
        Index into the `Inclusions` sequence each particle belongs to.
    """

    labels: np.ndarray
    centres: np.ndarray
    radii: np.ndarray
    inner_radii: np.ndarray
    family: np.ndarray


def _lognormal_radii(rng, mean, sd, n):
    if sd == 0:
        return np.full(n, float(mean))
    s2 = np.log1p((sd / mean) ** 2)
    return np.maximum(rng.lognormal(np.log(mean) - s2 / 2, np.sqrt(s2), n), 0.5)


def compose(shape: Sequence[int], inclusions: Sequence[Inclusions], *, seed,
            matrix_label: int = 0, max_radius_draws: int = 50) -> Packing:
    """Place several families of non-overlapping particles into a periodic matrix.

    Random sequential addition [1]_, [2]_: particles are added one by one at a position
    drawn uniformly from all positions where they overlap no earlier particle, and are
    never moved (`polisect.model3d.packing.SequentialAddition`, the package's one RSA
    engine). Families are placed in order of decreasing mean radius; a family is
    complete when the next particle would take its pixel count further from the target
    than it is (so the fraction is within half a particle of the target).

    Parameters
    ----------
    shape : sequence of int
        Shape of the periodic cell, 2D or 3D.
    inclusions : sequence of Inclusions
        The particle families.
    seed : int or numpy.random.Generator
        Random seed; the same seed gives the same structure.
    matrix_label : int
        Label of the pixels outside all particles.
    max_radius_draws : int
        How many radii to draw in a row for which no free position is found before
        concluding that the cell is jammed.

    Returns
    -------
    Packing

    Raises
    ------
    InputError
        If the targets cannot be reached (the cell jams before; random sequential
        addition of equal discs jams near an area fraction of 0.547, of equal spheres
        near a volume fraction of 0.38 [2]_).

    Notes
    -----
    Centres are continuous; two particles keep the mean of their families' gaps between
    their surfaces plus half a pixel diagonal, so that touching digitised particles stay
    rare (without splitting, touching particles count as one). Near jamming, when none of
    20 000 uniform positions keeps that margin, a position without it is taken; a radius
    for which no free position is found is drawn again, which favours small particles
    only near jamming.

    References
    ----------
    .. [1] Widom, B. (1966). J. Chem. Phys. 44, 3888-3894.
    .. [2] Feder, J. (1980). J. Theor. Biol. 87, 237-254.

    Examples
    --------
    >>> from polisect.model3d.synth import Inclusions, compose
    >>> p = compose((96, 96), [Inclusions(2, 0.2, 5.0), Inclusions(0, 0.02, 2.0)],
    ...             seed=3, matrix_label=1)
    >>> sorted(set(p.labels.ravel().tolist()))
    [0, 1, 2]
    """
    shape = tuple(int(n) for n in shape)
    if len(shape) not in (2, 3) or min(shape) < 2:
        raise InputError(f"a synthetic cell must be 2D or 3D with at least 2 pixels per side, "
                         f"got shape {shape}")
    inclusions = list(inclusions)
    total = sum(inc.fraction for inc in inclusions)
    if total >= 1:
        raise InputError(f"particle fractions add up to {total:.3f}; they must stay below 1")
    rng = np.random.default_rng(seed)
    ndim = len(shape)
    npix = int(np.prod(shape))
    labels = np.full(shape, matrix_label, dtype=np.int32)
    margin = np.sqrt(ndim) / 2
    reach_max = max((_max_radius(inc) + inc.min_gap / 2 for inc in inclusions), default=1.0)
    rsa = SequentialAddition(shape, seed=rng, max_reach=reach_max + margin)
    radii, inner, family = [], [], []
    order = sorted(range(len(inclusions)), key=lambda i: -inclusions[i].radius)
    for fam in order:
        inc = inclusions[fam]
        target = inc.fraction * npix
        placed = 0.0
        failures = 0
        r_cap = _max_radius(inc)
        while True:
            r = min(float(_lognormal_radii(rng, inc.radius, inc.size_sd, 1)[0]), r_cap)
            reach = r + inc.min_gap / 2
            centre, _ = rsa.find(reach + margin, _TRIALS)
            if centre is None:
                centre, _ = rsa.find(reach, _TRIALS)
            if centre is None:
                area = np.pi * r * r if ndim == 2 else 4.0 / 3.0 * np.pi * r ** 3
                if placed + area / 2 >= target:
                    break
                failures += 1
                if failures >= max_radius_draws:
                    raise InputError(
                        f"the cell jammed at a fraction of {placed / npix:.3f} for particles "
                        f"of label {inc.label} (target {inc.fraction}); lower the fraction, "
                        "the gap or the radius, or enlarge the cell")
                continue
            failures = 0
            index, dist = window(centre, r, shape)
            count = np.count_nonzero(dist < r)
            if placed + count / 2 >= target:
                break
            placed += count
            r_in = r * inc.hollow_ratio if inc.hollow_ratio is not None else 0.0
            paint(labels, index, dist, r, inc.label, r_in, inc.core_label or 0)
            rsa.add(centre, reach)
            radii.append(r)
            inner.append(r_in)
            family.append(fam)
    return Packing(labels, rsa.centres.copy(), np.array(radii, float),
                   np.array(inner, float), np.array(family, int))


#: Uniform positions tried for one particle before its radius counts as finding no place.
_TRIALS = 20_000


def _max_radius(inc: Inclusions) -> float:
    """A radius bound that the lognormal draws exceed with negligible probability."""
    if inc.size_sd == 0:
        return inc.radius
    s = np.sqrt(np.log1p((inc.size_sd / inc.radius) ** 2))
    return float(inc.radius * np.exp(4 * s))


def rsa_discs(shape: Sequence[int], fraction: float, radius: float, *, seed, size_sd: float = 0.0,
              hollow_ratio: float | None = None, min_gap: float = 0.0) -> Packing:
    """Random sequential addition of non-overlapping discs in a periodic 2D cell.

    Parameters
    ----------
    shape : (ny, nx)
        Cell shape, pixels.
    fraction : float
        Target area fraction of the discs (cores of hollow discs included).
    radius : float
        Mean disc radius, pixels.
    seed : int or numpy.random.Generator
        Random seed.
    size_sd : float
        Standard deviation of the (lognormal) radius, pixels.
    hollow_ratio : float or None
        Inner/outer diameter ratio for hollow discs.
    min_gap : float
        Smallest gap between discs, pixels.

    Returns
    -------
    Packing
        Labels 0 (matrix), 1 (discs, or the shells of hollow discs), 2 (cores).

    References
    ----------
    .. [1] Widom, B. (1966). J. Chem. Phys. 44, 3888-3894.
    .. [2] Feder, J. (1980). J. Theor. Biol. 87, 237-254.

    Examples
    --------
    >>> p = rsa_discs((64, 64), 0.2, 4.0, seed=0, hollow_ratio=0.5)
    >>> sorted(set(p.labels.ravel().tolist()))
    [0, 1, 2]
    """
    if len(shape) != 2:
        raise InputError(f"rsa_discs needs a 2D shape, got {tuple(shape)}; use rsa_spheres in 3D")
    return compose(shape, [Inclusions(1, fraction, radius, size_sd, hollow_ratio,
                                      2 if hollow_ratio is not None else None, min_gap)],
                   seed=seed)


def rsa_spheres(shape3d: Sequence[int], fraction: float, radius: float, *, seed,
                size_sd: float = 0.0, hollow_ratio: float | None = None,
                min_gap: float = 0.0) -> Packing:
    """Random sequential addition of non-overlapping spheres in a periodic 3D cell.

    The 3D counterpart of `rsa_discs` (same parameters, *shape3d* = (nz, ny, nx)).

    Returns
    -------
    Packing
        Labels 0 (matrix), 1 (spheres, or shells), 2 (cores).

    References
    ----------
    .. [1] Widom, B. (1966). J. Chem. Phys. 44, 3888-3894.
    .. [2] Feder, J. (1980). J. Theor. Biol. 87, 237-254.

    Examples
    --------
    >>> p = rsa_spheres((32, 32, 32), 0.1, 4.0, seed=0)
    >>> p.labels.shape
    (32, 32, 32)
    """
    if len(shape3d) != 3:
        raise InputError(f"rsa_spheres needs a 3D shape, got {tuple(shape3d)}")
    return compose(shape3d, [Inclusions(1, fraction, radius, size_sd, hollow_ratio,
                                        2 if hollow_ratio is not None else None, min_gap)],
                   seed=seed)


def laminate(shape: Sequence[int], fraction: float, *, periods: int = 1, axis: int = -1) -> np.ndarray:
    """Layers of two phases stacked along *axis*.

    The cell is split along *axis* into *periods* equal periods; in each the first
    ``round(fraction * period)`` pixels are phase 1, the rest phase 0.

    Parameters
    ----------
    shape : sequence of int
        Cell shape (2D or 3D).
    fraction : float
        Fraction of phase 1; the realised fraction is the rounded layer thickness
        over the period.
    periods : int
        Number of periods along *axis*; must divide ``shape[axis]``.
    axis : int
        Axis along which the phase changes (the layers are normal to it).

    Returns
    -------
    ndarray of int32

    Examples
    --------
    >>> laminate((2, 8), 0.25, periods=2)
    array([[1, 0, 0, 0, 1, 0, 0, 0],
           [1, 0, 0, 0, 1, 0, 0, 0]], dtype=int32)
    """
    shape = tuple(int(n) for n in shape)
    n = shape[axis]
    if periods < 1 or n % periods:
        raise InputError(f"{periods} periods do not divide the {n} pixels along axis {axis}")
    if not 0 <= fraction <= 1:
        raise InputError(f"layer fraction {fraction} must lie between 0 and 1")
    period = n // periods
    profile = (np.arange(n) % period < round(fraction * period)).astype(np.int32)
    view = [1] * len(shape)
    view[axis] = n
    return np.broadcast_to(profile.reshape(view), shape).copy()


def checkerboard(shape: Sequence[int], tiles: int = 2) -> np.ndarray:
    """A periodic checkerboard of phases 0 and 1 with *tiles* squares (cubes) per side.

    Parameters
    ----------
    shape : sequence of int
        Cell shape (2D or 3D); every side must be divisible by *tiles*.
    tiles : int
        Squares per side; even, so that the board is periodic.

    Returns
    -------
    ndarray of int32

    Examples
    --------
    >>> checkerboard((4, 4))
    array([[0, 0, 1, 1],
           [0, 0, 1, 1],
           [1, 1, 0, 0],
           [1, 1, 0, 0]], dtype=int32)
    """
    shape = tuple(int(n) for n in shape)
    if tiles < 2 or tiles % 2 or any(n % tiles for n in shape):
        raise InputError(f"a periodic checkerboard needs an even number of tiles that divides "
                         f"every side; got {tiles} tiles for shape {shape}")
    index = np.indices(shape)
    return (sum(i // (n // tiles) for i, n in zip(index, shape)) % 2).astype(np.int32)


def square_array_disc(n: int, fraction: float) -> np.ndarray:
    """One disc centred in a periodic n×n cell: a square array of discs.

    Parameters
    ----------
    n : int
        Cell side, pixels.
    fraction : float
        Disc area fraction, below π/4 (touching discs).

    Returns
    -------
    ndarray of int32
        1 inside the disc of radius ``sqrt(fraction / π) · n`` about the cell centre,
        0 outside. The pixel fraction differs from *fraction* by the rasterisation
        error (of order ``1 / (n · sqrt(fraction))``).

    Examples
    --------
    >>> round(float(square_array_disc(256, 0.3).mean()), 3)
    0.3
    """
    if not 0 < fraction < np.pi / 4:
        raise InputError(f"a square array of discs needs 0 < fraction < π/4 ≈ 0.785 "
                         f"(touching discs), got {fraction}")
    x = np.arange(n) + 0.5 - n / 2
    r = np.sqrt(fraction / np.pi) * n
    return (x[:, None] ** 2 + x[None, :] ** 2 < r * r).astype(np.int32)


def render_sem(labels: np.ndarray, grey: Mapping[int, float], *, blur_px: float = 1.0,
               noise_sd: float = 0.03, seed=None, info_band_px: int = 0,
               bit_depth: int = 8) -> np.ndarray:
    """A grey-level image of a 2D label array, as a backscattered-electron micrograph.

    Each phase gets its grey level, the image is blurred by a Gaussian (the beam and
    interaction volume; periodic, so the rendering stays periodic), Gaussian noise is
    added (shot and detector noise), the result is clipped and quantised. An optional
    instrument information band is appended below the image: a uniform dark band with
    bright text-like marks and a scale bar, as many microscopes write.

    Parameters
    ----------
    labels : ndarray of int, shape (ny, nx)
        Phase map.
    grey : mapping label → float
        Grey level of each phase as a fraction of full scale (0 black, 1 white).
    blur_px : float
        Standard deviation of the Gaussian blur, pixels (0: none).
    noise_sd : float
        Standard deviation of the noise, fraction of full scale.
    seed : int or numpy.random.Generator, optional
        Random seed of the noise and the band marks.
    info_band_px : int
        Height of the information band appended at the bottom (0: none).
    bit_depth : {8, 16}
        Output ``uint8`` or ``uint16``.

    Returns
    -------
    ndarray of uint8 or uint16, shape (ny + info_band_px, nx)

    Examples
    --------
    >>> import numpy as np
    >>> img = render_sem(np.eye(8, dtype=int), {0: 0.2, 1: 0.8}, seed=0, info_band_px=4)
    >>> img.shape, img.dtype
    ((12, 8), dtype('uint8'))
    """
    labels = np.asarray(labels)
    if labels.ndim != 2:
        raise InputError(f"render_sem renders 2D label arrays, got shape {labels.shape}")
    missing = sorted(set(np.unique(labels).tolist()) - set(grey))
    if missing:
        raise InputError(f"no grey level given for labels {missing}")
    if bit_depth not in (8, 16):
        raise InputError(f"bit_depth must be 8 or 16, got {bit_depth}")
    rng = np.random.default_rng(seed)
    lut_keys = np.array(sorted(grey))
    lut_vals = np.array([grey[k] for k in lut_keys], float)
    image = lut_vals[np.searchsorted(lut_keys, labels)]
    if blur_px > 0:
        image = ndimage.gaussian_filter(image, blur_px, mode="wrap")
    if noise_sd > 0:
        image = image + rng.normal(0.0, noise_sd, image.shape)
    if info_band_px > 0:
        image = np.vstack([image, _info_band(info_band_px, labels.shape[1], rng)])
    full = 255 if bit_depth == 8 else 65535
    return np.round(np.clip(image, 0, 1) * full).astype(np.uint8 if bit_depth == 8 else np.uint16)


def _info_band(height: int, width: int, rng) -> np.ndarray:
    """A uniform dark band with rows of bright glyph-like marks and a scale bar."""
    band = np.full((height, width), 0.06)
    glyph_h = max(1, int(0.4 * height))
    top = (height - glyph_h) // 2
    col = max(2, width // 40)
    while col < 0.6 * width:
        glyph_w = int(rng.integers(2, 6))
        for c in range(col, min(col + glyph_w, width)):
            band[top:top + glyph_h, c] = np.where(rng.random(glyph_h) < 0.55, 0.95, 0.06)
        col += glyph_w + int(rng.integers(1, 3)) + (4 if rng.random() < 0.2 else 0)
    bar_row = top + glyph_h // 2
    band[bar_row:bar_row + max(1, height // 10), int(0.7 * width):int(0.9 * width)] = 0.95
    return band
