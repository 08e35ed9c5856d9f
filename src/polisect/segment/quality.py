"""Warnings that a phase map should not be trusted, each saying what to do.

Every check looks at the image and the phase map made from it, and returns a sentence
or ``None``. `quality_warnings` runs them all.

Examples
--------
>>> import numpy as np
>>> from polisect.segment.quality import separation_warning
>>> rng = np.random.default_rng(0)
>>> lab = np.repeat([0, 1], 5000).reshape(100, 100)
>>> separation_warning(np.where(lab, 110.0, 100.0) + rng.normal(0, 8, lab.shape), lab) is None
False
"""

from __future__ import annotations

import numpy as np
from scipy import ndimage

from .correct import _interior

__all__ = ["quality_warnings", "histogram_warning", "separation_warning", "drift_warning",
           "edge_warning",
           "pullout_warning", "confidence_warning", "band_warning", "fine_features_warning",
           "SEPARATION_D",
           "CONFIDENCE_LEVEL"]

#: Ashman's D below which two adjacent classes are taken as not separated.
SEPARATION_D = 2.0
#: A classifier's pixel is uncertain when its most probable class has a probability below
#: this level.
CONFIDENCE_LEVEL = 0.7
#: Share of uncertain pixels above which the classifier's map is flagged.
UNCERTAIN_SHARE = 0.12
#: Largest spread of a class's grey level across the fields, as a share of the gap to the
#: nearest other class, before left-over shading is flagged.
DRIFT_SHARE = 0.25
#: Bright rims: the excess grey level next to the darkest class, as a share of the gap
#: between the class and its darker neighbour, above which edges are flagged.
EDGE_SHARE = 0.2
#: Pull-outs: darkest-class regions sharing at least this share of their border with a
#: particle class (not the matrix) ...
PULLOUT_BORDER = 0.4
#: ... covering at least this share of the image.
PULLOUT_AREA = 0.01
#: Speckle on more than this share of the pixels is flagged.
SPECKLE_SHARE = 0.005
#: Fine features: a class with more than this share of its pixels on its own boundary ...
FINE_SHARE = 0.4
#: ... and at least this share of the image is flagged.
FINE_AREA = 0.005


def _robust(values):
    med = float(np.median(values))
    return med, 1.4826 * float(np.median(np.abs(values - med)))


def separation_warning(grey: np.ndarray, labels: np.ndarray) -> str | None:
    """Adjacent classes whose grey levels overlap: Ashman's D < `SEPARATION_D`.

    D = √2 |μ₁ − μ₂| / √(σ₁² + σ₂²) over pixels two or more pixels inside each class,
    with medians and robust standard deviations (1.4826 × median absolute deviation) [1]_.

    References
    ----------
    .. [1] Ashman, K. M., Bird, C. M., Zepf, S. E. (1994). Detecting bimodality in
       astronomical datasets. Astron. J. 108, 2348-2361.
    """
    inner = _interior(labels)
    stats = []
    for v in np.unique(labels):
        sel = grey[inner & (labels == v)]
        if sel.size >= 50:
            stats.append((*_robust(sel), int(v)))
    stats.sort()
    bad = []
    for (m1, s1, v1), (m2, s2, v2) in zip(stats, stats[1:]):
        d = np.sqrt(2) * abs(m2 - m1) / max(np.sqrt(s1 ** 2 + s2 ** 2), 1e-12)
        if d < SEPARATION_D:
            bad.append(f"{v1} and {v2} (D = {d:.1f})")
    if not bad:
        return None
    return ("poor grey-level separation between classes " + ", ".join(bad) + f" (Ashman's "
            f"D < {SEPARATION_D:g}): the thresholds split overlapping grey levels, so the "
            "fractions are uncertain; use method = \"trained\" with annotation strokes, or "
            "image with more contrast")


