"""Segmentation trained from a few annotation strokes: a random forest on pixel features.

* `train_segmenter`: annotated images (0 = not annotated, v = phase label v − 1) →
  `Segmenter`. Painting label + 1 lets phase label 0 (pores in the demo configs) be painted.
* `Segmenter.predict`: class probabilities of every pixel of a new image.
* `Segmenter.save` / `Segmenter.load`: a ``.npz`` file holding the sampled training
  features, their labels and the settings, read with ``allow_pickle=False``; the forest
  is refitted on load with the stored seed, so the file runs no code and the model is
  the same on every machine.

Examples
--------
>>> import numpy as np
>>> from polisect.segment.trained import train_segmenter
>>> rng = np.random.default_rng(0)
>>> from polisect.model3d.synth import rsa_discs
>>> truth = rsa_discs((96, 96), 0.3, 8.0, seed=2).labels
>>> img = np.where(truth == 1, 170, 60) + rng.normal(0, 10, truth.shape)
>>> strokes = np.where(rng.random(truth.shape) < 0.02, truth + 1, 0)
>>> seg = train_segmenter([img.clip(0, 255).astype(np.uint8)], [strokes])
>>> labels, confidence = seg.predict(img.clip(0, 255).astype(np.uint8))
>>> float((labels == truth).mean()) > 0.95
True
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
from scipy import ndimage

from ..core.errors import InputError
from .correct import _interior, correct_image
from .features import full_scale, pixel_features

__all__ = ["Segmenter", "train_segmenter", "refine_boundaries", "FORMAT", "TREES",
           "MAX_SAMPLES_PER_CLASS"]

#: Identifies a segmenter file.
FORMAT = "polisect.segmenter/1"
#: Trees of the forest.
TREES = 50
#: Annotated pixels kept per class for training (a random, seeded subsample).
MAX_SAMPLES_PER_CLASS = 20000
#: Probabilities are smoothed by a Gaussian of this standard deviation (pixels) before
#: the most probable class is taken.
PROBABILITY_SMOOTHING_PX = 1.0
_ROWS_PER_CHUNK = 256
#: Gaussian smoothing (pixels) of the grey levels that place the boundaries.
REFINE_SIGMA_PX = 1.0


@dataclass(frozen=True, eq=False)
class Segmenter:
    """A trained pixel classifier and everything needed to rebuild it.

    Attributes
    ----------
    features : ndarray of float32, shape (n, 20)
        Features of the sampled annotated pixels (`polisect.segment.features`).
    targets : ndarray of int32, shape (n,)
        Their phase labels.
    labels : tuple of int
        The phase labels the segmenter assigns, increasing.
    settings : dict
        Corrections applied before the features (``shading``, ``stripes``, ``speckle``,
        ``scratches``), the grey level of white (``scale``), ``trees`` and ``seed``.
    source : str
        What it was trained on (image names and annotated pixels).

    Notes
    -----
    The classifier is a random forest [1]_ (scikit-learn), fitted when the object is
    made; the same features, labels, trees and seed give the same forest.

    References
    ----------
    .. [1] Breiman, L. (2001). Random forests. Mach. Learn. 45, 5-32.
    """

    features: np.ndarray
    targets: np.ndarray
    labels: tuple[int, ...]
    settings: dict
    source: str = ""
    _forest: object = field(default=None, init=False, repr=False, compare=False)

    def __post_init__(self):
        from sklearn.ensemble import RandomForestClassifier

        forest = RandomForestClassifier(n_estimators=int(self.settings["trees"]),
                                        random_state=int(self.settings["seed"]), n_jobs=-1,
                                        max_features="sqrt", min_samples_leaf=1)
        forest.fit(self.features, self.targets)
        object.__setattr__(self, "_forest", forest)

    def prepare(self, image: np.ndarray):
        """The corrected image and the `Corrected` record the features are taken from."""
        s = self.settings
        grey = np.asarray(image)
        if grey.ndim != 2:
            raise InputError(f"a segmenter works on 2D grey images, got shape {grey.shape}")
        corrected = correct_image(grey, len(self.labels), shading=s["shading"],
                                  stripes=s["stripes"], speckle=s["speckle"],
                                  scratches=s["scratches"])
        return corrected

    def probabilities(self, corrected_image: np.ndarray) -> np.ndarray:
        """Class probabilities, shape (ny, nx, len(labels)), smoothed over about a pixel."""
        feats = pixel_features(corrected_image, scale=float(self.settings["scale"]))
        ny, nx, nf = feats.shape
        proba = np.empty((ny, nx, len(self.labels)), np.float32)
        for start in range(0, ny, _ROWS_PER_CHUNK):
            block = feats[start:start + _ROWS_PER_CHUNK].reshape(-1, nf)
            proba[start:start + _ROWS_PER_CHUNK] = self._forest.predict_proba(block).reshape(
                -1, nx, len(self.labels))
        for k in range(proba.shape[-1]):
            proba[..., k] = ndimage.gaussian_filter(proba[..., k], PROBABILITY_SMOOTHING_PX)
        return proba / proba.sum(-1, keepdims=True)

    def predict(self, image: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Labels (int32) and confidence (the largest class probability) of every pixel."""
        proba = self.probabilities(self.prepare(image).image)
        return (np.asarray(self.labels, np.int32)[proba.argmax(-1)], proba.max(-1))

    def save(self, path: str | os.PathLike) -> None:
        """Write the segmenter as ``.npz`` (numeric arrays and a JSON string only)."""
        from ..core.atomic import atomic_write

        meta = {"format": FORMAT, "labels": list(self.labels), "settings": self.settings,
                "source": self.source}

        def write(tmp):
            with open(tmp, "wb") as f:
                np.savez_compressed(f, features=self.features.astype(np.float32),
                                    targets=self.targets.astype(np.int32),
                                    meta=np.array(json.dumps(meta)))
        atomic_write(path, write)

    @classmethod
    def load(cls, path: str | os.PathLike) -> "Segmenter":
        """Read a segmenter written by `save` (no pickled objects are accepted)."""
        path = os.fspath(path)
        try:
            with np.load(path, allow_pickle=False) as data:
                arrays = {k: data[k] for k in ("features", "targets", "meta")}
        except FileNotFoundError:
            raise InputError(f"{path}: segmenter model not found; check [segment] model") \
                from None
        except (KeyError, ValueError, OSError) as exc:
            raise InputError(f"{path}: not a polisect segmenter file ({exc}); train one with "
                             "`polisect train` or a run with method = \"trained\"") from None
        try:
            meta = json.loads(str(arrays["meta"]))
            ok = meta.get("format") == FORMAT
        except (ValueError, AttributeError):
            ok = False
        feats, targets = arrays["features"], arrays["targets"]
        if not ok or feats.ndim != 2 or targets.shape != (feats.shape[0],) \
                or feats.dtype != np.float32 or not np.issubdtype(targets.dtype, np.integer):
            raise InputError(f"{path}: not a {FORMAT} file; train a new model")
        settings = meta["settings"]
        return cls(feats, targets.astype(np.int32), tuple(int(v) for v in meta["labels"]),
                   settings, str(meta.get("source", "")))


