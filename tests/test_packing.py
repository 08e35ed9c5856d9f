"""Tests of polisect.model3d.packing: periodic sphere packings with given radii and their voxel images."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy import stats

from polisect.core.errors import InputError
from polisect.model3d.packing import (SequentialAddition, SpherePacking, collective_pack,
                                      pack_spheres, rasterize, rsa_pack)


def box_for(radii, fraction):
    return float((4 / 3 * np.pi * np.sum(np.asarray(radii) ** 3) / fraction) ** (1 / 3))


def brute_min_gap(centres, radii, box):
    """Smallest periodic surface gap over all pairs (independent of the package)."""
    d = centres[:, None, :] - centres[None, :, :]
    d -= box * np.round(d / box)
    gap = np.sqrt((d * d).sum(-1)) - radii[:, None] - radii[None, :]
    np.fill_diagonal(gap, np.inf)
    return gap.min()


def lognormal(rng, mean, cv, n):
    s2 = np.log1p(cv * cv)
    return rng.lognormal(np.log(mean) - s2 / 2, np.sqrt(s2), n)


def test_collective_packing_reaches_060_without_overlap():
    """A total fraction of 0.60 without any overlap: below random close packing (about 0.64,
    Scott & Kilgour 1969; O'Hern et al. 2003), so the overlap energy reaches zero."""
    rng = np.random.default_rng(3)
    radii = lognormal(rng, 1.0, 0.2, 500)
    box = box_for(radii, 0.60)
    p = collective_pack(radii, box, seed=4)
    assert p.fraction == pytest.approx(0.60, abs=1e-12)
    assert brute_min_gap(p.centres, p.radii, box) >= 0
    assert np.array_equal(p.radii, radii)
    assert p.centres.min() >= 0 and p.centres.max() < box


def test_monodisperse_packing_at_060():
    """Equal spheres at 0.60, the harder case (no small spheres to fill gaps): no overlap
    (below random close packing 0.64, Scott & Kilgour 1969)."""
    radii = np.full(300, 1.0)
    p = pack_spheres(radii, box_for(radii, 0.60), seed=1)
    assert p.method == "collective-rearrangement"
    assert brute_min_gap(p.centres, p.radii, p.box) >= 0


def test_packed_volumes_follow_the_requested_distribution():
    """Equivalent radii of the rasterised spheres (voxel count → (3V/4π)^⅓) follow the
    requested lognormal distribution: Kolmogorov–Smirnov (scipy.stats.kstest, ks_2samp
    against the radii asked for and against a fresh sample) does not reject it, and
    rejects a distribution 5 % larger (common practice, no source)."""
    rng = np.random.default_rng(8)
    mean, cv = 5.0, 0.2
    radii = lognormal(rng, mean, cv, 300)
    box = box_for(radii, 0.55)
    p = pack_spheres(radii, box, seed=8)
    n = int(round(box))
    p = SpherePacking(p.centres * n / box, p.radii * n / box, float(n), p.method, p.iterations)
    vox = rasterize(p, n, np.arange(1, radii.size + 1), matrix_label=0)
    counts = np.bincount(vox.ravel(), minlength=radii.size + 1)[1:]
    measured = (3 * counts / (4 * np.pi)) ** (1 / 3) * box / n
    s2 = np.log1p(cv * cv)
    law = stats.lognorm(s=np.sqrt(s2), scale=mean * np.exp(-s2 / 2))
    assert stats.kstest(measured, law.cdf).pvalue > 0.01
    bigger = stats.lognorm(s=np.sqrt(s2), scale=1.05 * mean * np.exp(-s2 / 2))
    assert stats.kstest(measured, bigger.cdf).pvalue < 0.01
    assert stats.ks_2samp(measured, law.rvs(2000, random_state=1)).pvalue > 0.01
    assert stats.ks_2samp(measured, radii).pvalue > 0.5
    assert np.mean(measured / radii) == pytest.approx(1.0, abs=2e-3)


def test_rsa_places_without_overlap_and_uniformly():
    """RSA (Widom 1966): no overlap, and the centres of a dilute packing are uniform in the
    box (Kolmogorov–Smirnov per coordinate; common practice, no source)."""
    radii = np.full(400, 0.5)
    box = box_for(radii, 0.05)
    p = rsa_pack(radii, box, seed=2)
    assert p.method == "rsa"
    assert brute_min_gap(p.centres, p.radii, box) >= 0
    for k in range(3):
        assert stats.kstest(p.centres[:, k] / box, "uniform").pvalue > 0.001


def test_rsa_jams_with_a_clear_message():
    """Equal spheres cannot be added randomly up to 0.5 (RSA jams near 0.38, Feder 1980)."""
    radii = np.full(200, 1.0)
    with pytest.raises(InputError, match="collective"):
        rsa_pack(radii, box_for(radii, 0.5), seed=0, max_trials=5000)


def test_auto_method_by_fraction():
    """RSA up to RSA_LIMIT, collective rearrangement above (the module's rule)."""
    radii = np.full(100, 1.0)
    assert pack_spheres(radii, box_for(radii, 0.2), seed=0).method == "rsa"
    assert pack_spheres(radii, box_for(radii, 0.45), seed=0).method == \
        "collective-rearrangement"


def test_gap_is_kept():
    """A requested gap separates every pair (common practice, no source)."""
    radii = np.full(200, 1.0)
    for method in ("rsa", "collective-rearrangement"):
        p = pack_spheres(radii, box_for(radii, 0.25), seed=5, gap=0.2, method=method)
        assert brute_min_gap(p.centres, p.radii, p.box) >= 0.2 - 1e-12


@pytest.mark.parametrize("radii, box, match", [
    ([1.0, -1.0], 10.0, "positive"),
    ([], 10.0, "non-empty"),
    ([3.0], 10.0, "does not fit"),
    (np.full(100, 1.0), 6.0, "random close packing"),
])
def test_bad_input(radii, box, match):
    """Bad radii, a sphere too large for the box, a fraction beyond random close packing."""
    with pytest.raises(InputError, match=match):
        pack_spheres(radii, box, seed=0)


def test_unknown_method():
    with pytest.raises(InputError, match="not one of"):
        pack_spheres([1.0], 10.0, seed=0, method="shake")


def test_rasterized_volume_is_unbiased():
    """The voxel count of a sphere at a uniformly random position has the sphere's volume as
    its expectation (the mean number of lattice points in a randomly translated body is its
    volume; from memory)."""
    rng = np.random.default_rng(0)
    r, n = 3.3, 16
    counts = []
    for _ in range(300):
        p = SpherePacking(rng.uniform(0, n, (1, 3)), np.array([r]), float(n), "given", 0)
        counts.append(np.count_nonzero(rasterize(p, n, [1], matrix_label=0)))
    assert np.mean(counts) == pytest.approx(4 / 3 * np.pi * r ** 3, rel=0.01)


def test_rasterize_wraps_and_draws_cores():
    """A sphere across the corner of the periodic box has as many voxels as the same sphere
    in the middle; a hollow sphere's core gets its own label (construction)."""
    n = 20
    mid = SpherePacking(np.array([[10.0, 10.0, 10.0]]), np.array([4.0]), float(n), "given", 0)
    corner = SpherePacking(np.array([[0.0, 0.0, 0.0]]), np.array([4.0]), float(n), "given", 0)
    a = rasterize(mid, n, [2], matrix_label=1, inner_radii=[2.0], core_labels=[0])
    b = rasterize(corner, n, [2], matrix_label=1, inner_radii=[2.0], core_labels=[0])
    for label in (0, 2):
        assert np.count_nonzero(a == label) == np.count_nonzero(b == label) > 0
    assert a[10, 10, 10] == 0 and a[10, 10, 6] == 2 and a[0, 0, 0] == 1
    assert b[0, 0, 0] == 0 and b[10, 10, 10] == 1


@settings(max_examples=15, deadline=None)
@given(n=st.integers(2, 40), fraction=st.floats(0.05, 0.58), cv=st.floats(0.0, 0.4),
       seed=st.integers(0, 10_000))
def test_packing_invariants(n, fraction, cv, seed):
    """Any packing: no overlap, radii and their order unchanged, centres inside the box
    (the definition of a hard-sphere packing)."""
    rng = np.random.default_rng(seed)
    radii = np.maximum(lognormal(rng, 1.0, cv, n), 0.3) if cv else np.ones(n)
    box = max(box_for(radii, fraction), 4.5 * radii.max())
    p = pack_spheres(radii, box, seed=seed)
    assert np.array_equal(p.radii, radii)
    assert brute_min_gap(p.centres, p.radii, box) >= 0
    assert p.min_gap() >= 0
    assert np.all((p.centres >= 0) & (p.centres < box))


def test_sequential_addition_in_a_periodic_rectangle():
    """The one RSA engine in 2D, a rectangular box, exclusion radii of two sizes: no two
    exclusion discs overlap (minimum image) and the centres of a dilute packing are uniform
    along both edges (Widom 1966; Kolmogorov–Smirnov, common practice, no source); a full
    box says so; the grid search near jamming still places only on free positions
    (construction)."""
    box = np.array([60.0, 90.0])
    rsa = SequentialAddition(box, seed=4)
    reach = np.where(np.arange(300) % 3 == 0, 1.5, 0.8)
    for e in reach:
        c, tried = rsa.find(e)
        assert c is not None and tried >= 1
        rsa.add(c, e)
    x = rsa.centres
    d = x[:, None, :] - x[None, :, :]
    d -= box * np.round(d / box)
    gap = np.sqrt((d * d).sum(-1)) - reach[:, None] - reach[None, :]
    np.fill_diagonal(gap, np.inf)
    assert gap.min() >= 0
    for k in range(2):
        assert stats.kstest(x[:, k] / box[k], "uniform").pvalue > 0.001
    full = SequentialAddition((4.0, 4.0), seed=0)
    full.add(np.array([2.0, 2.0]), 1.9)
    assert full.find(1.9, max_trials=500) == (None, 500)
    grid = SequentialAddition((16, 16), seed=1, max_reach=3.0)
    grid.add(np.array([8.0, 8.0]), 7.0)
    reach = [7.0]
    c, _ = grid.find(2.0, max_trials=0)      # no random trial: the grid search alone
    while c is not None:
        d = (c - grid.centres) - 16 * np.round((c - grid.centres) / 16)
        assert np.all(np.hypot(d[:, 0], d[:, 1]) >= 2.0 + np.array(reach) - 1e-12)
        grid.add(c, 2.0)
        reach.append(2.0)
        c, _ = grid.find(2.0, max_trials=0)
    assert grid.count >= 3


def test_auto_packing_falls_back_when_sequential_addition_jams():
    """Thirteen unit spheres at a fraction of 0.317 in a box 2.7 diameters wide: random
    sequential addition jams (12 placed; found by the property test above), the automatic
    choice then rearranges collectively and returns a hard-sphere packing (construction)."""
    radii, box = np.ones(13), 5.410819978631982
    with pytest.raises(InputError, match="jammed"):
        pack_spheres(radii, box, seed=0, method="rsa")
    p = pack_spheres(radii, box, seed=0)
    assert p.method == "collective-rearrangement" and p.min_gap() >= 0
    assert brute_min_gap(p.centres, p.radii, box) >= 0
