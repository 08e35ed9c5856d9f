"""Tests of polisect.measure.morphology: field fractions, Student t, enclosed fractions."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from polisect.core.errors import InputError
from polisect.measure.morphology import (enclosed_fractions, field_fractions, field_grid, student_t)


def test_student_t_table_values():
    """t for 5 fields (4 d.o.f.) at 95 % is 2.776; 16 fields (15 d.o.f.) 2.131; 30 fields 2.045.

    Source: ASTM E562, table of Student t for n − 1 degrees of freedom.
    """
    assert student_t(5) == pytest.approx(2.776, abs=5e-4)
    assert student_t(16) == pytest.approx(2.131, abs=5e-4)
    assert student_t(30) == pytest.approx(2.045, abs=5e-4)


def test_field_fraction_interval_is_t_s_over_root_n():
    """Five strip fields with known fractions: CI = t·s/√n, %RA = CI/mean·100.

    Source: ASTM E562 (95 % CI = t·s/√n with t for n − 1 d.o.f.; %RA = CI/mean·100).
    """
    labels = np.zeros((20, 100), dtype=np.int32)
    counts = [2, 4, 6, 8, 10]                      # pixels of phase 1 per column of each field
    for k, c in enumerate(counts):
        labels[:c, 20 * k:20 * (k + 1)] = 1
    est = field_fractions(labels, [1], n_fields=5)[1]
    f = np.array(counts) / 20.0
    s = f.std(ddof=1)
    assert est.n_fields == 5
    assert est.mean == pytest.approx(f.mean())
    assert est.ci95 == pytest.approx(2.7764451 * s / math.sqrt(5), rel=1e-6)
    assert est.relative_accuracy_pct == pytest.approx(est.ci95 / est.mean * 100)


def test_field_grid_shapes():
    """Common practice (no source): 16 fields on a square image form a 4 × 4 grid."""
    assert field_grid((1024, 1024), 16) == (4, 4)
    assert field_grid((64, 64, 64), 8) == (2, 2, 2)
    with pytest.raises(InputError, match="fields"):
        field_grid((8, 8), 16)


def test_absent_phase_and_bad_input():
    """Common practice (no source): an absent phase has zero fraction and no finite %RA."""
    est = field_fractions(np.zeros((32, 32), dtype=np.int32), [0, 7])
    assert est[7].mean == 0 and est[7].ci95 == 0 and not math.isfinite(est[7].relative_accuracy_pct)
    assert est[0].mean == 1.0
    with pytest.raises(InputError):
        field_fractions(np.zeros((32, 32)), [0])
    with pytest.raises(InputError):
        field_fractions(np.zeros((32, 32), dtype=np.int32), [0], n_fields=1)


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 2**31 - 1), st.sampled_from([4, 9, 16, 25]))
def test_fractions_sum_to_one_and_equal_pixel_counts(seed, n):
    """Delesse (1847): the area fraction is the pixel fraction; fractions of all phases sum to 1."""
    rng = np.random.default_rng(seed)
    labels = rng.integers(0, 3, size=(37, 53)).astype(np.int32)
    est = field_fractions(labels, [0, 1, 2], n_fields=n)
    assert sum(e.mean for e in est.values()) == pytest.approx(1.0)
    for k, e in est.items():
        assert e.mean == pytest.approx(np.mean(labels == k))
        assert e.ci95 >= 0


def test_delesse_interval_covers_true_fraction():
    """Random pixel noise of fraction 0.3: the 95 % interval from 16 fields covers 0.3.

    Source: Delesse (1847) A_A = V_V; ASTM E562 interval. Fixed seed (a 95 % interval misses
    one time in twenty by design).
    """
    rng = np.random.default_rng(3)
    labels = (rng.random((256, 256)) < 0.3).astype(np.int32)
    e = field_fractions(labels, [1])[1]
    assert abs(e.mean - 0.3) <= e.ci95
    assert e.ci95 == pytest.approx(student_t(16) * math.sqrt(0.3 * 0.7 / 4096) / 4, rel=0.4)


def test_enclosed_pores_are_kept_apart():
    """Common practice (no source): pores inside a ring particle are internal, others free."""
    labels = np.zeros((64, 64), dtype=np.int32)
    yy, xx = np.mgrid[:64, :64]
    r = np.hypot(yy - 20, xx - 20)
    labels[r <= 12] = 1
    labels[r <= 6] = 2                       # pore inside the particle
    labels[50:56, 50:56] = 2                 # free pore in the matrix
    enc = {(e.phase, e.host): e.fraction.mean for e in enclosed_fractions(labels, [1])}
    assert enc[(2, 1)] == pytest.approx(np.sum(r <= 6) / labels.size)
    assert enc[(0, 1)] == 0.0


from polisect import Material
from polisect.measure.morphology import PhaseParticles, particle_phases, phase_particles
from polisect.measure.summary import summarize_particles
from polisect.core.phasemap import Phase, PhaseMap
from polisect.model3d.synth import Inclusions, compose

M = Material(conductivity=1.0)


@pytest.fixture(scope="module")
def mixture():
    """Solid and hollow discs (ratio 0.5, pore cores) in a matrix, 0.5 µm pixels."""
    p = compose((384, 384), [Inclusions(1, 0.15, 10.0, min_gap=2.0),
                             Inclusions(1, 0.10, 10.0, hollow_ratio=0.5, core_label=2, min_gap=2.0)],
                seed=9)
    pm = PhaseMap(p.labels, (Phase(0, "matrix", M), Phase(1, "SiC", M), Phase(2, "pore", M)),
                  voxel_size_um=0.5)
    return p, pm


def test_phase_particles_summary(mixture):
    """The summary of a phase's particles is in µm, and the hollow fraction of the discs not
    cut by the border equals that of the construction.

    Source: truth from the synth construction.
    """
    p, pm = mixture
    res = phase_particles(pm, "SiC", n_boot=200)
    s = summarize_particles(res)
    assert s.units == "um" and s.contiguity is None
    assert s.spheres.mean > 0 and s.number_per_mm3 > 0 and s.mean_free_path > 0
    assert s.ecd.d50 == pytest.approx(10.0, abs=0.5)        # 20 px discs at 0.5 µm
    assert s.ecd.ci95["d50"][0] <= s.ecd.d50 <= s.ecd.ci95["d50"][1]
    ny, nx = p.labels.shape
    inside = [(r + 1 <= c[0] <= ny - 2 - r) and (r + 1 <= c[1] <= nx - 2 - r)
              for c, r in zip(p.centres, p.radii)]
    hollow = p.inner_radii > 0
    assert res.size.count_measured == sum(inside)
    assert s.hollow_fraction == pytest.approx(np.mean(hollow[inside]), abs=0.02)
    assert s.inner_outer_ratio_mean == pytest.approx(0.5, abs=0.03)
    lo, hi = s.shape_ci95["hollow_fraction"]
    assert lo <= s.hollow_fraction <= hi
    rows = res.rows()
    assert len(rows) == res.table.count and rows[0]["phase"] == "SiC"
    assert isinstance(res, PhaseParticles)


def test_internal_porosity_is_the_pore_cores(mixture):
    """The pore fraction inside SiC particles lies between the core area of the hollow discs
    wholly inside the image (certainly enclosed) and the total pore fraction (cores of discs
    cut by the border may be open); there is no other pore.

    Source: truth from the synth construction.
    """
    p, pm = mixture
    enc = {(e.phase, e.host): e.fraction.mean for e in enclosed_fractions(pm.labels, [1])}
    ny, nx = pm.shape
    yy, xx = np.mgrid[:ny, :nx]
    certain = np.zeros(pm.shape, bool)
    for c, r, ri in zip(p.centres, p.radii, p.inner_radii):
        if ri > 0 and r + 1 <= c[0] <= ny - 2 - r and r + 1 <= c[1] <= nx - 2 - r:
            certain |= np.hypot(yy - c[0], xx - c[1]) < ri
    assert np.all(pm.labels[certain] == 2)
    assert certain.mean() <= enc[(2, 1)] <= np.mean(pm.labels == 2)
    assert certain.mean() > 0.5 * np.mean(pm.labels == 2)


def test_particle_phases_default_rule():
    """Common practice (no source): every phase but the largest one, unless marked."""
    labels = np.zeros((16, 16), np.int32)
    labels[:4] = 1
    labels[4:6] = 2
    phases = (Phase(0, "matrix", M), Phase(1, "A", M), Phase(2, "B", M, False))
    assert [p.name for p in particle_phases(PhaseMap(labels, phases))] == ["A"]
    phases = (Phase(0, "matrix", M, True), Phase(1, "A", M), Phase(2, "B", M))
    assert [p.name for p in particle_phases(PhaseMap(labels, phases))] == ["matrix", "A", "B"]


def test_pixel_units_and_errors():
    """Common practice (no source): unknown pixel size gives pixel units; 3D and unknown
    phases raise InputError."""
    labels = np.zeros((64, 64), np.int32)
    labels[10:20, 10:20] = 1
    pm = PhaseMap(labels, (Phase(0, "m", M), Phase(1, "p", M)))
    s = summarize_particles(phase_particles(pm, 1, n_boot=0))
    assert s.units == "px" and s.count == 1
    assert s.ecd.mean == pytest.approx(2 * math.sqrt(100 / math.pi))
    with pytest.raises(InputError, match="no phase"):
        phase_particles(pm, "nothing")
    pm3 = PhaseMap(np.zeros((8, 8, 8), np.int32), (Phase(0, "m", M),))
    with pytest.raises(InputError, match="2D"):
        phase_particles(pm3, 0)
