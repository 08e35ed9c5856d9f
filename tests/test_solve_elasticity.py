"""Effective stiffness: laminates, Hill's equal-shear result, Hashin–Shtrikman bounds,
plane modes, generalized plane strain, invariances and fields."""

import numpy as np
import pytest

from polisect import InputError, Material
from polisect.core import tensors as T
from polisect.properties.solve import conductivity, elasticity
from solve_cases import PORE, blobs, boolean_spheres, hs_elastic, iso_material, laminate

AL = Material(youngs_modulus=70.0, poisson_ratio=0.33, name="al")
SIC = Material(youngs_modulus=410.0, poisson_ratio=0.14, name="sic")
EPOXY = Material(youngs_modulus=3.5, poisson_ratio=0.35, name="epoxy")


def random_orthotropic(seed):
    """A random orthotropic stiffness (axes x, y, z): couples nothing to yz/xz."""
    rng = np.random.default_rng(seed)
    a = rng.normal(size=(3, 3))
    C = np.zeros((6, 6))
    C[:3, :3] = a @ a.T + 3 * np.eye(3)
    C[[3, 4, 5], [3, 4, 5]] = rng.uniform(1, 3, 3)
    return C


def layered(n, dim):
    labels = np.zeros((n,) * dim, dtype=int)
    labels[2:5] = 1
    labels[7:8] = 2
    return labels, np.array([6, 3, 1]) / 10


@pytest.mark.parametrize("method", ["fft", "fe"])
def test_laminate_3d(method):
    """Layers normal to x: the classical laminate stiffness (Backus, J. Geophys. Res. 67
    (1962) 4427; Postma, Geophysics 20 (1955) 780), exact for pixel-aligned layers: 1e-8.
    Phases: isotropic, isotropic, orthotropic."""
    labels, f = layered(10, 3)
    C = [T.isotropic_stiffness(70, 0.33), T.isotropic_stiffness(410, 0.14), random_orthotropic(1)]
    m = {0: AL, 1: SIC, 2: Material(stiffness=C[2])}
    r = elasticity(labels, m, method=method, tol=1e-12)
    expected, _ = laminate(C, [np.zeros(6)] * 3, f, [0, 4, 5], [1, 2, 3])
    assert np.allclose(r.stiffness, expected, rtol=1e-8, atol=1e-8 * expected.max())


@pytest.mark.parametrize("plane", ["plane-strain", "plane-stress"])
def test_laminate_plane_modes(plane):
    """2D laminate in plane strain and plane stress: the laminate formula on the
    in-plane matrices of each mode (classical laminate theory), 1e-8."""
    labels, f = layered(10, 2)
    C6 = [T.isotropic_stiffness(70, 0.33), T.isotropic_stiffness(410, 0.14), random_orthotropic(2)]
    m = {0: AL, 1: SIC, 2: Material(stiffness=C6[2])}
    C2 = [T.plane_stiffness(c, plane) for c in C6]
    r = elasticity(labels, m, plane=plane, tol=1e-12)
    expected, _ = laminate(C2, [np.zeros(3)] * 3, f, [0, 2], [1])
    assert np.allclose(r.stiffness, expected, rtol=1e-8, atol=1e-8 * expected.max())


def test_generalized_plane_strain_laminate_is_the_3d_laminate():
    """A 2D laminate solved in generalized plane strain describes the prism of the same
    layers, i.e. the 3D laminate: its prismatic stiffness (in-plane, axial and antiplane
    blocks) equals the 3D laminate formula (Backus 1962), 1e-8."""
    labels, f = layered(10, 2)
    C = [T.isotropic_stiffness(70, 0.33), T.isotropic_stiffness(410, 0.14), random_orthotropic(3)]
    m = {0: AL, 1: SIC, 2: Material(stiffness=C[2])}
    r = elasticity(labels, m, plane="generalized-plane-strain", tol=1e-12)
    expected, _ = laminate(C, [np.zeros(6)] * 3, f, [0, 4, 5], [1, 2, 3])
    assert np.allclose(r.prismatic_stiffness, expected, rtol=1e-8, atol=1e-8 * expected.max())
    S = np.linalg.inv(expected)
    idx = [0, 1, 5]
    assert np.allclose(r.stiffness, np.linalg.inv(S[np.ix_(idx, idx)]), rtol=1e-8)


def test_hill_equal_shear_moduli():
    """Equal shear moduli: 1/(K* + 4μ/3) = Σ fᵢ/(Kᵢ + 4μ/3) for any geometry (Hill,
    J. Mech. Phys. Solids 11 (1963) 357); overlapping spheres, 40³: within 1 %; the
    effective tensor is exactly isotropic."""
    G, K1, K2 = 30.0, 50.0, 200.0
    labels = boolean_spheres(40, 8, 7.5, seed=1)
    f = labels.mean()
    r = elasticity(labels, {0: iso_material(K1, G), 1: iso_material(K2, G)})
    hill = 1.0 / ((1 - f) / (K1 + 4 * G / 3) + f / (K2 + 4 * G / 3)) - 4 * G / 3
    iso = r.isotropic()
    assert abs(iso.bulk_modulus / hill - 1) < 0.01
    assert np.isclose(iso.shear_modulus, G, rtol=1e-6)
    assert r.anisotropy() < 1e-6


