"""Tests of polisect.measure.particles: labelling, splitting, per-particle measurements."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import ndimage as ndi
from skimage.measure import regionprops

from polisect.core.errors import InputError
from polisect.measure.particles import (caliper_diameters, crofton_perimeter, label_particles,
                                measure_particles, miles_lantuejoul_weights)
from polisect.model3d.synth import rsa_discs


def disc(shape, cy, cx, r):
    yy, xx = np.mgrid[:shape[0], :shape[1]]
    return np.hypot(yy - cy, xx - cx) < r


@settings(max_examples=40, deadline=None)
@given(st.floats(2.0, 40.0), st.floats(0, 1), st.floats(0, 1))
def test_digital_disc_ecd_within_one_pixel(r, fy, fx):
    """A digitised disc's ECD is within one pixel of its diameter.

    Source: common practice (no source); the pixel count of a disc with a random centre
    has expectation πr² (Gauss circle problem, from memory).
    """
    t = measure_particles(label_particles(disc((100, 100), 50 + fy, 50 + fx, r)))
    assert t.count == 1
    assert abs(t.ecd[0] - 2 * r) <= 1.0
    assert abs(t.feret_max[0] - 2 * r) <= 2.0
    assert abs(t.feret_min[0] - 2 * r) <= 2.0


def test_disc_shape_measures():
    """A disc of radius 20 px: circularity 1 within 3 %, aspect ratio 1 within 5 %, solidity ≥ 0.95.

    Source: common practice (no source) — the definitions give 1 for a continuous disc; the
    hull of the pixel squares adds up to ≈1.2 px to the diagonal caliper.
    """
    t = measure_particles(label_particles(disc((64, 64), 31.3, 32.2, 20)), pixel_size_um=0.5)
    assert t.circularity[0] == pytest.approx(1.0, abs=0.03)
    assert t.aspect_ratio[0] == pytest.approx(1.0, abs=0.05)
    assert 0.95 <= t.solidity[0] <= 1.0
    assert t.perimeter[0] == pytest.approx(2 * math.pi * 20 * 0.5, rel=0.02)
    assert t.centroid_x[0] == pytest.approx(32.2 * 0.5 + 0.25, abs=0.05)
    assert t.centroid_y[0] == pytest.approx(31.3 * 0.5 + 0.25, abs=0.05)
    assert t.units == "um"


def test_rectangle_feret_exact():
    """An axis-aligned 30 × 12 pixel rectangle: min Feret 12, max Feret √(30² + 12²), solidity 1.

    Source: elementary geometry (the convex hull of the pixel squares is the rectangle).
    """
    m = np.zeros((40, 50), bool)
    m[5:17, 10:40] = True
    t = measure_particles(label_particles(m))
    assert t.feret_min[0] == pytest.approx(12.0)
    assert t.feret_max[0] == pytest.approx(math.hypot(30, 12))
    assert t.solidity[0] == pytest.approx(1.0)
    assert t.aspect_ratio[0] == pytest.approx(math.hypot(30, 12) / 12)


@settings(max_examples=40, deadline=None)
@given(st.integers(3, 12), st.integers(0, 2**31 - 1))
def test_caliper_diameters_match_brute_force(n, seed):
    """Caliper diameters of random convex polygons equal the extremes of the projection width
    over 20000 directions (Houle & Toussaint 1988: the minimum is attained flush with an edge).
    """
    from scipy.spatial import ConvexHull

    pts = np.random.default_rng(seed).normal(size=(n, 2)) * [3.0, 1.0]
    hull = ConvexHull(pts)
    v = pts[hull.vertices]
    fmax, fmin = caliper_diameters(v)
    theta = np.linspace(0, np.pi, 20000, endpoint=False)
    proj = v @ np.stack([np.cos(theta), np.sin(theta)])
    widths = proj.max(axis=0) - proj.min(axis=0)
    assert fmax == pytest.approx(widths.max(), rel=1e-6)
    assert fmin == pytest.approx(widths.min(), abs=fmax * np.pi / 20000)   # kink at the minimum
    assert fmin <= widths.min() + 1e-12


def test_feret_max_agrees_with_scikit_image():
    """Max Feret of irregular blobs within 1.5 px of skimage regionprops feret_diameter_max.

    Source: scikit-image regionprops as an independent implementation (CHECKS.md); the two
    hulls differ (pixel squares vs. pixel-centre contour) by up to about one pixel.
    """
    rng = np.random.default_rng(5)
    blobs = ndi.gaussian_filter(rng.random((160, 160)), 4) > 0.52
    lab = label_particles(blobs)
    t = measure_particles(lab)
    ref = {p.label: p.feret_diameter_max for p in regionprops(lab)}
    big = np.flatnonzero(t.area >= 20)
    assert big.size > 5
    for i in big:
        assert abs(t.feret_max[i] - ref[i + 1]) <= 1.5


@settings(max_examples=20, deadline=None)
@given(st.integers(0, 2**31 - 1), st.floats(0.45, 0.6))
def test_count_equals_scipy_label(seed, level):
    """Particle count equals an independent scipy.ndimage.label count (8-connectivity).

    Source: scipy.ndimage.label as an independent count (CHECKS.md).
    """
    rng = np.random.default_rng(seed)
    mask = ndi.gaussian_filter(rng.random((96, 96)), 2) > level
    ref, n = ndi.label(mask, structure=np.ones((3, 3)))
    lab = label_particles(mask)
    assert lab.max() == n
    assert measure_particles(lab).count == n
    assert np.array_equal(np.bincount(lab.ravel())[1:], np.bincount(ref.ravel())[1:])


def test_count_of_synthetic_discs_with_gaps():
    """Non-touching RSA discs (gap 3 px): the count of particles equals scipy.ndimage.label's
    and the number of disc pieces known from the construction.

    Source: scipy.ndimage.label as an independent count (CHECKS.md); truth from synth.
    """
    p = rsa_discs((256, 256), 0.3, 6.0, seed=4, min_gap=3.0)
    mask = p.labels == 1
    _, n = ndi.label(mask, structure=np.ones((3, 3)))
    t = measure_particles(label_particles(mask))
    assert t.count == n
    truth = _truth_pieces(p, mask.shape)
    assert t.count == truth.max()
    border = np.unique(np.concatenate([truth[0], truth[-1], truth[:, 0], truth[:, -1]]))
    assert (~t.edge).sum() == truth.max() - np.count_nonzero(border)


def test_split_touching_rsa_discs_one_label_per_disc():
    """Touching RSA discs (no gap): after splitting, each disc piece carries exactly one label
    and no label covers two discs.

    Source: common practice (no source); truth from the synth construction.
    """
    p = rsa_discs((384, 384), 0.45, 8.0, seed=1, size_sd=2.0)
    mask = p.labels == 1
    truth = _truth_pieces(p, mask.shape)
    split = label_particles(mask, split_touching=True)
    assert label_particles(mask).max() < split.max()
    pairs, counts = np.unique(np.stack([split[mask], truth[mask]]), axis=1, return_counts=True)
    major = pairs[:, counts >= 5]
    assert np.unique(major[0]).size == major.shape[1]      # a label covers one disc
    assert np.unique(major[1]).size == major.shape[1]      # a disc lies in one label
    assert split.max() == truth.max()


def _truth_pieces(p, shape):
    ny, nx = shape
    yy, xx = np.mgrid[:ny, :nx]
    truth = np.zeros(shape, int)
    n = 0
    for c, r in zip(p.centres, p.radii):
        dy = yy - c[0]
        dy -= ny * np.round(dy / ny)
        dx = xx - c[1]
        dx -= nx * np.round(dx / nx)
        pieces, k = ndi.label(np.hypot(dy, dx) < r)
        truth[pieces > 0] = pieces[pieces > 0] + n
        n += k
    return truth


@pytest.mark.parametrize("distance", [14.0, 17.0, 20.0])
def test_split_overlapping_pair(distance):
    """Two discs of radius 10 px overlapping with centre distance ≥ 14 px (neck half-width
    ≤ 7.1 px, ≥ 2.9 px below the radius) are split into two, each near its own size.

    Source: elementary geometry (neck half-width √(R² − d²/4)).
    """
    m = disc((40, 70), 20.2, 20.4, 10) | disc((40, 70), 20.2, 20.4 + distance, 10)
    lab = label_particles(m, split_touching=True)
    assert lab.max() == 2
    areas = np.bincount(lab.ravel())[1:]
    assert abs(areas[0] - areas[1]) <= 0.1 * areas.mean()


@pytest.mark.parametrize("angle", [0.0, 0.5, 1.1])
def test_ellipse_not_split(angle):
    """An ellipse of axes 30 and 8 px stays one particle (its distance ridge has no dip).

    Source: common practice (no source).
    """
    yy, xx = np.mgrid[:80, :80] - 40.0
    u = xx * np.cos(angle) + yy * np.sin(angle)
    v = -xx * np.sin(angle) + yy * np.cos(angle)
    m = (u / 30) ** 2 + (v / 8) ** 2 < 1
    assert label_particles(m, split_touching=True).max() == 1
    t = measure_particles(label_particles(m))
    assert t.aspect_ratio[0] == pytest.approx(30 / 8, rel=0.1)


@pytest.mark.parametrize("ratio", [0.3, 0.5, 0.7])
def test_hollow_discs_found_with_their_ratio(ratio):
    """Hollow discs of known inner/outer diameter ratio: every particle not cut by the border
    is hollow and its measured ratio is within 0.03 of the construction.

    Source: truth from the synth construction (outer radius 12 px, core radius ratio·12).
    """
    p = rsa_discs((256, 256), 0.3, 12.0, seed=2, hollow_ratio=ratio, min_gap=2.0)
    t = measure_particles(label_particles(p.labels == 1))
    inner = ~t.edge
    assert inner.sum() >= 15
    assert t.hollow[inner].all()
    assert np.max(np.abs(t.inner_outer_ratio[inner] - ratio)) <= 0.03
    assert np.allclose(t.ecd[inner], 24.0, atol=1.0)


def test_miles_lantuejoul_weight_formula():
    """Weight n_r n_c / ((n_r − b_r − 1)(n_c − b_c − 1)); zero for particles on the border.

    Source: Miles (1974); Lantuéjoul (1980), discrete frame of border pixels.
    """
    w = miles_lantuejoul_weights([10, 3], [20, 3], [False, True], (101, 51))
    assert w[0] == pytest.approx(101 * 51 / (90 * 30))
    assert w[1] == 0.0


def test_crofton_perimeter_of_disc():
    """Crofton perimeter of digitised discs within 2 % of 2πr (r = 8 … 60 px).

    Source: Cauchy–Crofton formula; Lehmann & Legland (2012).
    """
    for r in (8.0, 15.0, 31.0, 60.0):
        m = disc((2 * int(r) + 8,) * 2, r + 3.7, r + 4.1, r)
        assert crofton_perimeter(m) == pytest.approx(2 * math.pi * r, rel=0.02)


def test_rows_and_units():
    """Common practice (no source): CSV rows carry the unit in their column names."""
    m = disc((30, 30), 15, 15, 6)
    rows = measure_particles(label_particles(m)).rows()
    assert rows[0]["id"] == 1 and "ecd_px" in rows[0] and "area_px2" in rows[0]
    assert rows[0]["inner_outer_ratio"] is None
    rows = measure_particles(label_particles(m), pixel_size_um=2.0).rows()
    assert rows[0]["ecd_um"] == pytest.approx(2 * rows[0]["area_um2"] ** 0.5 / math.pi ** 0.5)


def test_3d_labelling_counts_spheres():
    """3D stacks: 26-connected particles; split RSA spheres give one label per sphere piece,
    and measure_particles refuses 3D with a clear message.

    Source: scipy.ndimage.label as an independent count (CHECKS.md); truth from synth.
    """
    from polisect.model3d.synth import rsa_spheres

    p = rsa_spheres((48, 48, 48), 0.2, 5.0, seed=3, min_gap=2.0)
    m = p.labels == 1
    _, n = ndi.label(m, structure=np.ones((3, 3, 3)))
    assert label_particles(m).max() == n
    assert label_particles(m, split_touching=True).max() == n
    with pytest.raises(InputError, match="2D"):
        measure_particles(label_particles(m))


def test_bad_input():
    """Common practice (no source): 4D arrays and negative labels raise InputError."""
    with pytest.raises(InputError, match="3D"):
        label_particles(np.zeros((4, 4, 4, 4), bool))
    with pytest.raises(InputError, match="non-negative"):
        measure_particles(-np.ones((4, 4), int))
    with pytest.raises(InputError, match="1..n"):
        measure_particles(np.full((4, 4), 2))
    with pytest.raises(InputError, match="positive"):
        measure_particles(np.ones((4, 4), int), pixel_size_um=0.0)