def refine_boundaries(labels: np.ndarray, grey: np.ndarray, confidence: np.ndarray, *,
                      separation: float = 3.0) -> tuple[np.ndarray, int]:
    """Place the classifier's boundaries between grey-level classes at the grey-level midpoint.

    Pixel features are smoothed over at least a pixel, and strokes sit mostly inside the
    phases, so a forest draws boundaries about a pixel off, towards whichever class was
    painted closer to edges. Where two classes a and b meet and their grey levels are
    well apart (Ashman's D ≥ *separation* over confidently classified interior pixels),
    every boundary pixel (one whose 3 × 3 neighbourhood holds both) whose grey level
    (smoothed by a Gaussian of `REFINE_SIGMA_PX`, which keeps a straight edge's
    midpoint crossing in place while it cuts the noise about fourfold) lies strictly
    between the two class levels goes to the nearer one: the midpoint rule of Ridler and Calvard [1]_ used only to place a boundary the forest
    already found. Pixels brighter or darker than both (bright edges in secondary-electron
    images) keep the forest's class.

    Parameters
    ----------
    labels : ndarray of int, shape (ny, nx)
    grey : ndarray, shape (ny, nx)
        Corrected grey levels.
    confidence : ndarray, shape (ny, nx)
        Probability of each pixel's class.
    separation : float
        Smallest Ashman's D for a pair of classes to be refined.

    Returns
    -------
    labels : ndarray of int32
    moved : int

    References
    ----------
    .. [1] Ridler, T. W., Calvard, S. (1978). IEEE Trans. Syst. Man Cybern. 8, 630-632.
    """
    out = np.asarray(labels).astype(np.int32)
    grey = np.asarray(grey, float)
    sure = _interior(out) & (confidence >= 0.9)
    smooth = ndimage.gaussian_filter(grey, REFINE_SIGMA_PX)
    stats = {}
    for v in np.unique(out):
        sel = smooth[sure & (out == v)]
        if sel.size >= 50:
            med = float(np.median(sel))
            stats[int(v)] = (med, 1.4826 * float(np.median(np.abs(sel - med))))
    box = np.ones((3, 3), bool)
    moved = 0
    for a in stats:
        for b in stats:
            (ma, sa), (mb, sb) = stats[a], stats[b]
            if not ma < mb or np.sqrt(2) * (mb - ma) / max(np.hypot(sa, sb), 1e-12) < separation:
                continue
            near_a = ndimage.binary_dilation(out == a, box)
            near_b = ndimage.binary_dilation(out == b, box)
            band = near_a & near_b & ((out == a) | (out == b)) & (smooth > ma) & (smooth < mb)
            new = np.where(smooth < (ma + mb) / 2, a, b)
            changed = band & (new != out)
            out[changed] = new[changed]
            moved += int(changed.sum())
    return out, moved


