"""Tests of polisect.segment.correct: shading, stripes, speckle and scratch corrections."""

import numpy as np
import pytest

from polisect.core.errors import InputError
from polisect.model3d.synth import rsa_discs
from polisect.segment.correct import (SHADING_MIN, correct_image, estimate_shading,
                                      remove_scratches, remove_speckle, remove_stripes)


def discs(seed=1, n=256):
    return rsa_discs((n, n), 0.3, 8.0, seed=seed).labels


def test_shading_surface_recovered():
    """A known multiplicative gain (tilt + bowl, ±25 %) on a two-phase section is found to
    within 1 % everywhere (constructed case: the model holds exactly; common practice
    (no source) for the tolerance)."""
    lab = discs()
    y, x = np.meshgrid(np.linspace(-1, 1, 256), np.linspace(-1, 1, 256), indexing="ij")
    gain = 1 + 0.15 * x - 0.1 * (x ** 2 + y ** 2 - 0.66)
    image = np.where(lab == 1, 190.0, 70.0) * gain
    found, labels, means = estimate_shading(image, 2)
    ratio = found / gain
    assert np.ptp(ratio) / ratio.mean() < 0.01
    assert np.mean(labels == lab) > 0.995


def test_no_shading_not_corrected():
    """An evenly lit noisy section is left as it is; the step says why (the threshold
    SHADING_MIN is this module's own constant)."""
    rng = np.random.default_rng(0)
    lab = discs()
    image = np.where(lab == 1, 190.0, 70.0) + rng.normal(0, 8, lab.shape)
    out = correct_image(image, 2)
    step = {c.name: c for c in out.corrections}["shading"]
    assert not step.applied and step.amount < SHADING_MIN
    assert np.all(out.gain == 1)


def test_stripes_removed():
    """Column offsets of s.d. 6 grey levels under noise of 5 are found, and what is left
    of them has a s.d. under 2 grey levels (the 31-column running median keeps the slow
    part: about 6 × 1.25 / √31 ≈ 1.35 for white stripes; constructed case)."""
    rng = np.random.default_rng(2)
    lab = discs(seed=3)
    clean = np.where(lab == 1, 190.0, 70.0)
    stripes = rng.normal(0, 6, 256)
    image = clean + stripes[None, :] + rng.normal(0, 5, lab.shape)
    out, step = remove_stripes(image, lab, np.array([70.0, 190.0]))
    assert step.applied and 4 < step.amount < 8
    left = (out - clean).mean(0)
    assert np.std(left - left.mean()) < 2.0 < 5.0 < np.std(stripes)


def test_stripes_not_invented():
    """Pure noise gives no stripes (constructed case)."""
    rng = np.random.default_rng(3)
    lab = discs(seed=4)
    image = np.where(lab == 1, 190.0, 70.0) + rng.normal(0, 10, lab.shape)
    _, step = remove_stripes(image, lab, np.array([70.0, 190.0]))
    assert not step.applied


def test_speckle_replaced():
    """1 % impulse pixels are found (at least 90 % of them) and no other pixel changes on
    a noise-free image (constructed case)."""
    rng = np.random.default_rng(5)
    lab = discs(seed=5)
    clean = np.where(lab == 1, 190.0, 70.0)
    hit = rng.random(lab.shape) < 0.01
    image = np.where(hit, np.where(rng.random(lab.shape) < 0.5, 0.0, 255.0), clean)
    out, step = remove_speckle(image)
    assert step.applied and 0.009 < step.amount < 0.011
    changed = out != image
    assert changed[hit].mean() > 0.9 and not changed[~hit & (np.abs(image - clean) == 0)
                                                      & (out != clean)].any()


def test_scratch_filled_but_not_discs():
    """A straight dark 2-px line across the image is filled; without it nothing is
    (constructed case)."""
    rng = np.random.default_rng(6)
    lab = discs(seed=6)
    clean = np.where(lab == 1, 110.0, 180.0) + rng.normal(0, 4, lab.shape)
    _, none = remove_scratches(clean, 4.0)
    assert not none.applied
    scratched = clean.copy()
    rows = np.arange(256)
    for w in (0, 1):
        scratched[rows, np.clip(rows // 2 + 40 + w, 0, 255)] -= 60
    out, step = remove_scratches(scratched, 4.0)
    assert step.applied
    line = np.zeros(lab.shape, bool)
    line[rows, np.clip(rows // 2 + 40, 0, 255)] = True
    assert np.abs(out[line] - clean[line]).mean() < 20
    assert np.abs(scratched[line] - clean[line]).mean() > 55


def test_bad_options():
    """Unknown options and non-2D input are refused with what to do."""
    with pytest.raises(InputError, match="shading"):
        correct_image(np.zeros((8, 8)), 2, shading="on")
    with pytest.raises(InputError, match="2D"):
        correct_image(np.zeros((2, 8, 8)), 2)


def test_shading_fit_on_a_tiny_two_level_image_keeps_going():
    """A 32 × 32 image of two grey levels, one of them 0, leaves too few interior pixels for
    the shading surface: the fit stops instead of dividing by zero, and the image is
    segmented (found by the kill test of `polisect analyze`; common practice, no source)."""
    from polisect.segment import make_phasemap_labels

    rng = np.random.default_rng(3)
    image = ((rng.random((32, 32)) < 0.3) * 200).astype(np.uint8)
    seg = make_phasemap_labels(image, None, None, (0, 1))
    assert np.isfinite(seg.labels).all() and set(np.unique(seg.labels)) <= {0, 1}
