"""Segmentation: grey-level or colour-coded micrographs to integer phase labels.

* `segment_grayscale`: optional denoising, then multi-Otsu or given thresholds; classes
  are numbered 0..N−1 from dark to bright; then optional clean-up of small features.
* `segment_palette`: an RGB image whose colours code the phases.
* `suggest_classes`: how many grey-level classes an image holds.
* `clean_small_features`: merge features smaller than a size into the phase around them.

Examples
--------
>>> import numpy as np
>>> from polisect.segment.thresholds import segment_grayscale
>>> img = np.array([[10, 10, 120, 120], [10, 10, 120, 240], [10, 10, 120, 240]], np.uint8)
>>> segment_grayscale(img, thresholds=[60, 180], method="thresholds").labels
array([[0, 0, 1, 1],
       [0, 0, 1, 2],
       [0, 0, 1, 2]], dtype=int32)
"""

from __future__ import annotations

import numbers
import re
from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ..core.choices import SEGMENT_METHODS
from ..core.errors import InputError

__all__ = ["SegmentResult", "segment_grayscale", "segment_palette", "suggest_classes",
           "clean_small_features", "noise_sigma", "refined_thresholds", "resolve_mixed_rims",
           "auto_denoise_px", "default_min_feature_px", "DENOISE_RADII"]

DENOISE = ("none", "median", "nl-means")
#: The methods `segment_grayscale` runs (``"trained"`` is `polisect.segment.trained`).
METHODS = tuple(m for m in SEGMENT_METHODS if m != "trained")
#: Median radii (pixels) the automatic denoising chooses from; footprints of 5, 9, 13, 21
#: and 29 pixels.
DENOISE_RADII = (1.0, 1.5, 2.0, 2.5, 3.0)
#: Multi-Otsu searches all threshold combinations; beyond this many classes it uses a
#: coarser histogram to stay fast.
_FULL_HISTOGRAM_CLASSES = 5


@dataclass(frozen=True, eq=False)
class SegmentResult:
    """Labels from a segmentation and how they were obtained.

    Attributes
    ----------
    labels : ndarray of int32
        Class of every pixel: 0..N−1 from dark to bright for grey images, the
        configured phase labels for palette images.
    thresholds : tuple of float
        Grey levels separating the classes, in the units of the (denoised) image; a
        pixel above ``thresholds[k-1]`` and at most ``thresholds[k]`` is class k.
        Empty for palette images.
    method : str
        ``'multi-otsu'``, ``'thresholds'`` or ``'palette'``.
    notes : tuple of str
        What was done and anything worth a warning (empty classes, merged features).
    min_feature_px : int
        Smallest feature kept, pixels (the value used when ``"auto"`` was asked for).
    """

    labels: np.ndarray
    thresholds: tuple[float, ...]
    method: str
    notes: tuple[str, ...] = ()
    min_feature_px: int = 0

    def fractions(self) -> dict[int, float]:
        """Pixel fraction of every label present."""
        values, counts = np.unique(self.labels, return_counts=True)
        return dict(zip(values.tolist(), (counts / self.labels.size).tolist()))


