"""Sensitivities of the effective properties to the phase properties (from the fields)."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from polisect import InputError, Material
from polisect.properties.sensitivity import conductivity_sensitivity, elasticity_sensitivity
from polisect.properties.solve import conductivity, elasticity, expansion
from solve_cases import blobs

TOL = 1e-11
MATERIALS = {
    0: Material(conductivity=1.0, youngs_modulus=70.0, poisson_ratio=0.33, expansion=23e-6),
    1: Material(conductivity=20.0, youngs_modulus=400.0, poisson_ratio=0.2, expansion=4e-6),
    2: Material(conductivity=0.2, youngs_modulus=3.0, poisson_ratio=0.4, expansion=60e-6),
}


def three_phase(n=24, dim=2):
    """A matrix (0) with a disc/ball (1, stiff, conducting) and a box (2, compliant)."""
    x = (np.arange(n) + 0.5) / n
    X = np.meshgrid(*([x] * dim), indexing="ij")
    labels = np.zeros((n,) * dim, dtype=int)
    centre = [0.3, 0.35, 0.4][:dim]
    labels[sum((Xi - c) ** 2 for Xi, c in zip(X, centre)) < 0.04] = 1
    box = np.ones_like(labels, dtype=bool)
    for Xi, c, w in zip(X, [0.72, 0.7, 0.6], [0.15, 0.2, 0.25]):
        box &= np.abs(Xi - c) < w
    labels[box] = 2
    return labels


def central_difference(evaluate, label, prop, rel=1e-4):
    m = MATERIALS[label]
    value = getattr(m, prop)
    h = rel * value
    up = evaluate({**MATERIALS, label: m.replace(**{prop: value + h})})
    down = evaluate({**MATERIALS, label: m.replace(**{prop: value - h})})
    return {k: (up[k] - down[k]) / (2 * h) for k in up}


def assert_close(a, b, rel=1e-4):
    a, b = np.asarray(a, float), np.asarray(b, float)
    assert np.all(np.abs(a - b) <= rel * np.abs(b).max()), (a, b)


def test_conductivity_matches_central_differences():
    """∂k*/∂k_p (energy share of phase p) equals central differences of the solver's k*
    on a three-phase image to 1e-4 relative (follows from the variational definition of
    k*; Hill 1963)."""
    labels = three_phase()
    s = conductivity_sensitivity(labels, MATERIALS, tol=TOL)
    assert np.allclose(s.tensors["conductivity"],
                       conductivity(labels, MATERIALS, tol=TOL).tensor, rtol=1e-9)
    for label in MATERIALS:
        fd = central_difference(lambda m: {"k": conductivity(labels, m, tol=TOL).tensor},
                                label, "conductivity")
        assert_close(s.tensor_derivatives["conductivity"][(label, "conductivity")], fd["k"])
        q = s.quantities["conductivity"].derivatives[(label, "conductivity")]
        assert_close(q, np.trace(fd["k"]) / 2)


def _elastic(labels, plane):
    def evaluate(m):
        x = expansion(labels, m, plane=plane, tol=TOL)
        r = elasticity(labels, m, plane=plane, tol=TOL)
        iso = r.isotropic()
        out = {"C": x.stiffness, "youngs_modulus": iso.youngs_modulus,
               "poisson_ratio": iso.poisson_ratio, "shear_modulus": iso.shear_modulus,
               "bulk_modulus": iso.bulk_modulus, "expansion": x.mean()}
        if x.axial is not None:
            out["axial_expansion"] = x.axial
        return out
    return evaluate


@pytest.mark.parametrize("plane", ["plane-strain", "plane-stress",
                                   "generalized-plane-strain"])
def test_elasticity_and_expansion_match_central_differences(plane):
    """∂C*/∂(E_p, ν_p) from the strain-energy share and ∂α*/∂(α_p, E_p, ν_p) through
    β* = ⟨β:ε_J⟩ (Levin 1967; Laws 1973) equal central differences of the solvers'
    stiffness, isotropic moduli and expansion to 1e-4 relative, three-phase image, every
    plane mode (follows from the variational definition of C*)."""
    labels = three_phase()
    s = elasticity_sensitivity(labels, MATERIALS, plane=plane, expansion=True, tol=TOL)
    reference = _elastic(labels, plane)(MATERIALS)
    assert np.allclose(s.tensors["stiffness"], reference["C"], rtol=1e-9)
    for name, q in s.quantities.items():
        assert np.isclose(q.value, reference[name], rtol=1e-8)
    for label in MATERIALS:
        for prop in ("youngs_modulus", "poisson_ratio", "expansion"):
            fd = central_difference(_elastic(labels, plane), label, prop)
            if prop != "expansion":
                assert_close(s.tensor_derivatives["stiffness"][(label, prop)], fd["C"])
            for name, q in s.quantities.items():
                assert_close(q.derivatives[(label, prop)], fd[name])


def test_3d_matches_central_differences():
    """3D: ∂C*/∂E_p, ∂C*/∂ν_p and ∂α*/∂α_p equal central differences of the solvers to
    1e-4 relative on a three-phase voxel image (variational definition; Levin 1967)."""
    labels = three_phase(n=10, dim=3)
    s = elasticity_sensitivity(labels, MATERIALS, expansion=True, tol=TOL)

    def evaluate(m):
        x = expansion(labels, m, tol=TOL)
        return {"C": x.stiffness, "a": x.mean()}
    for label, prop in [(1, "youngs_modulus"), (2, "poisson_ratio"), (0, "expansion")]:
        fd = central_difference(evaluate, label, prop)
        if prop != "expansion":
            assert_close(s.tensor_derivatives["stiffness"][(label, prop)], fd["C"])
        assert_close(s.quantities["expansion"].derivatives[(label, prop)], fd["a"])


def test_laminate_energy_shares():
    """Laminate of two layers (Wiener 1912): along the layers k* is the arithmetic mean
    (∂k*/∂k_p = f_p), across it the harmonic mean (∂k*/∂k_p = f_p k*²/k_p²); exact."""
    labels = np.zeros((8, 6), dtype=int)
    labels[:2] = 1                    # layers normal to x: f1 = 1/4
    m = {0: Material(conductivity=2.0), 1: Material(conductivity=5.0)}
    s = conductivity_sensitivity(labels, m, tol=1e-12)
    f = {0: 0.75, 1: 0.25}
    k_across = 1.0 / (0.75 / 2.0 + 0.25 / 5.0)
    for p, k in [(0, 2.0), (1, 5.0)]:
        d = s.tensor_derivatives["conductivity"][(p, "conductivity")]
        assert np.isclose(d[1, 1], f[p], rtol=1e-9)
        assert np.isclose(d[0, 0], f[p] * k_across ** 2 / k ** 2, rtol=1e-9)


@settings(max_examples=6, deadline=None)
@given(seed=st.integers(0, 1000), contrast=st.floats(0.05, 50.0))
def test_euler_identity(seed, contrast):
    """k* and C* are homogeneous of degree one in the phase moduli, so
    Σ_p k_p ∂k*/∂k_p = k* and Σ_p E_p ∂C*/∂E_p = C* (Euler's theorem; exact to the
    solver tolerance)."""
    labels = blobs((16, 16), [0.4, 0.35, 0.25], 2.0, seed=seed)
    m = {0: Material(conductivity=1.0, youngs_modulus=10.0, poisson_ratio=0.3),
         1: Material(conductivity=contrast, youngs_modulus=10.0 * contrast, poisson_ratio=0.2),
         2: Material(conductivity=3.0, youngs_modulus=30.0, poisson_ratio=0.25)}
    s = conductivity_sensitivity(labels, m, tol=1e-10)
    total = sum(m[p].conductivity * s.tensor_derivatives["conductivity"][(p, "conductivity")]
                for p in m)
    assert np.allclose(total, s.tensors["conductivity"], rtol=1e-7)
    e = elasticity_sensitivity(labels, m, plane="plane-strain", tol=1e-10)
    total = sum(m[p].youngs_modulus * e.tensor_derivatives["stiffness"][(p, "youngs_modulus")]
                for p in m)
    assert np.allclose(total, e.tensors["stiffness"], rtol=1e-6,
                       atol=1e-9 * np.abs(e.tensors["stiffness"]).max())


def test_pores_have_no_derivatives():
    """A pore has no property to be uncertain about: no entries for it (common practice,
    no source); the other phases keep theirs."""
    labels = three_phase()
    m = {**MATERIALS, 2: Material(conductivity=0.0, youngs_modulus=0.0, poisson_ratio=0.2)}
    s = elasticity_sensitivity(labels, m, plane="plane-strain", tol=1e-9)
    assert not any(p == 2 for p, _ in s.quantities["youngs_modulus"].derivatives)
    k = conductivity_sensitivity(labels, m, tol=1e-9)
    assert set(k.quantities["conductivity"].derivatives) == {(0, "conductivity"),
                                                            (1, "conductivity")}


def test_bad_settings():
    """A tolerance outside (0, 1) is refused with an InputError (common practice)."""
    with pytest.raises(InputError):
        conductivity_sensitivity(three_phase(), MATERIALS, tol=2.0)


def test_slabs_give_the_same_sums(monkeypatch):
    """Summing over many thin slabs gives the same derivatives as one slab (the sums are
    additive over pixels; exact to rounding)."""
    import polisect.properties.sensitivity as module
    labels = three_phase(n=10, dim=3)
    whole = elasticity_sensitivity(labels, MATERIALS, expansion=True, tol=1e-9)
    monkeypatch.setattr(module, "SLAB_PIXELS", 150)        # one x-layer per slab
    sliced = elasticity_sensitivity(labels, MATERIALS, expansion=True, tol=1e-9)
    for name in ("stiffness", "expansion"):
        for key, d in whole.tensor_derivatives[name].items():
            assert np.allclose(sliced.tensor_derivatives[name][key], d, rtol=1e-10,
                               atol=1e-14 * np.abs(d).max())
