"""Tests of polisect.model3d.synth: synthetic periodic microstructures and SEM-like rendering."""

import numpy as np
import pytest
from hypothesis import assume, given, settings, strategies as st

from polisect.core.errors import InputError
from polisect.model3d.synth import (Inclusions, checkerboard, compose, laminate, render_sem, rsa_discs,
                            rsa_spheres, square_array_disc)


def periodic_distance(shape, centre):
    """Minimum-image distance of every pixel index to *centre* (independent of synth)."""
    grids = np.indices(shape).astype(float)
    d2 = np.zeros(shape)
    for g, c, n in zip(grids, centre, shape):
        d = g - c
        d -= n * np.round(d / n)
        d2 += d * d
    return np.sqrt(d2)


def rasterise(packing, shape, labels=(0, 1, 2)):
    """Labels recomputed from the packing's centres and radii."""
    out = np.full(shape, labels[0])
    for c, r, ri in zip(packing.centres, packing.radii, packing.inner_radii):
        d = periodic_distance(shape, c)
        out[d < r] = labels[1]
        if ri > 0:
            out[d < ri] = labels[2]
    return out


def min_surface_gap(packing, shape):
    """Smallest periodic surface-to-surface distance between two particles."""
    c = packing.centres
    d = c[:, None, :] - c[None, :, :]
    d -= np.array(shape) * np.round(d / np.array(shape))
    dist = np.sqrt((d * d).sum(-1)) - packing.radii[:, None] - packing.radii[None, :]
    np.fill_diagonal(dist, np.inf)
    return dist.min()


def test_disc_fraction_reached():
    """Pixel fraction within half a disc area of the target (construction of compose;
    common practice, no source)."""
    p = rsa_discs((256, 256), 0.35, 5.0, seed=4)
    half_disc = np.pi * 25 / 2 / 256 ** 2
    assert abs((p.labels == 1).mean() - 0.35) <= half_disc


def test_sphere_fraction_reached_and_no_overlap():
    """3D: target volume fraction and hard-sphere condition (Widom 1966 construction)."""
    shape = (48, 48, 48)
    p = rsa_spheres(shape, 0.25, 4.0, seed=2)
    half_sphere = 4 / 3 * np.pi * 64 / 2 / np.prod(shape)
    assert abs((p.labels == 1).mean() - 0.25) <= half_sphere
    assert min_surface_gap(p, shape) >= 0


def test_labels_match_centres_periodically():
    """Every pixel labelled exactly as the periodic distance to the listed centres says;
    some disc crosses the cell edge, so the wrap is exercised (common practice, no source)."""
    shape = (96, 80)
    p = rsa_discs(shape, 0.3, 6.0, seed=7, size_sd=1.5)
    assert np.array_equal(p.labels, rasterise(p, shape))
    near_edge = (p.centres < p.radii[:, None]) | (p.centres > np.array(shape) - p.radii[:, None])
    assert near_edge.any()


def test_no_overlap_with_gap():
    """Surface gaps at least min_gap (construction; common practice, no source)."""
    shape = (128, 128)
    p = rsa_discs(shape, 0.3, 5.0, seed=1, min_gap=2.0, size_sd=1.0)
    assert min_surface_gap(p, shape) >= 2.0
    assert np.array_equal(p.labels, rasterise(p, shape))


def test_hollow_ratio():
    """Inner/outer radius equals the diameter ratio; core pixel share ≈ ratio² of the
    particle area (geometry; from memory)."""
    p = rsa_discs((256, 256), 0.3, 8.0, seed=3, hollow_ratio=0.65, size_sd=2.0)
    assert np.allclose(p.inner_radii / p.radii, 0.65)
    particle = np.isin(p.labels, (1, 2))
    assert abs((p.labels == 2).sum() / particle.sum() - 0.65 ** 2) < 0.01


