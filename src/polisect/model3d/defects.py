"""Realistic micrograph renderings: the defects of real sections, each with its true label map.

`render_micrograph` turns a 2D phase map into a grey image the way an electron or light
microscope and a less than perfect polish would: uneven illumination (shading), a second
grey level inside the matrix (grain or channelling contrast), bright pore edges in
secondary-electron images (the edge effect), curtaining stripes, charging blotches,
polishing scratches, particles pulled out at their edges, noise, isolated speckle and an
instrument information band with text. Every defect is switched on through `Defects`;
the returned `Rendering` carries the image and the true label map of the material (a
pulled-out particle is still particle in the truth: the hole is a preparation artefact).

These images exist to test segmentation: a segmentation that recovers the truth from them
within a stated accuracy, or warns, is tested against the difficulties real sections show
(Goldstein et al. 2018, chapters 5 and 6 on secondary- and backscattered-electron contrast;
Vander Voort 1999 on preparation artefacts).

References
----------
.. [1] Goldstein, J. I., Newbury, D. E., Michael, J. R., Ritchie, N. W. M., Scott, J. H. J.,
   Joy, D. C. (2018). Scanning Electron Microscopy and X-Ray Microanalysis, 4th ed.
   Springer.
.. [2] Vander Voort, G. F. (1999). Metallography: Principles and Practice. ASM
   International.

Examples
--------
>>> import numpy as np
>>> from polisect.model3d.defects import Defects, render_micrograph
>>> lab = np.zeros((64, 64), int); lab[20:40, 20:40] = 1
>>> r = render_micrograph(lab, {0: 0.3, 1: 0.7}, Defects(shading=0.3, info_band_px=8), seed=0)
>>> r.image.shape, r.labels.shape
((72, 64), (64, 64))
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Mapping

import numpy as np
from scipy import ndimage

from ..core.errors import InputError
from .synth import _info_band

__all__ = ["Defects", "Rendering", "render_micrograph", "DEFECT_KINDS"]

#: The defect kinds `Defects` can switch on, one keyword each.
DEFECT_KINDS = ("shading", "grain_contrast", "se_edges", "curtaining", "charging",
                "scratches", "pullouts", "noise_sd", "speckle", "info_band_px")


@dataclass(frozen=True)
class Defects:
    """What goes wrong in one rendering (all off by default). Grey amounts are fractions
    of full scale (1/255 of it is one grey level of an 8-bit image).

    Attributes
    ----------
    blur_px : float
        Gaussian blur of the phase map, pixels (beam and interaction volume).
    shading : float
        Relative amplitude of a smooth multiplicative illumination field: gains span
        ``1 - shading`` to ``1 + shading`` (a tilted plane plus a quadratic bowl).
    grain_contrast : float
        The matrix is cut into Voronoi grains whose grey levels differ by up to
        ± this amount (channelling or orientation contrast: a second grey level).
    grain_px : float
        Mean grain size, pixels.
    se_edges : float
        Extra brightness at the edges of pores (the secondary-electron edge effect),
        decaying over ``se_edge_px`` on both sides of the pore wall.
    se_edge_px : float
        Decay length of the bright edges, pixels.
    curtaining : float
        Standard deviation of vertical stripes (focused-ion-beam curtaining, or columns of
        a line-scan detector), fading from the top of the image to half at the bottom.
    charging : float
        Peak brightness of a few large smooth blotches (charging of a poorly coated
        section).
    scratches : int
        Number of straight polishing scratches across the image.
    scratch_depth : float
        Relative darkening at the centre of a scratch.
    pullouts : float
        Fraction of the particles (label *particle_label*) that lost a piece at their
        edge during polishing; the piece shows as pore.
    noise_sd : float
        Standard deviation of additive Gaussian noise.
    speckle : float
        Fraction of pixels replaced by black or white (impulse noise).
    info_band_px : int
        Height of an instrument information band with text marks and a scale bar,
        appended at the bottom.
    pore_label, particle_label : int or None
        Labels of the pores (for the edge effect and the pull-outs) and of the particles
        that pull out.
    """

    blur_px: float = 0.6
    shading: float = 0.0
    grain_contrast: float = 0.0
    grain_px: float = 40.0
    se_edges: float = 0.0
    se_edge_px: float = 1.5
    curtaining: float = 0.0
    charging: float = 0.0
    scratches: int = 0
    scratch_depth: float = 0.3
    pullouts: float = 0.0
    noise_sd: float = 0.0
    speckle: float = 0.0
    info_band_px: int = 0
    pore_label: int | None = 0
    particle_label: int | None = None

    def replace(self, **changes) -> "Defects":
        """A copy with some attributes changed."""
        return dataclasses.replace(self, **changes)


@dataclass(frozen=True, eq=False)
class Rendering:
    """A rendered micrograph and its truth.

    Attributes
    ----------
    image : ndarray of uint8, shape (ny + info_band_px, nx)
        The micrograph, information band included.
    labels : ndarray of int32, shape (ny, nx)
        True phase of the material at every pixel (no band; pulled-out particle pieces
        keep the particle label).
    surface : ndarray of int32, shape (ny, nx)
        What the polished surface shows: *labels* with the pulled-out pieces as pore.
    info_band_px : int
        Rows of the band at the bottom of *image*.
    defects : Defects
        What was rendered.
    """

    image: np.ndarray
    labels: np.ndarray
    surface: np.ndarray
    info_band_px: int
    defects: Defects


def render_micrograph(labels: np.ndarray, grey: Mapping[int, float],
                      defects: Defects = Defects(), *, seed=None) -> Rendering:
    """Render a 2D phase map as a micrograph with the given defects.

    Order of the steps (as in the instrument): pull-outs change the surface; phases
    get their grey levels; grain contrast; blur; secondary-electron edges; charging;
    multiplicative shading; scratches; curtaining; noise; speckle; clipping and 8-bit
    quantisation; the information band is appended last (it is written by the
    instrument's software, without noise).

    Parameters
    ----------
    labels : ndarray of int, shape (ny, nx)
        True phase map.
    grey : mapping label → float
        Grey level of every phase, fraction of full scale.
    defects : Defects
        The defects to render.
    seed : int or numpy.random.Generator, optional
        Random seed; the same seed gives the same image.

    Returns
    -------
    Rendering

    Raises
    ------
    InputError
        A label without a grey level, a non-2D phase map, or pull-outs or edges asked
        for without the labels they need.
    """
    truth = np.asarray(labels).astype(np.int32)
    if truth.ndim != 2:
        raise InputError(f"render_micrograph renders 2D phase maps, got shape {truth.shape}")
    missing = sorted(set(np.unique(truth).tolist()) - set(grey))
    if missing:
        raise InputError(f"no grey level given for labels {missing}")
    d = defects
    if (d.pullouts > 0 or d.se_edges > 0) and (d.pore_label is None or d.pore_label not in grey):
        raise InputError("pull-outs and secondary-electron edges need pore_label, a label "
                         "with a grey level")
    if d.pullouts > 0 and d.particle_label is None:
        raise InputError("pull-outs need particle_label, the phase that pulls out")
    rng = np.random.default_rng(seed)
    ny, nx = truth.shape
    surface = _pull_out(truth, d, rng) if d.pullouts > 0 else truth
    keys = np.array(sorted(grey))
    image = np.array([grey[k] for k in keys], float)[np.searchsorted(keys, surface)]
    matrix = int(np.bincount(truth.ravel() - truth.min()).argmax() + truth.min())
    if d.grain_contrast > 0:
        image += np.where(surface == matrix, _grains(truth.shape, d, rng), 0.0)
    if d.blur_px > 0:
        image = ndimage.gaussian_filter(image, d.blur_px, mode="nearest")
    if d.se_edges > 0:
        pore = surface == d.pore_label
        dist = np.where(pore, ndimage.distance_transform_edt(pore),
                        ndimage.distance_transform_edt(~pore))
        image += d.se_edges * np.exp(-(dist - 0.5) / d.se_edge_px) * (dist < 6 * d.se_edge_px)
    y, x = np.meshgrid(np.linspace(-1, 1, ny), np.linspace(-1, 1, nx), indexing="ij")
    if d.charging > 0:
        blot = np.zeros_like(image)
        for _ in range(3):
            cy, cx = rng.uniform(-0.8, 0.8, 2)
            width = rng.uniform(0.1, 0.25)
            blot += np.exp(-((y - cy) ** 2 + (x - cx) ** 2) / (2 * width ** 2))
        image += d.charging * blot / max(blot.max(), 1e-12)
    if d.shading > 0:
        angle = rng.uniform(0, 2 * np.pi)
        field = 0.6 * (np.cos(angle) * x + np.sin(angle) * y) + 0.4 * (x ** 2 + y ** 2 - 1)
        field = 2 * (field - field.min()) / (field.max() - field.min()) - 1
        image *= 1 + d.shading * field
    for _ in range(d.scratches):
        image *= 1 - d.scratch_depth * _scratch(truth.shape, rng)
    if d.curtaining > 0:
        stripes = ndimage.gaussian_filter1d(rng.normal(0, 1, nx), 0.8)
        stripes *= d.curtaining / max(stripes.std(), 1e-12)
        image += stripes[None, :] * np.linspace(1.0, 0.5, ny)[:, None]
    if d.noise_sd > 0:
        image += rng.normal(0.0, d.noise_sd, image.shape)
    if d.speckle > 0:
        hit = rng.random(image.shape) < d.speckle
        image[hit] = rng.integers(0, 2, int(hit.sum()))
    if d.info_band_px > 0:
        image = np.vstack([image, _info_band(d.info_band_px, nx, rng)])
    out = np.round(np.clip(image, 0, 1) * 255).astype(np.uint8)
    return Rendering(out, truth, surface, int(d.info_band_px), d)


def _pull_out(truth, d, rng):
    """Carve discs (radius 3-7 px) centred on the edges of a share of the particles."""
    from skimage.measure import label as connected

    particles = connected(truth == d.particle_label, connectivity=2)
    n = int(particles.max())
    chosen = np.flatnonzero(rng.random(n) < d.pullouts) + 1
    edge = (truth == d.particle_label) & ~ndimage.binary_erosion(truth == d.particle_label)
    surface = truth.copy()
    yy, xx = np.indices(truth.shape)
    for p in chosen:
        rows, cols = np.nonzero(edge & (particles == p))
        if rows.size == 0:
            continue
        k = rng.integers(rows.size)
        r = rng.uniform(3, 7)
        cut = ((yy - rows[k]) ** 2 + (xx - cols[k]) ** 2 < r * r) & (particles == p)
        surface[cut] = d.pore_label
    return surface


def _grains(shape, d, rng):
    """Voronoi grains of mean size *grain_px*, each with a grey offset."""
    n = max(2, int(shape[0] * shape[1] / d.grain_px ** 2))
    seeds = np.zeros(shape, bool)
    seeds[rng.integers(0, shape[0], n), rng.integers(0, shape[1], n)] = True
    _, (iy, ix) = ndimage.distance_transform_edt(~seeds, return_indices=True)
    offsets = rng.uniform(-d.grain_contrast, d.grain_contrast, shape)
    return offsets[iy, ix]


def _scratch(shape, rng):
    """Weight 0..1 of one straight scratch, 1-2.5 px wide, at a random angle."""
    ny, nx = shape
    angle = rng.uniform(0, np.pi)
    cy, cx = rng.uniform(0, ny), rng.uniform(0, nx)
    width = rng.uniform(1.0, 2.5)
    yy, xx = np.indices(shape)
    dist = np.abs((yy - cy) * np.cos(angle) - (xx - cx) * np.sin(angle))
    return np.clip(1 - (dist - width / 2), 0, 1) * (dist < width / 2 + 1)
