"""Tests of the 3D particle measurement of voxel volumes."""

import numpy as np
import pytest
from scipy import ndimage

from polisect import Material
from polisect.measure.particles3d import volume_particles
from polisect.measure.summary import summarize_volume_particles
from polisect.core.phasemap import Phase, PhaseMap
from polisect.model3d.synth import Inclusions, compose

M = Material(conductivity=1.0)


def _map(labels, size=None):
    return PhaseMap(labels, (Phase(0, "matrix", M), Phase(1, "ball", M), Phase(2, "core", M)),
                    voxel_size_um=size)


def test_digital_sphere_esd_within_one_voxel():
    """A digital ball of radius 8: its ESD is within one voxel of 16 (common practice, no
    source: the digitisation error of a volume count is below one voxel of diameter)."""
    z, y, x = np.mgrid[:32, :32, :32]
    labels = ((z - 16) ** 2 + (y - 15.5) ** 2 + (x - 16.2) ** 2 <= 64).astype(np.int32)
    vp = volume_particles(_map(labels), "ball")
    assert vp.esd.size == 1 and vp.esd[0] == pytest.approx(16.0, abs=1.0)
    assert vp.weight[0] > 1.0


def test_counts_match_an_independent_labelling_and_sizes_are_known():
    """Monodisperse spheres of radius 5 (synth, periodic RSA): the particle count equals
    scipy.ndimage.label with 26-connectivity (an independent count, CHECKS.md) and the
    edge-corrected D50 is 2R within one voxel."""
    pk = compose((48, 48, 48), [Inclusions(1, 0.15, 5.0, min_gap=1.0)], seed=3, matrix_label=0)
    vp = volume_particles(_map(pk.labels, size=2.0), "ball")
    _, n = ndimage.label(pk.labels == 1, structure=np.ones((3, 3, 3)))
    s = summarize_volume_particles(vp)
    assert s.count == n
    assert s.sphere.d50 == pytest.approx(2 * 5.0 * 2.0, abs=2.0)
    assert s.units == "um"
    box_mm3 = (48 * 2.0e-3) ** 3
    assert s.number_per_mm3 == pytest.approx(len(pk.radii) / box_mm3, rel=0.25)


def test_hollow_spheres_and_their_ratio():
    """Hollow spheres with inner/outer diameter 0.6 by construction: every measured one is
    hollow, and (hole volume / filled volume)^(1/3) is within 0.05 of 0.6 (digital spheres
    of radius 7)."""
    pk = compose((48, 48, 48), [Inclusions(1, 0.15, 7.0, hollow_ratio=0.6, core_label=2,
                                           min_gap=1.0)], seed=1, matrix_label=0)
    s = summarize_volume_particles(volume_particles(_map(pk.labels), "ball"))
    assert s.hollow_fraction == pytest.approx(1.0)
    assert s.inner_outer_ratio_mean == pytest.approx(0.6, abs=0.05)
    assert s.units == "px"
