"""Tests of polisect.segment.segmentation.make_phasemap_labels: the entry point's contract."""

import numpy as np
import pytest

from polisect.core.errors import InputError
from polisect.model3d.synth import rsa_discs
from polisect.read.config import SegmentConfig
from polisect.segment import Segmentation, make_phasemap_labels, train_segmenter


@pytest.fixture(scope="module")
def section():
    truth = rsa_discs((128, 128), 0.3, 6.0, seed=4).labels
    rng = np.random.default_rng(1)
    image = np.clip(np.where(truth == 1, 180, 70) + rng.normal(0, 10, truth.shape), 0, 255)
    return truth, image.astype(np.uint8)


def test_result_is_complete(section):
    """Labels, corrections (four, each with a sentence), notes stating the smallest
    feature, a confidence map in [0, 1], and uncertainty fractions bracketing the labels'
    own fractions (constructed case)."""
    truth, image = section
    seg = make_phasemap_labels(image, 0.5, None, (0, 1))
    assert isinstance(seg, Segmentation) and seg.method == "multi-otsu"
    assert [c.name for c in seg.corrections] == ["speckle", "shading", "scratches", "stripes"]
    assert all(c.what for c in seg.corrections)
    assert any("smallest feature kept: 13 px" in n for n in seg.notes)
    assert seg.min_feature_px == 13
    assert 0 <= seg.confidence.min() and seg.confidence.max() <= 1
    for label, (nominal, low, high) in seg.uncertainty.fractions.items():
        assert low <= nominal <= high
        assert nominal == pytest.approx(seg.fractions()[label])
    assert np.mean(seg.labels == truth) > 0.98


def test_same_defaults_from_none_and_from_config(section):
    """No config and the default [segment] table give the same map (one default)."""
    _, image = section
    a = make_phasemap_labels(image, None, None, (0, 1))
    b = make_phasemap_labels(image, None, SegmentConfig(), (0, 1))
    assert np.array_equal(a.labels, b.labels) and a.min_feature_px == b.min_feature_px


def test_trained_with_model_and_rgb(section):
    """A saved segmenter applies to an RGB copy of the image (converted to luminance)."""
    truth, image = section
    rng = np.random.default_rng(2)
    strokes = np.where(rng.random(truth.shape) < 0.02, truth + 1, 0)
    model = train_segmenter([image], [strokes])
    rgb = np.repeat(image[..., None], 3, axis=-1)
    seg = make_phasemap_labels(rgb, None, SegmentConfig(method="trained", model="m.npz"),
                               (0, 1), segmenter=model)
    assert seg.method == "trained" and seg.segmenter is model
    assert np.mean(seg.labels == truth) > 0.97


def test_errors(section):
    """The trained route needs strokes or a model (not both), labels must be configured,
    and strokes need method = "trained"."""
    truth, image = section
    trained = SegmentConfig(method="trained", annotations="s.png")
    with pytest.raises(InputError, match="annotations"):
        make_phasemap_labels(image, None, trained, (0, 1))
    strokes = np.where(np.random.default_rng(3).random(truth.shape) < 0.02, truth + 1, 0)
    with pytest.raises(InputError, match="phase"):
        make_phasemap_labels(image, None, trained, (0, 5), annotations=strokes)
    with pytest.raises(InputError, match="trained"):
        make_phasemap_labels(image, None, None, (0, 1), annotations=strokes)


def test_volume_thresholded_without_corrections(section):
    """A stack is thresholded slice-independent, without corrections, and says so."""
    truth, image = section
    stack = np.stack([image, image])
    seg = make_phasemap_labels(stack, None, None, (0, 1))
    assert seg.labels.shape == stack.shape and seg.corrections == ()
    assert any("stack" in n for n in seg.notes)
    assert np.mean(seg.labels[0] == truth) > 0.97