def segment_grayscale(image: np.ndarray, *, method: str = "multi-otsu",
                      classes: int | None = None, thresholds: Sequence[float] | None = None,
                      denoise: str = "none", denoise_px: float | str = 1.0,
                      min_feature_px: int | str = 0) -> SegmentResult:
    """Split a grey image (2D section or 3D stack) into classes by grey level.

    Parameters
    ----------
    image : ndarray, shape (ny, nx) or (nz, ny, nx)
        Grey levels (convert colour images with `polisect.read.image.to_grayscale` first).
    method : {'multi-otsu', 'thresholds'}
        Thresholds that maximise the between-class variance [1]_, [2]_, or the
        *thresholds* given.
    classes : int, optional
        Number of classes, ≥ 2; required for ``'multi-otsu'``, implied by *thresholds*.
    thresholds : sequence of float, optional
        Increasing grey levels for ``'thresholds'``, in the units of the image.
    denoise : {'none', 'median', 'nl-means'}
        Median filter over the pixels within *denoise_px* of the centre (a disc, or a
        ball in 3D) [3]_, or non-local means [4]_ with patches of side
        ``2 * round(denoise_px) + 1``, a search distance of ``round(3 * denoise_px)``
        and a filter strength of 0.8 times the noise level estimated from the image [5]_.
    denoise_px : float or 'auto'
        Denoising radius, pixels (≥ 1); ``'auto'`` chooses it from the noise and the gap
        between the classes' grey levels (`auto_denoise_px`).
    min_feature_px : int or 'auto'
        Features (connected regions of one class) smaller than this many pixels are
        merged into the class around them (`clean_small_features`); 0 keeps all;
        ``'auto'`` uses `default_min_feature_px` of the denoising radius.

    Returns
    -------
    SegmentResult

    Raises
    ------
    InputError
        Unknown method or denoising, bad classes or thresholds, NaN pixels, or an image
        without enough distinct grey levels for the classes asked for.

    Notes
    -----
    Multi-Otsu searches the histogram exhaustively: one bin per grey level for 8-bit
    images, else 256 bins over the grey range; with more than five classes 64 bins (the
    search grows as the number of bins to the power of classes − 1), and a note says so.
    The thresholds reported are the upper edges of the last bin of each class.

    References
    ----------
    .. [1] Otsu, N. (1979). A threshold selection method from gray-level histograms.
       IEEE Trans. Syst. Man Cybern. 9, 62-66.
    .. [2] Liao, P.-S., Chen, T.-S., Chung, P.-C. (2001). A fast algorithm for multilevel
       thresholding. J. Inf. Sci. Eng. 17, 713-727.
    .. [3] Tukey, J. W. (1977). Exploratory Data Analysis. Addison-Wesley (running medians).
    .. [4] Buades, A., Coll, B., Morel, J.-M. (2005). A non-local algorithm for image
       denoising. Proc. IEEE CVPR 2, 60-65.
    .. [5] Immerkær, J. (1996). Fast noise variance estimation. Comput. Vis. Image
       Underst. 64, 300-302.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(0)
    >>> img = np.repeat([40, 130, 220], 300).reshape(30, 30) + rng.normal(0, 8, (30, 30))
    >>> r = segment_grayscale(img, classes=3)
    >>> [round(f, 2) for f in r.fractions().values()]
    [0.33, 0.33, 0.33]
    """
    image = _check_grey(image)
    notes: list[str] = []
    if method not in METHODS:
        raise InputError(f"segmentation method {method!r} is not known; use one of {METHODS}")
    if method == "multi-otsu":
        if thresholds is not None:
            raise InputError("thresholds are given but method = \"multi-otsu\"; set "
                             "method = \"thresholds\" to use them")
        classes = _check_classes(classes)
    else:
        thresholds = _check_thresholds(thresholds, classes)
        classes = len(thresholds) + 1
    _check_contrast(image, classes)
    if denoise_px == "auto":
        denoise_px = 1.0
        if denoise != "none":
            cuts = thresholds if method == "thresholds" else _multi_otsu(image, classes, [])
            parts = np.digitize(image, cuts, right=True)
            levels = [np.median(image[parts == k]) for k in range(classes) if np.any(parts == k)]
            gap = float(np.diff(levels).min()) if len(levels) > 1 else float(np.ptp(image))
            denoise_px = auto_denoise_px(noise_sigma(image), gap)
            notes.append(f"denoising radius {denoise_px:g} px chosen from the noise")
    if min_feature_px == "auto":
        min_feature_px = default_min_feature_px(denoise_px if denoise != "none" else 1.0)
    work = _denoise(image, denoise, denoise_px, notes)
    if method == "multi-otsu":
        thresholds = _multi_otsu(work, classes, notes)
    labels = np.digitize(work, thresholds, right=True).astype(np.int32)
    empty = sorted(set(range(classes)) - set(np.unique(labels).tolist()))
    if empty:
        notes.append(f"classes {empty} received no pixels; check the thresholds")
    if min_feature_px:
        labels = clean_small_features(labels, min_feature_px, notes=notes)
    return SegmentResult(labels, tuple(float(t) for t in thresholds), method, tuple(notes),
                         int(min_feature_px))