@pytest.mark.parametrize("dim", [2, 3])
def test_random_structures_inside_hashin_shtrikman(dim):
    """Overlapping discs/spheres, contrast 6 in E: isotropic K and G inside the
    Hashin–Shtrikman bounds (3D: Hashin & Shtrikman, J. Mech. Phys. Solids 11 (1963) 127;
    2D plane strain K₂ and G: Hashin, J. Mech. Phys. Solids 13 (1965) 119)."""
    labels = boolean_spheres(40, 25, 5.0, seed=4) if dim == 3 else \
        boolean_spheres(160, 50, 8.0, seed=4, dim=2)
    m = {0: AL, 1: SIC}
    r = elasticity(labels, m, plane="plane-strain")
    plane = None if dim == 3 else "plane-strain"
    K1, G1 = T.bulk_shear_from_E_nu(70.0, 0.33, plane)
    K2, G2 = T.bulk_shear_from_E_nu(410.0, 0.14, plane)
    (klo, khi), (glo, ghi) = hs_elastic(K1, G1, K2, G2, labels.mean(), dim)
    iso = r.isotropic()
    assert klo < iso.bulk_modulus < khi
    assert glo < iso.shear_modulus < ghi


def test_symmetry_with_anisotropic_phases_and_pores():
    """Reciprocity: the effective stiffness of phases with major symmetry is symmetric
    (Milton 2002, sec. 12), to the solver tolerance; with a pore phase."""
    rng = np.random.default_rng(5)
    mats = {}
    for p in range(2):
        a = rng.normal(size=(6, 6))
        mats[p] = Material(stiffness=a @ a.T + 6 * np.eye(6))
    mats[2] = PORE
    labels = blobs((18, 16, 14), [0.5, 0.35, 0.15], 1.5, seed=5)
    r = elasticity(labels, mats, tol=1e-10)
    assert np.allclose(r.stiffness, r.stiffness.T, atol=1e-8 * np.abs(r.stiffness).max())
    assert np.all(np.linalg.eigvalsh(0.5 * (r.stiffness + r.stiffness.T)) > 0)


def test_rotation_about_z_transforms_the_stiffness():
    """Rotating the voxel image by 90° about z rotates the tensor, C' = R★C (objectivity;
    common practice), exactly up to the tolerance."""
    labels = blobs((20, 16, 12), [0.6, 0.25, 0.15], 1.5, seed=6)
    m = {0: AL, 1: SIC, 2: PORE}
    a = elasticity(labels, m, tol=1e-10).stiffness
    b = elasticity(np.rot90(labels, axes=(0, 1)), m, tol=1e-10).stiffness
    R = np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 1.0]])
    rotated = T.tensor_to_voigt(np.einsum("ia,jb,kc,ld,abcd->ijkl", R, R, R, R,
                                          T.voigt_to_tensor(a)))
    assert np.allclose(b, rotated, atol=1e-8 * np.abs(a).max())


@pytest.mark.parametrize("plane", ["plane-strain", "plane-stress", "generalized-plane-strain"])
def test_uniform_image_returns_the_phase_stiffness(plane):
    """A single phase is its own effective medium, in each plane mode (Timoshenko &
    Goodier, Theory of Elasticity, 1970, plane strain and plane stress)."""
    C6 = random_orthotropic(7)
    r = elasticity(np.zeros((5, 6), int), {0: Material(stiffness=C6)}, plane=plane)
    if plane == "generalized-plane-strain":
        assert np.allclose(r.prismatic_stiffness, C6, rtol=1e-12)
        assert np.allclose(r.stiffness, T.plane_stiffness(C6, "plane-stress"), rtol=1e-12)
    else:
        assert np.allclose(r.stiffness, T.plane_stiffness(C6, plane), rtol=1e-12)
    r3 = elasticity(np.zeros((3, 4, 5), int), {0: Material(stiffness=C6)}, method="ms")
    assert np.allclose(r3.stiffness, C6, rtol=1e-12)


