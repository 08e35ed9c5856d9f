"""Segment: a micrograph into a phase map — grey-level thresholds, colour palettes and a
classifier trained from strokes (corrections before, quality checks and the segmentation
uncertainty after). `make_phasemap_labels` is the entry point; `train_segmenter` and
`Segmenter` train and keep a stroke-trained classifier."""

from .segmentation import ConfidenceSummary, Segmentation, make_phasemap_labels
from .trained import Segmenter, train_segmenter

__all__ = ["make_phasemap_labels", "Segmentation", "ConfidenceSummary", "Segmenter",
           "train_segmenter"]
