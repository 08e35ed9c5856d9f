"""The error budget: components side by side, root-sum-square, largest and advice."""

import math

import numpy as np
import pytest
from hypothesis import given, strategies as st

from polisect import InputError, Material
from polisect.properties.sensitivity import QuantitySensitivity, conductivity_sensitivity
from polisect.trust.budget import (COMPONENTS, COVERAGE, error_budget, material_term,
                                   material_terms, model_2d_3d_term)
from polisect.trust.discretization import richardson


def test_root_sum_square_and_largest():
    """Independent components combine as the root-sum-square (GUM, JCGM 100:2008 §5.1):
    0.3 and 0.4 give 0.5; unassessed ones are listed, the largest gets the advice."""
    b = error_budget("k", 12.0, unit="W/(m·K)", sampling=0.3, discretization=0.4)
    assert b.combined == pytest.approx(0.5)
    assert b.largest == "discretization" and "finer pixels" in b.advice
    assert b.components["window"] is None and set(b.components) == set(COMPONENTS)
    assert any("root-sum-square" in n for n in b.notes)
    assert any("window" in n and "not assessed" in n for n in b.notes)
    assert b.relative()["combined"] == pytest.approx(0.5 / 12.0)


@given(st.lists(st.one_of(st.none(), st.floats(0, 1e3)), min_size=6, max_size=6))
def test_combined_between_largest_and_sum(values):
    """The root-sum-square lies between the largest component and their sum (an
    invariant of the Euclidean norm)."""
    b = error_budget("q", 1.0, **dict(zip(COMPONENTS, values)))
    assessed = [v for v in values if v is not None]
    if not assessed:
        assert b.combined is None and b.largest is None
        return
    assert max(assessed) * (1 - 1e-12) <= b.combined <= sum(assessed) * (1 + 1e-12) + 1e-300


def test_material_term_is_exact_for_a_linear_property():
    """Along the layers of a laminate k* = Σ f_p k_p (Wiener 1912) is linear in the phase
    conductivities, so first-order propagation is exact (GUM §5.1.2):
    half-width = 1.96 √Σ (f_p u_p)²; the advice names the dominant phase property."""
    labels = np.zeros((8, 8), dtype=int)
    labels[:2] = 1                                       # f1 = 1/4, layers along y
    m = {0: Material(conductivity=2.0), 1: Material(conductivity=5.0)}
    s = conductivity_sensitivity(labels, m, tol=1e-12)
    along = QuantitySensitivity("k_yy", s.tensors["conductivity"][1, 1],
                                {k: d[1, 1] for k, d in
                                 s.tensor_derivatives["conductivity"].items()})
    u = {0: {"conductivity": 0.1}, 1: {"conductivity": 1.0}}
    t = material_term(along, u)
    assert t.half_width == pytest.approx(COVERAGE * math.hypot(0.75 * 0.1, 0.25 * 1.0),
                                         rel=1e-9)
    assert t.largest == (1, "conductivity")
    b = error_budget("k_yy", along.value, material=t, sampling=0.01,
                     phase_names={1: "copper"})
    assert b.largest == "material" and "conductivity of copper" in b.advice


def test_material_term_lists_unassessed_properties():
    """An uncertainty given for a property the quantity does not depend on here (e.g. a
    pore's modulus) is listed, not silently used (common practice, no source)."""
    s = QuantitySensitivity("E", 100.0, {(0, "youngs_modulus"): 0.8})
    t = material_term(s, {0: {"youngs_modulus": 5.0}, 2: {"youngs_modulus": 1.0}})
    assert t.unassessed == ((2, "youngs_modulus"),)
    assert t.half_width == pytest.approx(COVERAGE * 4.0)


def test_discretization_estimate_and_model_term():
    """A DiscretizationEstimate carries its magnitude; the 2D-versus-3D term is the
    absolute difference (definitions; Richardson 1911 for the estimate)."""
    e = richardson("k", 1.01, (1.02, 1.04))
    b = error_budget("k", 1.01, discretization=e, model_2d_3d=model_2d_3d_term(1.01, 1.06))
    assert b.components["discretization"] == pytest.approx(0.01)
    assert b.components["model_2d_3d"] == pytest.approx(0.05)
    assert b.largest == "model_2d_3d" and "3D model" in b.advice
    assert any("systematic" in n for n in b.notes)


def test_nothing_assessed():
    """With no component the budget says so and combines nothing (common practice)."""
    b = error_budget("q", 3.0)
    assert b.combined is None and b.largest is None and "unverified" in b.advice


@pytest.mark.parametrize("bad", [{"sampling": -1.0}, {"window": float("nan")},
                                 {"material": float("inf")}])
def test_bad_components(bad):
    """Negative or non-finite half-widths are refused with an InputError (common
    practice)."""
    with pytest.raises(InputError):
        error_budget("q", 1.0, **bad)


def test_bad_uncertainty():
    """A negative standard uncertainty is refused (common practice)."""
    s = QuantitySensitivity("k", 1.0, {(0, "conductivity"): 1.0})
    with pytest.raises(InputError):
        material_term(s, {0: {"conductivity": -0.1}})


def test_material_terms_of_a_sensitivity_result():
    """Every quantity of a Sensitivities result gets its term; a two-phase laminate's
    mean conductivity is linear in k_p along and harmonic across, so the term is
    1.96·√Σ(∂k/∂k_p·u_p)² with the exact shares (Wiener 1912; GUM §5.1.2)."""
    labels = np.zeros((8, 8), dtype=int)
    labels[:4] = 1
    m = {0: Material(conductivity=1.0), 1: Material(conductivity=3.0)}
    s = conductivity_sensitivity(labels, m, tol=1e-12)
    terms = material_terms(s, {0: {"conductivity": 0.1}, 1: {"conductivity": 0.3}})
    expected = COVERAGE * math.hypot(0.8125 * 0.1, 0.3125 * 0.3)
    assert terms["conductivity"].half_width == pytest.approx(expected, rel=1e-8)


def test_segmentation_range_is_carried_with_its_kind():
    """A segmentation range of an effective property enters as its half-width, and the
    notes say it is a range of the stated boundary movement, not a 95 % interval
    (constructed case)."""
    from polisect.trust.boundaries import boundary_ranges

    r = boundary_ranges({"conductivity": 2.0}, {"conductivity": 1.9},
                        {"conductivity": 2.3})["conductivity"]
    b = error_budget("conductivity", 2.0, segmentation=r, material=0.1)
    assert b.components["segmentation"] == pytest.approx(0.3)
    assert b.largest == "segmentation"
    assert any("not a 95 % interval" in n and "bound" in n for n in b.notes)
