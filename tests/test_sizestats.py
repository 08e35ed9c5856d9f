"""Tests of polisect.measure.sizestats: weighted quantiles, edge-corrected statistics, bootstrap."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from polisect.core.errors import InputError
from polisect.measure.particles import ParticleTable, label_particles, measure_particles
from polisect.measure.sizestats import size_statistics, weighted_quantile
from polisect.model3d.synth import rsa_discs


def table(ecd, weight=None, hollow=None, ratio=None, shape=(1000, 1000), pixel=1.0):
    """A ParticleTable of round particles with the given ECDs (test fixture)."""
    ecd = np.asarray(ecd, float)
    n = ecd.size
    area = math.pi * ecd ** 2 / 4
    hollow = np.zeros(n, bool) if hollow is None else np.asarray(hollow)
    ratio = np.full(n, np.nan) if ratio is None else np.asarray(ratio, float)
    weight = np.ones(n) if weight is None else np.asarray(weight, float)
    one = np.ones(n)
    return ParticleTable(area=area, area_filled=area, ecd=ecd, feret_max=ecd, feret_min=ecd,
                         aspect_ratio=one, solidity=one, perimeter=math.pi * ecd, circularity=one,
                         centroid_x=one, centroid_y=one, hole_area=0 * one,
                         inner_outer_ratio=ratio, hollow=hollow, edge=weight == 0, weight=weight,
                         bbox_rows=one.astype(int), bbox_cols=one.astype(int), image_shape=shape,
                         pixel_size_um=pixel, units="um")


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(0.1, 100), min_size=1, max_size=40), st.floats(0, 1),
       st.integers(0, 2**31 - 1))
def test_weighted_quantile_matches_numpy(values, q, seed):
    """Equals numpy.quantile(weights=..., method='inverted_cdf').

    Source: Hyndman & Fan (1996), definition 1, as implemented by numpy (independent code).
    """
    x = np.sort(np.array(values))
    w = np.random.default_rng(seed).random(x.size) + 0.01
    assert weighted_quantile(x, w, q) == pytest.approx(
        np.quantile(x, q, weights=w, method="inverted_cdf"))


def test_point_statistics_of_known_population():
    """ECDs 1..100 with unit weights: mean 50.5, sample std 29.01, D10/D50/D90 = 10/50/90,
    area-weighted D50 = the value where Σd² reaches half (80, as k³ ≈ 100³/2).

    Source: elementary statistics (definitions).
    """
    d = np.arange(1, 101, dtype=float)
    s = size_statistics(table(d[::-1]), n_boot=0)
    assert s.ecd_mean.value == pytest.approx(50.5)
    assert s.ecd_std.value == pytest.approx(np.std(d, ddof=1))
    assert (s.ecd_d10.value, s.ecd_d50.value, s.ecd_d90.value) == (10, 50, 90)
    c = np.cumsum(d ** 2) / np.sum(d ** 2)
    assert s.ecd_area_d50.value == d[np.argmax(c >= 0.5)] == 80
    assert s.ecd_mean.ci95 is None
    assert s.count_per_mm2 == pytest.approx(100 / 1e6 * 1e6)


def test_bootstrap_interval_of_mean_matches_normal_theory():
    """Bootstrap percentile interval of the mean of 400 normal ECDs (sd 2) has half-width
    close to 1.96·sd/√n and covers the population mean.

    Source: Efron & Tibshirani (1993), ch. 13; normal-theory standard error of a mean.
    """
    rng = np.random.default_rng(11)
    d = rng.normal(10.0, 2.0, 400)
    s = size_statistics(table(d), n_boot=1000, seed=3)
    lo, hi = s.ecd_mean.ci95
    assert (hi - lo) / 2 == pytest.approx(1.96 * 2.0 / 20, rel=0.15)
    assert lo < 10.0 < hi
    again = size_statistics(table(d), n_boot=1000, seed=3)
    assert again.ecd_mean.ci95 == s.ecd_mean.ci95


def test_weights_and_hollow_statistics():
    """Weights act as frequencies; hollow fraction and ratio mean are weighted over hollow ones.

    Source: definitions (Miles 1974 weights as frequencies).
    """
    d = np.array([2.0, 4.0, 6.0, 8.0])
    s = size_statistics(table(d, weight=[1, 1, 2, 0], hollow=[True, False, True, True],
                              ratio=[0.4, np.nan, 0.6, 0.9]), n_boot=50)
    assert s.count == 4 and s.count_measured == 3
    assert s.ecd_mean.value == pytest.approx((2 + 4 + 12) / 4)
    assert s.hollow_fraction.value == pytest.approx(3 / 4)
    assert s.inner_outer_ratio_mean.value == pytest.approx((0.4 + 1.2) / 3)
    assert s.ecd_d50.value == 4.0


def test_miles_lantuejoul_removes_edge_bias():
    """Polydisperse discs: edge-weighted mean ECD matches the population's (within 2 %), while
    the unweighted mean of the uncut particles is biased small; N_A within 3 % of the truth.

    Source: Miles (1974); Lantuéjoul (1980). Truth from the synth construction (ECD of a
    digitised disc ≈ 2r, mean over all discs of the periodic cell).
    """
    p = rsa_discs((512, 512), 0.35, 14.0, seed=6, size_sd=7.0)
    t = measure_particles(label_particles(p.labels == 1))
    s = size_statistics(t, n_boot=0)
    truth = np.mean(2 * p.radii)
    assert s.ecd_mean.value == pytest.approx(truth, rel=0.02)
    naive = t.ecd[~t.edge].mean()
    assert naive < s.ecd_mean.value
    assert s.count_per_mm2 == pytest.approx(len(p.radii) / 512 ** 2 * 1e6, rel=0.03)


def test_empty_and_bad_input():
    """Common practice (no source): no measurable particle gives NaN (None in JSON)."""
    s = size_statistics(table([5.0], weight=[0.0]))
    assert s.count == 1 and s.count_measured == 0
    assert np.isnan(s.ecd_mean.value)
    with pytest.raises(InputError, match="n_boot"):
        size_statistics(table([5.0]), n_boot=-1)
