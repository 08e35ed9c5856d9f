"""The discretization: the matrix-free mode form (numba kernels), the Gauss-point assembly
and the Fourier symbol must be one and the same operator."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from polisect.core import tensors as T
from polisect.properties.solve import grid
from polisect.properties.solve.cell import Cell, Load
from polisect.properties.solve.fe import AMGSolver, assemble, element_matrices
from polisect.properties.solve.fft import FourierSolver

CASES = [((6, 5), 1), ((5, 7), 2), ((4, 5, 3), 1), ((3, 4, 5), 3), ((2, 3), 2), ((2, 2, 3), 3)]


def random_cell(shape, nc, seed, pore=True):
    """Three phases with random anisotropic tensors; phase 2 a pore when *pore*."""
    rng = np.random.default_rng(seed)
    d = len(shape)
    L = np.zeros((3, nc, d, nc, d))
    for p in range(3):
        if nc == 1:
            A = rng.normal(size=(d, d))
            L[p, 0, :, 0, :] = A @ A.T + d * np.eye(d)
        else:
            n = len(T.VOIGT_PAIRS[d])
            A = rng.normal(size=(n, n))
            L[p] = T.voigt_to_tensor(A @ A.T + n * np.eye(n))
    if pore:
        L[2] = 0.0
    return Cell(rng.integers(0, 3, shape).astype(np.int32), L)


@pytest.mark.parametrize("shape,nc", CASES)
def test_kernel_equals_gauss_point_assembly(shape, nc):
    """Mode form (kernels) and Σ_q w_q B_qᵀ L B_q assembly apply the same matrix: two
    implementations of full 2^d-point Gauss integration of bilinear/trilinear elements
    (Hughes, The Finite Element Method, 2000, ch. 3), including pores and odd sizes."""
    cell = random_cell(shape, nc, seed=sum(shape) + nc)
    u = np.random.default_rng(1).normal(size=(nc,) + shape)
    out = np.empty_like(u)
    energy = FourierSolver(cell, 1e-6, 10).apply(u.ravel(), out.ravel())
    A = assemble(cell.labels, element_matrices(cell.L)[0])
    Au = np.moveaxis((A @ np.moveaxis(u, 0, -1).ravel()).reshape(shape + (nc,)), -1, 0)
    assert np.allclose(out, Au, rtol=0, atol=1e-12 * np.abs(Au).max())
    assert np.isclose(energy, np.sum(u * Au), rtol=1e-12)


@pytest.mark.parametrize("shape,nc", CASES)
def test_load_vectors_agree(shape, nc):
    """Right-hand side −Σ_e ∫∇vᵀσ₀ from the mode form and from the Gauss-point element
    vectors: common practice (no source)."""
    cell = random_cell(shape, nc, seed=3, pore=False)
    E = np.random.default_rng(2).normal(size=(nc, len(shape)))
    E = 0.5 * (E + E.T) if nc > 1 else E
    load = Load(E)
    b_fft = grid.load_vector(cell.labels, load.sigma0(cell))
    b_fe = AMGSolver(cell, 1e-6, 10).load_vector(load).reshape(shape + (nc,))
    assert np.allclose(b_fft, np.moveaxis(b_fe, -1, 0), atol=1e-12)


@pytest.mark.parametrize("shape,nc", [((6, 5), 1), ((5, 4), 2), ((4, 3, 5), 3)])
def test_reference_symbol_is_the_homogeneous_operator(shape, nc):
    """A homogeneous operator is diagonal in Fourier space with the symbol of
    `grid.reference_symbol` (Leuschner & Fritzen, Comput. Mech. 62 (2018) 359)."""
    cell = random_cell(shape, nc, seed=5, pore=False)
    cell0 = Cell(np.zeros(shape, np.int32), cell.L[:1])
    u = np.random.default_rng(4).normal(size=(nc,) + shape)
    out = np.empty_like(u)
    FourierSolver(cell0, 1e-6, 10).apply(u.ravel(), out.ravel())
    K0 = grid.reference_symbol(cell.L[0], shape)
    axes = tuple(range(len(shape)))
    uh = np.array([np.fft.rfftn(c, axes=axes) for c in u])
    vh = np.einsum("ab...,b...->a...", K0, uh)
    v = np.array([np.fft.irfftn(c, s=shape, axes=axes) for c in vh])
    assert np.allclose(v, out, atol=1e-12 * np.abs(out).max())


def test_element_matrix_annihilates_translations():
    """Rigid translations carry no energy: rows of every element matrix sum to zero per
    component (common practice, no source)."""
    for nc, d in [(1, 2), (2, 2), (1, 3), (3, 3)]:
        K = element_matrices(random_cell((2,) * d, nc, seed=7).L)[0]
        for a in range(nc):
            t = np.zeros(K.shape[1])
            t[a::nc] = 1.0
            assert np.allclose(K @ t, 0.0, atol=1e-12)


@settings(max_examples=20, deadline=None)
@given(st.integers(0, 10_000), st.sampled_from(CASES))
def test_operator_symmetric_positive_semidefinite(seed, case):
    """uᵀAv = vᵀAu and uᵀAu ≥ 0 (energy form of symmetric tensors): common practice."""
    shape, nc = case
    cell = random_cell(shape, nc, seed)
    rng = np.random.default_rng(seed)
    u, v = rng.normal(size=(2, nc * np.prod(shape)))
    solver = FourierSolver(cell, 1e-6, 10)
    Au, Av = np.empty_like(u), np.empty_like(v)
    solver.apply(u, Au)
    solver.apply(v, Av)
    assert np.isclose(u @ Av, v @ Au, rtol=1e-10, atol=1e-10)
    assert u @ Au >= -1e-10


def test_active_nodes():
    """A node floats when all 2^d pixels around it are pores: common practice."""
    solid = np.ones((4, 4), bool)
    solid[1:3, 1:3] = False
    active = grid.active_nodes(solid)
    assert not active[2, 2] and active.sum() == 15


@pytest.mark.parametrize("shape,nc", [((7, 5), 2), ((5, 4, 3), 3)])
def test_kernel_independent_of_thread_blocks(shape, nc):
    """The blocked kernels give the same A u for any number of plane blocks, including
    one plane per block (seams everywhere): common practice (no source)."""
    from polisect.properties.solve import kernels
    cell = random_cell(shape, nc, seed=11)
    solver = FourierSolver(cell, 1e-6, 10)
    u = np.random.default_rng(3).normal(size=(nc,) + shape)
    kernel = kernels.apply_2d if len(shape) == 2 else kernels.apply_3d
    results = []
    for chunks in (1, 2, 3, shape[0]):
        out = np.empty_like(u)
        energy = kernel(u, solver.labels, solver.table, solver.cid, solver.start, solver.cols,
                        out, chunks)
        results.append((out, energy))
    for out, energy in results[1:]:
        assert np.allclose(out, results[0][0], atol=1e-12) and np.isclose(energy, results[0][1])