def default_min_feature_px(denoise_px: float) -> int:
    """The default smallest feature: the pixels of a disc one pixel wider than the filter.

    A feature smaller than the disc of radius ``denoise_px + 1`` can be made by the
    noise that the median filter of radius *denoise_px* leaves, so it is merged into
    its surroundings. With the radius chosen from the noise (`auto_denoise_px`) this is
    one rule for every entry point: 13 px for a radius of 1, 20 px for 1.5, 29 px for 2.
    """
    return int(np.ceil(np.pi * (max(float(denoise_px), 1.0) + 1) ** 2))


def _footprint_size(radius: float) -> int:
    half = int(np.floor(radius))
    grid = np.indices((2 * half + 1,) * 2) - half
    return int(((grid ** 2).sum(0) <= radius ** 2).sum())


def auto_denoise_px(noise: float, gap: float) -> float:
    """Median radius for a noise level: the smallest in `DENOISE_RADII` whose footprint of
    n pixels brings the noise to a sixth of the smallest gap between class grey levels.

    The median of n Gaussian samples has a standard deviation of about
    1.2533 σ / √n [1]_; n ≥ (7.5 σ / gap)² makes that at most gap / 6, so a pixel in the
    middle of a phase lands on the wrong side of a midpoint threshold with a probability
    below 10⁻³.

    References
    ----------
    .. [1] Kenney, J. F., Keeping, E. S. (1962). Mathematics of Statistics, Part 1, 3rd ed.
       Van Nostrand (standard error of the median, √(π/2) σ / √n).
    """
    need = (7.5 * noise / max(gap, 1e-12)) ** 2
    for r in DENOISE_RADII:
        if _footprint_size(r) >= need:
            return r
    return DENOISE_RADII[-1]


def _check_grey(image):
    image = np.asarray(image)
    if image.ndim not in (2, 3):
        raise InputError(f"a grey image must be 2D or a 3D stack, got shape {image.shape}")
    if not (np.issubdtype(image.dtype, np.integer) or np.issubdtype(image.dtype, np.floating)
            or image.dtype == bool):
        raise InputError(f"grey levels of type {image.dtype} cannot be segmented")
    if image.dtype == bool:
        image = image.astype(np.uint8)
    if np.issubdtype(image.dtype, np.floating) and not np.all(np.isfinite(image)):
        raise InputError("the image holds NaN or infinite pixels; replace them before "
                         "segmenting")
    return image


def _check_classes(classes):
    if classes is None:
        raise InputError("multi-Otsu segmentation needs classes = N (the number of phases "
                         "told apart by grey level)")
    if isinstance(classes, bool) or not isinstance(classes, (int, np.integer)) or classes < 2:
        raise InputError(f"classes = {classes!r}: give a whole number ≥ 2")
    return int(classes)


def _check_thresholds(thresholds, classes):
    if thresholds is None or len(thresholds) == 0:
        raise InputError("method = \"thresholds\" needs thresholds = [t1, t2, ...]")
    try:
        t = np.asarray(thresholds, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"thresholds = {thresholds!r}: give a list of numbers") from None
    if t.ndim != 1 or not np.all(np.isfinite(t)) or np.any(np.diff(t) <= 0):
        raise InputError(f"thresholds = {list(thresholds)} must be finite and strictly "
                         "increasing")
    if classes is not None and classes != len(t) + 1:
        raise InputError(f"classes = {classes} does not match the {len(t)} thresholds given "
                         f"({len(t) + 1} classes); drop classes or correct it")
    return t