def train_segmenter(images: Sequence[np.ndarray], annotations: Sequence[np.ndarray],
                    config=None, *, names: Sequence[str] | None = None,
                    seed: int = 0) -> Segmenter:
    """Train a segmenter on annotated images.

    Parameters
    ----------
    images : sequence of ndarray, shape (ny, nx)
        Grey images (all stored with the same bit depth).
    annotations : sequence of ndarray of int
        One per image, same shape: 0 = not annotated, v ≥ 1 = the pixel is phase label
        v − 1 (label 0 is painted 1, label 1 is painted 2, ...).
    config : SegmentConfig, optional
        ``[segment]`` settings: its corrections (``shading``, ``stripes``, ``speckle``,
        ``scratches``) are applied before the features; defaults otherwise.
    names : sequence of str, optional
        Image names, for the record.
    seed : int
        Seed of the sampling and of the forest.

    Returns
    -------
    Segmenter

    Raises
    ------
    InputError
        Mismatched counts or shapes, fewer than two annotated phases, images of different
        bit depths.
    """
    images, annotations = list(images), list(annotations)
    if not images or len(images) != len(annotations):
        raise InputError(f"give one annotation image per image ({len(images)} images, "
                         f"{len(annotations)} annotations)")
    scales = {full_scale(np.asarray(im).dtype) for im in images}
    if len(scales) != 1:
        raise InputError("the images to train on have different bit depths; convert them to "
                         "one")
    settings = {key: getattr(config, key, "auto") for key in
                ("shading", "stripes", "speckle", "scratches")}
    settings.update(scale=scales.pop(), trees=TREES, seed=int(seed))
    values = set()
    for k, (im, ann) in enumerate(zip(images, annotations)):
        ann = np.asarray(ann)
        if ann.shape != np.asarray(im).shape[:2]:
            raise InputError(f"annotation {k + 1} has shape {ann.shape}, its image "
                             f"{np.asarray(im).shape[:2]}; they must be the same size")
        if not np.issubdtype(ann.dtype, np.integer) or ann.min() < 0:
            raise InputError(f"annotation {k + 1} must hold whole numbers ≥ 0 (0 = not "
                             "annotated, v = phase label v − 1)")
        values |= set(np.unique(ann).tolist()) - {0}
    if len(values) < 2:
        raise InputError(f"the annotations mark {len(values)} phase(s); paint strokes on at "
                         "least two phases")
    labels = tuple(sorted(int(v) - 1 for v in values))
    probe = Segmenter.__new__(Segmenter)
    object.__setattr__(probe, "labels", labels)
    object.__setattr__(probe, "settings", settings)
    rng = np.random.default_rng(seed)
    feats, targets, painted = [], [], 0
    for im, ann in zip(images, annotations):
        ann = np.asarray(ann)
        corrected = Segmenter.prepare(probe, np.asarray(im))
        f = pixel_features(corrected.image, scale=settings["scale"])
        painted += int(np.count_nonzero(ann))
        for v in labels:
            idx = np.flatnonzero(ann.ravel() == v + 1)
            feats.append(f.reshape(-1, f.shape[-1])[idx])
            targets.append(np.full(idx.size, v, np.int32))
    feats, targets = np.concatenate(feats), np.concatenate(targets)
    keep = []
    for v in labels:
        idx = np.flatnonzero(targets == v)
        if idx.size > MAX_SAMPLES_PER_CLASS:
            idx = np.sort(rng.choice(idx, MAX_SAMPLES_PER_CLASS, replace=False))
        keep.append(idx)
    keep = np.concatenate(keep)
    named = ", ".join(names) if names else f"{len(images)} image(s)"
    return Segmenter(feats[keep], targets[keep], labels, settings,
                     f"{named}; {painted} annotated pixels, {keep.size} used")
