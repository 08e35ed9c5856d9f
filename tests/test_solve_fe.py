"""The assembled solver `fe`: against a direct sparse solve and against `fft` (the same
discrete equations), with pores, islands and hinges."""

import numpy as np
import pytest
import scipy.sparse.linalg as spla

from polisect import Material
from polisect.properties.solve import conductivity, elasticity
from polisect.properties.solve.cell import Cell, Load, Solution
from polisect.properties.solve.conductivity import solve_scalar
from polisect.properties.solve.fe import AMGSolver, pinned_dofs
from polisect.properties.solve import grid
from solve_cases import PORE, blobs


def three_phase(shape, seed, sigma=2.0):
    """Matrix, stiff/conductive particles and 10 % pores."""
    return blobs(shape, [0.6, 0.3, 0.1], sigma, seed)


MATERIALS = {0: Material(conductivity=1.0, youngs_modulus=70.0, poisson_ratio=0.33),
             1: Material(conductivity=20.0, youngs_modulus=400.0, poisson_ratio=0.2),
             2: PORE}


def rel(a, b):
    return np.abs(a - b).max() / np.abs(b).max()


def direct(cell: Cell, load: Load) -> np.ndarray:
    """Mean flux from scipy.sparse.linalg.spsolve on the reduced assembled system."""
    solver = AMGSolver(cell, 1e-12, 10)
    x = spla.spsolve(solver.A.tocsc(), solver.load_vector(load)[solver.kept] * solver.free)
    u = np.zeros(cell.labels.size * cell.ncomp)
    u[solver.kept] = x
    u = np.moveaxis(u.reshape(cell.shape + (cell.ncomp,)), -1, 0)
    g = grid.centre_gradient(u, load.E)
    s = Solution(grid.phase_means(cell.labels, g, cell.n_phases), 0, np.zeros(1), True)
    return s.mean_flux(cell, load)


@pytest.mark.parametrize("method", ["fft", "fe"])
def test_conductivity_matches_direct_solve(method):
    """fft and fe against scipy.sparse.linalg.spsolve on a 16² three-phase image with
    pores, to 1e-8 (CHECKS.md: direct-solver reference)."""
    labels = three_phase((16, 16), seed=1, sigma=1.0)
    k = np.array([np.eye(2) * m.conductivity for m in MATERIALS.values()])
    tensor, _ = solve_scalar(labels.astype(np.int32), k, method, 1e-12, None, [False, False])
    cell = Cell(labels.astype(np.int32), k.reshape(3, 1, 2, 1, 2))
    reference = np.column_stack([direct(cell, Load(np.eye(2)[i][None]))[0] for i in range(2)])
    assert rel(tensor, reference) < 1e-8


@pytest.mark.parametrize("method", ["fft", "fe"])
def test_plane_strain_stiffness_matches_direct_solve(method):
    """Plane-strain stiffness from fft and fe against spsolve on 16² with pores, 1e-8
    (CHECKS.md: direct-solver reference)."""
    labels = three_phase((16, 16), seed=2, sigma=1.0)
    r = elasticity(labels, MATERIALS, plane="plane-strain", method=method, tol=1e-12)
    from polisect.properties.solve.elasticity import elastic_cell
    from polisect.properties.solve.phases import elastic_phases, phase_image
    image = phase_image(labels, MATERIALS)
    cell = elastic_cell(image, elastic_phases(image, "plane-strain", thermal=False))
    from polisect.core import tensors as T
    reference = np.column_stack([T.stress_to_voigt(direct(cell, Load(T.voigt_to_strain(e))))
                                 for e in np.eye(3)])
    assert rel(r.stiffness, reference) < 1e-8


def test_fft_and_fe_agree_2d_with_pores():
    """fft and fe solve the same equations: conductivity and plane-strain stiffness of a
    random 128² three-phase image with 10 % pores agree to 1e-5 (DESIGN.md, solve/)."""
    labels = three_phase((128, 128), seed=3)
    k_fft = conductivity(labels, MATERIALS, method="fft")
    k_fe = conductivity(labels, MATERIALS, method="fe")
    assert rel(k_fft.tensor, k_fe.tensor) < 1e-5
    c_fft = elasticity(labels, MATERIALS, plane="plane-strain", method="fft")
    c_fe = elasticity(labels, MATERIALS, plane="plane-strain", method="fe")
    assert rel(c_fft.stiffness, c_fe.stiffness) < 1e-5


