"""Effective properties under moved class boundaries: the two extreme maps bound them."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from polisect import InputError, Material
from polisect.model3d.synth import Inclusions, compose, render_sem
from polisect.properties.solve import conductivity
from polisect.segment.uncertainty import BoundaryUncertainty, threshold_alternatives
from polisect.trust.boundaries import boundary_ranges, extreme_maps

MATERIALS = {0: Material(conductivity=0.1), 1: Material(conductivity=1.0),
             2: Material(conductivity=20.0)}
THRESHOLDS = [80.0, 150.0]


def _k(labels) -> float:
    """Mean effective conductivity, solved tightly (the bound is compared to 1e-9)."""
    return float(np.trace(conductivity(np.ascontiguousarray(labels).T, MATERIALS, tol=1e-11,
                                       criterion="residual").tensor) / 2)


@pytest.fixture(scope="module")
def rendered():
    """A three-phase section (conducting discs f = 0.25 and pores f = 0.1 in a matrix)
    rendered as a micrograph and thresholded, boundary pixels within ±15 grey levels of a
    threshold."""
    truth = compose((64, 64), [Inclusions(2, 0.25, 6.0), Inclusions(0, 0.10, 3.0)], seed=3,
                    matrix_label=1).labels.astype(np.int32)
    grey = render_sem(truth, {0: 0.1, 1: 0.45, 2: 0.8}, blur_px=1.2, noise_sd=0.02, seed=3)
    labels = np.digitize(grey, THRESHOLDS, right=True).astype(np.int32)
    alt = threshold_alternatives(grey, labels, THRESHOLDS, 15.0)
    return BoundaryUncertainty.from_alternatives(labels, alt, "thresholds ± 15 grey levels")


def test_each_perturbed_map_lies_inside_the_bound(rendered):
    """Every single perturbed map of `BoundaryUncertainty.maps` (each phase grown and shrunk)
    and random assignments of the boundary pixels give a conductivity between those of the
    two extreme maps: the energy minimum principle makes k* monotone in k(x) (Milton 2002,
    The Theory of Composites, ch. 13; Torquato 2002, Random Heterogeneous Materials, ch. 17);
    the discrete problem minimises the same energy over a subspace, so it holds to the
    solver tolerance."""
    u = rendered
    assert 0.02 < u.boundary_share < 0.5
    low, high = extreme_maps(u.labels, u.alternative, {0: 0.1, 1: 1.0, 2: 20.0})
    k_low, k_high, k = _k(low), _k(high), _k(u.labels)
    assert k_low < k < k_high
    rng = np.random.default_rng(0)
    swing = u.alternative >= 0
    random_maps = [np.where(swing & (rng.random(u.labels.shape) < 0.5), u.alternative,
                            u.labels) for _ in range(3)]
    inside = [_k(m) for _, _, m in u.maps()] + [_k(m) for m in random_maps]
    assert all(k_low - 1e-9 * k <= v <= k_high + 1e-9 * k for v in inside)
    assert sum(k_low + 1e-3 * k < v < k_high - 1e-3 * k for v in inside) >= 5
    r = boundary_ranges({"conductivity": k}, {"conductivity": k_low},
                        {"conductivity": k_high})["conductivity"]
    assert r.kind == "bound" and r.half_width == pytest.approx(max(k_high - k, k - k_low))


def test_extreme_maps_follow_the_order():
    """Each boundary pixel takes the lower (higher) class of its pair; equal values keep the
    nominal class (constructed case)."""
    labels = np.array([[0, 1, 2, 2, 1]])
    alt = np.array([[2, 0, 1, -1, 3]])
    low, high = extreme_maps(labels, alt, {0: 0.0, 1: 5.0, 2: 1.0, 3: 5.0})
    assert low.tolist() == [[0, 0, 2, 2, 1]]
    assert high.tolist() == [[2, 1, 1, 2, 1]]


def test_estimate_for_quantities_without_monotonicity():
    """Poisson's ratio and expansion are not monotone: the larger deviation of the two maps
    is an estimate, kept with its sides (constructed case)."""
    r = boundary_ranges({"expansion": 5.0, "poisson_ratio": 0.25},
                        {"expansion": 5.2, "poisson_ratio": 0.24},
                        {"expansion": 4.7, "poisson_ratio": 0.26})
    assert r["expansion"].kind == "estimate" and r["expansion"].half_width == pytest.approx(0.3)
    assert r["poisson_ratio"].half_width == pytest.approx(0.01)
    assert boundary_ranges({"conductivity": 1.0}, {"conductivity": 0.9},
                           {"conductivity": 1.2}, rigorous=False)["conductivity"].kind == \
        "estimate"


def test_unordered_label_is_refused():
    """A label without a value to order by is an InputError (common practice, no source)."""
    with pytest.raises(InputError, match="no property value"):
        extreme_maps([[0, 1]], [[1, -1]], {0: 1.0})


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10 ** 6), st.integers(2, 4))
def test_extreme_maps_bracket_every_assignment_pixel_by_pixel(seed, classes):
    """Invariant: each pixel of the low (high) map is its nominal or alternative class,
    and its property is at most (at least) that of any assignment of the pair — the
    pointwise order the energy bound rests on (Milton 2002, ch. 13)."""
    rng = np.random.default_rng(seed)
    labels = rng.integers(0, classes, (10, 10))
    alt = np.where(rng.random(labels.shape) < 0.3, rng.integers(0, classes, labels.shape), -1)
    alt = np.where(alt == labels, -1, alt)
    values = rng.random(classes)
    low, high = extreme_maps(labels, alt, dict(enumerate(values)))
    other = np.where(alt >= 0, alt, labels)
    for m in (low, high):
        assert np.all((m == labels) | (m == other))
    assert np.all(values[low] <= np.minimum(values[labels], values[other]))
    assert np.all(values[high] >= np.maximum(values[labels], values[other]))
