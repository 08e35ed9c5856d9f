"""Tests of polisect.segment.thresholds: thresholds, denoising, clean-up, palettes, class suggestion."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from skimage.measure import label as connected

from polisect.core.errors import InputError
from polisect.segment.thresholds import (clean_small_features, noise_sigma, segment_grayscale,
                              segment_palette, suggest_classes)
from polisect.model3d.synth import Inclusions, compose, render_sem


def three_phase(seed=0, noise=0.04, shape=(192, 192)):
    """Matrix (1) with bright particles (2) and dark pores (0), rendered as an SEM image."""
    p = compose(shape, [Inclusions(2, 0.25, 7.0, size_sd=2.0, min_gap=1.0),
                        Inclusions(0, 0.05, 3.5, min_gap=1.0)], seed=seed, matrix_label=1)
    img = render_sem(p.labels, {0: 0.08, 1: 0.45, 2: 0.8}, blur_px=0.6, noise_sd=noise, seed=seed)
    return img, p.labels


def test_multi_otsu_orders_classes_dark_to_bright():
    """Three well-separated grey levels: multi-Otsu (Otsu 1979; Liao et al. 2001) puts one
    threshold between each pair and numbers the classes from dark to bright."""
    img, truth = three_phase()
    r = segment_grayscale(img, classes=3)
    assert r.method == "multi-otsu" and len(r.thresholds) == 2
    assert 0.08 * 255 < r.thresholds[0] < 0.45 * 255 < r.thresholds[1] < 0.8 * 255
    assert (r.labels == truth).mean() > 0.98
    assert r.labels.dtype == np.int32


def test_given_thresholds_convention():
    """A pixel above t[k-1] and at most t[k] is class k (skimage threshold_otsu: 'greater
    than the threshold is foreground')."""
    img = np.array([[10, 60, 61, 180, 181, 255]], np.uint8).repeat(2, 0)
    r = segment_grayscale(img, method="thresholds", thresholds=[60, 180])
    assert r.labels[0].tolist() == [0, 0, 1, 1, 2, 2]
    assert r.thresholds == (60.0, 180.0)
    r = segment_grayscale(img, method="thresholds", thresholds=[200, 250, 254])
    assert any("no pixels" in n for n in r.notes)


def test_bad_parameters():
    img, _ = three_phase()
    with pytest.raises(InputError, match="classes"):
        segment_grayscale(img)
    with pytest.raises(InputError, match="whole number"):
        segment_grayscale(img, classes=1)
    with pytest.raises(InputError, match="increasing"):
        segment_grayscale(img, method="thresholds", thresholds=[100, 50])
    with pytest.raises(InputError, match="does not match"):
        segment_grayscale(img, method="thresholds", thresholds=[100], classes=3)
    with pytest.raises(InputError, match="method"):
        segment_grayscale(img, classes=3, thresholds=[10, 20])
    with pytest.raises(InputError, match="not known"):
        segment_grayscale(img, method="k-means", classes=3)
    with pytest.raises(InputError, match="not known"):
        segment_grayscale(img, classes=3, denoise="gauss")
    with pytest.raises(InputError, match="denoise_px"):
        segment_grayscale(img, classes=3, denoise="median", denoise_px=0)


def test_uniform_image_has_no_contrast():
    with pytest.raises(InputError, match="no contrast") as e:
        segment_grayscale(np.full((32, 32), 77, np.uint8), classes=3)
    assert "3 classes" in str(e.value)


def test_too_few_grey_levels():
    img = np.zeros((16, 16), np.uint8)
    img[:, 8:] = 200
    with pytest.raises(InputError, match="only 2 distinct grey levels"):
        segment_grayscale(img, classes=3)


def test_nan_pixels_rejected():
    img = np.ones((8, 8))
    img[2, 2] = np.nan
    with pytest.raises(InputError, match="NaN"):
        segment_grayscale(img, classes=2)


@pytest.mark.parametrize("denoise", ["median", "nl-means"])
def test_denoising_improves_noisy_segmentation(denoise):
    """On a noisy rendering both denoisers raise pixel accuracy (median: Tukey 1977;
    non-local means: Buades, Coll & Morel 2005) — common practice, no source for the size
    of the gain."""
    img, truth = three_phase(seed=2, noise=0.12)
    plain = (segment_grayscale(img, classes=3).labels == truth).mean()
    r = segment_grayscale(img, classes=3, denoise=denoise, denoise_px=1)
    assert (r.labels == truth).mean() > plain + 0.02
    assert r.notes and denoise.split("-")[0] in r.notes[0].lower().replace("non-local", "nl")


def test_median_radius_accepts_float():
    img, truth = three_phase(seed=3, noise=0.1)
    r = segment_grayscale(img, classes=3, denoise="median", denoise_px=1.5)
    assert (r.labels == truth).mean() > 0.97


def test_noise_sigma_immerkaer():
    """Immerkær (1996): the estimate recovers the SD of white Gaussian noise and ignores a
    linear ramp (the mask annihilates planes)."""
    rng = np.random.default_rng(0)
    ramp = np.add.outer(np.arange(200.0), 2 * np.arange(300.0))
    for sd in (2.0, 10.0):
        assert noise_sigma(ramp + rng.normal(0, sd, ramp.shape)) == pytest.approx(sd, rel=0.03)
    assert noise_sigma(ramp) == pytest.approx(0, abs=1e-9)


def test_three_dimensional_stack():
    img, truth = three_phase(seed=4)
    grey = {0: 0.08, 1: 0.45, 2: 0.8}
    stack = np.stack([render_sem(truth, grey, blur_px=0.6, noise_sd=0.04, seed=k) for k in range(3)])
    r = segment_grayscale(stack, classes=3, denoise="median")
    assert r.labels.shape == stack.shape
    assert (r.labels[1] == truth).mean() > 0.98


def test_sixteen_bit_and_float_images():
    img, truth = three_phase(seed=5)
    for scaled in (img.astype(np.uint16) * 257, img.astype(np.float32) / 255):
        assert (segment_grayscale(scaled, classes=3).labels == truth).mean() > 0.98


def test_many_classes_use_coarse_histogram():
    levels = np.repeat(np.arange(6) * 40 + 20, 600).reshape(60, 60).astype(np.uint8)
    r = segment_grayscale(levels, classes=6)
    assert any("64-bin" in n for n in r.notes)
    assert sorted(np.unique(r.labels).tolist()) == list(range(6))


def test_clean_small_features_merges_into_surroundings():
    """A speck inside a particle joins the particle; a speck across a boundary joins the
    label most of its border touches."""
    lab = np.ones((40, 40), int)
    lab[5:20, 5:20] = 2
    lab[10, 10] = 0
    lab[25:40, 22:40] = 2
    lab[30:32, 20:22] = 0
    out = clean_small_features(lab, 5)
    assert out[10, 10] == 2
    assert np.all(out[30:32, 20:22] == 1)
    assert np.array_equal(out[lab == 2], lab[lab == 2])


def test_segment_with_min_feature_px_notes():
    img, truth = three_phase(seed=6, noise=0.1)
    r = segment_grayscale(img, classes=3, min_feature_px=6)
    assert any("merged" in n for n in r.notes)
    comp = connected(r.labels, background=-1, connectivity=2)
    assert np.bincount(comp.ravel())[1:].min() >= 6


def test_clean_small_features_rejects_bad_size():
    with pytest.raises(InputError, match="min_feature_px"):
        clean_small_features(np.zeros((4, 4), int), -1)


@settings(max_examples=20, deadline=None)
@given(seed=st.integers(0, 2 ** 16), size=st.integers(1, 12), n_labels=st.integers(2, 4))
def test_clean_small_features_invariants(seed, size, n_labels):
    """After cleaning every feature is at least min_feature_px large (unless it fills the
    image), only labels already present occur, and cleaning again changes nothing."""
    rng = np.random.default_rng(seed)
    lab = rng.integers(0, n_labels, (12, 12)).repeat(3, 0).repeat(3, 1)
    lab[rng.random(lab.shape) < 0.05] = n_labels - 1
    out = clean_small_features(lab, size)
    assert set(np.unique(out).tolist()) <= set(np.unique(lab).tolist())
    sizes = np.bincount(connected(out, background=-1, connectivity=2).ravel())[1:]
    assert len(sizes) == 1 or sizes.min() >= size
    assert np.array_equal(clean_small_features(out, size), out)


def test_palette_exact_and_tolerance():
    img = np.zeros((4, 5, 3), np.uint8)
    img[1:3, 1:4] = (200, 30, 30)
    img[0, 0] = (205, 28, 33)
    colors = {0: "#000000", 5: "#c81e1e"}
    with pytest.raises(InputError, match=r"#cd1c21 \(1 px\)"):
        segment_palette(img, colors)
    r = segment_palette(img, colors, tolerance=8)
    assert r.method == "palette" and r.labels[0, 0] == 5 and r.labels[1, 1] == 5
    assert r.labels[3, 4] == 0 and r.labels.dtype == np.int32
    rgba16 = np.dstack([img.astype(np.uint16) * 257, np.full((4, 5), 65535, np.uint16)])
    assert np.array_equal(segment_palette(rgba16, colors, tolerance=8).labels, r.labels)


def test_palette_unknown_colours_listed_with_counts():
    img = np.zeros((10, 10, 3), np.uint8)
    img[:3] = (0, 255, 0)
    img[9, 9] = (1, 2, 3)
    with pytest.raises(InputError) as e:
        segment_palette(img, {0: "#000000"})
    msg = str(e.value)
    assert "#00ff00 (30 px)" in msg and "#010203 (1 px)" in msg and "31 pixels" in msg


def test_palette_bad_colours():
    img = np.zeros((4, 4, 3), np.uint8)
    with pytest.raises(InputError, match="#rrggbb"):
        segment_palette(img, {0: "black"})
    with pytest.raises(InputError, match="share the colour"):
        segment_palette(img, {0: "#000000", 1: "#000000"})


@pytest.mark.parametrize("n_phases", [2, 3, 4])
def test_suggest_classes_finds_phase_count(n_phases):
    """Rendered sections with 2-4 phases: the Gaussian-mixture / Ashman's D criterion
    (Ashman, Bird & Zepf 1994: D > 2 for clean separation) recovers the count."""
    fams = [Inclusions(2, 0.2, 7.0, min_gap=1.0), Inclusions(0, 0.08, 4.0, min_gap=1.0),
            Inclusions(3, 0.1, 5.0, min_gap=1.0)][: n_phases - 1]
    p = compose((192, 192), fams, seed=n_phases, matrix_label=1)
    grey = {0: 0.05, 1: 0.35, 2: 0.6, 3: 0.85}
    img = render_sem(p.labels, grey, blur_px=0.6, noise_sd=0.03, seed=1)
    assert suggest_classes(img) == n_phases


def test_suggest_classes_single_phase():
    """Pure Gaussian noise is one class; so is a uniform image."""
    noise = np.random.default_rng(0).normal(120, 15, (128, 128))
    assert suggest_classes(noise) == 1
    assert suggest_classes(np.full((16, 16), 3)) == 1