def test_size_distribution_mean_and_sd():
    """Radii drawn lognormal with the requested mean and SD (sampling error ~ sd/√n;
    common practice, no source)."""
    p = rsa_discs((512, 512), 0.3, 6.0, seed=5, size_sd=2.0)
    n = len(p.radii)
    assert n > 300
    assert abs(p.radii.mean() - 6.0) < 4 * 2.0 / np.sqrt(n)
    assert abs(p.radii.std() - 2.0) < 0.3


def test_reproducible_with_seed():
    """Same seed, same structure; another seed, another structure."""
    a = rsa_discs((64, 64), 0.3, 4.0, seed=11, size_sd=1.0)
    b = rsa_discs((64, 64), 0.3, 4.0, seed=11, size_sd=1.0)
    c = rsa_discs((64, 64), 0.3, 4.0, seed=12, size_sd=1.0)
    assert np.array_equal(a.labels, b.labels) and np.array_equal(a.centres, b.centres)
    assert not np.array_equal(a.labels, c.labels)


def test_compose_families_and_fractions():
    """Several families with hollow cores labelled as pores: each family's fraction
    reached, no overlaps between families (construction; common practice, no source)."""
    shape = (256, 256)
    fams = [Inclusions(2, 0.25, 9.0, size_sd=2.0, hollow_ratio=0.6, core_label=0, min_gap=1.0),
            Inclusions(0, 0.05, 3.0, size_sd=1.0, min_gap=1.0)]
    p = compose(shape, fams, seed=9, matrix_label=1)
    npix = np.prod(shape)
    for k, fam in enumerate(fams):
        sel = p.family == k
        pixels = sum(np.count_nonzero(periodic_distance(shape, c) < r)
                     for c, r in zip(p.centres[sel], p.radii[sel]))
        r_big = p.radii[sel].max()
        assert abs(pixels / npix - fam.fraction) <= np.pi * r_big ** 2 / 2 / npix
    assert min_surface_gap(p, shape) >= 1.0
    assert set(np.unique(p.labels).tolist()) == {0, 1, 2}


def test_jamming_raises():
    """Equal discs jam near 0.547 (Feder 1980); asking for 0.7 must fail clearly."""
    with pytest.raises(InputError, match="jammed"):
        rsa_discs((64, 64), 0.7, 4.0, seed=0)


def test_bad_parameters():
    with pytest.raises(InputError):
        rsa_discs((64, 64), 1.2, 4.0, seed=0)
    with pytest.raises(InputError):
        Inclusions(1, 0.2, 4.0, hollow_ratio=0.5)
    with pytest.raises(InputError):
        compose((64, 64), [Inclusions(1, 0.6, 3.0), Inclusions(2, 0.5, 3.0)], seed=0)


def test_laminate():
    """Layer thickness and period as asked; periodic along the axis."""
    lam = laminate((8, 12), 0.25, periods=3, axis=1)
    assert lam.mean() == 0.25
    assert np.array_equal(np.roll(lam, 4, axis=1), lam)
    assert np.array_equal(lam, lam[:1].repeat(8, axis=0))
    assert laminate((6, 4, 4), 0.5, axis=0).shape == (6, 4, 4)
    with pytest.raises(InputError):
        laminate((8, 10), 0.5, periods=3)


def test_checkerboard():
    """Half of each phase; shifting by one tile swaps the phases (periodic)."""
    cb = checkerboard((8, 8), tiles=4)
    assert cb.mean() == 0.5
    assert np.array_equal(np.roll(cb, 2, axis=0), 1 - cb)
    cb3 = checkerboard((4, 4, 4))
    assert cb3.mean() == 0.5 and cb3[0, 0, 0] != cb3[2, 0, 0]
    with pytest.raises(InputError):
        checkerboard((9, 9), tiles=3)


