"""`polisect.core.memory`: the sampled peak resident size sees allocations made by libraries."""

import numpy as np

from polisect.core.memory import PeakRSS, resident_mb


def test_peak_sees_a_short_lived_allocation():
    """A 256 MB array touched and freed inside the block raises the peak by about that much
    (common practice: the resident size counts touched pages)."""
    with PeakRSS(interval=0.005) as rss:
        block = np.ones(2 ** 25)
        block += 1.0
        del block
    assert rss.peak - rss.start > 200
    assert resident_mb() > 0
