"""Acceptance of polisect.segment.make_phasemap_labels on rendered sections (issue 14).

Both demo product lines (sample_images/make_samples.py: Al/SiC/pore AMC and
mullite/hollow-alumina/pore castable) are rendered with polisect.model3d.defects. The
truth is the rendered label map itself; the thresholds are those of issue 14, "Done when"
(acceptance criteria of the project, no external source).
"""

import functools
import importlib.util
import pathlib
import sys

import numpy as np
import pytest
from scipy import ndimage

from polisect.model3d.defects import Defects, render_micrograph
from polisect.model3d.synth import compose
from polisect.read.config import SegmentConfig
from polisect.read.image import find_info_band
from polisect.segment import make_phasemap_labels

# the demo's recipe from this checkout (polisect.sample_images may point at an install)
_spec = importlib.util.spec_from_file_location(
    "_checkout_make_samples",
    pathlib.Path(__file__).parents[1] / "sample_images" / "make_samples.py")
make_samples = importlib.util.module_from_spec(_spec)
sys.modules[_spec.name] = make_samples
_spec.loader.exec_module(make_samples)

PARTICLE = {"amc": 1, "castable": 2}
#: Issue 14's acceptance case: shading ±30 %, noise σ = 25 grey levels, scratches, band.
HARD = Defects(blur_px=0.6, shading=0.30, noise_sd=25 / 255, scratches=6, info_band_px=40)


def section(line, seed, defects):
    spec = make_samples.LINES[line]
    packing = compose((512, 512), spec.batches[1], seed=seed, matrix_label=spec.matrix_label)
    return render_micrograph(packing.labels, spec.grey,
                             defects.replace(particle_label=PARTICLE[line]), seed=seed)


def strokes(truth, share=0.015, seed=0, length=12):
    """Simulated annotation strokes: straight runs of up to *length* pixels inside each
    phase (eroded by one pixel), about *share* of the pixels in all, at most 30 % of a
    phase's eroded area. Painted value = label + 1."""
    rng = np.random.default_rng(seed)
    out = np.zeros_like(truth)
    values = np.unique(truth)
    for v in values:
        region = ndimage.binary_erosion(truth == v)
        cap = min(share * truth.size / len(values), 0.3 * region.sum())
        ys, xs = np.nonzero(region)
        painted = 0
        while painted < cap:
            k = rng.integers(ys.size)
            angle = rng.uniform(0, np.pi)
            for t in range(length):
                y = int(round(ys[k] + t * np.sin(angle)))
                x = int(round(xs[k] + t * np.cos(angle)))
                if not (0 <= y < truth.shape[0] and 0 <= x < truth.shape[1]) \
                        or not region[y, x] or out[y, x]:
                    break
                out[y, x] = v + 1
                painted += 1
    return out


def cut_band(image):
    rows = find_info_band(image)
    return image[:-rows] if rows else image, rows


def fraction_errors(labels, truth):
    return [abs(np.mean(labels == v) - np.mean(truth == v)) for v in np.unique(truth)]


CASES = [("amc", 1), ("amc", 2), ("castable", 1), ("castable", 2)]


@pytest.mark.parametrize("line,seed", CASES)
def test_automatic_route(line, seed):
    """Pixel accuracy ≥ 97 % and every fraction within 0.01 (issue 14 acceptance), the
    40-row band found and cut, shading and scratches reported as corrected."""
    r = section(line, seed, HARD)
    image, rows = cut_band(r.image)
    assert rows == 40
    seg = make_phasemap_labels(image, 0.5, SegmentConfig(classes=3), (0, 1, 2))
    assert np.mean(seg.labels == r.labels) >= 0.97
    assert max(fraction_errors(seg.labels, r.labels)) <= 0.01
    applied = {c.name for c in seg.corrections if c.applied}
    assert {"shading", "scratches"} <= applied
    assert seg.warnings == ()


