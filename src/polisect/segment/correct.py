"""Correction before classification: uneven illumination, stripes and isolated speckle.

* `estimate_shading`: a smooth multiplicative illumination field, fitted as one low-order
  polynomial surface that scales every class's grey level (robust least squares,
  alternating with a classification of the flattened image).
* `remove_stripes`: column or row offsets (curtaining, scan lines) from the residual of
  the classified image, high-passed so that no large-scale structure is touched.
* `remove_speckle`: isolated impulse pixels replaced by the median of their neighbours.
* `remove_scratches`: straight thin dark or bright lines filled (polishing scratches).
* `correct_image`: all of them in order, each reported as a `Correction`.

Examples
--------
>>> import numpy as np
>>> from polisect.segment.correct import correct_image
>>> yy, xx = np.indices((128, 128))
>>> flat = np.where((xx // 16 + yy // 16) % 2, 180.0, 60.0)
>>> shaded = flat * (1 + 0.25 * (xx / 127 - 0.5))
>>> out = correct_image(shaded, 2)
>>> [c.what for c in out.corrections if c.applied]
['uneven illumination of ±13 % flattened (a degree-3 surface scaling every class)']
>>> bool(np.abs(out.image - flat).max() < 0.01)
True
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import ndimage

from ..core.errors import InputError
from .thresholds import noise_sigma, refined_thresholds

__all__ = ["Correction", "Corrected", "estimate_shading", "remove_stripes", "remove_speckle",
           "remove_scratches", "correct_image", "SHADING_MIN", "SHADING_DEGREE"]

#: Shading smaller than this relative amplitude ((max − min) / (max + min) of the gain) is
#: reported, not corrected.
SHADING_MIN = 0.03
#: Total degree of the polynomial illumination surface.
SHADING_DEGREE = 3
#: Stripes are corrected when their standard deviation exceeds this many standard errors
#: of a column (row) median of the noise, and half a grey level.
STRIPE_SIGNIFICANCE = 4.0
#: A pixel is speckle when it differs from the median of its 3 × 3 neighbours by more than
#: this many noise standard deviations and by a quarter of the grey range.
SPECKLE_SIGMAS = 5.0
#: Samples used for the shading fit (the image is subsampled on a regular grid).
_FIT_SAMPLES = 20000


@dataclass(frozen=True)
class Correction:
    """One correction step and what it did.

    Attributes
    ----------
    name : {'shading', 'stripes', 'speckle'}
    applied : bool
        Whether the image was changed.
    amount : float
        Shading: relative amplitude found ((max − min) / (max + min) of the gain);
        stripes: standard deviation of
        the offsets found, grey levels; speckle: share of pixels found.
    what : str
        One sentence for the report.
    """

    name: str
    applied: bool
    amount: float
    what: str


@dataclass(frozen=True, eq=False)
class Corrected:
    """An image after `correct_image`.

    Attributes
    ----------
    image : ndarray of float64
        The corrected grey levels (units of the input).
    gain : ndarray of float64
        The illumination field divided out (ones when shading was not corrected).
    labels : ndarray of int32
        The provisional classes (0 = darkest) used by the fit.
    means : ndarray
        Class grey levels after flattening.
    noise : float
        Noise standard deviation of the corrected image (Immerkær), grey levels.
    corrections : tuple of Correction
    """

    image: np.ndarray
    gain: np.ndarray
    labels: np.ndarray
    means: np.ndarray
    noise: float
    corrections: tuple[Correction, ...]


def correct_image(image: np.ndarray, classes: int, *, shading: str = "auto",
                  stripes: str = "auto", speckle: str = "auto", scratches: str = "auto"
                  ) -> Corrected:
    """Correct speckle, shading, scratches and stripes of a grey image before it is classified.

    Parameters
    ----------
    image : ndarray, shape (ny, nx)
        Grey levels.
    classes : int
        Number of grey-level classes the section holds (≥ 2).
    shading, speckle, scratches : {'auto', 'none'}
        ``'auto'`` estimates and corrects when found; ``'none'`` skips the step.
    stripes : {'auto', 'columns', 'rows', 'none'}
        ``'auto'`` looks for both column and row stripes.

    Returns
    -------
    Corrected

    Raises
    ------
    InputError
        Not a 2D image, fewer than two classes, or an unknown option.
    """
    work = np.asarray(image, dtype=np.float64)
    if work.ndim != 2:
        raise InputError(f"corrections need a 2D grey image, got shape {work.shape}")
    for value, options, key in ((shading, ("auto", "none"), "shading"),
                                (speckle, ("auto", "none"), "speckle"),
                                (scratches, ("auto", "none"), "scratches"),
                                (stripes, ("auto", "columns", "rows", "none"), "stripes")):
        if value not in options:
            raise InputError(f"[segment] {key} = {value!r}: use one of {', '.join(options)}")
    if classes < 2:
        raise InputError("corrections need at least two classes")
    steps = []
    if speckle == "auto":
        work, step = remove_speckle(work)
        steps.append(step)
    gain, labels, means = estimate_shading(work, classes)
    amplitude = float((gain.max() - gain.min()) / (gain.max() + gain.min()))
    if shading == "auto" and amplitude >= SHADING_MIN:
        work = work / gain
        steps.append(Correction("shading", True, amplitude,
                                f"uneven illumination of ±{100 * amplitude:.0f} % flattened "
                                f"(a degree-{SHADING_DEGREE} surface scaling every class)"))
    else:
        why = ("switched off ([segment] shading = \"none\")" if shading == "none" else
               f"below {100 * SHADING_MIN:.0f} %, not corrected")
        steps.append(Correction("shading", False, amplitude,
                                f"uneven illumination of ±{100 * amplitude:.1f} % found; {why}"))
        gain = np.ones_like(work)
        labels, means = _classify(work, classes)
    if scratches == "auto":
        work, step = remove_scratches(work, noise_sigma(work))
        steps.append(step)
        if step.applied:
            labels, means = _classify(work, classes)
    if stripes != "none":
        axes = {"auto": (0, 1), "columns": (0,), "rows": (1,)}[stripes]
        work, step = remove_stripes(work, labels, means, axes=axes)
        steps.append(step)
    return Corrected(work, gain, labels, means, noise_sigma(work), tuple(steps))


def estimate_shading(image: np.ndarray, classes: int, *, degree: int = SHADING_DEGREE,
                     iterations: int = 6) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """A smooth multiplicative illumination field of a multi-phase image.

    Model: ``I(x) = g(x) · m[c(x)] + noise``, with a class grey level ``m[c]`` per class
    ``c`` and one gain surface ``g``, a polynomial of total degree *degree* in the
    pixel coordinates (Legendre basis on [−1, 1]), normalised to mean 1. Starting from
    the image divided by a wide Gaussian blur of itself, the method alternates (a)
    classifying the flattened image (its 3 × 3 median) into *classes* grey-level classes
    (`refined_thresholds`) and (b) fitting ``g`` by linear least squares to pixels at
    least two pixels from a class boundary, on a regular subsample, twice, dropping
    residuals beyond three robust standard deviations the second time. Illumination
    falls off smoothly across the field in both electron and light microscopes [1]_;
    a surface shared by all classes cannot mistake a cluster of bright particles for
    brightness.

    Parameters
    ----------
    image : ndarray, shape (ny, nx)
    classes : int
    degree : int
        Total degree of the surface (3: ten terms).
    iterations : int
        Alternations at most; stops earlier when the gain changes by less than 0.1 %.

    Returns
    -------
    gain : ndarray
        Gain at every pixel (mean 1).
    labels : ndarray of int32
        Classes of the flattened image.
    means : ndarray
        Class grey levels of the flattened image.

    References
    ----------
    .. [1] Russ, J. C., Neal, F. B. (2016). The Image Processing Handbook, 7th ed. CRC
       Press (the chapter on correcting imaging defects: nonuniform illumination removed
       by fitting a polynomial background).
    """
    work = np.asarray(image, dtype=np.float64)
    ny, nx = work.shape
    step = max(1, int(np.sqrt(ny * nx / _FIT_SAMPLES)))
    basis = _legendre_basis(ny, nx, step, degree)
    sy, sx = np.s_[::step], np.s_[::step]
    wide = ndimage.gaussian_filter(work, min(ny, nx) / 8, mode="reflect")
    gain = np.clip(wide / wide.mean(), 0.2, 5.0)
    # the gain hardly changes over a 3 × 3 window: filter once, divide in every round
    smooth = ndimage.median_filter(work, size=3, mode="reflect")
    labels = means = None
    for _ in range(iterations):
        labels, means = _classify(smooth / gain, classes, filtered=True)
        interior = _interior(labels)[sy, sx].ravel()
        if np.count_nonzero(interior) < 4 * basis.shape[0]:
            break              # too few interior pixels to fit a surface: keep the gain
        lab = labels[sy, sx].ravel()[interior]
        target = work[sy, sx].ravel()[interior]
        design = basis[:, interior].T * means[lab][:, None]
        coef = _robust_lstsq(design, target)
        new = _surface(coef, ny, nx, degree)
        level = new.mean()
        if not np.isfinite(level) or level <= 0:
            break              # no usable surface (e.g. a class of grey level 0 only)
        new = np.clip(new / level, 0.2, 5.0)
        change = float(np.abs(new - gain).max())
        gain = new
        if change < 1e-3:
            break
    labels, means = _classify(smooth / gain, classes, filtered=True)
    return gain, labels, means


def _robust_lstsq(design, target):
    coef = np.linalg.lstsq(design, target, rcond=None)[0]
    resid = target - design @ coef
    scale = 1.4826 * np.median(np.abs(resid - np.median(resid)))
    keep = np.abs(resid) <= 3 * max(scale, 1e-12)
    if keep.sum() > design.shape[1] * 10:
        coef = np.linalg.lstsq(design[keep], target[keep], rcond=None)[0]
    return coef


def _legendre_basis(ny, nx, step, degree):
    from numpy.polynomial import legendre

    y = np.linspace(-1, 1, ny)[::step]
    x = np.linspace(-1, 1, nx)[::step]
    py = legendre.legvander(y, degree)
    px = legendre.legvander(x, degree)
    return np.array([np.outer(py[:, i], px[:, j]).ravel()
                     for i in range(degree + 1) for j in range(degree + 1 - i)])


def _surface(coef, ny, nx, degree):
    from numpy.polynomial import legendre

    py = legendre.legvander(np.linspace(-1, 1, ny), degree)
    px = legendre.legvander(np.linspace(-1, 1, nx), degree)
    out = np.zeros((ny, nx))
    k = 0
    for i in range(degree + 1):
        for j in range(degree + 1 - i):
            out += coef[k] * np.outer(py[:, i], px[:, j])
            k += 1
    return out


def _classify(work, classes, filtered=False):
    """Provisional classes of a flattened image: 3 × 3 median (unless *filtered*),
    refined multi-Otsu."""
    smooth = work if filtered else ndimage.median_filter(work, size=3, mode="reflect")
    thresholds = refined_thresholds(smooth, classes)
    labels = np.digitize(smooth, thresholds, right=True).astype(np.int32)
    means = np.array([np.median(smooth[labels == c]) if np.any(labels == c) else t
                      for c, t in zip(range(classes), _fill(thresholds, classes))])
    return labels, np.maximum(means, 1e-6 * max(float(np.abs(means).max()), 1e-12))


def _fill(thresholds, classes):
    t = list(thresholds)
    return [t[0]] + t if len(t) + 1 == classes else [0.0] * classes


def _interior(labels, margin: int = 2):
    """Pixels whose (2·margin + 1)² neighbourhood holds one class only."""
    size = 2 * margin + 1
    return (ndimage.maximum_filter(labels, size) == ndimage.minimum_filter(labels, size))


def remove_stripes(image: np.ndarray, labels: np.ndarray, means: np.ndarray, *,
                   axes=(0, 1)) -> tuple[np.ndarray, Correction]:
    """Remove column (axis 0) and row (axis 1) offsets: curtaining and scan-line stripes.

    The residual ``image − means[labels]`` at pixels two or more pixels from a class
    boundary is reduced to its median along each column (row); the profile's high-pass
    part (profile minus its 31-pixel running median) is the stripe pattern, removed
    when its standard deviation exceeds `STRIPE_SIGNIFICANCE` standard errors of such a
    median under the image's noise (1.2533 σ / √n) and half a grey level. Working on
    the residual keeps particles that happen to line up from being taken for stripes;
    the high-pass keeps slow variations for the shading correction. Column-median
    subtraction is common practice (no source); [1]_ describes stripe artefacts and a
    Fourier-domain alternative.

    Returns
    -------
    image : ndarray
        The image without the stripes found.
    Correction

    References
    ----------
    .. [1] Münch, B., Trtik, P., Marone, F., Stampanoni, M. (2009). Stripe and ring
       artifact removal with combined wavelet-Fourier filtering. Opt. Express 17,
       8567-8591.
    """
    work = np.asarray(image, dtype=np.float64)
    resid = np.where(_interior(labels), work - means[labels], np.nan)
    sigma = noise_sigma(work)
    found = []
    for axis in axes:
        counts = np.sum(~np.isnan(resid), axis=axis)
        if counts.min() < 8:
            continue
        profile = np.nanmedian(resid, axis=axis)
        stripes = profile - ndimage.median_filter(profile, size=31, mode="reflect")
        level = float(stripes.std())
        floor = STRIPE_SIGNIFICANCE * 1.2533 * sigma / np.sqrt(np.median(counts))
        if level > max(floor, 0.5):
            work = work - (stripes[None, :] if axis == 0 else stripes[:, None])
            found.append((axis, level))
    if not found:
        return work, Correction("stripes", False, 0.0, "no column or row stripes found")
    words = "; ".join(f"{'column' if a == 0 else 'row'} stripes of {lv:.1f} grey levels (s.d.)"
                      for a, lv in found)
    return work, Correction("stripes", True, max(lv for _, lv in found), f"removed {words}")


def remove_speckle(image: np.ndarray) -> tuple[np.ndarray, Correction]:
    """Replace isolated impulse pixels by the median of their 3 × 3 neighbourhood.

    A pixel is speckle when it is brighter than all eight neighbours or darker than all
    of them, and differs from their median by more than `SPECKLE_SIGMAS` noise standard
    deviations (Immerkær's estimate [2]_) and by more than a quarter of the image's
    1-99 % grey range: the impulse test of the adaptive median filter [1]_. (A corner of
    a sharp particle has neighbours of its own grey level and is kept.)

    Returns
    -------
    image : ndarray
    Correction
        *amount* is the share of pixels replaced.

    References
    ----------
    .. [1] Hwang, H., Haddad, R. A. (1995). Adaptive median filters: new algorithms and
       results. IEEE Trans. Image Process. 4, 499-502.
    .. [2] Immerkær, J. (1996). Fast noise variance estimation. Comput. Vis. Image
       Underst. 64, 300-302.
    """
    work = np.asarray(image, dtype=np.float64)
    med = ndimage.median_filter(work, size=3, mode="reflect")
    ring = np.ones((3, 3), bool)
    ring[1, 1] = False
    above = work - ndimage.maximum_filter(work, footprint=ring, mode="reflect")
    below = ndimage.minimum_filter(work, footprint=ring, mode="reflect") - work
    lo, hi = np.percentile(work, [1, 99])
    # the noise of the speckle-free part: Immerkær on the median-replaced image
    sigma = noise_sigma(np.where(np.abs(work - med) > 0.25 * (hi - lo), med, work))
    level = max(SPECKLE_SIGMAS * sigma, 0.25 * (hi - lo))
    hit = (np.abs(work - med) > level) & ((above > 0) | (below > 0))
    share = float(hit.mean())
    if not hit.any():
        return work, Correction("speckle", False, 0.0, "no isolated speckle found")
    return np.where(hit, med, work), Correction(
        "speckle", True, share, f"replaced {hit.sum()} isolated speckle pixels "
        f"({100 * share:.2f} % of the image) by their neighbours' median")


#: Scratches: lines at most this wide (pixels) are filled ...
SCRATCH_WIDTH_PX = 4
#: ... when they run straight over at least this share of the shorter image side.
SCRATCH_LENGTH = 0.25


def remove_scratches(image: np.ndarray, noise: float) -> tuple[np.ndarray, Correction]:
    """Fill straight thin dark or bright lines: polishing scratches.

    The 3 × 3 median of the image is closed (dark lines) and opened (bright lines) with
    a disc of diameter `SCRATCH_WIDTH_PX` + 1 [1]_; pixels the closing (opening) changes by
    more than two noise standard deviations of the median image are candidates. A
    straight-line Hough transform of the candidates [2]_ finds the lines along which at
    least `SCRATCH_LENGTH` of the shorter image side is candidate: scratches run straight
    across the field, while cracks and thin pores bend and noise does not line up. The
    candidates within two pixels of such a line (and their neighbours) take the closed
    (opened) grey level.

    Parameters
    ----------
    image : ndarray, shape (ny, nx)
    noise : float
        Noise standard deviation of *image*, grey levels.

    Returns
    -------
    image : ndarray
    Correction
        *amount* is the share of pixels filled.

    References
    ----------
    .. [1] Soille, P. (2003). Morphological Image Analysis, 2nd ed. Springer (closing and
       opening remove dark and bright structures narrower than the structuring element).
    .. [2] Duda, R. O., Hart, P. E. (1972). Use of the Hough transformation to detect lines
       and curves in pictures. Commun. ACM 15, 11-15.
    """
    from skimage.morphology import disk
    from skimage.transform import hough_line, hough_line_peaks

    work = np.asarray(image, dtype=np.float64)
    med = ndimage.median_filter(work, size=3, mode="reflect")
    foot = disk(SCRATCH_WIDTH_PX // 2 + 1)
    level = 2 * 0.5 * max(noise, 1e-12)  # a 3 × 3 median leaves about half the noise
    ny, nx = work.shape
    yy, xx = np.indices(work.shape)
    out = work.copy()
    filled = np.zeros(work.shape, bool)
    lines = 0
    angles = np.linspace(-np.pi / 2, np.pi / 2, 360, endpoint=False)
    for smooth in (ndimage.grey_closing(med, footprint=foot),
                   ndimage.grey_opening(med, footprint=foot)):
        candidate = np.abs(smooth - med) > level
        if not candidate.any():
            continue
        hspace, theta, dist = hough_line(candidate, theta=angles)
        votes = SCRATCH_LENGTH * min(ny, nx) * 1.5
        for _, angle, rho in zip(*hough_line_peaks(hspace, theta, dist, threshold=votes,
                                                   min_distance=5, min_angle=3)):
            near = np.abs(xx * np.cos(angle) + yy * np.sin(angle) - rho) <= 2
            mask = ndimage.binary_dilation(candidate & near) & near
            out[mask] = smooth[mask]
            filled |= mask
            lines += 1
    if not lines:
        return work, Correction("scratches", False, 0.0, "no scratches found")
    share = float(filled.mean())
    return out, Correction("scratches", True, share,
                           f"filled {lines} straight thin lines (polishing scratches; "
                           f"{100 * share:.2f} % of the image)")
