"""Tests of polisect.segment.uncertainty: fractions and maps under moved boundaries."""

import numpy as np
from hypothesis import given, settings, strategies as st

from polisect.segment.uncertainty import BoundaryUncertainty, threshold_alternatives


def test_threshold_alternatives():
    """Pixels within δ of a threshold get the class across it (constructed case)."""
    grey = np.array([[10.0, 48.0, 52.0, 90.0, 149.0, 200.0]])
    labels = np.digitize(grey, [50, 150], right=True)
    alt = threshold_alternatives(grey, labels, [50, 150], 3.0)
    assert alt.tolist() == [[-1, 1, 0, -1, 2, -1]]


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10 ** 6), st.integers(2, 4))
def test_fraction_ranges_and_maps_agree(seed, classes):
    """Invariants: low ≤ nominal ≤ high, nominal fractions sum to 1, and every map's
    fraction of its phase equals the stated low or high."""
    rng = np.random.default_rng(seed)
    labels = rng.integers(0, classes, (12, 12))
    alt = np.where(rng.random(labels.shape) < 0.2, rng.integers(0, classes, labels.shape), -1)
    alt = np.where(alt == labels, -1, alt)
    u = BoundaryUncertainty.from_alternatives(labels, alt, "test")
    assert abs(sum(v[0] for v in u.fractions.values()) - 1) < 1e-12
    for label, (nominal, low, high) in u.fractions.items():
        assert low <= nominal <= high
    for text, label, perturbed in u.maps():
        got = np.mean(perturbed == label)
        want = u.fractions[label][2 if "grown" in text else 1]
        assert abs(got - want) < 1e-12
