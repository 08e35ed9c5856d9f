"""Tests of polisect.core.tensors: isotropic stiffness, plane reductions, moduli, projections."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from polisect.core.errors import InputError
from polisect.core import tensors as T

moduli = st.tuples(st.floats(0.1, 1000.0), st.floats(-0.95, 0.49))


def _random_spd(n, seed):
    rng = np.random.default_rng(seed)
    A = rng.normal(size=(n, n))
    return A @ A.T + n * np.eye(n)


def test_isotropic_stiffness_entries():
    """Lamé form C11 = λ + 2G, C12 = λ, C44 = G: any elasticity text, e.g. Timoshenko &
    Goodier, Theory of Elasticity (1970), ch. 1."""
    E, nu = 200.0, 0.3
    lam = E * nu / ((1 + nu) * (1 - 2 * nu))
    G = E / (2 * (1 + nu))
    C = T.isotropic_stiffness(E, nu)
    assert C.shape == (6, 6)
    assert np.isclose(C[0, 0], lam + 2 * G) and np.isclose(C[0, 1], lam)
    assert np.isclose(C[3, 3], G) and np.isclose(C[5, 5], G)
    assert np.allclose(C, C.T)
    # Young's modulus: the inverse of S11
    assert np.isclose(1.0 / np.linalg.inv(C)[0, 0], E)
    assert np.isclose(-np.linalg.inv(C)[0, 1] / np.linalg.inv(C)[0, 0], nu)


def test_plane_stress_is_the_classical_matrix():
    """Plane-stress stiffness E/(1−ν²)[[1, ν, 0], [ν, 1, 0], [0, 0, (1−ν)/2]]:
    Timoshenko & Goodier (1970), plane stress."""
    E, nu = 70.0, 0.33
    expected = E / (1 - nu**2) * np.array([[1, nu, 0], [nu, 1, 0], [0, 0, (1 - nu) / 2]])
    assert np.allclose(T.plane_stiffness(T.isotropic_stiffness(E, nu), "plane-stress"), expected)


def test_plane_stress_of_anisotropic_matches_compliance_inverse():
    """Plane stress = inverse of the in-plane block of the compliance: common practice
    (no source)."""
    C = _random_spd(6, 1)
    S = np.linalg.inv(C)
    idx = [0, 1, 5]
    assert np.allclose(T.plane_stiffness(C, "plane-stress"),
                       np.linalg.inv(S[np.ix_(idx, idx)]))


def test_plane_stiffness_of_pore_is_zero():
    """A pore has no stiffness in any plane mode: common practice (no source)."""
    for plane in T.PLANES:
        assert np.all(T.plane_stiffness(np.zeros((6, 6)), plane) == 0)


def test_bad_plane_and_shape_raise():
    with pytest.raises(InputError, match="plane-strain"):
        T.plane_stiffness(np.eye(6), "plain-strain")
    with pytest.raises(InputError, match="6x6"):
        T.isotropic_projection(np.eye(4))


@settings(max_examples=50, deadline=None)
@given(moduli, st.sampled_from([None, "plane-strain", "plane-stress"]))
def test_moduli_round_trip(m, plane):
    """E, ν → K, G → E, ν is the identity: from memory (standard conversion tables)."""
    E, nu = m
    K, G = T.bulk_shear_from_E_nu(E, nu, plane)
    assert np.allclose(T.E_nu_from_bulk_shear(K, G, plane), (E, nu), rtol=1e-9, atol=1e-9)


@settings(max_examples=50, deadline=None)
@given(moduli, st.sampled_from(["plane-strain", "plane-stress"]))
def test_projection_of_isotropic_plane_matrix(m, plane):
    """The in-plane K₂ of an isotropic solid is λ+G (plane strain), E/(2(1−ν)) (plane
    stress): from memory (standard 2D elasticity)."""
    E, nu = m
    C2 = T.plane_stiffness(T.isotropic_stiffness(E, nu), plane)
    K2, G = T.isotropic_projection(C2)
    assert np.allclose((K2, G), T.bulk_shear_from_E_nu(E, nu, plane))
    assert T.stiffness_anisotropy(C2) < 1e-12


@settings(max_examples=50, deadline=None)
@given(moduli)
def test_projection_of_isotropic_3d(m):
    """Isotropic projection returns the tensor's own K and G: Moakher & Norris (2006)."""
    E, nu = m
    C = T.isotropic_stiffness(E, nu)
    assert np.allclose(T.isotropic_projection(C), T.bulk_shear_from_E_nu(E, nu))
    assert np.allclose(T.isotropic_part(C), C)


def test_projection_of_cubic_tensor():
    """Cubic C11, C12, C44: K = (C11 + 2C12)/3 and the Frobenius-nearest G =
    (C11 − C12 + 3C44)/5 (Moakher & Norris, J. Elasticity 85 (2006) 215)."""
    C11, C12, C44 = 168.4, 121.4, 75.4
    C = np.zeros((6, 6))
    C[:3, :3] = C12
    C[[0, 1, 2], [0, 1, 2]] = C11
    C[[3, 4, 5], [3, 4, 5]] = C44
    K, G = T.isotropic_projection(C)
    assert np.isclose(K, (C11 + 2 * C12) / 3)
    assert np.isclose(G, (C11 - C12 + 3 * C44) / 5)
    assert T.stiffness_anisotropy(C) > 0.1


def test_projection_is_orthogonal():
    """C − C_iso is orthogonal to every isotropic tensor (a projection): common practice
    (no source)."""
    C = _random_spd(6, 2)
    D = T.voigt_to_mandel(C - T.isotropic_part(C))
    for E, nu in [(1.0, 0.0), (3.0, 0.4)]:
        assert abs(np.sum(D * T.voigt_to_mandel(T.isotropic_stiffness(E, nu)))) < 1e-10


def test_mandel_and_tensor_round_trips():
    """Voigt ↔ Mandel ↔ fourth-order tensor are consistent: σ = C:ε computed three ways
    (common practice, no source)."""
    for n, d in [(6, 3), (3, 2)]:
        C = _random_spd(n, n)
        assert np.allclose(T.mandel_to_voigt(T.voigt_to_mandel(C)), C)
        C4 = T.voigt_to_tensor(C)
        assert np.allclose(T.tensor_to_voigt(C4), C)
        rng = np.random.default_rng(0)
        eps = rng.normal(size=(d, d))
        eps = eps + eps.T
        sig = np.einsum("ijkl,kl->ij", C4, eps)
        assert np.allclose(T.stress_to_voigt(sig), C @ T.strain_to_voigt(eps))
        assert np.allclose(T.voigt_to_strain(T.strain_to_voigt(eps)), eps)
        # the Mandel norm is the tensor norm
        assert np.isclose(np.linalg.norm(T.voigt_to_mandel(C)), np.linalg.norm(C4))


def test_tensor_anisotropy():
    """Deviator norm of a second-order tensor: zero for k·I: common practice (no source)."""
    assert T.tensor_anisotropy(3.0 * np.eye(3)) == 0.0
    assert T.tensor_anisotropy(np.zeros((2, 2))) == 0.0
    assert np.isclose(T.tensor_anisotropy(np.diag([1.0, 3.0])),
                      np.linalg.norm([-1.0, 1.0]) / np.linalg.norm([1.0, 3.0]))