def test_fibres_axial_modulus_is_the_rule_of_mixtures():
    """Prismatic composite with equal Poisson's ratios: E_axial = Σ fᵢEᵢ and ν_axial = ν
    exactly (Hill, J. Mech. Phys. Solids 12 (1964) 199); generalized plane strain on a
    random fibre section, to solver tolerance. The antiplane block is the conduction
    problem with the shear moduli."""
    labels = boolean_spheres(64, 12, 7.0, seed=8, dim=2)
    m = {0: Material(youngs_modulus=5.0, poisson_ratio=0.3),
         1: Material(youngs_modulus=200.0, poisson_ratio=0.3)}
    r = elasticity(labels, m, plane="generalized-plane-strain", tol=1e-10)
    axial = r.axial_moduli()
    f = labels.mean()
    assert np.isclose(axial["youngs_modulus"], (1 - f) * 5.0 + f * 200.0, rtol=1e-7)
    assert np.isclose(axial["poisson_ratio"], 0.3, rtol=1e-7)
    mu = {i: Material(conductivity=mat.shear_modulus) for i, mat in m.items()}
    anti = conductivity(labels, mu, tol=1e-10).tensor
    assert np.allclose(r.prismatic_stiffness[np.ix_([4, 3], [4, 3])], anti, rtol=1e-8)
    C4 = r.load_stiffness
    assert np.allclose(C4, C4.T, atol=1e-7 * np.abs(C4).max())


def test_pores_and_high_contrast_converge():
    """Pores (10 %) and a stiffness contrast of 10³ between solids converge (fft) in every
    plane mode, in ~250 iterations per load case (~√contrast; robustness, Leuschner &
    Fritzen 2018)."""
    labels = blobs((64, 64), [0.6, 0.3, 0.1], 2.0, seed=9)
    m = {0: EPOXY, 1: Material(youngs_modulus=3.5e3, poisson_ratio=0.2), 2: PORE}
    for plane in ["plane-strain", "plane-stress", "generalized-plane-strain"]:
        r = elasticity(labels, m, plane=plane)
        assert r.converged and np.all(np.linalg.eigvalsh(r.stiffness) > 0)


def test_von_mises_fields():
    """Uniform solid under unit uniaxial mean stress: von Mises 1 in plane stress and
    generalized plane strain, √(1 − ν + ν²) in plane strain (σ_zz = ν σ_xx); the mean of
    the kept stress field is the stiffness column; strain is NaN in pores (Timoshenko &
    Goodier 1970)."""
    uniform = np.zeros((6, 6), int)
    for plane, expected in [("plane-stress", 1.0), ("generalized-plane-strain", 1.0),
                            ("plane-strain", np.sqrt(1 - 0.33 + 0.33 ** 2))]:
        r = elasticity(uniform, {0: AL}, plane=plane, fields=True)
        assert np.allclose(r.fields.von_mises_uniaxial("x"), expected, rtol=1e-9)
    labels = blobs((24, 20, 16), [0.6, 0.3, 0.1], 1.5, seed=10)
    r = elasticity(labels, {0: AL, 1: SIC, 2: PORE}, fields=["xx"], tol=1e-12,
                   criterion="residual")      # the energy form meets the mean flux
    f = r.fields
    assert np.allclose(f.stress[0].mean(axis=(1, 2, 3)), r.stiffness[:, 0], rtol=1e-10)
    assert np.all(np.isnan(f.strain[0][:, labels == 2]))
    with pytest.raises(InputError, match="fields=True"):
        f.von_mises_uniaxial("x")
    full = elasticity(labels, {0: AL, 1: SIC, 2: PORE}, fields=True).fields
    vm = full.von_mises_uniaxial("x")
    assert np.all(vm[labels == 2] == 0.0) and vm.max() > 1.0


def test_bad_input_raises():
    """Bad input names the problem (polisect rules)."""
    u = np.zeros((4, 4), int)
    with pytest.raises(InputError, match="plane"):
        elasticity(u, {0: AL}, plane="plain-strain")
    with pytest.raises(InputError, match="youngs_modulus"):
        elasticity(u, {0: Material(conductivity=1.0)})
    with pytest.raises(InputError, match="in-plane"):
        elasticity(u, {0: Material(stiffness=np.eye(3))}, plane="generalized-plane-strain")
    C = random_orthotropic(0)
    C[0, 3] = C[3, 0] = 0.5
    with pytest.raises(InputError, match="symmetry plane"):
        elasticity(u, {0: Material(stiffness=C)}, plane="generalized-plane-strain")
    with pytest.raises(InputError, match="fft"):
        elasticity(np.eye(4, dtype=int), {0: AL, 1: PORE}, method="ms")


def test_fields_kept_in_single_precision_for_the_report_map():
    """Fields stored as float32 (the report's map, half the memory) give the von Mises map
    of the float64 fields to single precision (common practice, no source: float32 carries
    about 7 significant digits), and the effective stiffness is unchanged."""
    labels = blobs((32, 24), [0.6, 0.3, 0.1], 1.5, seed=3)
    mats = {0: AL, 1: SIC, 2: PORE}
    full = elasticity(labels, mats, fields=True)
    single = elasticity(labels, mats, fields=True, field_dtype=np.float32)
    assert single.fields.strain.dtype == np.float32 and single.fields.stress.dtype == np.float32
    assert np.array_equal(single.stiffness, full.stiffness)
    a, b = full.fields.von_mises_uniaxial("x"), single.fields.von_mises_uniaxial("x")
    assert np.allclose(b, a, rtol=1e-5, atol=1e-6 * a.max())
