"""Phase fractions with confidence, enclosed fractions, and the particle statistics of a phase.

* `field_fractions`, `student_t`: fractions with the ASTM E562 field interval.
* `enclosed_fractions`: the part of each phase inside particles of another (internal
  porosity kept apart from the rest).
* `particle_phases`, `phase_particles`: which phases have particles, and everything about
  them (`PhaseParticles`), combining `polisect.measure.particles`, `polisect.measure.sizestats` and
  `polisect.measure.stereology`: the one particle path of the package (the report, the
  schemes and the 3D estimate all read it).
* `phase_particle_labels`, `particle_holes`, `particle_cores`, `cores_of_others`: the
  particles of a phase mask, their holes, and the cores of hollow particles (open ones at
  the border included).

A section is cut into a grid of equal fields; the spread of a phase's fraction over the
fields gives its 95 % confidence interval with Student's t for n − 1 degrees of freedom, as
ASTM E562 does for systematic manual point counts. Here every pixel of a field is a test
point, so the field fraction is the area fraction of the field (Delesse 1847: A_A = V_V).

Examples
--------
>>> import numpy as np
>>> labels = np.zeros((64, 64), dtype=np.int32); labels[:, :16] = 1
>>> est = field_fractions(labels, [1])[1]
>>> round(est.mean, 3), est.n_fields
(0.25, 16)
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np
from scipy import ndimage as ndi
from scipy import stats
from skimage.segmentation import relabel_sequential

from ..core.errors import InputError
from .particles import ParticleTable, label_particles, measure_particles
from ..core.phasemap import Phase, PhaseMap
from .sizestats import SizeStatistics, size_statistics
from .stereology import (UNFOLD_CLASSES, UNFOLD_RATIO, HollowSpheres, NearestNeighbour,
                         SphereDistribution, Spacing, boundary_densities, hollow_spheres,
                         nearest_neighbour, saltykov, spacing)

MIN_FIELD_EDGE_PX = 4


def student_t(n: int, confidence: float = 0.95) -> float:
    """Two-sided Student t quantile for *n* fields (n − 1 degrees of freedom).

    Parameters
    ----------
    n : int
        Number of fields (at least 2).
    confidence : float
        Two-sided confidence level.

    Returns
    -------
    float
        t such that mean ± t·s/√n is the *confidence* interval of the mean.

    References
    ----------
    ASTM E562, Standard Test Method for Determining Volume Fraction by Systematic Manual
    Point Count (Table of t for n − 1 degrees of freedom).

    Examples
    --------
    >>> round(student_t(5), 3)
    2.776
    """
    if n < 2:
        raise InputError(f"a confidence interval needs at least 2 fields, got {n}")
    return float(stats.t.ppf(0.5 + confidence / 2.0, n - 1))


@dataclass(frozen=True)
class FractionEstimate:
    """Area (volume) fraction of one phase with its field-based 95 % confidence interval.

    Attributes
    ----------
    mean : float
        Fraction over the whole image (all pixels).
    ci95 : float
        Half-width of the 95 % interval, t·s/√n over the fields.
    n_fields : int
        Number of fields the spread was measured on.
    relative_accuracy_pct : float
        ci95 / mean · 100 (ASTM E562 %RA); infinite when the phase is absent.
    std : float
        Standard deviation of the field fractions (n − 1 in the denominator).
    """

    mean: float
    ci95: float
    n_fields: int
    relative_accuracy_pct: float
    std: float

def field_grid(shape: tuple[int, ...], n_fields: int) -> tuple[int, ...]:
    """Number of fields along each axis: a grid of exactly *n_fields* nearly cubic fields.

    Among all ways of writing *n_fields* as a product of one factor per axis, the one whose
    fields have the smallest ratio of longest to shortest edge is taken.

    Parameters
    ----------
    shape : tuple of int
        Image shape.
    n_fields : int
        Number of fields wanted.

    Returns
    -------
    tuple of int
        Fields per axis, product equal to *n_fields*.

    Examples
    --------
    >>> field_grid((512, 512), 16)
    (4, 4)
    >>> field_grid((100, 400), 4)
    (1, 4)
    """
    best, best_ratio = None, math.inf
    divisors = [d for d in range(1, n_fields + 1) if n_fields % d == 0]
    for grid in itertools.product(divisors, repeat=len(shape)):
        if math.prod(grid) != n_fields or any(g > s for g, s in zip(grid, shape)):
            continue
        edges = [s / g for s, g in zip(shape, grid)]
        ratio = max(edges) / min(edges)
        if ratio < best_ratio - 1e-12:
            best, best_ratio = grid, ratio
    if best is None or min(s // g for s, g in zip(shape, best)) < MIN_FIELD_EDGE_PX:
        raise InputError(f"an image of shape {tuple(shape)} cannot be cut into {n_fields} fields "
                         f"of at least {MIN_FIELD_EDGE_PX} pixels a side; use fewer fields "
                         "(e.g. a square number such as 16) or a larger image")
    return best


def _field_index(shape: tuple[int, ...], grid: tuple[int, ...]) -> np.ndarray:
    """Field number of every pixel for a grid of near-equal fields (np.array_split rule)."""
    index = np.zeros(shape, dtype=np.int64)
    for axis, (size, parts) in enumerate(zip(shape, grid)):
        along = np.repeat(np.arange(parts), [len(c) for c in np.array_split(np.arange(size), parts)])
        view = [1] * len(shape)
        view[axis] = size
        index = index * parts + along.reshape(view)
    return index


def field_fractions(labels: np.ndarray, label_values, n_fields: int = 16,
                    confidence: float = 0.95) -> dict[int, FractionEstimate]:
    """Fraction of each label with a field-based confidence interval (ASTM E562 style).

    The image is cut into a grid of *n_fields* near-equal fields (`field_grid`). For each
    label the fraction of every field is measured; the estimate is the whole-image fraction
    (all pixels, equal to the mean of the field fractions when the fields are equal) and the
    interval half-width is t·s/√n with Student's t for n − 1 degrees of freedom.

    Parameters
    ----------
    labels : ndarray of int, 2D or 3D
        Phase label of every pixel (voxel).
    label_values : iterable of int
        Labels to estimate; absent labels get a zero fraction.
    n_fields : int
        Number of fields (default 16, a 4 × 4 grid on a square image). ASTM E562 asks for
        enough fields to reach the wanted relative accuracy; fewer than 16 is allowed but the
        interval widens quickly (t = 2.776 for 5 fields).
    confidence : float
        Two-sided confidence level of the interval.

    Returns
    -------
    dict of int to FractionEstimate

    Notes
    -----
    Fields that are close to each other are correlated when the microstructure has a long
    correlation length compared with the field size; the interval then is too narrow. Compare
    the field edge with `polisect.measure.stereology.two_point_correlation`'s correlation length.

    References
    ----------
    ASTM E562, Standard Test Method for Determining Volume Fraction by Systematic Manual
    Point Count.
    Delesse, A. (1847). Procédé mécanique pour déterminer la composition des roches. Comptes
    Rendus de l'Académie des Sciences 25, 544–545.

    Examples
    --------
    >>> labels = np.zeros((40, 40), dtype=np.int32); labels[::2] = 1
    >>> est = field_fractions(labels, [0, 1], n_fields=4)
    >>> est[1].mean, est[1].ci95
    (0.5, 0.0)
    """
    labels = np.asarray(labels)
    if labels.ndim not in (2, 3) or not np.issubdtype(labels.dtype, np.integer):
        raise InputError(f"field fractions need a 2D or 3D integer label array, got dtype "
                         f"{labels.dtype} and shape {labels.shape}")
    if not isinstance(n_fields, (int, np.integer)) or n_fields < 2:
        raise InputError(f"n_fields = {n_fields!r}: give a whole number of fields, at least 2")
    if not 0.0 < confidence < 1.0:
        raise InputError(f"confidence {confidence} must lie strictly between 0 and 1")
    grid = field_grid(labels.shape, int(n_fields))
    index = _field_index(labels.shape, grid).ravel()
    field_size = np.bincount(index, minlength=n_fields)
    t = student_t(int(n_fields), confidence)
    flat = labels.ravel()
    out = {}
    for value in label_values:
        hit = flat == value
        per_field = np.bincount(index[hit], minlength=n_fields) / field_size
        mean = float(hit.mean())
        std = float(per_field.std(ddof=1))
        ci = t * std / math.sqrt(n_fields)
        ra = ci / mean * 100.0 if mean > 0 else math.inf
        out[int(value)] = FractionEstimate(mean, ci, int(n_fields), ra, std)
    return out


@dataclass(frozen=True)
class EnclosedFraction:
    """The part of one phase that lies inside particles (filled outlines) of another phase.

    Attributes
    ----------
    phase : int
        Label of the enclosed phase (e.g. the pore label).
    host : int
        Label of the enclosing particle phase.
    fraction : FractionEstimate
        Fraction of the *whole image* occupied by *phase* inside *host* particles.
    """

    phase: int
    host: int
    fraction: FractionEstimate

def enclosed_fractions(labels: np.ndarray, host_labels, n_fields: int = 16
                       ) -> tuple[EnclosedFraction, ...]:
    """Fractions of every phase that lie enclosed inside particles of each host phase.

    A pixel of phase q is enclosed by host phase p when it belongs to a hole of the mask of
    p: a region not connected to the image border through non-p pixels (holes are found with
    `scipy.ndimage.binary_fill_holes`, 4-connected background in 2D, 6-connected in 3D, the
    complement of the 8/26-connected particles). This keeps internal porosity (pores inside
    hollow particles) apart from the rest of the porosity: the free fraction of q is its total
    fraction minus the enclosed ones. A region enclosed only by several touching particles
    together also counts as enclosed; a hole cut open by the image border does not.

    Parameters
    ----------
    labels : ndarray of int, 2D or 3D
        Phase labels.
    host_labels : iterable of int
        Phases whose particles may enclose other phases.
    n_fields : int
        Fields for the confidence interval (see `field_fractions`).

    Returns
    -------
    tuple of EnclosedFraction
        One entry for every (enclosed phase, host) pair that occurs.

    Examples
    --------
    >>> labels = np.zeros((32, 32), dtype=np.int32)
    >>> labels[8:24, 8:24] = 1; labels[12:20, 12:20] = 2   # pore (2) inside particle (1)
    >>> [(e.phase, e.host, e.fraction.mean) for e in enclosed_fractions(labels, [1], 4)]
    [(0, 1, 0.0), (2, 1, 0.0625)]
    """
    labels = np.asarray(labels)
    present = np.unique(labels)
    code = np.full(labels.shape, -1, dtype=np.int64)
    pairs = []
    for host in host_labels:
        mask = labels == host
        inside = ndi.binary_fill_holes(mask) & ~mask
        for q in present:
            if q == host:
                continue
            pairs.append((int(q), int(host)))
            code[inside & (labels == q)] = len(pairs) - 1
    est = field_fractions(code, range(len(pairs)), n_fields)
    return tuple(EnclosedFraction(q, host, est[i]) for i, (q, host) in enumerate(pairs))


def particle_phases(phasemap: PhaseMap) -> tuple[Phase, ...]:
    """The phases whose particles are measured.

    A phase marked ``particles = true`` is measured, one marked ``false`` is not; an
    unmarked phase is measured unless it has the largest fraction (taken as the matrix).

    Examples
    --------
    >>> from polisect import Material
    >>> labels = np.zeros((8, 8), dtype=np.int32); labels[:2] = 1; labels[7, 7] = 2
    >>> m = Material(conductivity=1.0)
    >>> pm = PhaseMap(labels, (Phase(0, "matrix", m), Phase(1, "SiC", m), Phase(2, "pore", m, False)))
    >>> [p.name for p in particle_phases(pm)]
    ['SiC']
    """
    fractions = phasemap.fractions()
    matrix = max(fractions, key=fractions.get)
    return tuple(p for p in phasemap.phases
                 if p.particles or (p.particles is None and p.label != matrix))


def phase_particle_labels(mask: np.ndarray, split_touching: bool = False,
                          split_depth_px: float = 1.0) -> np.ndarray:
    """Number the particles of a phase mask, each particle's holes its own.

    Without splitting, the particles are the 8-connected regions of *mask*
    (`polisect.measure.particles.label_particles`). With splitting, the watershed runs on the
    mask with its holes filled and the result is then reduced to the mask's own pixels: a
    hollow particle (a ring in the section) is split like the disc it outlines, not cut
    into pieces along its ring, and a pocket enclosed by a ring of touching particles
    stays outside all of them.

    Parameters
    ----------
    mask : ndarray of bool, 2D
        Pixels of the phase.
    split_touching : bool
        Split touching particles.
    split_depth_px : float
        Smallest neck depth that splits (see `label_particles`).

    Returns
    -------
    ndarray of int32
        0 outside the particles, particles numbered 1..n.

    Examples
    --------
    >>> yy, xx = np.mgrid[:40, :60]
    >>> ring = lambda cx: (np.hypot(yy - 20, xx - cx) < 10) & (np.hypot(yy - 20, xx - cx) >= 5)
    >>> int(phase_particle_labels(ring(20) | ring(37), split_touching=True).max())
    2
    """
    mask = np.asarray(mask, bool)
    if not split_touching:
        return label_particles(mask)
    labels = label_particles(ndi.binary_fill_holes(mask), True, split_depth_px)
    labels[~mask] = 0
    return relabel_sequential(labels)[0].astype(np.int32, copy=False)


def particle_holes(particle_labels: np.ndarray) -> np.ndarray:
    """Pixels enclosed by single particles (each particle's own holes).

    A pocket enclosed only by several touching particles together is no particle's hole.

    Parameters
    ----------
    particle_labels : ndarray of int, 2D
        Particles numbered 1..n, 0 elsewhere.

    Returns
    -------
    ndarray of bool

    Examples
    --------
    >>> lab = np.zeros((9, 9), np.int32); lab[1:8, 1:8] = 1; lab[3:6, 3:6] = 0
    >>> int(particle_holes(lab).sum())
    9
    """
    out = np.zeros(particle_labels.shape, bool)
    for i, sl in enumerate(ndi.find_objects(particle_labels)):
        if sl is None:
            continue
        own = particle_labels[sl] == i + 1
        out[sl] |= ndi.binary_fill_holes(own) & ~own
    return out


def particle_cores(labels: np.ndarray, particles: dict) -> dict:
    """The cores of every phase's particles: each particle's own holes, plus the regions
    of another phase at the image border that one particle surrounds everywhere else (the
    open cores of hollow particles cut by the border).

    Parameters
    ----------
    labels : ndarray of int, 2D
        Phase labels.
    particles : dict label → ndarray of int
        Each particle phase's particles numbered 1..n (`phase_particle_labels`).

    Returns
    -------
    dict label → ndarray of bool
        The cores of that phase's particles.

    Examples
    --------
    >>> labels = np.zeros((12, 12), np.int32); labels[2:9, 0:7] = 1; labels[4:7, 0:4] = 2
    >>> cores = particle_cores(labels, {1: phase_particle_labels(labels == 1)})
    >>> int(cores[1].sum())                      # the pore cut open by the left border
    12
    """
    labels = np.asarray(labels)
    cores = {p: particle_holes(plab) for p, plab in particles.items()}
    boxes = {p: ndi.find_objects(plab) for p, plab in particles.items()}
    for q in np.unique(labels).tolist():
        comp, _ = ndi.label(labels == q, structure=np.ones((3, 3), bool))
        edge = np.unique(np.concatenate([comp[0], comp[-1], comp[:, 0], comp[:, -1]]))
        objects = ndi.find_objects(comp)
        for c in edge[edge > 0]:
            sl = tuple(slice(max(s.start - 1, 0), s.stop + 1) for s in objects[c - 1])
            own = comp[sl] == c
            ring = ndi.binary_dilation(own, np.ones((3, 3), bool)) & ~own
            for host, plab in particles.items():
                ids = np.unique(plab[sl][ring])
                if host != q and ids.size == 1 and ids[0] > 0 and _within(
                        objects[c - 1], boxes[host][ids[0] - 1]):
                    cores[host][sl] |= own
                    break
    return cores


def cores_of_others(cores: dict, phase: int, shape: tuple[int, ...]) -> np.ndarray:
    """The union of the cores of every phase's particles but *phase*'s own (the pixels
    that belong to other phases' hollow particles, not to particles of *phase*).

    Parameters
    ----------
    cores : dict label → ndarray of bool
        `particle_cores`.
    phase : int
    shape : tuple of int
        Shape of the section (the answer for no other cores).

    Examples
    --------
    >>> a = np.array([[True, False]]); b = np.array([[False, True]])
    >>> cores_of_others({1: a, 2: b}, 1, (1, 2)).tolist()
    [[False, True]]
    """
    out = np.zeros(shape, bool)
    for host, mask in cores.items():
        if host != phase:
            out |= mask
    return out


def _within(inner: tuple, outer: tuple) -> bool:
    """Whether the bounding box *inner* lies inside *outer* (slices of one array)."""
    return all(o.start <= i.start and i.stop <= o.stop for i, o in zip(inner, outer))


@dataclass(frozen=True, eq=False)
class PhaseParticles:
    """Particles of one phase and every statistic derived from them.

    Attributes
    ----------
    label, name : int, str
        The phase.
    particle_labels : ndarray of int32
        Particle numbers (0 elsewhere), for outline overlays.
    table : ParticleTable
        Per-particle measurements.
    size : SizeStatistics
        Edge-corrected size and shape statistics with bootstrap intervals.
    spheres : SphereDistribution
        Saltykov unfolding of the ECDs.
    spacing : Spacing
        Fullman mean intercept and mean free path; contiguity when touching particles were
        split (without splitting no particle–particle boundary exists: contiguity is
        ``None`` and touching particles count as one intercept).
    neighbours : NearestNeighbour
        Nearest-neighbour distances between particle centroids.
    split_touching : bool
    hollow : HollowSpheres
        The particles as (hollow) spheres: the share that is hollow and the inner/outer
        ratio (`polisect.measure.stereology.hollow_spheres`). Its section share is
        ``size.hollow_fraction``.
    core_label : int or None
        The phase filling most of the particles' holes (None without holes).
    holes : ndarray of bool
        The particles' own holes (`particle_holes`).
    """

    label: int
    name: str
    particle_labels: np.ndarray
    table: ParticleTable
    size: SizeStatistics
    spheres: SphereDistribution
    spacing: Spacing
    neighbours: NearestNeighbour
    split_touching: bool
    hollow: HollowSpheres
    core_label: int | None
    holes: np.ndarray

    @property
    def units(self) -> str:
        return self.table.units

    def rows(self) -> list[dict]:
        """Per-particle rows for the CSV, each with the phase name first."""
        return [{"phase": self.name, **row} for row in self.table.rows()]


def hollow_particles(table: ParticleTable) -> HollowSpheres:
    """The hollow-sphere model of a phase's measured particles.

    The section share n is the Miles–Lantuéjoul-weighted share of the particles not cut by
    the border that enclose a hole (``SizeStatistics.hollow_fraction``); the core share A
    is the weighted hole area over the weighted filled area of the same particles (area
    weights w·A are unbiased for area shares, and particles cut by the border, whose cores
    may be open, are left out). `polisect.measure.stereology.hollow_spheres` turns (n, A)
    into the share of hollow spheres and their inner/outer ratio.

    Parameters
    ----------
    table : ParticleTable

    Returns
    -------
    HollowSpheres

    References
    ----------
    Miles, R. E. (1974). In Stochastic Geometry (Harding & Kendall, eds.), Wiley, 228–247.
    Wicksell, S. D. (1925). Biometrika 17, 84–99.
    """
    used = table.weight > 0
    w = table.weight[used]
    if w.size == 0:
        return hollow_spheres(0.0, 0.0)
    n = float(w @ table.hollow[used] / w.sum())
    filled = float(w @ table.area_filled[used])
    a = float(w @ table.hole_area[used] / filled) if filled > 0 else 0.0
    return hollow_spheres(n, a)


def phase_particles(phasemap: PhaseMap, phase: int | str, *, split_touching: bool = False,
                    split_depth_px: float = 1.0, min_hole_area_px: int = 1,
                    n_boot: int = 1000, seed: int = 0,
                    saltykov_classes: int = UNFOLD_CLASSES, class_layout: str = "geometric",
                    class_ratio: float = UNFOLD_RATIO, exclude: np.ndarray | None = None,
                    labelled: np.ndarray | None = None) -> PhaseParticles:
    """Find, measure and summarise the particles of one phase of a 2D section.

    The one particle path of the package: the report's particle statistics, the schemes'
    hollow particles and the 3D estimate's sphere families are all read from its result.

    Parameters
    ----------
    phasemap : PhaseMap
        A 2D phase map (3D stacks raise InputError: analyse a slice).
    phase : int or str
        Label or name of the phase.
    split_touching : bool
        Split touching particles (`phase_particle_labels`).
    split_depth_px, min_hole_area_px : float, int
        Splitting depth and smallest hole (see `label_particles`, `measure_particles`).
    n_boot, seed : int
        Bootstrap resamples and seed (`polisect.measure.sizestats.size_statistics`).
    saltykov_classes, class_layout, class_ratio : int, str, float
        Classes of the Saltykov unfolding (`polisect.measure.stereology.saltykov`); by
        default `polisect.measure.stereology.UNFOLD_CLASSES` geometric classes of ratio
        `polisect.measure.stereology.UNFOLD_RATIO`.
    exclude : ndarray of bool, optional
        Pixels of the phase that are not its particles (e.g. the cores of another phase's
        hollow particles).
    labelled : ndarray of int, optional
        The phase's particles already numbered by `phase_particle_labels` with the same
        splitting (and *exclude* applied), to save labelling them again.

    Returns
    -------
    PhaseParticles

    References
    ----------
    See the modules `polisect.measure.particles`, `polisect.measure.sizestats` and `polisect.measure.stereology`.

    Examples
    --------
    >>> from polisect import Material
    >>> from polisect.model3d.synth import rsa_discs
    >>> p = rsa_discs((128, 128), 0.2, 6.0, seed=0)
    >>> m = Material(conductivity=1.0)
    >>> pm = PhaseMap(p.labels, (Phase(0, "matrix", m), Phase(1, "SiC", m)), voxel_size_um=0.5)
    >>> res = phase_particles(pm, "SiC", n_boot=100)
    >>> res.units, round(res.size.ecd_d50.value, 1), res.hollow.share
    ('um', 6.0, 0.0)
    """
    try:
        ph = phasemap.phase(phase)
    except KeyError:
        raise InputError(f"no phase {phase!r} in the phase table (phases: "
                         f"{[p.name for p in phasemap.phases]})") from None
    mask = phasemap.labels == ph.label
    if exclude is not None:
        mask &= ~np.asarray(exclude, bool)
    particle_labels = (phase_particle_labels(mask, split_touching, split_depth_px)
                       if labelled is None else np.asarray(labelled))
    table = measure_particles(particle_labels, phasemap.voxel_size_um, min_hole_area_px)
    size = size_statistics(table, n_boot=n_boot, seed=seed)
    spheres = saltykov(table.ecd, table.weight, table.window_area, n_classes=saltykov_classes,
                       classes=class_layout, ratio=class_ratio, units=table.units)
    densities = boundary_densities(mask, particle_labels if split_touching else None,
                                   phasemap.voxel_size_um)
    scale = phasemap.voxel_size_um or 1.0
    window = (phasemap.shape[1] * scale, phasemap.shape[0] * scale)
    centres = np.stack([table.centroid_x, table.centroid_y], axis=1)
    neighbours = nearest_neighbour(centres, window, units=table.units)
    holes = particle_holes(particle_labels)
    values, counts = np.unique(phasemap.labels[holes], return_counts=True)
    core_label = int(values[np.argmax(counts)]) if values.size else None
    return PhaseParticles(ph.label, ph.name, particle_labels, table, size, spheres,
                          spacing(densities), neighbours, split_touching,
                          hollow_particles(table), core_label, holes)
