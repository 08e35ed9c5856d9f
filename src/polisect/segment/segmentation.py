"""From a grey micrograph to the phase map, with what was corrected, how sure it is and
what to distrust: `make_phasemap_labels`, the one entry point of the segment stage.

Two routes, chosen by ``[segment] method``:

* thresholds (``"multi-otsu"`` or ``"thresholds"``): speckle, shading, scratches and stripes
  corrected (`polisect.segment.correct`), a median filter whose radius follows from the
  noise, thresholds refined to the midpoints between classes, partial-volume rims
  resolved, small features merged;
* ``"trained"``: the same corrections, then a random forest on multiscale pixel features
  trained from annotation strokes on this image, or a saved `Segmenter`
  (`polisect.segment.trained`).

Both return a `Segmentation`: the labels, the corrections (each with what it did), notes,
warnings (each saying what to do), a confidence map, and the segmentation uncertainty
(fractions under a stated movement of the class boundaries, and the perturbed maps).

Examples
--------
>>> import numpy as np
>>> from polisect.model3d.synth import rsa_discs
>>> from polisect.segment import make_phasemap_labels
>>> truth = rsa_discs((128, 128), 0.3, 6.0, seed=1).labels
>>> rng = np.random.default_rng(0)
>>> img = (np.where(truth == 1, 180, 70) + rng.normal(0, 12, truth.shape)).astype(np.uint8)
>>> seg = make_phasemap_labels(img, 0.5, None, (0, 1))
>>> float((seg.labels == truth).mean()) > 0.98, seg.warnings
(True, ())
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..core.errors import InputError
from .correct import Correction, correct_image
from .quality import CONFIDENCE_LEVEL, quality_warnings
from .thresholds import (_check_grey, _denoise, auto_denoise_px, clean_small_features,
                         default_min_feature_px, refined_thresholds, resolve_mixed_rims,
                         segment_grayscale, suggest_classes)
from .trained import PROBABILITY_SMOOTHING_PX, Segmenter, refine_boundaries, train_segmenter
from .uncertainty import BoundaryUncertainty, threshold_alternatives

__all__ = ["Segmentation", "ConfidenceSummary", "make_phasemap_labels"]


@dataclass(frozen=True)
class ConfidenceSummary:
    """How sure the segmentation is, in numbers.

    Attributes
    ----------
    mean : float
        Mean over the pixels of the probability of the class chosen.
    uncertain_share : float
        Share of pixels whose class has a probability below *level*.
    level : float
    """

    mean: float
    uncertain_share: float
    level: float


@dataclass(frozen=True)
class SegmentationSummary:
    """How the phase map was made, as the result keeps it.

    Attributes
    ----------
    method : str
    thresholds : tuple of float
    corrections : tuple of (name, applied, amount, what)
    confidence_mean, uncertain_share, confidence_level : float or None
        The classifier's (or the grey-level model's) confidence: mean probability of the
        class chosen, the share of pixels below *confidence_level*.
    perturbation : str or None
        The boundary movement of the uncertainty.
    fraction_ranges : dict label → (nominal, low, high)
        Fractions with the boundary pixels taken from or given to each phase.
    min_feature_px : int
    model : str or None
        The segmenter file used, or how it was trained.
    """

    method: str
    thresholds: tuple[float, ...]
    corrections: tuple[tuple, ...]
    confidence_mean: float | None
    uncertain_share: float | None
    confidence_level: float | None
    perturbation: str | None
    fraction_ranges: dict
    min_feature_px: int
    model: str | None = None


@dataclass(frozen=True, eq=False)
class Segmentation:
    """A phase map and everything known about how it was made.

    Attributes
    ----------
    labels : ndarray of int32
        Phase label of every pixel.
    method : str
        ``'multi-otsu'``, ``'thresholds'``, ``'trained'`` (or ``'multi-otsu (volume)'`` and
        ``'thresholds (volume)'`` for stacks, segmented without corrections).
    thresholds : tuple of float
        Grey levels between the classes, in units of the corrected image (empty for
        trained segmentation).
    corrections : tuple of Correction
        Every correction step and what it did (applied or not).
    notes : tuple of str
        What was decided (filter radius, minimum feature size and why, merged features).
    warnings : tuple of str
        Reasons to distrust the map, each with what to do.
    confidence : ndarray of float32 or None
        Probability of the chosen class at every pixel (a Gaussian model of the class
        grey levels for thresholds, the forest's votes for trained segmentation).
    confidence_summary : ConfidenceSummary or None
    uncertainty : BoundaryUncertainty or None
        Fractions under the stated boundary perturbation, and the perturbed maps.
    min_feature_px : int
        Smallest feature kept, pixels.
    corrected : ndarray or None
        The corrected grey image that was classified (before the median filter).
    segmenter : Segmenter or None
        The segmenter used or trained (save it with ``segmenter.save(path)``).
    """

    labels: np.ndarray
    method: str
    thresholds: tuple[float, ...]
    corrections: tuple[Correction, ...]
    notes: tuple[str, ...]
    warnings: tuple[str, ...]
    confidence: np.ndarray | None
    confidence_summary: ConfidenceSummary | None
    uncertainty: BoundaryUncertainty | None
    min_feature_px: int
    corrected: np.ndarray | None = None
    segmenter: Segmenter | None = None

    def summary(self, model: str | None = None) -> "SegmentationSummary":
        """What the result keeps of the segmentation (no arrays)."""
        c = self.confidence_summary
        u = self.uncertainty
        return SegmentationSummary(
            self.method, tuple(self.thresholds),
            tuple((k.name, bool(k.applied), float(k.amount), k.what) for k in self.corrections),
            None if c is None else c.mean, None if c is None else c.uncertain_share,
            None if c is None else c.level, None if u is None else u.perturbation,
            {} if u is None else {int(k): tuple(float(x) for x in v)
                                  for k, v in u.fractions.items()},
            int(self.min_feature_px), model)

    def fractions(self) -> dict[int, float]:
        """Pixel fraction of every label present."""
        values, counts = np.unique(self.labels, return_counts=True)
        return dict(zip(values.tolist(), (counts / self.labels.size).tolist()))


def make_phasemap_labels(image: np.ndarray, pixel_size_um: float | None = None,
                         segment_config=None, phase_labels: Sequence[int] = (), *,
                         annotations: np.ndarray | None = None,
                         segmenter: Segmenter | None = None) -> Segmentation:
    """Segment a grey micrograph into phase labels, with corrections, warnings and
    uncertainty.

    Parameters
    ----------
    image : ndarray, shape (ny, nx), (ny, nx, 3) or (nz, ny, nx)
        The micrograph as read (information band already cut); RGB is converted to
        luminance. Stacks are thresholded slice-independent without corrections.
    pixel_size_um : float, optional
        Pixel edge, µm (recorded in the notes; the defaults depend on pixels and noise).
    segment_config : SegmentConfig, optional
        ``[segment]`` settings; defaults when ``None``.
    phase_labels : sequence of int
        The configured phase labels. Thresholds give classes 0..N−1 (dark to bright),
        N = ``classes`` or, when not set, the number of phases (or a suggestion from the
        histogram when none are configured); a trained segmenter's labels must all be
        among them.
    annotations : ndarray of int, optional
        Strokes for ``method = "trained"``, same shape as the image: 0 = not annotated,
        v = phase label v − 1.
    segmenter : Segmenter, optional
        A saved segmenter for ``method = "trained"`` (instead of annotations).

    Returns
    -------
    Segmentation

    Raises
    ------
    InputError
        Bad settings, annotations of the wrong size, a trained route without annotations
        or segmenter, labels not configured.
    """
    cfg = _settings(segment_config)
    image = np.asarray(image)
    if image.ndim == 3 and image.shape[-1] in (3, 4):
        from ..read.image import to_grayscale

        image = to_grayscale(image)
    image = _check_grey(image)
    phase_labels = tuple(int(v) for v in phase_labels)
    notes = [] if pixel_size_um is None else [f"pixel size {pixel_size_um:g} µm"]
    if cfg["method"] == "trained":
        return _trained(image, cfg, phase_labels, annotations, segmenter, notes)
    if annotations is not None or segmenter is not None:
        raise InputError("annotations or a segmenter model are given but [segment] method = "
                         f"\"{cfg['method']}\"; set method = \"trained\" to use them")
    classes = cfg["classes"]
    if cfg["method"] == "thresholds":
        classes = len(cfg["thresholds"] or ()) + 1
    elif classes is None:
        if phase_labels:
            classes = len(phase_labels)
            notes.append(f"classes = {classes}, one per [[phase]]")
        else:
            classes = suggest_classes(image)
            notes.append(f"classes = {classes} suggested from the histogram; set [segment] "
                         "classes or --classes to choose")
    if image.ndim == 3:
        return _volume(image, cfg, classes, notes)
    return _thresholds(image, cfg, classes, notes)


def _settings(config) -> dict:
    keys = {"method": "multi-otsu", "classes": None, "thresholds": None, "denoise": "median",
            "denoise_px": "auto", "min_feature_px": "auto", "fields": 16, "shading": "auto",
            "stripes": "auto", "speckle": "auto", "scratches": "auto"}
    return {k: getattr(config, k, v) if config is not None else v for k, v in keys.items()}


def _corrected(image, classes, cfg):
    return correct_image(image, classes, shading=cfg["shading"], stripes=cfg["stripes"],
                         speckle=cfg["speckle"], scratches=cfg["scratches"])


def _min_feature(cfg, radius, notes):
    value = cfg["min_feature_px"]
    if value == "auto":
        value = default_min_feature_px(radius)
        notes.append(f"smallest feature kept: {value} px (default: the disc of radius "
                     f"{max(radius, 1.0) + 1:g} px, one pixel wider than the noise filter)")
    elif isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 0:
        raise InputError(f"[segment] min_feature_px = {value!r}: give a whole number of "
                         "pixels ≥ 0, or \"auto\"")
    return int(value)


def _volume(image, cfg, classes, notes):
    res = segment_grayscale(image, method=cfg["method"], classes=classes,
                            thresholds=cfg["thresholds"], denoise=cfg["denoise"],
                            denoise_px=cfg["denoise_px"], min_feature_px=cfg["min_feature_px"])
    notes.append("a stack is thresholded without shading, stripe or scratch corrections")
    return Segmentation(res.labels, f"{cfg['method']} (volume)", res.thresholds, (),
                        tuple(notes + list(res.notes)), (), None, None, None,
                        res.min_feature_px, None, None)


def _thresholds(image, cfg, classes, notes):
    corrected = _corrected(image, classes, cfg)
    work = corrected.image
    gaps = np.diff(np.sort(corrected.means))
    gap = float(gaps.min()) if gaps.size else float(np.ptp(work))
    radius = cfg["denoise_px"]
    if radius == "auto":
        radius = auto_denoise_px(corrected.noise, gap) if cfg["denoise"] != "none" else 1.0
        if cfg["denoise"] != "none":
            notes.append(f"{cfg['denoise']} filter radius {radius:g} px, chosen for noise "
                         f"σ = {corrected.noise:.3g} and the smallest gap between classes "
                         f"{gap:.3g} (grey levels)")
    smooth = _denoise(work, cfg["denoise"], float(radius), notes)
    if cfg["method"] == "thresholds":
        thresholds = np.asarray(cfg["thresholds"], float)
    else:
        thresholds = refined_thresholds(smooth, classes)
    raw = np.digitize(smooth, thresholds, right=True).astype(np.int32)
    means = np.array([np.median(smooth[raw == k]) if np.any(raw == k) else np.nan
                      for k in range(classes)])
    labels = raw
    if classes > 2 and not np.isnan(means).any():
        labels, moved = resolve_mixed_rims(raw, smooth, means)
        if moved:
            notes.append(f"{moved} pixels of intermediate grey level between a darker and a "
                         "brighter phase (partial-volume rims) given to those phases")
    labels, moved = refine_boundaries(labels, work, np.ones(labels.shape))
    if moved:
        notes.append(f"{moved} boundary pixels placed at the grey-level midpoint of the two "
                     "phases meeting there")
    min_px = _min_feature(cfg, float(radius), notes)
    if min_px:
        labels = clean_small_features(labels, min_px, notes=notes)
    confidence, spread = _gaussian_confidence(smooth, labels, classes)
    delta = max(spread, 0.05 * gap)
    alternative = threshold_alternatives(smooth, labels, thresholds, delta)
    uncertainty = BoundaryUncertainty.from_alternatives(
        labels, alternative, f"thresholds moved by ±{delta:.3g} grey levels, the noise left "
        "after filtering")
    summary = ConfidenceSummary(float(confidence.mean()),
                                float(np.mean(confidence < CONFIDENCE_LEVEL)), CONFIDENCE_LEVEL)
    warnings = quality_warnings(image=image, grey=smooth, labels=labels,
                                classes=range(classes), corrections=corrected.corrections,
                                thresholds=tuple(thresholds), fields=cfg["fields"])
    return Segmentation(labels, cfg["method"], tuple(float(t) for t in thresholds),
                        corrected.corrections, tuple(notes), tuple(warnings), confidence,
                        summary, uncertainty, min_px, work, None)


def _gaussian_confidence(smooth, labels, classes):
    """Posterior probability of the chosen class under Gaussian class grey levels (medians,
    robust spreads, priors = the class fractions); and the median spread."""
    from .quality import _interior, _robust

    inner = _interior(labels)
    stats = []
    for k in range(classes):
        sel = smooth[inner & (labels == k)]
        if sel.size < 20:
            sel = smooth[labels == k]
        if sel.size == 0:
            continue
        med, sd = _robust(sel)
        stats.append((k, med, max(sd, 1e-6), np.count_nonzero(labels == k) / labels.size))
    if len(stats) < 2:
        return np.ones(labels.shape, np.float32), 0.0
    logp = np.stack([np.log(p) - np.log(sd) - 0.5 * ((smooth - med) / sd) ** 2
                     for _, med, sd, p in stats]).astype(np.float32)
    logp -= logp.max(0)
    post = np.exp(logp)
    post /= post.sum(0)
    index = {k: i for i, (k, *_rest) in enumerate(stats)}
    chosen = np.vectorize(lambda k: index.get(int(k), 0))(np.arange(classes))[labels]
    conf = np.take_along_axis(post, chosen[None], 0)[0].astype(np.float32)
    return conf, float(np.median([sd for _, _, sd, _ in stats]))


def _trained(image, cfg, phase_labels, annotations, segmenter, notes):
    if image.ndim != 2:
        raise InputError("trained segmentation works on 2D sections; segment a stack slice "
                         "by slice or with thresholds")
    if annotations is not None and segmenter is not None:
        raise InputError("both annotations and a segmenter model are given; give annotations "
                         "to train on this image, or a model to apply, not both")
    if annotations is None and segmenter is None:
        raise InputError("[segment] method = \"trained\" needs annotations = \"strokes.png\" "
                         "(0 = not annotated, v = phase label v − 1) or model = "
                         "\"segmenter.npz\"")
    if segmenter is None:
        segmenter = train_segmenter([image], [np.asarray(annotations)], _Config(cfg))
        notes.append(f"random forest trained on this image ({segmenter.source})")
    else:
        notes.append(f"random forest from a saved model ({segmenter.source})")
    if phase_labels and not set(segmenter.labels) <= set(phase_labels):
        raise InputError(f"the segmenter assigns labels {list(segmenter.labels)} but the "
                         f"[[phase]] entries have {list(phase_labels)}; add a [[phase]] for "
                         "each painted label")
    corrected = segmenter.prepare(image)
    proba = segmenter.probabilities(corrected.image)
    order = np.argsort(proba, axis=-1)
    values = np.asarray(segmenter.labels, np.int32)
    labels = values[order[..., -1]]
    confidence = np.take_along_axis(proba, order[..., -1:], -1)[..., 0]
    labels, moved = refine_boundaries(labels, corrected.image, confidence)
    if moved:
        notes.append(f"{moved} boundary pixels placed at the grey-level midpoint between the "
                     "two phases the classifier found there")
    min_px = _min_feature(cfg, PROBABILITY_SMOOTHING_PX, notes)
    if min_px:
        labels = clean_small_features(labels, min_px, notes=notes)
    alternative = np.where((confidence < CONFIDENCE_LEVEL) & (labels == values[order[..., -1]]),
                           values[order[..., -2]], -1)
    uncertainty = BoundaryUncertainty.from_alternatives(
        labels, alternative, f"pixels with a class probability below {CONFIDENCE_LEVEL:g} "
        "given to their second most probable class")
    summary = ConfidenceSummary(float(confidence.mean()),
                                float(np.mean(confidence < CONFIDENCE_LEVEL)), CONFIDENCE_LEVEL)
    warnings = quality_warnings(image=image, grey=corrected.image, labels=labels,
                                classes=segmenter.labels, corrections=corrected.corrections,
                                confidence=confidence, fields=cfg["fields"])
    return Segmentation(labels, "trained", (), corrected.corrections, tuple(notes),
                        tuple(warnings), confidence.astype(np.float32), summary, uncertainty,
                        min_px, corrected.image, segmenter)


class _Config:
    """The corrections of a settings dict, as attributes (what `train_segmenter` reads)."""

    def __init__(self, cfg):
        for key in ("shading", "stripes", "speckle", "scratches"):
            setattr(self, key, cfg[key])
