"""Tests of polisect.segment.quality: each warning fires on its own defect, and only then."""

import numpy as np

from polisect.model3d.synth import Inclusions, compose
from polisect.segment import quality


def two_phase(seed=0, n=200):
    p = compose((n, n), [Inclusions(1, 0.3, 7.0, min_gap=2.0)], seed=seed, matrix_label=0)
    return p.labels


def test_separation():
    """Two classes 10 grey levels apart under noise of 8 overlap (Ashman's D ≈ 0.9 < 2);
    100 apart they do not (Ashman et al. 1994, the D > 2 criterion)."""
    rng = np.random.default_rng(0)
    lab = two_phase()
    noise = rng.normal(0, 8, lab.shape)
    assert "separation" in quality.separation_warning(np.where(lab, 110.0, 100.0) + noise, lab)
    assert quality.separation_warning(np.where(lab, 200.0, 100.0) + noise, lab) is None


def test_histogram():
    """A unimodal histogram split in three classes is flagged; three clear peaks are not
    (Gaussian mixture with Ashman's D, as polisect.segment.thresholds.suggest_classes)."""
    rng = np.random.default_rng(1)
    assert "separated" in quality.histogram_warning(rng.normal(100, 20, (100, 100)), 3)
    peaks = np.repeat([30.0, 120.0, 210.0], 3400)[:10000] + rng.normal(0, 6, 10000)
    assert quality.histogram_warning(peaks.reshape(100, 100), 3) is None


def test_drift():
    """A class whose grey level changes by 40 % of the gap across the image is flagged;
    an even one is not (threshold DRIFT_SHARE = 0.25 of this module)."""
    rng = np.random.default_rng(2)
    lab = two_phase(1)
    x = np.linspace(0, 1, lab.shape[1])[None, :]
    even = np.where(lab, 200.0, 100.0) + rng.normal(0, 3, lab.shape)
    assert quality.drift_warning(even, lab) is None
    assert "illumination" in quality.drift_warning(even + np.where(lab, 40.0 * x, 0.0), lab)


def test_edges():
    """Matrix pixels next to pores 40 grey levels brighter than the matrix away from them
    are flagged (secondary-electron edge effect); blur alone (darker rim) is not."""
    from scipy import ndimage

    lab = np.where(two_phase(2) == 1, 0, 2)
    grey = np.where(lab == 0, 20.0, 180.0)
    dist = ndimage.distance_transform_edt(lab != 0)
    assert quality.edge_warning(ndimage.gaussian_filter(grey, 0.7), lab) is None
    rim = grey + np.where((dist >= 1) & (dist <= 2), 40.0, 0.0)
    assert "rims" in quality.edge_warning(rim, lab)


def test_pullouts():
    """Pores sitting half in a particle, half in the matrix are flagged; pores in the
    matrix and cores inside hollow particles are not (Vander Voort 1999, pull-outs)."""
    lab = np.full((100, 100), 2)
    yy, xx = np.indices(lab.shape)
    centres = [(20, 20), (20, 70), (70, 20), (70, 70)]
    for cy, cx in centres:
        lab[(yy - cy) ** 2 + (xx - cx) ** 2 < 100] = 1
    assert quality.pullout_warning(lab) is None
    cores = lab.copy()
    for cy, cx in centres:
        cores[(yy - cy) ** 2 + (xx - cx) ** 2 < 25] = 0
    assert quality.pullout_warning(cores) is None
    pulled = lab.copy()
    for cy, cx in centres:
        pulled[(yy - cy) ** 2 + (xx - cx - 10) ** 2 < 16] = 0
    assert "pulled out" in quality.pullout_warning(pulled)


def test_confidence_and_band():
    """Low confidence on 20 % of the pixels is flagged; a 20-row information band left at
    the bottom is flagged, a section without one is not."""
    conf = np.ones((50, 50))
    conf[:10] = 0.5
    assert "confidence" in quality.confidence_warning(conf)
    assert quality.confidence_warning(np.ones((50, 50))) is None
    rng = np.random.default_rng(3)
    img = rng.integers(60, 200, (120, 100)).astype(np.uint8)
    assert quality.band_warning(img) is None
    img[100:] = 5
    img[105:110, 10:40] = 250
    assert "information band" in quality.band_warning(img)


def test_fine_features():
    """Pores of radius 2–3 px (a third to half of their pixels on their edge) are flagged:
    blur shrinks such features by about σ²/R² of their area at any threshold (Russ & Neal
    2016, partial volume); particles of radius 7 px and their matrix are not (a disc of
    radius R has about 2/R of its pixels on its edge; common practice, no source)."""
    small = compose((200, 200), [Inclusions(1, 0.3, 7.0, min_gap=2.0),
                                 Inclusions(2, 0.04, 2.5, min_gap=2.0)], seed=4,
                    matrix_label=0).labels
    found = quality.fine_features_warning(small)
    assert len(found) == 1 and found[0].startswith("class 2:")
    assert quality.fine_features_warning(two_phase()) == []
