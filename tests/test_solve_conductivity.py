"""Effective conductivity: closed forms, published results, bounds and invariances."""

import numpy as np
import pytest

from polisect import InputError, Material
from polisect.properties.solve import conductivity
from solve_cases import PORE, blobs, boolean_spheres, centred_disc, hs_conductivity, perrins


def k(value):
    return Material(conductivity=value)


@pytest.mark.parametrize("method", ["fft", "fe"])
@pytest.mark.parametrize("dim", [2, 3])
def test_laminate_arithmetic_and_harmonic_means(method, dim):
    """Layers normal to x: k_xx = harmonic mean, k_yy = k_zz = arithmetic mean (Wiener
    1912); pixel-aligned layers are exact for the bilinear/trilinear elements: 1e-8.
    One layer is a pore, so k_xx = 0."""
    n = 12
    labels = np.zeros((n,) * dim, dtype=int)
    labels[3:7] = 1
    labels[9:11] = 2
    fractions = np.array([6, 4, 2]) / n
    values = np.array([2.0, 7.0, 0.5])
    r = conductivity(labels, {i: k(v) for i, v in enumerate(values)}, method=method, tol=1e-12)
    expected = np.diag([1.0 / np.sum(fractions / values)] + [fractions @ values] * (dim - 1))
    assert np.allclose(r.tensor, expected, rtol=1e-8, atol=1e-10)
    labels[0] = 3
    r = conductivity(labels, {0: k(2.0), 1: k(7.0), 2: k(0.5), 3: PORE}, method=method,
                     tol=1e-12)
    assert abs(r.tensor[0, 0]) < 1e-10
    fractions = np.array([5, 4, 2, 1]) / n
    assert np.isclose(r.tensor[1, 1], fractions @ [2.0, 7.0, 0.5, 0.0], rtol=1e-8)


@pytest.mark.parametrize("f", [0.3, 0.5])
@pytest.mark.parametrize("contrast", [10.0, 0.1])
def test_square_array_of_discs_256(f, contrast):
    """Square array of discs, k*/k_m of Perrins, McKenzie & McPhedran, Proc. R. Soc.
    Lond. A 369 (1979) 207; 256² cell, pixel fraction used: within 4e-3 (pixelated
    boundary; the 512² test below is tighter)."""
    labels = centred_disc(256, f)
    r = conductivity(labels, {0: k(1.0), 1: k(contrast)})
    assert np.isclose(r.tensor[0, 0], perrins(labels.mean(), 1.0, contrast), rtol=4e-3)
    assert np.isclose(r.tensor[0, 0], r.tensor[1, 1], rtol=1e-6)


@pytest.mark.slow
@pytest.mark.parametrize("f", [0.3, 0.5])
@pytest.mark.parametrize("contrast", [10.0, 0.1])
def test_square_array_of_discs_512(f, contrast):
    """Perrins, McKenzie & McPhedran (1979) on a 512² cell within 3e-3 (issue 3)."""
    labels = centred_disc(512, f)
    r = conductivity(labels, {0: k(1.0), 1: k(contrast)})
    assert np.isclose(r.tensor[0, 0], perrins(labels.mean(), 1.0, contrast), rtol=3e-3)


@pytest.mark.parametrize("contrast", [10.0, 0.1])
def test_random_2d_inside_hashin_shtrikman(contrast):
    """Overlapping discs (statistically isotropic): mean conductivity inside the 2D
    Hashin–Shtrikman bounds (Hashin & Shtrikman 1962, 2D form in CHECKS.md)."""
    labels = boolean_spheres(192, 60, 9.0, seed=1, dim=2)
    r = conductivity(labels, {0: k(1.0), 1: k(contrast)})
    lo, hi = hs_conductivity(1.0, contrast, labels.mean(), 2)
    assert lo < r.mean() < hi
    assert r.anisotropy() < 0.05


@pytest.mark.parametrize("contrast", [10.0, 0.1])
def test_random_3d_inside_hashin_shtrikman(contrast):
    """Overlapping spheres: mean conductivity inside the 3D Hashin–Shtrikman bounds
    (Hashin & Shtrikman, J. Appl. Phys. 33 (1962) 3125)."""
    labels = boolean_spheres(40, 40, 5.0, seed=2)
    r = conductivity(labels, {0: k(1.0), 1: k(contrast)})
    lo, hi = hs_conductivity(1.0, contrast, labels.mean(), 3)
    assert lo < r.mean() < hi


def test_symmetry_with_anisotropic_phases():
    """The effective tensor of symmetric phase tensors is symmetric (reciprocity; Milton,
    The Theory of Composites, 2002, sec. 12): to the solver tolerance."""
    rng = np.random.default_rng(3)
    tensors = []
    for _ in range(3):
        a = rng.normal(size=(3, 3))
        tensors.append(a @ a.T + np.eye(3))
    labels = blobs((20, 18, 16), [0.4, 0.3, 0.3], 1.5, seed=3)
    r = conductivity(labels, {i: k(t) for i, t in enumerate(tensors)}, tol=1e-10)
    assert np.allclose(r.tensor, r.tensor.T, rtol=0, atol=1e-8 * np.abs(r.tensor).max())
    assert np.all(np.linalg.eigvalsh(r.tensor) > 0)


