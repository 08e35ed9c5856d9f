"""Tests of `polisect.properties.solve.fft` helpers (the solver itself is tested per property)."""

import os

import numpy as np
import pytest

from polisect.properties.solve import fft


@pytest.mark.parametrize("value, expected", [("1", 1), ("3", 3), ("", None), ("zero", None),
                                             ("0", None)])
def test_workers_follow_polisect_threads_at_call_time(monkeypatch, value, expected):
    # A batch worker sets POLISECT_THREADS after the module was imported (common practice:
    # one thread per job so that jobs × threads = cores).
    monkeypatch.setenv("POLISECT_THREADS", value)
    assert fft.workers() == (expected if expected is not None else (os.cpu_count() or 1))


def test_transforms_round_trip_with_one_worker(monkeypatch):
    monkeypatch.setenv("POLISECT_THREADS", "1")
    rng = np.random.default_rng(0)
    f = rng.normal(size=(2, 12, 10))
    back = fft.inverse(fft.forward(f), f.shape[1:])
    np.testing.assert_allclose(back, f, atol=1e-12)
