"""Discretization error by coarsened re-solves and Richardson extrapolation."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from polisect import InputError, Material
from polisect.properties.solve import conductivity
from polisect.trust.discretization import (FALLBACK_FACTOR, coarsen, discretization_study,
                                           richardson)
from solve_cases import blobs, centred_disc, perrins


def _study(n, f, contrast):
    m = {0: Material(conductivity=1.0), 1: Material(conductivity=contrast)}
    labels = centred_disc(n, f)
    s = discretization_study(labels, lambda L: {"k": conductivity(L, m, tol=1e-8).tensor[0, 0]})
    e = s.estimates["k"]
    return e, e.value - perrins(labels.mean(), 1.0, contrast)


@pytest.mark.parametrize("n", [128, 256, 512])
@pytest.mark.parametrize("f, contrast", [(0.4, 10.0), (0.5, 1e4)])
def test_square_array_of_discs_error_within_factor_two(n, f, contrast):
    """Square array of conducting discs: the estimated discretization error of the fine
    result is within a factor 2 of its true error against Perrins, McKenzie & McPhedran,
    Proc. R. Soc. Lond. A 369 (1979) 207 (formula in CHECKS.md), at 128², 256², 512²."""
    e, true = _study(n, f, contrast)
    assert 0.5 <= e.error / true <= 2.0, (e, true)


@pytest.mark.parametrize("n", [128, 256, 512])
@pytest.mark.parametrize("f, contrast", [(0.3, 0.01), (0.45, 0.0)])
def test_insulating_discs_and_pores_not_underestimated(n, f, contrast):
    """Nearly insulating discs and pores: the error is small and scatters with the
    resolution, the estimate falls back to the bound at times; it is never below half the
    true error against Perrins, McKenzie & McPhedran (1979) and keeps its sign."""
    e, true = _study(n, f, contrast)
    assert e.error / true >= 0.5, (e, true)


def test_richardson_exact_first_order():
    """q_h = 2 + 0.03 h exactly (Richardson 1911): order 1 observed, the fine error and
    the limit recovered to rounding."""
    e = richardson("q", 2.03, (2.06, 2.12))
    assert e.method == "richardson"
    assert e.observed_order == pytest.approx(1.0)
    assert e.error == pytest.approx(0.03) and e.extrapolated == pytest.approx(2.0)


def test_richardson_fractional_order_and_high_order():
    """q_h = 1 + h^0.7 (Richardson 1911; Roache 1998): order 0.7 observed and used,
    error exact. q_h = 1 + h²: observed order 2 is above the expected first order, which
    is used instead (Celik et al. 2008), giving the larger estimate q₂ − q₁."""
    q = lambda h, p: 1.0 + 0.01 * h ** p
    e = richardson("q", q(1, 0.7), (q(2, 0.7), q(4, 0.7)))
    assert e.observed_order == pytest.approx(0.7) and e.error == pytest.approx(0.01)
    e = richardson("q", q(1, 2), (q(2, 2), q(4, 2)))
    assert e.observed_order == pytest.approx(2.0)
    assert e.error == pytest.approx(q(2, 2) - q(1, 2))


def test_richardson_falls_back_to_the_bound():
    """Differences that change sign, or a single coarse level, give the stated bound
    FALLBACK_FACTOR·|q₁ − q₂| with the sign of q₂ − q₁ (common practice, no source)."""
    e = richardson("q", 1.00, (1.01, 0.99))
    assert e.method == "bound" and e.error == pytest.approx(FALLBACK_FACTOR * 0.01)
    assert "change sign" in e.note
    e = richardson("q", 1.00, (0.98,), (2,))
    assert e.method == "bound" and e.error == pytest.approx(-FALLBACK_FACTOR * 0.02)
    assert e.half_width == pytest.approx(FALLBACK_FACTOR * 0.02)


def test_richardson_no_difference():
    """Equal fine and coarse results: no visible error (common practice, no source)."""
    assert richardson("q", 1.0, (1.0, 1.2)).error == 0.0


@settings(max_examples=20, deadline=None)
@given(seed=st.integers(0, 10_000), nx=st.integers(16, 40), ny=st.integers(16, 40),
       factor=st.sampled_from([2, 3, 4]))
def test_coarsening_keeps_the_phase_counts(seed, nx, ny, factor):
    """The area-preserving majority keeps every phase's fraction to within rounding of
    one coarse pixel per phase, for any shape (an invariant of the construction)."""
    labels = blobs((nx, ny), [0.5, 0.3, 0.2], 1.5, seed=seed) * 3 + 1
    coarse = coarsen(labels, factor)
    assert coarse.shape == tuple(round(n / factor) for n in labels.shape)
    for v in (1, 4, 7):
        expected = np.mean(labels == v) * coarse.size
        assert abs(np.sum(coarse == v) - expected) < 1.0


def test_coarsening_block_aligned_map_is_exact():
    """A map made of whole blocks coarsens to the block map itself (exact)."""
    rng = np.random.default_rng(1)
    blocks = rng.integers(0, 3, size=(6, 5, 4))
    fine = np.repeat(np.repeat(np.repeat(blocks, 2, 0), 2, 1), 2, 2)
    assert np.array_equal(coarsen(fine, 2), blocks)


def test_bad_input():
    """Factors below 2, maps too small to coarsen and unknown factor sets are refused
    (common practice)."""
    with pytest.raises(InputError):
        coarsen(np.zeros((8, 8), int), 1)
    with pytest.raises(InputError):
        coarsen(np.zeros((3, 8), int), 4)
    with pytest.raises(InputError):
        discretization_study(np.zeros((8, 8), int), lambda m: {"q": 1.0})
    with pytest.raises(InputError):
        discretization_study(np.zeros((64, 64), int), lambda m: {"q": 1.0}, factors=(3,))


def test_small_map_uses_one_coarse_level():
    """A 24-pixel map is coarsened by 2 only (12 px ≥ 8) and says the order was not
    observed (common practice, no source)."""
    m = {0: Material(conductivity=1.0), 1: Material(conductivity=10.0)}
    labels = centred_disc(24, 0.4)
    s = discretization_study(labels, lambda L: {"k": conductivity(L, m).mean()})
    assert s.shapes == ((24, 24), (12, 12))
    assert s.estimates["k"].method == "bound" and "one coarse level" in s.estimates["k"].note


def test_with_the_window_study_evaluator():
    """The window study's solver evaluator serves the discretization study as is: every
    headline key gets an estimate, and the fine values are the evaluator's own (same
    solver; exact)."""
    from polisect.core.phasemap import Phase, PhaseMap
    from polisect.trust.windows import solver_evaluator
    labels = centred_disc(32, 0.4)
    m = Material(conductivity=1.0, youngs_modulus=70.0, poisson_ratio=0.3, expansion=2e-5)
    c = Material(conductivity=10.0, youngs_modulus=400.0, poisson_ratio=0.2, expansion=5e-6)
    pm = PhaseMap(labels, (Phase(0, "matrix", m), Phase(1, "disc", c)))
    evaluate = solver_evaluator(pm, ["conductivity", "elasticity", "expansion"])
    s = discretization_study(pm.labels, evaluate)
    assert set(s.estimates) == set(evaluate(labels))
    for name, e in s.estimates.items():
        assert e.value == pytest.approx(evaluate(labels)[name], rel=1e-12)
        assert len(e.coarse) == 2 and np.isfinite(e.error)


def test_known_coarse_level_is_not_solved_again():
    """A coarse level given as known is used as it is and not re-solved; the estimates
    equal those of the study that solves it (constructed case: the square array of discs
    of Perrins, McKenzie & McPhedran 1979 at 64², contrast 10)."""
    m = {0: Material(conductivity=1.0), 1: Material(conductivity=10.0)}
    labels = centred_disc(64, 0.4)
    shapes = []

    def evaluate(L):
        shapes.append(L.shape)
        return {"k": conductivity(L, m, tol=1e-8).tensor[0, 0]}

    full = discretization_study(labels, evaluate)
    q2 = {"k": full.estimates["k"].coarse[0]}
    shapes.clear()
    again = discretization_study(labels, evaluate, known={2: q2})
    assert shapes == [(16, 16), (64, 64)]
    assert again.estimates["k"].error == pytest.approx(full.estimates["k"].error, rel=1e-12)