def test_square_array_disc():
    """Centred disc: fraction to rasterisation error, symmetric under the cell's mirrors."""
    d = square_array_disc(200, 0.4)
    assert abs(d.mean() - 0.4) < 2e-3
    assert np.array_equal(d, d[::-1]) and np.array_equal(d, d.T)
    assert d[0, 0] == 0 and d[100, 100] == 1
    with pytest.raises(InputError):
        square_array_disc(64, 0.8)


def test_render_levels_band_and_depth():
    """Without blur and noise each phase renders at its grey level; the band is appended."""
    labels = checkerboard((32, 32), tiles=4)
    img = render_sem(labels, {0: 0.2, 1: 0.8}, blur_px=0, noise_sd=0, info_band_px=10)
    assert img.shape == (42, 32) and img.dtype == np.uint8
    assert np.all(img[:32][labels == 0] == 51) and np.all(img[:32][labels == 1] == 204)
    band = img[32:]
    counts = np.unique(band, return_counts=True)[1]
    assert counts.max() > 0.5 * band.size and band.max() > 200
    img16 = render_sem(labels, {0: 0.2, 1: 0.8}, blur_px=0, noise_sd=0, bit_depth=16)
    assert img16.dtype == np.uint16 and img16.max() == round(0.8 * 65535)


def test_render_periodic_blur_and_noise():
    """Blur wraps (rendering commutes with a periodic shift); noise SD as asked."""
    p = rsa_discs((64, 64), 0.3, 5.0, seed=1)
    grey = {0: 0.3, 1: 0.7}
    a = render_sem(p.labels, grey, blur_px=1.5, noise_sd=0, bit_depth=16)
    b = render_sem(np.roll(p.labels, (7, 13), axis=(0, 1)), grey, blur_px=1.5, noise_sd=0,
                   bit_depth=16)
    assert np.array_equal(np.roll(a, (7, 13), axis=(0, 1)), b)
    flat = render_sem(np.zeros((128, 128), int), {0: 0.5}, blur_px=0, noise_sd=0.05, seed=0,
                      bit_depth=16)
    assert flat.std() / 65535 == pytest.approx(0.05, rel=0.05)


def test_render_rejects_missing_grey():
    with pytest.raises(InputError, match="grey level"):
        render_sem(np.array([[0, 1], [2, 1]]), {0: 0.1, 1: 0.5})


def pixel_counts(packing, shape):
    return np.array([np.count_nonzero(periodic_distance(shape, c) < r)
                     for c, r in zip(packing.centres, packing.radii)])


@settings(max_examples=15, deadline=None)
@given(seed=st.integers(0, 2 ** 16), fraction=st.floats(0.05, 0.35),
       radius=st.floats(1.5, 6.0), gap=st.floats(0.0, 2.0), sd=st.floats(0.0, 1.5))
def test_invariants_hypothesis(seed, fraction, radius, gap, sd):
    """For any parameters: no two discs closer than the gap, labels consistent with the
    listed discs, fraction below target + half the largest disc (every disc was added
    only while that held); with equal discs also above target − half a disc, a disc of
    radius r covering fewer than π(r + √2/2)² pixels (construction; from memory)."""
    # keep well below jamming (0.547 for equal discs, Feder 1980) of the effective discs
    # that the gap and the sub-pixel margin enlarge
    assume(fraction * ((radius + gap / 2 + 0.71) / radius) ** 2 < 0.4)
    shape = (48, 40)
    npix = np.prod(shape)
    p = rsa_discs(shape, fraction, radius, seed=seed, size_sd=sd, min_gap=gap)
    if len(p.radii) > 1:
        assert min_surface_gap(p, shape) >= gap - 1e-9
    assert np.array_equal(p.labels, rasterise(p, shape))
    achieved = (p.labels == 1).mean()
    if len(p.radii):
        assert achieved < fraction + pixel_counts(p, shape).max() / 2 / npix
    if sd == 0:
        assert achieved >= fraction - np.pi * (radius + 0.71) ** 2 / 2 / npix