@pytest.mark.parametrize("line,seed", CASES)
def test_trained_route(line, seed):
    """Strokes on ≤ 2 % of the pixels give pixel accuracy ≥ 98 % (issue 14 acceptance);
    the fractions land within 0.01."""
    r = section(line, seed, HARD)
    image, _ = cut_band(r.image)
    ann = strokes(r.labels, seed=seed)
    assert np.mean(ann > 0) <= 0.02
    seg = make_phasemap_labels(image, 0.5, SegmentConfig(method="trained",
                                                         annotations="strokes.png"),
                               (0, 1, 2), annotations=ann)
    assert np.mean(seg.labels == r.labels) >= 0.98
    assert max(fraction_errors(seg.labels, r.labels)) <= 0.01
    assert seg.segmenter is not None and seg.confidence.shape == r.labels.shape


def test_shipped_hard_section():
    """The shipped hard demo section amc_b1_s2 (shading, noise σ = 25, scratches, band)
    segments with the shipped config to ≥ 97 % accuracy, fractions within 0.01 (issue 14)."""
    import tifffile

    from polisect.read.config import load_config
    from polisect.read.image import read_image

    folder = pathlib.Path(__file__).parents[1] / "sample_images"
    cfg = load_config(folder / "amc.toml")
    micro = read_image(folder / "amc_b1_s2.tif", crop_bottom_px=cfg.image.crop_bottom_px)
    truth = tifffile.imread(folder / "amc_b1_s2_truth.tif")
    seg = make_phasemap_labels(micro.data, micro.pixel_size_um, cfg.segment,
                               [p.label for p in cfg.phases])
    assert micro.cropped_bottom_px == 40
    assert np.mean(seg.labels == truth) >= 0.97
    assert max(fraction_errors(seg.labels, truth)) <= 0.01


BASE = Defects(blur_px=0.6, noise_sd=0.045)
#: One strong case per defect kind, and the words its warning must hold when a fraction
#: is missed by more than 0.02.
DEFECT_CASES = {
    "shading": (dict(shading=0.5), "illumination"),
    "grain_contrast": (dict(grain_contrast=0.12), "grey level"),
    "se_edges": (dict(se_edges=0.5), ("separated", "bright rims")),
    "curtaining": (dict(curtaining=0.08), "grey level"),
    "charging": (dict(charging=0.35), "charging"),
    "scratches": (dict(scratches=12, scratch_depth=0.5), "scratch"),
    "pullouts": (dict(pullouts=0.6), "pulled out"),
    "noise_sd": (dict(noise_sd=0.2), "separated"),
    "speckle": (dict(speckle=0.03), "speckle"),
    "info_band_px": (dict(info_band_px=40), "information band"),
}


@functools.lru_cache(maxsize=None)
def damaged(kind, line):
    """Warnings and the largest fraction miss of the automatic route on one damaged case
    (band rows count as a wrong phase: the truth there is no phase)."""
    changes, _ = DEFECT_CASES[kind]
    r = section(line, 5, BASE.replace(**changes))
    seg = make_phasemap_labels(r.image, 0.5, SegmentConfig(classes=3), (0, 1, 2))
    truth = r.labels
    if r.info_band_px:
        truth = np.vstack([truth, np.full((r.info_band_px, truth.shape[1]), -1)])
    missed = max(abs(np.mean(seg.labels == v) - np.mean(truth == v)) for v in (0, 1, 2))
    return seg.warnings, missed


@pytest.mark.parametrize("line", ["amc", "castable"])
@pytest.mark.parametrize("kind", list(DEFECT_CASES))
def test_damaged_sections_warn(kind, line):
    """Every damaged case that misses a fraction by more than 0.02 carries a warning, and
    that warning names the problem (issue 14 acceptance); the band is kept here (crop 0)
    to test the band-left-over warning."""
    warnings, missed = damaged(kind, line)
    if missed > 0.02:
        assert warnings, f"{kind}: a fraction is off by {missed:.3f} without a warning"
        words = DEFECT_CASES[kind][1]
        words = (words,) if isinstance(words, str) else words
        assert any(word in w for w in warnings for word in words), warnings


def test_defect_cases_are_not_all_harmless():
    """The defect table above exercises the warnings: on the AMC line at least three kinds
    miss a fraction by more than 0.02 (so the conditional test is not empty)."""
    assert sum(damaged(kind, "amc")[1] > 0.02 for kind in DEFECT_CASES) >= 3