def _check_contrast(image, classes):
    lo, hi = image.min(), image.max()
    if lo == hi:
        raise InputError(f"the image has no contrast (every pixel is {lo}); it cannot be split "
                         f"into {classes} classes — check that the right file was given, or "
                         "use kind = \"labels\" for a label image")
    if np.issubdtype(image.dtype, np.integer) and int(hi) - int(lo) < 65536:
        distinct = np.count_nonzero(np.bincount((image - lo).ravel().astype(np.int64)))
        if distinct < classes:
            raise InputError(f"the image has only {distinct} distinct grey levels, fewer than "
                             f"the {classes} classes asked for; lower classes")


def _denoise(image, denoise, radius, notes):
    if denoise not in DENOISE:
        raise InputError(f"denoise = {denoise!r} is not known; use one of {DENOISE}")
    if denoise == "none":
        return image
    if isinstance(radius, bool) or not isinstance(radius, numbers.Real) or not radius >= 1:
        raise InputError(f"denoise_px = {radius!r}: give a radius of at least 1 pixel")
    if denoise == "median":
        from skimage.filters import median

        half = int(np.floor(radius))
        grid = np.indices((2 * half + 1,) * image.ndim) - half
        footprint = (grid ** 2).sum(0) <= radius ** 2
        notes.append(f"median filter, radius {radius:g} px")
        return median(image, footprint=footprint, behavior="ndimage")
    from skimage.restoration import denoise_nl_means

    work = image.astype(np.float64)
    sigma = noise_sigma(work)
    if sigma == 0:
        notes.append("non-local means skipped: the image shows no noise")
        return work
    patch = 2 * int(round(radius)) + 1
    notes.append(f"non-local means, patch {patch} px, estimated noise {sigma:.3g}")
    return denoise_nl_means(work, h=0.8 * sigma, sigma=sigma, patch_size=patch,
                            patch_distance=int(round(3 * radius)), fast_mode=True,
                            preserve_range=True)


def noise_sigma(image: np.ndarray) -> float:
    """Standard deviation of additive white noise in an image, Immerkær's estimate.

    σ = √(π/2) · mean |I ∗ N| / 6 with the mask N = [[1, −2, 1], [−2, 4, −2], [1, −2, 1]]
    (the difference of two Laplacians, blind to flat and linearly varying regions),
    averaged over the interior pixels of every 2D slice.

    References
    ----------
    .. [1] Immerkær, J. (1996). Fast noise variance estimation. Comput. Vis. Image
       Underst. 64, 300-302.

    Examples
    --------
    >>> import numpy as np
    >>> noisy = np.random.default_rng(0).normal(100, 5, (256, 256))
    >>> round(noise_sigma(noisy), 1)
    5.0
    """
    from scipy.ndimage import convolve

    mask = np.array([[1, -2, 1], [-2, 4, -2], [1, -2, 1]], float)
    slices = image[None] if image.ndim == 2 else image
    total = sum(np.abs(convolve(sl.astype(np.float64), mask))[1:-1, 1:-1].mean() for sl in slices)
    return float(np.sqrt(np.pi / 2) * total / len(slices) / 6)


def _histogram(image, nbins):
    """Counts and bin centres: one bin per grey level for integer images spanning at most
    *nbins* levels, else *nbins* equal bins over the range."""
    lo, hi = image.min(), image.max()
    if np.issubdtype(image.dtype, np.integer) and int(hi) - int(lo) < nbins:
        counts = np.bincount((image - lo).ravel().astype(np.int64))
        return counts, np.arange(len(counts), dtype=float) + float(lo)
    counts, edges = np.histogram(image, bins=nbins, range=(float(lo), float(hi)))
    return counts, (edges[:-1] + edges[1:]) / 2


def _multi_otsu(image, classes, notes):
    from skimage.filters import threshold_multiotsu

    nbins = 256
    if classes > _FULL_HISTOGRAM_CLASSES:
        nbins = 64
        notes.append(f"multi-Otsu with {classes} classes on a 64-bin histogram (thresholds to "
                     "1/64 of the grey range)")
    counts, centres = _histogram(image, nbins)
    width = centres[1] - centres[0]
    try:
        # the upper edge of the last bin of each class: the partition of the histogram
        return np.asarray(threshold_multiotsu(hist=(counts, centres), classes=classes),
                          float) + width / 2
    except ValueError as exc:
        raise InputError(f"the grey levels cannot be split into {classes} classes ({exc}); "
                         "lower classes or give thresholds") from None


