"""The segment stage: grey micrographs to phase maps, with corrections, warnings and the
segmentation uncertainty. `make_phasemap_labels` is its entry point; `train_segmenter`
and `Segmenter` train and keep a stroke-trained classifier."""

from .segmentation import ConfidenceSummary, Segmentation, make_phasemap_labels
from .trained import Segmenter, train_segmenter

__all__ = ["make_phasemap_labels", "Segmentation", "ConfidenceSummary", "Segmenter",
           "train_segmenter"]