def test_fft_and_fe_agree_3d_with_pores():
    """As above on a 32³ three-phase voxel image with pores, conductivity; stiffness on
    16³ (the 32³ stiffness is the slow test below) (DESIGN.md, solve/)."""
    labels = three_phase((32, 32, 32), seed=4, sigma=1.5)
    k_fft = conductivity(labels, MATERIALS, method="fft")
    k_fe = conductivity(labels, MATERIALS, method="fe")
    assert rel(k_fft.tensor, k_fe.tensor) < 1e-5
    small = three_phase((16, 16, 16), seed=5, sigma=1.0)
    c_fft = elasticity(small, MATERIALS, method="fft")
    c_fe = elasticity(small, MATERIALS, method="fe")
    assert rel(c_fft.stiffness, c_fe.stiffness) < 1e-5


@pytest.mark.slow
def test_fft_and_fe_agree_3d_stiffness_32():
    """3D stiffness of a 32³ three-phase image with pores: fft and fe to 1e-5 (DESIGN.md)."""
    labels = three_phase((32, 32, 32), seed=4, sigma=1.5)
    c_fft = elasticity(labels, MATERIALS, method="fft")
    c_fe = elasticity(labels, MATERIALS, method="fe")
    assert rel(c_fft.stiffness, c_fe.stiffness) < 1e-5


def test_pins_make_islands_nonsingular():
    """An island floating in a pore, a strip and the main solid: after pinning, the
    reduced plane-strain matrix is positive definite (smallest eigenvalue > 0) and the
    removed nodes are exactly those touching only pores (common practice, no source)."""
    labels = np.zeros((12, 12), dtype=int)
    labels[4:9, 4:9] = 2                  # a pore ...
    labels[6, 6] = 0                      # ... with a one-pixel island inside
    labels[0, :] = 2                      # a pore layer: the solid is one strip
    image_materials = {0: MATERIALS[0], 2: PORE}
    from polisect.properties.solve.elasticity import elastic_cell
    from polisect.properties.solve.phases import elastic_phases, phase_image
    image = phase_image(labels, image_materials)
    cell = elastic_cell(image, elastic_phases(image, "plane-strain", thermal=False))
    solver = AMGSolver(cell, 1e-10, 100)
    assert np.linalg.eigvalsh(solver.A.toarray()).min() > 1e-8 * abs(solver.A).max()
    # island: 2 translations + 1 rotation pinned; strip: 2 translations
    assert len(pinned_dofs(cell.solid, 2)) == 5
    r_fe = elasticity(labels, image_materials, plane="plane-strain", method="fe", tol=1e-10)
    r_fft = elasticity(labels, image_materials, plane="plane-strain", method="fft", tol=1e-10)
    assert rel(r_fe.stiffness, r_fft.stiffness) < 1e-7
    assert np.allclose(r_fe.stiffness[0], 0.0, atol=1e-8)   # no load path across the pore layer


def test_hinged_pixel_converges():
    """A solid pixel attached to the matrix by one corner node (a hinge, a mechanism the
    pins do not remove) still converges, with the same result in fft and fe (CG on a
    consistent semi-definite system; Kaasschieter, J. Comput. Appl. Math. 24 (1988) 265)."""
    labels = np.zeros((10, 10), dtype=int)
    labels[2:5, 2:5] = 2
    labels[2, 2] = 0
    labels[3, 3] = 0                      # shares only node (3, 3) with pixel (2, 2)
    m = {0: MATERIALS[0], 2: PORE}
    r_fe = elasticity(labels, m, plane="plane-strain", method="fe", tol=1e-10)
    r_fft = elasticity(labels, m, plane="plane-strain", method="fft", tol=1e-10)
    assert r_fe.converged and r_fft.converged
    assert rel(r_fe.stiffness, r_fft.stiffness) < 1e-7
