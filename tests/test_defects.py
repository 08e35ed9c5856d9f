"""Tests of polisect.model3d.defects: realistic renderings with their true label maps."""

import numpy as np
import pytest

from polisect.core.errors import InputError
from polisect.model3d.defects import DEFECT_KINDS, Defects, render_micrograph
from polisect.model3d.synth import Inclusions, compose

GREY = {0: 0.06, 1: 0.42, 2: 0.70}


@pytest.fixture(scope="module")
def labels():
    return compose((128, 128), [Inclusions(1, 0.25, 8.0), Inclusions(0, 0.03, 4.0)],
                   seed=2, matrix_label=2).labels


def test_clean_rendering_matches_grey_levels(labels):
    """Without defects and blur every pixel has its phase's grey level (quantised)."""
    r = render_micrograph(labels, GREY, Defects(blur_px=0), seed=0)
    want = np.round(np.array([GREY[k] for k in (0, 1, 2)])[labels] * 255)
    assert np.array_equal(r.image, want.astype(np.uint8))
    assert np.array_equal(r.labels, labels) and np.array_equal(r.surface, labels)


def test_shading_amplitude(labels):
    """Shading 0.3: the matrix grey level spans 0.7-1.3 of its level (the definition)."""
    r = render_micrograph(labels, GREY, Defects(blur_px=0, shading=0.3), seed=1)
    ratio = r.image[labels == 2] / (GREY[2] * 255)
    assert 0.68 < ratio.min() < 0.75 and 1.25 < ratio.max() < 1.32


def test_every_kind_changes_the_image_not_the_truth(labels):
    """Each defect kind alters the image and keeps the true labels (pull-outs change only
    the surface, the band only adds rows below an unchanged section)."""
    clean = render_micrograph(labels, GREY, Defects(), seed=3)
    strong = dict(shading=0.3, grain_contrast=0.1, se_edges=0.4, curtaining=0.05,
                  charging=0.3, scratches=3, pullouts=0.5, noise_sd=0.05, speckle=0.02,
                  info_band_px=12)
    assert set(strong) == set(DEFECT_KINDS)
    for kind, value in strong.items():
        r = render_micrograph(labels, GREY, Defects(particle_label=1, **{kind: value}), seed=3)
        assert np.array_equal(r.labels, labels), kind
        assert not np.array_equal(r.image, clean.image), kind
        if kind == "pullouts":
            moved = r.surface != labels
            assert moved.any() and np.all(labels[moved] == 1) and np.all(r.surface[moved] == 0)
        if kind == "info_band_px":
            assert r.image.shape == (140, 128) and r.info_band_px == 12
            assert np.array_equal(r.image[:128], clean.image)


def test_same_seed_same_image(labels):
    """The same seed renders the same pixels."""
    d = Defects(shading=0.2, scratches=2, noise_sd=0.05, info_band_px=8)
    a = render_micrograph(labels, GREY, d, seed=9)
    b = render_micrograph(labels, GREY, d, seed=9)
    assert np.array_equal(a.image, b.image)


def test_bad_input(labels):
    """Missing grey levels, 3D input and pull-outs without a particle label are refused."""
    with pytest.raises(InputError, match="grey level"):
        render_micrograph(labels, {0: 0.1, 1: 0.5})
    with pytest.raises(InputError, match="2D"):
        render_micrograph(np.zeros((2, 4, 4), int), {0: 0.1})
    with pytest.raises(InputError, match="particle_label"):
        render_micrograph(labels, GREY, Defects(pullouts=0.5))
