"""Tests of PhaseMap and its TIFF round trip."""

import numpy as np
import pytest

from polisect import InputError, Material
from polisect.core.phasemap import Phase, PhaseMap

PHASES = (Phase(0, "pore", Material(conductivity=0.0, name="pore")),
          Phase(1, "matrix", Material(conductivity=1.0, name="m")))


def test_fractions_sum_to_one():
    labels = np.random.default_rng(0).integers(0, 2, (30, 40))
    f = PhaseMap(labels, PHASES).fractions()
    assert sum(f.values()) == pytest.approx(1.0)
    assert f[1] == pytest.approx(labels.mean())


def test_labels_without_a_phase_are_refused():
    labels = np.array([[0, 1], [2, 1]])
    with pytest.raises(InputError, match=r"labels \[2\]"):
        PhaseMap(labels, PHASES)


def test_too_small_is_refused():
    with pytest.raises(InputError, match="too small"):
        PhaseMap(np.zeros((1, 1), int), PHASES)


def test_save_load_round_trip(tmp_path):
    labels = np.random.default_rng(1).integers(0, 2, (8, 9))
    pm = PhaseMap(labels, PHASES, voxel_size_um=0.25)
    pm.save(tmp_path / "map.tif")
    back = PhaseMap.load(tmp_path / "map.tif")
    assert np.array_equal(back.labels, labels)
    assert back.voxel_size_um == 0.25
    assert [p.name for p in back.phases] == ["pore", "matrix"]
    assert back.phases[1].material.conductivity == 1.0
    assert not list(tmp_path.glob(".tmp-*"))


def test_window_is_a_view():
    labels = np.zeros((10, 10), int)
    pm = PhaseMap(labels, PHASES)
    w = pm.window((slice(0, 5), slice(0, 5)))
    assert w.shape == (5, 5) and np.shares_memory(w.labels, labels)