def refined_thresholds(image: np.ndarray, classes: int, *, iterations: int = 20
                       ) -> np.ndarray:
    """Multi-Otsu thresholds moved to the midpoints between adjacent class medians.

    Multi-Otsu [1]_ maximises the between-class variance; when the classes are well
    apart any threshold in the empty valley between them does that equally well, and a
    rare class (a few per cent of pores) pulls the optimum towards itself. The iterative
    selection of Ridler and Calvard [2]_ then places each threshold midway between the
    grey levels of the two classes it separates (here their medians, robust to
    outliers), repeated until stable: pixels mixing two phases at a boundary are split
    evenly, which keeps area fractions unbiased.

    Parameters
    ----------
    image : ndarray
        Grey image (denoised).
    classes : int
        Number of classes, ≥ 2.
    iterations : int
        Largest number of midpoint updates.

    Returns
    -------
    ndarray of float, shape (classes − 1,)

    References
    ----------
    .. [1] Liao, P.-S., Chen, T.-S., Chung, P.-C. (2001). J. Inf. Sci. Eng. 17, 713-727.
    .. [2] Ridler, T. W., Calvard, S. (1978). Picture thresholding using an iterative
       selection method. IEEE Trans. Syst. Man Cybern. 8, 630-632.

    Examples
    --------
    >>> import numpy as np
    >>> img = np.concatenate([np.full(970, 20.0), np.full(30, 200.0)]).reshape(10, 100)
    >>> refined_thresholds(img, 2)
    array([110.])
    """
    image = _check_grey(image)
    _check_contrast(image, _check_classes(classes))
    values = np.sort(np.asarray(image, dtype=np.float64).ravel())
    t = np.asarray(_multi_otsu(values, classes, []), float)
    for _ in range(iterations):
        edges = np.searchsorted(values, t, side="right")
        parts = np.split(values, edges)
        if any(p.size == 0 for p in parts):
            break
        medians = np.array([p[p.size // 2] for p in parts])
        new = (medians[:-1] + medians[1:]) / 2
        if np.allclose(new, t):
            break
        t = new
    return t


def resolve_mixed_rims(labels: np.ndarray, grey: np.ndarray, means: Sequence[float]
                       ) -> tuple[np.ndarray, int]:
    """Give thin rims of an intermediate class between a darker and a brighter class to
    one of the two.

    A pixel straddling the boundary between a dark and a bright phase takes a grey level
    in between (the partial-volume effect), which a threshold assigns to any class lying
    in between: a pore in a bright matrix gets a one- or two-pixel rim of the middle
    phase [1]_. Here a pixel of a middle class k is such a rim pixel when a binary
    opening of class k with the 3 × 3 cross removes it (the rim is under three pixels
    wide) and its 3 × 3 neighbourhood holds both a darker and a brighter class; it goes
    to the darker of those (the nearest darker class present) when its grey level lies
    below the midpoint of the two classes' grey levels, else to the brighter.

    Parameters
    ----------
    labels : ndarray of int, shape (ny, nx)
        Classes 0..N−1 from dark to bright.
    grey : ndarray, shape (ny, nx)
        The grey levels that were classified.
    means : sequence of float
        Grey level of every class.

    Returns
    -------
    labels : ndarray of int32
    moved : int
        Pixels reassigned.

    References
    ----------
    .. [1] Russ, J. C., Neal, F. B. (2016). The Image Processing Handbook, 7th ed. CRC
       Press (thresholding: boundary pixels of intermediate grey level).

    Examples
    --------
    >>> import numpy as np
    >>> grey = np.full((7, 7), 200.0); grey[2:5, 2:5] = 10; grey[1, 1:6] = 110
    >>> lab = np.digitize(grey, [60, 150]).astype(int)
    >>> resolve_mixed_rims(lab, grey, [10, 100, 200])[0][1]
    array([2, 2, 2, 2, 2, 2, 2], dtype=int32)
    """
    from scipy import ndimage

    out = np.asarray(labels).astype(np.int32)
    means = np.asarray(means, float)
    n = len(means)
    cross = ndimage.generate_binary_structure(2, 1)
    box = np.ones((3, 3), bool)
    moved = 0
    for k in range(1, n - 1):
        mine = out == k
        thin = mine & ~ndimage.binary_opening(mine, cross)
        lower = np.where(out < k, out, -1)
        higher = np.where(out > k, out, n)
        low = ndimage.maximum_filter(lower, footprint=box)
        high = ndimage.minimum_filter(higher, footprint=box)
        rim = thin & (low >= 0) & (high < n)
        if not rim.any():
            continue
        lo, hi = low[rim], high[rim]
        mid = (means[lo] + means[hi]) / 2
        out[rim] = np.where(np.asarray(grey)[rim] < mid, lo, hi)
        moved += int(rim.sum())
    return out, moved


def suggest_classes(image: np.ndarray, max_classes: int = 5) -> int:
    """How many grey-level classes (phases) an image shows, at most *max_classes*.

    Criterion: for N = 2, 3, … a mixture of N Gaussians is fitted to the 256-bin
    grey-level histogram by expectation-maximisation [1]_, started from the N multi-Otsu
    classes [2]_ of a 64-bin histogram. N classes are accepted when every component holds at least 0.5 % of the
    pixels and every two components adjacent in grey level are clearly separated,
    Ashman's D = √2 |μ₁ − μ₂| / √(σ₁² + σ₂²) > 2 [3]_. The answer is the largest N
    before the first one not accepted (1 if two classes already are not).

    Parameters
    ----------
    image : ndarray
        Grey image or stack.
    max_classes : int
        Largest answer.

    Returns
    -------
    int

    Notes
    -----
    The criterion looks at grey levels only. Phases with nearly the same grey level
    count as one; strong shading or edge effects may call for an extra class. It is a
    suggestion for a first look, not a replacement for knowing the material.

    References
    ----------
    .. [1] Dempster, A. P., Laird, N. M., Rubin, D. B. (1977). Maximum likelihood from
       incomplete data via the EM algorithm. J. R. Stat. Soc. B 39, 1-38.
    .. [2] Liao, P.-S., Chen, T.-S., Chung, P.-C. (2001). J. Inf. Sci. Eng. 17, 713-727.
    .. [3] Ashman, K. M., Bird, C. M., Zepf, S. E. (1994). Detecting bimodality in
       astronomical datasets. Astron. J. 108, 2348-2361.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(1)
    >>> img = np.repeat([40.0, 130.0, 220.0], 3000) + rng.normal(0, 10, 9000)
    >>> suggest_classes(img.reshape(90, 100))
    3
    """
    from skimage.filters import threshold_multiotsu

    image = _check_grey(image)
    if image.min() == image.max():
        return 1
    counts, x = _histogram(image, 256)
    coarse = _histogram(image, 64)
    floor = (x[1] - x[0]) ** 2 / 12 if len(x) > 1 else 1.0
    best = 1
    for n in range(2, max_classes + 1):
        try:
            cuts = threshold_multiotsu(hist=coarse, classes=n)
        except ValueError:
            break
        weight, mean, var = _gaussian_mixture(x, counts.astype(float), np.digitize(x, cuts,
                                                                                   right=True),
                                              n, floor)
        order = np.argsort(mean)
        d = np.sqrt(2) * np.diff(mean[order]) / np.sqrt(var[order][1:] + var[order][:-1])
        if weight.min() < 0.005 or d.min() <= 2:
            break
        best = n
    return best


def _gaussian_mixture(x, counts, start, n, floor, iterations=500):
    """EM for a 1D Gaussian mixture fitted to a histogram, started from a partition."""
    total = counts.sum()
    resp = np.zeros((n, x.size))
    resp[start, np.arange(x.size)] = 1.0
    previous = -np.inf
    for _ in range(iterations):
        nk = resp @ counts
        if np.any(nk <= 0):
            return np.zeros(n), np.zeros(n), np.ones(n)
        weight = nk / total
        mean = (resp * counts) @ x / nk
        var = (resp * counts) @ x ** 2 / nk - mean ** 2
        var = np.maximum(var, 0) + floor
        logp = (np.log(weight)[:, None] - 0.5 * np.log(2 * np.pi * var)[:, None]
                - (x[None, :] - mean[:, None]) ** 2 / (2 * var[:, None]))
        top = logp.max(axis=0)
        lse = top + np.log(np.exp(logp - top).sum(axis=0))
        resp = np.exp(logp - lse)
        loglik = counts @ lse
        if loglik - previous < 1e-10 * abs(loglik):
            break
        previous = loglik
    return weight, mean, var


def clean_small_features(labels: np.ndarray, min_feature_px: int, *,
                         notes: list[str] | None = None) -> np.ndarray:
    """Merge features smaller than *min_feature_px* into the phase around them.

    A feature is a connected region of one label (8-connected in 2D, 26-connected in
    3D). Each small feature takes the label that most of the pixels bordering it (face
    neighbours) carry, counting neighbours in features that are themselves large; a
    small feature bordered only by small ones takes the most common label among them.
    Repeated until no small feature is left that can change.

    Parameters
    ----------
    labels : ndarray of int
        Label image or volume.
    min_feature_px : int
        Smallest feature kept, pixels.
    notes : list of str, optional
        A line saying how many features and pixels were merged is appended.

    Returns
    -------
    ndarray of int32

    Examples
    --------
    >>> import numpy as np
    >>> lab = np.zeros((5, 5), int); lab[2, 2] = 1; lab[:, 4] = 2
    >>> clean_small_features(lab, 2)[2, 2]
    np.int32(0)
    """
    from skimage.measure import label as connected

    if isinstance(min_feature_px, bool) or not isinstance(min_feature_px, (int, np.integer)) \
            or min_feature_px < 0:
        raise InputError(f"min_feature_px = {min_feature_px!r}: give a whole number ≥ 0")
    out = np.asarray(labels).astype(np.int32)
    values = np.unique(out)
    merged_features = merged_pixels = 0
    for _ in range(20):
        comp = connected(out, background=values.min() - 1, connectivity=out.ndim)
        sizes = np.bincount(comp.ravel())
        small = sizes < min_feature_px
        small[0] = False
        if not small.any() or len(sizes) <= 2:
            break
        target = _neighbour_vote(comp, np.searchsorted(values, out), small, len(values))
        new = values[np.maximum(target, 0)][comp]
        moved = (small & (target >= 0))[comp] & (new != out)
        if not moved.any():
            break
        merged_features += np.unique(comp[moved]).size
        merged_pixels += int(np.count_nonzero(moved))
        out = np.where(moved, new, out)
    if notes is not None and merged_pixels:
        notes.append(f"merged {merged_features} features smaller than {min_feature_px} px "
                     f"({merged_pixels} px, {100 * merged_pixels / out.size:.2f} % of the "
                     "image) into the phase around them")
    return out


def _neighbour_vote(comp, index, small, n_values):
    """For each component: the label index most common around it, or −1 if none."""
    votes_large = np.zeros((len(small), n_values))
    votes_small = np.zeros((len(small), n_values))
    for axis in range(comp.ndim):
        n = comp.shape[axis]
        for a, b in ((slice(0, n - 1), slice(1, n)), (slice(1, n), slice(0, n - 1))):
            ia = [slice(None)] * comp.ndim
            ib = [slice(None)] * comp.ndim
            ia[axis], ib[axis] = a, b
            ca, cb = comp[tuple(ia)].ravel(), comp[tuple(ib)].ravel()
            keep = small[ca] & (ca != cb)
            ca, cb, lb = ca[keep], cb[keep], index[tuple(ib)].ravel()[keep]
            big = ~small[cb]
            np.add.at(votes_large, (ca[big], lb[big]), 1)
            np.add.at(votes_small, (ca[~big], lb[~big]), 1)
    votes = np.where(votes_large.sum(1, keepdims=True) > 0, votes_large, votes_small)
    return np.where(votes.sum(1) > 0, votes.argmax(1), -1)


_HEX = re.compile(r"^#([0-9a-fA-F]{6})$")


def segment_palette(rgb: np.ndarray, colors: Mapping[int, str], tolerance: float = 0.0
                    ) -> SegmentResult:
    """Labels from an image whose colours code the phases.

    Parameters
    ----------
    rgb : ndarray, shape (ny, nx, 3) or (ny, nx, 4), or a grey (ny, nx) image
        8-bit (or 16-bit, compared on the 8-bit scale) colour image; alpha is ignored.
    colors : mapping label → '#rrggbb'
        The colour of each phase.
    tolerance : float
        Largest Euclidean distance in 8-bit RGB units between a pixel and its phase's
        colour (0: exact colours). Each pixel takes the nearest listed colour.

    Returns
    -------
    SegmentResult
        Labels as given in *colors*.

    Raises
    ------
    InputError
        A malformed or repeated colour, or pixels whose colour matches none of the
        phases (the message lists the most frequent such colours with pixel counts).

    Examples
    --------
    >>> import numpy as np
    >>> img = np.zeros((2, 2, 3), np.uint8); img[0, 0] = (255, 0, 0)
    >>> segment_palette(img, {3: "#000000", 7: "#ff0000"}).labels
    array([[7, 3],
           [3, 3]], dtype=int32)
    """
    rgb = np.asarray(rgb)
    if rgb.ndim == 2:
        rgb = np.repeat(rgb[..., None], 3, axis=-1)
    if rgb.ndim != 3 or rgb.shape[-1] not in (3, 4):
        raise InputError(f"a palette image must be RGB (ny, nx, 3), got shape {rgb.shape}")
    rgb = rgb[..., :3].astype(np.float64)
    if rgb.max() > 255:
        rgb = rgb / 257.0
    if not colors:
        raise InputError("a palette image needs a color = \"#rrggbb\" for every [[phase]]")
    keys, table = [], []
    for label, code in colors.items():
        match = _HEX.match(str(code))
        if not match:
            raise InputError(f"phase {label}: color {code!r} is not of the form \"#rrggbb\"")
        keys.append(int(label))
        table.append([int(match.group(1)[i:i + 2], 16) for i in (0, 2, 4)])
    table = np.array(table, float)
    seen = {}
    for label, c in zip(keys, map(tuple, table)):
        if c in seen:
            raise InputError(f"phases {seen[c]} and {label} share the colour "
                             f"{_hex(c)}; give each phase its own colour")
        seen[c] = label
    if not tolerance >= 0:
        raise InputError(f"palette tolerance {tolerance!r} must be ≥ 0")
    dist = np.sqrt(((rgb[..., None, :] - table) ** 2).sum(-1))
    nearest = dist.argmin(-1)
    unknown = np.take_along_axis(dist, nearest[..., None], -1)[..., 0] > tolerance + 1e-9
    if unknown.any():
        packed = (np.round(rgb[unknown]).astype(np.int64) * [65536, 256, 1]).sum(-1)
        codes, counts = np.unique(packed, return_counts=True)
        top = np.argsort(-counts)[:8]
        listed = ", ".join(f"#{codes[i]:06x} ({counts[i]} px)" for i in top)
        more = f" and {len(codes) - len(top)} more" if len(codes) > len(top) else ""
        raise InputError(f"{int(unknown.sum())} pixels in {len(codes)} colours match no phase "
                         f"colour (tolerance {tolerance:g}): {listed}{more}; add these colours "
                         "to [[phase]] entries or raise the tolerance")
    labels = np.array(keys, np.int32)[nearest]
    return SegmentResult(labels, (), "palette", ())


def _hex(c) -> str:
    return "#" + "".join(f"{int(v):02x}" for v in c)
