"""Tests of polisect.segment.trained: stroke-trained random forest, its file, refinement."""

import zipfile

import numpy as np
import pytest

from polisect.core.errors import InputError
from polisect.model3d.defects import Defects, render_micrograph
from polisect.model3d.synth import compose, Inclusions
from polisect.segment.trained import Segmenter, refine_boundaries, train_segmenter


def scene(seed=0, **defects):
    """Pores (0), a particle phase (1) and a matrix (2) with a bright pore edge effect."""
    packing = compose((160, 160), [Inclusions(1, 0.25, 8.0, 2.0, min_gap=1.5),
                                   Inclusions(0, 0.05, 4.0, 1.0, min_gap=1.5)],
                      seed=seed, matrix_label=2)
    d = Defects(noise_sd=0.06, **defects)
    return render_micrograph(packing.labels, {0: 0.08, 1: 0.45, 2: 0.72}, d, seed=seed)


def painted(truth, share=0.02, seed=0):
    rng = np.random.default_rng(seed)
    return np.where(rng.random(truth.shape) < share, truth + 1, 0)


def test_bright_edges_learned():
    """With secondary-electron bright pore edges (brighter than the matrix), strokes on
    2 % of the pixels give ≥ 97 % accuracy where a grey level alone cannot tell a rim from
    the matrix (constructed case; random forests: Breiman 2001)."""
    r = scene(1, se_edges=0.35)
    seg = train_segmenter([r.image], [painted(r.labels)])
    labels, confidence = seg.predict(r.image)
    assert np.mean(labels == r.labels) >= 0.97
    assert confidence.shape == r.labels.shape and 0 < confidence.min() <= confidence.max() <= 1


def test_save_load_roundtrip_without_pickle(tmp_path):
    """The file holds numeric arrays and a JSON string only, opens with
    allow_pickle=False, and the refitted forest predicts the same labels (deterministic
    refit from the stored samples and seed)."""
    r = scene(2)
    seg = train_segmenter([r.image], [painted(r.labels, seed=3)], seed=7)
    path = tmp_path / "lot_segmenter.npz"
    seg.save(path)
    with np.load(path, allow_pickle=False) as data:
        assert sorted(data.files) == ["features", "meta", "targets"]
        assert all(data[k].dtype != object for k in data.files)
    with zipfile.ZipFile(path) as z:
        assert all(n.endswith(".npy") for n in z.namelist())
    again = Segmenter.load(path)
    assert again.labels == seg.labels and again.settings == seg.settings
    assert np.array_equal(again.predict(r.image)[0], seg.predict(r.image)[0])


def test_several_images_and_label_values():
    """Training on two images with strokes on labels 0 and 2 only gives a segmenter of
    exactly those labels (painted as 1 and 3)."""
    a, b = scene(3), scene(4)
    ann = [np.where(painted(x.labels) == 2, 0, painted(x.labels)) for x in (a, b)]
    seg = train_segmenter([a.image, b.image], ann, names=["a", "b"])
    assert seg.labels == (0, 2) and seg.source.startswith("a, b")


def test_bad_inputs(tmp_path):
    """Mismatched shapes, one phase only, mixed bit depths and foreign files are refused."""
    r = scene(5)
    with pytest.raises(InputError, match="same size"):
        train_segmenter([r.image], [np.zeros((5, 5), int)])
    with pytest.raises(InputError, match="at least two"):
        train_segmenter([r.image], [np.where(r.labels == 1, 2, 0)])
    with pytest.raises(InputError, match="bit depths"):
        train_segmenter([r.image, r.image.astype(np.uint16)], [painted(r.labels)] * 2)
    bad = tmp_path / "bad.npz"
    np.savez(bad, features=np.zeros((3, 20), np.float32), targets=np.zeros(3, np.int32),
             meta=np.array("{}"))
    with pytest.raises(InputError, match="segmenter"):
        Segmenter.load(bad)
    with pytest.raises(InputError, match="not found"):
        Segmenter.load(tmp_path / "missing.npz")
    evil = tmp_path / "evil.npz"
    np.savez(evil, features=np.array([object()], dtype=object), targets=np.zeros(1),
             meta=np.array("{}"))
    with pytest.raises(InputError):
        Segmenter.load(evil)


def test_refine_boundaries_midpoint():
    """A boundary drawn one pixel into the brighter phase moves back to the grey-level
    midpoint of a blurred step (constructed case; Ridler and Calvard 1978)."""
    from scipy import ndimage

    truth = np.zeros((40, 40), int)
    truth[:, 20:] = 1
    grey = ndimage.gaussian_filter(np.where(truth == 1, 200.0, 60.0), 0.6)
    shifted = np.zeros_like(truth)
    shifted[:, 21:] = 1
    out, moved = refine_boundaries(shifted, grey, np.ones(truth.shape))
    assert moved == 40 and np.array_equal(out, truth)