def test_rotation_permutes_the_tensor():
    """A 90° rotation of the image rotates the tensor, K' = R K Rᵀ (objectivity; common
    practice, no source); the node lattice maps onto itself, so exactly (to tolerance)."""
    labels = blobs((48, 40), [0.5, 0.3, 0.2], 2.5, seed=4)
    m = {0: k(1.0), 1: k(15.0), 2: PORE}
    a = conductivity(labels, m, tol=1e-10).tensor
    b = conductivity(np.rot90(labels), m, tol=1e-10).tensor
    R = np.array([[0.0, -1.0], [1.0, 0.0]])
    assert np.allclose(b, R @ a @ R.T, atol=1e-8 * np.abs(a).max())


@pytest.mark.parametrize("method", ["fft", "fe", "ms"])
def test_uniform_image_returns_the_phase_tensor(method):
    """A single phase is its own effective medium (common practice, no source)."""
    t = np.array([[3.0, 0.5, 0.0], [0.5, 2.0, 0.1], [0.0, 0.1, 1.0]])
    r = conductivity(np.full((6, 5, 4), 7), {7: k(t)}, method=method)
    assert np.allclose(r.tensor, t, rtol=1e-12)


def test_contrast_1e6_and_pores_converge():
    """Contrast 10⁶ between solid phases and 10 % pores: fft and fe converge and agree
    (robustness of CG on the pixel-element system; Leuschner & Fritzen 2018). At this
    contrast the ℓ2 residual is dominated by the conductive phase, so agreement to 1e-5
    needs tol = 1e-10 (1e-8 gives 2e-5, measured)."""
    labels = blobs((96, 96), [0.55, 0.35, 0.1], 2.0, seed=5)
    m = {0: k(1.0), 1: k(1e6), 2: PORE}
    a = conductivity(labels, m, method="fft", tol=1e-10)
    b = conductivity(labels, m, method="fe", tol=1e-10)
    assert a.converged and b.converged
    assert np.allclose(a.tensor, b.tensor, rtol=1e-5, atol=1e-5 * np.abs(b.tensor).max())


def test_fields_average_to_the_tensor():
    """⟨q⟩ of the kept field is the tensor column (solved tightly: the tensor is the
    energy form, whose off-diagonal entries differ from the mean flux by the solver
    error); |q| is zero in pores and the gradient is NaN there (common practice, no
    source)."""
    labels = blobs((40, 36), [0.5, 0.3, 0.2], 2.0, seed=6)
    r = conductivity(labels, {0: k(1.0), 1: k(8.0), 2: PORE}, fields=["x"], tol=1e-12,
                     criterion="residual")
    f = r.fields
    assert f.loads == ("x",) and f.flux.shape == (1, 2, 40, 36)
    assert np.allclose(f.flux[0].mean(axis=(1, 2)), r.tensor[:, 0], rtol=1e-10)
    q = f.flux_magnitude("x")
    assert np.all(q[labels == 2] == 0.0) and np.all(np.isnan(f.gradient[0][:, labels == 2]))
    with pytest.raises(InputError, match="fields=True"):
        f.flux_magnitude("y")


def test_in_plane_block_of_a_3x3_tensor_on_a_2d_image():
    """A 3×3 phase tensor on a 2D section uses its x–y block (common practice)."""
    t = np.diag([1.0, 2.0, 9.0])
    r = conductivity(np.zeros((4, 4), int), {0: k(t)})
    assert np.allclose(r.tensor, t[:2, :2])


def test_bad_input_raises():
    """Bad input names the problem (polisect rules)."""
    with pytest.raises(InputError, match="no material"):
        conductivity(np.array([[0, 1], [1, 0]]), {0: k(1.0)})
    with pytest.raises(InputError, match="method"):
        conductivity(np.zeros((4, 4), int), {0: k(1.0)}, method="spectral")
    with pytest.raises(InputError, match="tolerance"):
        conductivity(np.zeros((4, 4), int), {0: k(1.0)}, tol=0.0)
    with pytest.raises(InputError, match="fft"):
        conductivity(np.array([[0, 1], [1, 0]]), {0: k(1.0), 1: PORE}, method="ms")
    with pytest.raises(InputError, match="conductivity"):
        conductivity(np.zeros((4, 4), int), {0: Material(youngs_modulus=1.0, poisson_ratio=0.2)})
    with pytest.raises(InputError, match="2D or 3D"):
        conductivity(np.zeros(4, int), {0: k(1.0)})
