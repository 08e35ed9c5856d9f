"""Stereology of a section: sphere sizes from section sizes, spacing, contiguity, neighbours,
two-point correlation.

* `saltykov`: unfolds the section-diameter distribution into a sphere-diameter
  distribution (Saltykov's method, non-negative least squares).
* `boundary_densities` and `spacing`: boundary crossings per unit test-line length and
  Fullman's mean intercept length and mean free path, Gurland's contiguity.
* `nearest_neighbour`: edge-corrected (or periodic) nearest-neighbour centre distances.
* `two_point_correlation`: S2(r) by FFT, radially averaged, with its correlation length.

Relations used (isotropic uniform random sections, [1]_ [2]_): S_V = 2 P_L, L_A = (π/2) P_L,
V_V = A_A; per unit test-line length a phase α with boundary-crossing counts P_L^{αβ}
(to other phases) and P_L^{αα} (between touching α particles) has N_L = P_L^{αβ}/2 + P_L^{αα}
particle intercepts, mean intercept length L3 = V_V/N_L = 2V_V/(P_L^{αβ} + 2P_L^{αα})
(= 4V_V/S_V) and mean free path λ = (1 − V_V)/(P_L^{αβ}/2) (Fullman 1953).

References
----------
.. [1] Underwood, E. E. (1970). Quantitative Stereology. Addison-Wesley.
.. [2] Fullman, R. L. (1953). Measurement of particle sizes in opaque bodies. Trans. AIME
   197, 447–452.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import fft as sp_fft
from scipy.optimize import nnls
from scipy.spatial import cKDTree
from scipy.special import gamma

from ..core.errors import InputError

SALTYKOV_RATIO = 10.0 ** -0.1


@dataclass(frozen=True, eq=False)
class SphereDistribution:
    """Sphere-diameter distribution unfolded from section diameters.

    Attributes
    ----------
    edges : ndarray, shape (n + 1,)
        Class limits of the diameter, increasing.
    diameters : ndarray, shape (n,)
        Sphere diameter of each class (its upper limit, as in Saltykov's method).
    number_density : ndarray, shape (n,)
        Spheres per unit volume in each class, N_V,j (units⁻³).
    section_density : ndarray, shape (n,)
        Measured sections per unit area in each class, N_A,i (units⁻²).
    fitted_section_density : ndarray, shape (n,)
        N_A,i predicted by the unfolded distribution (equal to the measured one unless a
        class would have had to be negative).
    mean_diameter : float
        Number-weighted mean sphere diameter.
    d50 : float
        Number-weighted median sphere diameter (class value).
    number_per_volume : float
        Σ N_V,j (units⁻³).
    volume_fraction : float
        Σ N_V,j π D_j³/6; compare with the area fraction (Delesse) as a consistency check.
    units : str
    """

    edges: np.ndarray
    diameters: np.ndarray
    number_density: np.ndarray
    section_density: np.ndarray
    fitted_section_density: np.ndarray
    mean_diameter: float
    d50: float
    number_per_volume: float
    volume_fraction: float
    units: str

def saltykov_matrix(edges: np.ndarray) -> np.ndarray:
    """Sections per unit area in each class from one sphere per unit volume in each class.

    A sphere of diameter D cut by a plane at a uniformly distributed height gives a section
    of diameter d with P(a < d ≤ b) = (√(D² − a²) − √(D² − b²))/D for b ≤ D, and N_V spheres
    per unit volume give N_V·D sections per unit area [1]_. With every sphere of class j at
    its upper limit D_j = edges[j + 1] [2]_, element (i, j) is
    √(D_j² − a_i²) − √(D_j² − b_i²) for class i = (a_i, b_i], zero when b_i > D_j.

    Parameters
    ----------
    edges : ndarray, shape (n + 1,)
        Class limits, increasing, edges[0] ≥ 0.

    Returns
    -------
    ndarray, shape (n, n)
        Upper-triangular matrix K with N_A = K N_V.

    References
    ----------
    .. [1] Wicksell, S. D. (1925). The corpuscle problem. Biometrika 17, 84–99.
    .. [2] Saltykov, S. A. (1967). The determination of the size distribution of particles
       in an opaque material from a measurement of the size distribution of their sections.
       In Stereology (H. Elias, ed.), Springer, 163–173.

    Examples
    --------
    >>> saltykov_matrix(np.array([0.0, 1.0, 2.0])).round(3)
    array([[1.   , 0.268],
           [0.   , 1.732]])
    """
    a = edges[:-1][:, None]
    b = edges[1:][:, None]
    d = edges[1:][None, :]
    k = np.sqrt(np.clip(d * d - a * a, 0, None)) - np.sqrt(np.clip(d * d - b * b, 0, None))
    return np.where(b <= d * (1 + 1e-12), k, 0.0)


def saltykov(section_diameters, weights, window_area: float, n_classes: int = 12,
             classes: str = "geometric", ratio: float = SALTYKOV_RATIO,
             d_max: float | None = None, units: str = "um") -> SphereDistribution:
    """Saltykov unfolding of section diameters into a sphere-diameter distribution.

    Section diameters (ECDs) are sorted into classes below the largest one; the section
    densities N_A,i are the sums of the sections' edge weights divided by the frame area;
    the sphere densities N_V,j solve N_A = K N_V (`saltykov_matrix`). Saltykov solved the
    triangular system class by class from the top; noise then makes some classes negative.
    Here the system is solved by non-negative least squares (`scipy.optimize.nnls`, Lawson
    & Hanson 1974) with each row divided by the Poisson standard deviation of its N_A,i
    (√Σw² / area, at least one particle of mean weight for empty classes): the classes
    that would be negative are zero and the others fit the measured sections as closely as
    their counting error allows. Sections smaller than the lowest class are left out, and
    so is their contribution in the model (consistent, no bias).

    Parameters
    ----------
    section_diameters : array
        ECD of each section.
    weights : array
        Edge weight of each section (Miles–Lantuéjoul; 0 for sections cut by the border).
    window_area : float
        Area of the frame, units².
    n_classes : int
        Number of diameter classes.
    classes : {"geometric", "linear"}
        Geometric classes (Saltykov's area method: each class limit *ratio* times the next,
        10^−0.1 by default, i.e. section areas in steps of 10^−0.2) or equal-width classes
        from 0 to *d_max*.
    ratio : float
        Ratio of consecutive limits of geometric classes (0 < ratio < 1).
    d_max : float, optional
        Upper limit of the top class; default the largest section diameter.
    units : str
        Length unit, recorded in the result.

    Returns
    -------
    SphereDistribution

    Notes
    -----
    Assumes spheres (or particles whose sections resemble those of spheres) cut by
    isotropic uniform random planes, and that the smallest sections are not lost by the
    segmentation; lost small sections make the small classes too low.

    References
    ----------
    Saltykov, S. A. (1967). In Stereology (H. Elias, ed.), Springer, 163–173.
    Wicksell, S. D. (1925). Biometrika 17, 84–99.
    Lawson, C. L. & Hanson, R. J. (1974). Solving Least Squares Problems. Prentice-Hall.

    Examples
    --------
    >>> d = np.sqrt(1 - np.linspace(0, 1, 2001)[:-1] ** 2)   # sections of unit spheres
    >>> s = saltykov(d, np.ones(d.size), window_area=2000.0)
    >>> round(s.mean_diameter, 2), round(s.number_per_volume, 2)
    (0.99, 1.01)
    """
    d = np.asarray(section_diameters, float)
    w = np.asarray(weights, float)
    if d.shape != w.shape or d.ndim != 1:
        raise InputError("section diameters and weights must be 1D arrays of equal length")
    if not window_area > 0:
        raise InputError(f"frame area {window_area} must be positive")
    if n_classes < 1:
        raise InputError(f"n_classes = {n_classes}: give at least one class")
    used = w > 0
    if not used.any():
        nan = math.nan
        empty = np.zeros(n_classes)
        return SphereDistribution(np.full(n_classes + 1, nan), np.full(n_classes, nan), empty,
                                  empty, empty, nan, nan, 0.0, 0.0, units)
    top = float(d[used].max()) if d_max is None else float(d_max)
    if classes == "geometric":
        if not 0 < ratio < 1:
            raise InputError(f"class ratio {ratio} must lie between 0 and 1 (Saltykov: 10^-0.1)")
        edges = top * ratio ** np.arange(n_classes, -1, -1, dtype=float)
    elif classes == "linear":
        edges = np.linspace(0.0, top, n_classes + 1)
    else:
        raise InputError(f"classes = {classes!r}: choose 'geometric' or 'linear'")
    inside = used & (d > edges[0]) & (d <= edges[-1])
    which = np.searchsorted(edges, d[inside], side="left") - 1
    n_a = np.bincount(which, weights=w[inside], minlength=n_classes) / window_area
    w2 = np.bincount(which, weights=w[inside] ** 2, minlength=n_classes)
    sigma = np.sqrt(np.maximum(w2, w[inside].mean() ** 2)) / window_area
    k = saltykov_matrix(edges)
    n_v, _ = nnls(k / sigma[:, None], n_a / sigma)
    diam = edges[1:]
    total = float(n_v.sum())
    mean = float(n_v @ diam / total) if total > 0 else math.nan
    d50 = float(diam[np.argmax(np.cumsum(n_v) >= 0.5 * total)]) if total > 0 else math.nan
    return SphereDistribution(edges, diam, n_v, n_a, k @ n_v, mean, d50, total,
                              float(n_v @ (math.pi * diam ** 3 / 6)), units)


def _directions(ndim: int) -> list[tuple[int, ...]]:
    """One of each ± pair of neighbour offsets: 4 in 2D, 13 in 3D."""
    out = []
    for off in np.ndindex(*([3] * ndim)):
        o = tuple(int(x) - 1 for x in off)
        if any(o) and tuple(-x for x in o) not in out:
            out.append(o)
    return out


def _pairs(array: np.ndarray, offset: tuple[int, ...]):
    """The two views (pixel, pixel + offset) over all pairs inside the array."""
    first = tuple(slice(max(0, -o), n - max(0, o)) for o, n in zip(offset, array.shape))
    second = tuple(slice(max(0, o), n - max(0, -o)) for o, n in zip(offset, array.shape))
    return array[first], array[second]


@dataclass(frozen=True)
class LineDensities:
    """Boundary crossings of one phase per unit test-line length, averaged over directions.

    Attributes
    ----------
    volume_fraction : float
        Area (volume) fraction of the phase, V_V = A_A.
    p_l_other : float
        Crossings of boundaries between the phase and any other phase, P_L^{αβ}.
    p_l_same : float or None
        Crossings of boundaries between touching particles of the phase, P_L^{αα}
        (``None`` when no particle labels were given).
    units : str
    """

    volume_fraction: float
    p_l_other: float
    p_l_same: float | None
    units: str


def boundary_densities(phase_mask: np.ndarray, particle_labels: np.ndarray | None = None,
                       voxel_size_um: float | None = None) -> LineDensities:
    """Count boundary crossings along test lines through the pixel (voxel) centres.

    For every neighbour direction (0°, 45°, 90°, 135° in 2D; the 13 directions to the
    26 neighbours in 3D) each pair of adjacent pixels is a test-line step of length 1 or
    √2 (√3) pixels; a pair whose pixels differ in phase is a crossing of an αβ boundary, a
    pair of two pixels of the phase in different particles a crossing of an αα boundary
    [1]_. P_L is the crossings over the step length, averaged over the directions with
    equal weights (the Crofton average in 2D; in 3D an approximation that is exact for
    isotropic structures). Only pairs inside the image count, so the border needs no
    correction.

    Parameters
    ----------
    phase_mask : ndarray of bool, 2D or 3D
        Pixels of the phase α.
    particle_labels : ndarray of int, optional
        Particle numbers of α (e.g. `polisect.measure.particles.label_particles` with splitting);
        needed for αα boundaries and so for contiguity.
    voxel_size_um : float, optional
        Pixel edge; P_L then per µm, otherwise per pixel.

    Returns
    -------
    LineDensities

    References
    ----------
    .. [1] Underwood, E. E. (1970). Quantitative Stereology. Addison-Wesley, ch. 2.

    Examples
    --------
    >>> m = np.zeros((100, 100), bool); m[:, 25:75] = True      # a band, half the width
    >>> ld = boundary_densities(m)
    >>> ld.volume_fraction, round(ld.p_l_other, 4)
    (0.5, 0.0122)
    """
    mask = np.asarray(phase_mask, bool)
    if mask.ndim not in (2, 3):
        raise InputError(f"boundary densities need a 2D or 3D phase mask, got shape {mask.shape}")
    if particle_labels is not None and np.shape(particle_labels) != mask.shape:
        raise InputError(f"particle labels of shape {np.shape(particle_labels)} do not match "
                         f"the phase mask of shape {mask.shape}")
    scale = voxel_size_um or 1.0
    other, same = [], []
    for off in _directions(mask.ndim):
        a, b = _pairs(mask, off)
        length = a.size * math.sqrt(sum(o * o for o in off)) * scale
        other.append(np.count_nonzero(a != b) / length)
        if particle_labels is not None:
            la, lb = _pairs(np.asarray(particle_labels), off)
            same.append(np.count_nonzero(a & b & (la != lb)) / length)
    return LineDensities(float(mask.mean()), float(np.mean(other)),
                         float(np.mean(same)) if same else None,
                         "um" if voxel_size_um else "px")


@dataclass(frozen=True)
class Spacing:
    """Fullman's intercept measures and Gurland's contiguity of one phase.

    Attributes
    ----------
    mean_intercept : float
        Mean particle intercept length L3 = 2V_V/(P_L^{αβ} + 2P_L^{αα}); 2D/3 for spheres.
    mean_free_path : float
        Mean edge-to-edge distance between particles through the other phases,
        λ = 2(1 − V_V)/P_L^{αβ} (Fullman 1953).
    surface_density : float
        Particle surface per unit volume, S_V = 2(P_L^{αβ} + P_L^{αα}) — each αα boundary
        counted once (units⁻¹).
    contiguity : float or None
        C = 2P_L^{αα}/(2P_L^{αα} + P_L^{αβ}) (Gurland 1958); ``None`` without αα data.
    units : str
    """

    mean_intercept: float
    mean_free_path: float
    surface_density: float
    contiguity: float | None
    units: str

def spacing(densities: LineDensities) -> Spacing:
    """Mean intercept length, mean free path and contiguity from boundary line densities.

    Parameters
    ----------
    densities : LineDensities
        From `boundary_densities`.

    Returns
    -------
    Spacing

    References
    ----------
    Fullman, R. L. (1953). Trans. AIME 197, 447–452.
    Gurland, J. (1958). The measurement of grain contiguity in two-phase alloys. Trans. AIME
    212, 452–455.

    Examples
    --------
    >>> s = spacing(LineDensities(0.25, 0.05, 0.0, "um"))
    >>> s.mean_intercept, s.mean_free_path, s.contiguity
    (10.0, 30.0, 0.0)
    """
    v = densities.volume_fraction
    ab = densities.p_l_other
    aa = densities.p_l_same or 0.0
    intercept = 2 * v / (ab + 2 * aa) if ab + aa > 0 else math.nan
    free = 2 * (1 - v) / ab if ab > 0 else math.nan
    contiguity = None
    if densities.p_l_same is not None and ab + aa > 0:
        contiguity = 2 * aa / (2 * aa + ab)
    return Spacing(intercept, free, 2 * (ab + aa), contiguity, densities.units)


@dataclass(frozen=True, eq=False)
class NearestNeighbour:
    """Nearest-neighbour distances between particle centres.

    Attributes
    ----------
    mean : float
        Edge-corrected mean nearest-neighbour distance.
    n_used : int
        Points whose distance entered the estimate.
    intensity : float
        Points per unit area (volume).
    clark_evans : float
        mean / (mean of a Poisson process of the same intensity): about 1 for complete
        spatial randomness, < 1 for clustering, > 1 for regular (hard-core) patterns.
    distances : ndarray
        Nearest-neighbour distance of every point (before edge correction).
    units : str
    """

    mean: float
    n_used: int
    intensity: float
    clark_evans: float
    distances: np.ndarray
    units: str

def nearest_neighbour(points: np.ndarray, window, periodic: bool = False,
                      units: str = "um") -> NearestNeighbour:
    """Mean nearest-neighbour distance of points in a box, with edge correction.

    Periodic: distances wrap around the box (`scipy.spatial.cKDTree` with ``boxsize``).
    Otherwise a point's nearest neighbour is trusted only when it is no farther than the
    box border (no unseen closer neighbour can exist), and the trusted distances d_i are
    weighted by 1/|W ⊖ d_i|, the volume of the box eroded by d_i — the Hanisch (1984)
    estimator of the nearest-neighbour distance distribution, whose mean is reported.

    Parameters
    ----------
    points : ndarray, shape (n, ndim)
        Centres, in ``[0, window)`` per axis.
    window : sequence of float
        Box edge lengths (same order of axes as *points*).
    periodic : bool
        Treat the box as periodic.
    units : str
        Length unit, recorded in the result.

    Returns
    -------
    NearestNeighbour

    References
    ----------
    Clark, P. J. & Evans, F. C. (1954). Distance to nearest neighbor as a measure of spatial
    relationships in populations. Ecology 35, 445–453.
    Hanisch, K.-H. (1984). Some remarks on estimators of the distribution function of
    nearest neighbour distance in stationary spatial point processes. Math. Operationsforsch.
    Statist., Ser. Statistics 15, 409–412.

    Examples
    --------
    >>> g = (np.mgrid[:10, :10].reshape(2, -1).T + 0.5) * 2.0     # square lattice, step 2
    >>> nn = nearest_neighbour(g, (20.0, 20.0), periodic=True)
    >>> nn.mean, round(nn.clark_evans, 3)
    (2.0, 2.0)
    """
    pts = np.asarray(points, float)
    box = np.asarray(window, float)
    if pts.ndim != 2 or pts.shape[1] != box.size or box.size not in (2, 3):
        raise InputError(f"points of shape {pts.shape} do not fit a window of {box.size} axes")
    if not (box > 0).all():
        raise InputError(f"window {tuple(box)} must have positive edges")
    n = pts.shape[0]
    intensity = n / float(np.prod(box))
    if n < 2:
        return NearestNeighbour(math.nan, 0, intensity, math.nan, np.full(n, np.nan), units)
    tree = cKDTree(np.mod(pts, box) if periodic else pts, boxsize=box if periodic else None)
    dist = tree.query(np.mod(pts, box) if periodic else pts, k=2)[0][:, 1]
    if periodic:
        weight = np.ones(n)
    else:
        border = np.minimum(pts, box - pts).min(axis=1)
        eroded = np.prod(np.clip(box[None, :] - 2 * dist[:, None], 0, None), axis=1)
        weight = np.where((dist <= border) & (eroded > 0), 1.0 / np.where(eroded > 0, eroded, 1), 0)
    used = weight > 0
    mean = float(weight @ dist / weight.sum()) if used.any() else math.nan
    d = box.size
    unit_ball = math.pi ** (d / 2) / gamma(d / 2 + 1)
    poisson = gamma(1 + 1 / d) / (intensity * unit_ball) ** (1 / d)
    return NearestNeighbour(mean, int(used.sum()), intensity, float(mean / poisson), dist, units)


@dataclass(frozen=True, eq=False)
class CorrelationFunction:
    """Radially averaged two-point correlation function S2(r) of one phase.

    Attributes
    ----------
    r : ndarray
        Mean lag distance of each radial bin (bins one pixel wide), units.
    s2 : ndarray
        Probability that two points a distance r apart both lie in the phase.
    fraction : float
        Area (volume) fraction φ = S2(0).
    correlation_length : float
        First r at which the normalised covariance (S2 − φ²)/(φ − φ²) falls to 1/e (linear
        interpolation); NaN if not reached within the largest lag.
    periodic : bool
    units : str
    """

    r: np.ndarray
    s2: np.ndarray
    fraction: float
    correlation_length: float
    periodic: bool
    units: str

def two_point_correlation(phase_mask: np.ndarray, r_max: int | None = None,
                          periodic: bool = False, voxel_size_um: float | None = None,
                          workers: int = -1) -> CorrelationFunction:
    """Two-point correlation function S2 of a phase by FFT, radially averaged.

    S2(x) is the fraction of point pairs separated by the lag vector x that both fall in
    the phase: the autocorrelation of the indicator function, computed with real FFTs
    (Wiener–Khinchin). Periodic images use the circular autocorrelation divided by the
    number of pixels. Otherwise the image is zero-padded by *r_max* so that no pair wraps
    around, and each lag is divided by its number of pairs inside the image, Π(n_k − |x_k|)
    (the unbiased covariance estimator of Serra 1982). Lags are then averaged in rings
    (shells) one pixel wide.

    Parameters
    ----------
    phase_mask : ndarray of bool, 2D or 3D
        Pixels of the phase.
    r_max : int, optional
        Largest lag, pixels (default a quarter of the smallest image edge; at most half of it).
    periodic : bool
        The image tiles space (synthetic cells).
    voxel_size_um : float, optional
        Pixel edge, for r and the lengths in µm.
    workers : int
        Threads for scipy.fft (-1: all cores).

    Returns
    -------
    CorrelationFunction

    References
    ----------
    Torquato, S. (2002). Random Heterogeneous Materials. Springer, ch. 2.
    Serra, J. (1982). Image Analysis and Mathematical Morphology. Academic Press, ch. 9.
    
    Examples
    --------
    >>> m = np.zeros((64, 64), bool); m[:, ::2] = True          # stripes, φ = 1/2
    >>> c = two_point_correlation(m, r_max=4, periodic=True)
    >>> c.fraction, float(c.s2[0])
    (0.5, 0.5)
    """
    mask = np.asarray(phase_mask)
    if mask.ndim not in (2, 3):
        raise InputError(f"the two-point correlation needs a 2D or 3D mask, got shape {mask.shape}")
    mask = mask.astype(float)
    shape = mask.shape
    half = min(shape) // 2
    r_max = int(r_max) if r_max is not None else max(1, min(shape) // 4)
    if not 1 <= r_max <= half:
        raise InputError(f"r_max = {r_max} px: choose a lag between 1 and half the smallest "
                         f"image edge ({half} px)")
    if periodic:
        size = shape
    else:
        size = tuple(sp_fft.next_fast_len(n + r_max, real=True) for n in shape)
    spec = sp_fft.rfftn(mask, s=size, workers=workers)
    corr = sp_fft.irfftn(spec * np.conj(spec), s=size, workers=workers)
    lags = np.concatenate([np.arange(r_max + 1), np.arange(-r_max, 0)])
    block = corr[np.ix_(*[lags % s for s in size])]
    grids = np.meshgrid(*[lags] * mask.ndim, indexing="ij", sparse=True)
    if periodic:
        pairs = float(mask.size)
    else:
        pairs = 1.0
        for g, n in zip(grids, shape):
            pairs = pairs * (n - np.abs(g))
    s2 = block / pairs
    dist = np.sqrt(sum(g.astype(float) ** 2 for g in grids))
    ring = np.rint(dist).astype(int)
    keep = ring <= r_max
    count = np.bincount(ring[keep], minlength=r_max + 1)
    s2_r = np.bincount(ring[keep], weights=s2[keep], minlength=r_max + 1) / count
    r = np.bincount(ring[keep], weights=dist[keep], minlength=r_max + 1) / count
    phi = float(mask.mean())
    scale = voxel_size_um or 1.0
    var = phi - phi * phi
    length = math.nan
    if var > 0:
        length = _first_crossing(r, (s2_r - phi * phi) / var, math.exp(-1.0)) * scale
    return CorrelationFunction(r * scale, s2_r, phi, length, periodic,
                               "um" if voxel_size_um else "px")


def _first_crossing(x: np.ndarray, y: np.ndarray, level: float) -> float:
    below = np.flatnonzero(y <= level)
    if below.size == 0:
        return math.nan
    i = int(below[0])
    if i == 0:
        return float(x[0])
    return float(x[i - 1] + (y[i - 1] - level) / (y[i - 1] - y[i]) * (x[i] - x[i - 1]))