def histogram_warning(grey: np.ndarray, classes: int) -> str | None:
    """Fewer clearly separated grey-level classes in the histogram than asked for.

    `polisect.segment.thresholds.suggest_classes` fits Gaussian mixtures to the histogram
    of the filtered image and counts the classes that stay apart (Ashman's D > 2, each
    holding at least 0.5 % of the pixels). Fewer than *classes* means that the
    thresholds split one grey-level population (a broad matrix, a second grey level,
    charging) instead of separating phases.
    """
    from .thresholds import suggest_classes

    found = suggest_classes(grey, max_classes=classes)
    if found >= classes:
        return None
    return (f"the filtered grey levels show only {found} clearly separated classes, not the "
            f"{classes} asked for: thresholds may split one phase in two and merge others "
            "(a broad or two-toned matrix, strong noise, charging); check the phase map "
            "against the image, and use method = \"trained\" with annotation strokes")


def drift_warning(grey: np.ndarray, labels: np.ndarray, fields: int = 16) -> str | None:
    """A class whose grey level changes across the fields: shading or charging left over.

    The image is cut into about *fields* equal fields; in each, the median grey level of
    each class (pixels two or more pixels inside it, at least 50) is taken. When the
    spread of a class's field medians exceeds `DRIFT_SHARE` of the gap to the nearest
    other class, thresholds fixed over the image misclassify parts of it.
    """
    side = max(2, int(round(np.sqrt(fields))))
    ny, nx = labels.shape
    inner = _interior(labels)
    values = np.unique(labels)
    overall = {int(v): float(np.median(grey[inner & (labels == v)]))
               for v in values if np.count_nonzero(inner & (labels == v)) >= 50}
    worst = None
    for v, level in overall.items():
        others = [abs(level - m) for w, m in overall.items() if w != v]
        if not others:
            continue
        gap = min(others)
        meds = []
        for i in range(side):
            for j in range(side):
                block = np.s_[i * ny // side:(i + 1) * ny // side,
                              j * nx // side:(j + 1) * nx // side]
                sel = grey[block][inner[block] & (labels[block] == v)]
                if sel.size >= 50:
                    meds.append(float(np.median(sel)))
        if len(meds) >= 2:
            share = (max(meds) - min(meds)) / max(gap, 1e-12)
            if share > DRIFT_SHARE and (worst is None or share > worst[1]):
                worst = (v, share, max(meds) - min(meds))
    if worst is None:
        return None
    v, share, spread = worst
    return (f"the grey level of class {v} varies by {spread:.3g} across the fields "
            f"({100 * share:.0f} % of the gap to the next class) after correction: uneven "
            "illumination or charging is left over and the fractions may drift across the "
            "image; re-image with even illumination (coat the section if it charges), or "
            "use method = \"trained\" with strokes spread over the whole image")


def edge_warning(grey: np.ndarray, labels: np.ndarray) -> str | None:
    """Bright rims at the edges of the darkest class (secondary-electron edge effect).

    For each other class, its pixels one to two pixels from the darkest class are
    compared with its pixels four to eight pixels away; a rim brighter by more than
    `EDGE_SHARE` of the class's gap to its darker neighbour is flagged. (Blur alone
    makes the rim darker, not brighter.)

    References
    ----------
    .. [1] Goldstein, J. I. et al. (2018). Scanning Electron Microscopy and X-Ray
       Microanalysis, 4th ed. Springer (the edge effect of secondary-electron images).
    """
    values = np.unique(labels)
    if values.size < 2:
        return None
    dark = values.min()
    means = {int(v): float(np.median(grey[labels == v])) for v in values}
    order = sorted(means, key=means.get)
    dist = ndimage.distance_transform_edt(labels != order[0])
    if not np.any(labels == order[0]):
        return None
    for v in order[1:]:
        near = (labels == v) & (dist >= 1) & (dist <= 2)
        far = (labels == v) & (dist >= 4) & (dist <= 8)
        if near.sum() < 50 or far.sum() < 50:
            continue
        below = means[order[order.index(v) - 1]]
        excess = float(np.median(grey[near]) - np.median(grey[far]))
        if excess > EDGE_SHARE * (means[v] - below):
            return (f"bright rims around the darkest class {dark} (class {v} is "
                    f"{excess:.3g} brighter next to it than away from it): a secondary-"
                    "electron edge effect or charging at pore edges; rims are classified as "
                    "a brighter phase and the dark fraction is underestimated; use "
                    "backscattered electrons, or method = \"trained\" with strokes on the "
                    "rims")
    return None


def pullout_warning(labels: np.ndarray) -> str | None:
    """Pores lying along the edges of particles: possible pull-outs during polishing.

    Regions of the darkest class that share at least `PULLOUT_BORDER` of their border
    with a class other than the matrix (the most common class) and at least a fifth with
    the matrix, and that are smaller than half the largest particle they touch (so not
    the cores of hollow particles), and cover together at least `PULLOUT_AREA` of the
    image, are flagged [1]_.

    References
    ----------
    .. [1] Vander Voort, G. F. (1999). Metallography: Principles and Practice. ASM
       International (pull-outs of hard particles during grinding and polishing).
    """
    from skimage.measure import label as connected

    values, counts = np.unique(labels, return_counts=True)
    if values.size < 3:
        return None
    dark, matrix = values.min(), values[counts.argmax()]
    if dark == matrix:
        return None
    comp = connected(labels == dark, connectivity=2)
    ring = ndimage.binary_dilation(comp > 0) & (comp == 0)
    owner = ndimage.maximum_filter(comp, size=3)
    border = np.bincount(owner[ring], minlength=comp.max() + 1)
    particle = np.bincount(owner[ring & (labels != matrix) & (labels != dark)],
                           minlength=comp.max() + 1)
    in_matrix = np.bincount(owner[ring & (labels == matrix)], minlength=comp.max() + 1)
    # at a particle's edge: along the particle and the matrix (cores inside hollow
    # particles touch the particle only)
    suspects = np.flatnonzero((particle >= PULLOUT_BORDER * np.maximum(border, 1))
                              & (in_matrix >= 0.2 * border) & (border > 0))
    suspects = suspects[suspects > 0]
    # smaller than half the particle it touches (a pulled-out piece, not a core)
    solid = connected((labels != matrix) & (labels != dark), connectivity=2)
    solid_area = np.bincount(solid.ravel())
    touch = ring & (solid > 0)
    biggest = np.zeros(comp.max() + 1)
    np.maximum.at(biggest, owner[touch], solid_area[solid[touch]])
    area = np.bincount(comp.ravel(), minlength=comp.max() + 1)
    suspects = suspects[area[suspects] < 0.5 * biggest[suspects]]
    share = float(np.isin(comp, suspects).mean()) if suspects.size else 0.0
    if share < PULLOUT_AREA:
        return None
    return (f"{suspects.size} regions of class {dark} ({100 * share:.2f} % of the image) lie "
            f"along the edges of particles rather than in the matrix (class {matrix}): "
            "possibly particles pulled out during polishing, counted as pores; check the "
            "preparation (a finer final polish, less pressure) before trusting the porosity")


def fine_features_warning(labels: np.ndarray) -> list[str]:
    """Classes whose features are only a few pixels across.

    A class with more than `FINE_SHARE` of its pixels next to another class (4-neighbours)
    has its fraction decided by its edge pixels. Those straddle two phases (partial
    volume), and the blur of the microscope shrinks a small feature's area at any grey
    level between the two phases (by about σ²/R² of its area for a disc of radius R under
    a Gaussian blur of width σ), so the fraction is biased — low for small pores in a
    brighter matrix — beyond what moving the class boundary by a few grey levels shows
    [1]_. The size stated is the mean chord length ``π A / P`` (Cauchy–Crofton, [2]_)
    with the boundary pixel count as the perimeter.

    Returns
    -------
    list of str
        One warning per such class.

    References
    ----------
    .. [1] Russ, J. C., Neal, F. B. (2016). The Image Processing Handbook, 7th ed. CRC
       Press (thresholding: boundary pixels of intermediate grey level).
    .. [2] Underwood, E. E. (1970). Quantitative Stereology. Addison-Wesley (mean
       intercept length of a phase, L = π A / P in the plane).

    Examples
    --------
    >>> lab = np.zeros((64, 64), np.int32); lab[::8, ::8] = 1; lab[1::8, ::8] = 1
    >>> fine_features_warning(lab)[0][:28]
    'class 1: 100 % of its pixels'
    """
    labels = np.asarray(labels)
    out = []
    cross = ndimage.generate_binary_structure(2, 1)
    for v in np.unique(labels).tolist():
        mask = labels == v
        area = int(mask.sum())
        if area < FINE_AREA * labels.size or area == labels.size:
            continue
        edge = int((mask & ~ndimage.binary_erosion(mask, cross, border_value=1)).sum())
        share = edge / area
        if share > FINE_SHARE:
            chord = np.pi * area / edge
            out.append(f"class {v}: {100 * share:.0f} % of its pixels lie on its own "
                       f"boundary (features about {chord:.1f} pixels across): its fraction "
                       "is decided by partial-volume edge pixels, and blur shrinks small "
                       "features at any threshold, so it may be off by tens of per cent of "
                       "itself — more than the segmentation term shows; image at a higher "
                       "magnification (features 10 pixels across or more) before trusting "
                       "it")
    return out


def confidence_warning(confidence: np.ndarray | None) -> str | None:
    """A classifier uncertain on more than `UNCERTAIN_SHARE` of the pixels."""
    if confidence is None:
        return None
    share = float(np.mean(confidence < CONFIDENCE_LEVEL))
    if share <= UNCERTAIN_SHARE:
        return None
    return (f"low classifier confidence: {100 * share:.1f} % of the pixels have no class "
            f"with a probability of {CONFIDENCE_LEVEL:g} or more; add strokes where the "
            "confidence map is dark (especially on edges and on every grey level a phase "
            "shows) and train again")


def band_warning(image: np.ndarray) -> str | None:
    """An instrument information band still at the bottom of the image."""
    from ..read.image import find_info_band

    rows = find_info_band(image)
    if not rows:
        return None
    return (f"an information band of about {rows} rows seems to be left at the bottom of "
            "the image and was segmented as material; set [image] crop_bottom_px = \"auto\" "
            "(or the number of rows), or --crop-bottom auto")


def quality_warnings(*, image, grey, labels, classes, corrections=(), thresholds=(),
                     confidence=None, fields=16) -> list[str]:
    """All checks. *image* is the image as given, *grey* the corrected, filtered one
    that was classified, *classes* the class values that should be present."""
    out = []
    missing = sorted(set(classes) - set(np.unique(labels).tolist()))
    if missing:
        out.append(f"classes {missing} received no pixels: the section may not hold that "
                   "phase, or the classes are too many; check [segment] classes and the "
                   "[[phase]] entries")
    if len(thresholds):
        lo, hi = float(np.min(grey)), float(np.max(grey))
        outside = [t for t in thresholds if not lo < t < hi]
        if outside:
            out.append(f"thresholds {outside} lie outside the image's grey range "
                       f"{lo:.4g}-{hi:.4g}: a class is empty or takes everything; choose "
                       "thresholds inside the range, or method = \"multi-otsu\"")
    for c in corrections:
        if c.name == "speckle" and c.amount > SPECKLE_SHARE:
            out.append(f"speckle on {100 * c.amount:.1f} % of the pixels (replaced by their "
                       "neighbours): check the detector and the scan settings; fine "
                       "features may be lost")
    if confidence is None:
        out.append(histogram_warning(grey, len(tuple(classes))))
        out.append(separation_warning(grey, labels))
    for check in (drift_warning(grey, labels, fields), edge_warning(grey, labels),
                  pullout_warning(labels), confidence_warning(confidence),
                  band_warning(image)):
        out.append(check)
    out.extend(fine_features_warning(labels))
    return [w for w in out if w]
