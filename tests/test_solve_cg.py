"""The energy stopping rule of CG and the energy-form tensors (polisect.properties.solve.cg)."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from polisect import Material
from polisect.properties.solve import conductivity, elasticity
from polisect.properties.solve.cg import MIN_DELAY, pcg, relative_energy_error
from solve_cases import PORE, blobs

MATRIX = Material(conductivity=1.0, youngs_modulus=70.0, poisson_ratio=0.33)
STIFF = Material(conductivity=1e3, youngs_modulus=410.0, poisson_ratio=0.14)
RIGID = Material(conductivity=1e6, youngs_modulus=70e6, poisson_ratio=0.2)


def deviation(got, ref):
    """Largest |ΔT_ij| / √(T_ii T_jj) (the scale of the stated bound)."""
    d = np.sqrt(np.abs(np.outer(np.diag(ref), np.diag(ref))))
    return float(np.max(np.abs(got - ref) / d))


HARD = [
    ("2D conduction, pores, contrast 1e3", (96, 96), {0: MATRIX, 1: STIFF, 2: PORE}, "k"),
    ("2D conduction, pores, contrast 1e6", (96, 96), {0: MATRIX, 1: RIGID, 2: PORE}, "k"),
    ("2D GPS stiffness, pores, contrast 1e6", (64, 64), {0: MATRIX, 1: RIGID, 2: PORE}, "C"),
    ("3D conduction, pores, contrast 1e6", (20, 20, 20), {0: MATRIX, 1: RIGID, 2: PORE}, "k"),
    ("3D stiffness, pores, contrast 1e3", (16, 16, 16), {0: MATRIX, 1: STIFF, 2: PORE}, "C"),
]


def effective(labels, mats, kind, **kw):
    if kind == "k":
        return conductivity(labels, mats, **kw).tensor
    r = elasticity(labels, mats, **kw)
    return r.stiffness if r.prismatic_stiffness is None else r.prismatic_stiffness


@pytest.mark.parametrize("name,shape,mats,kind", HARD, ids=[h[0] for h in HARD])
def test_default_tolerance_is_within_1e4_of_tight_solves(name, shape, mats, kind):
    """Every effective entry at the default tolerance is within 1e-4·√(T_ii T_jj) of a
    solve to a relative residual of 1e-10, on images with pores and contrast up to 1e6,
    2D and 3D (the stated target of the energy rule, Strakoš & Tichý 2002, ETNA 13, 56)."""
    labels = blobs(shape, [0.6, 0.3, 0.1], 1.5, seed=3)
    ref = effective(labels, mats, kind, tol=1e-10, criterion="residual", maxiter=20000)
    got = effective(labels, mats, kind)
    assert deviation(got, ref) < 1e-4


def test_energy_rule_stops_earlier_than_residual_rule_on_elasticity():
    """At the same tolerance the energy rule needs fewer iterations than the residual rule
    on a porous two-phase image and is at least as accurate in the effective stiffness
    (Strakoš & Tichý 2002: the energy error is the square of the A-norm error)."""
    labels = blobs((64, 64), [0.6, 0.3, 0.1], 1.5, seed=4)
    mats = {0: MATRIX, 1: STIFF, 2: PORE}
    ref = elasticity(labels, mats, plane="plane-strain", tol=1e-10, criterion="residual")
    energy = elasticity(labels, mats, plane="plane-strain")
    residual = elasticity(labels, mats, plane="plane-strain", criterion="residual")
    assert energy.iterations < residual.iterations
    assert deviation(energy.stiffness, ref.stiffness) < 1e-5


def test_energy_form_bounds_off_diagonal_error():
    """Loosely solved (tol 1e-3), the energy-form off-diagonal entries stay within
    √(ΔT_ii ΔT_jj) of the tight ones, the bound of the energy form (Cauchy–Schwarz in the
    A inner product; common practice, no source)."""
    labels = blobs((64, 48), [0.5, 0.5], 2.0, seed=8)
    mats = {0: MATRIX, 1: STIFF}
    ref = conductivity(labels, mats, tol=1e-11, criterion="residual").tensor
    loose = conductivity(labels, mats, tol=1e-3).tensor
    err = np.abs(loose - ref)
    assert np.all(np.diag(loose) >= np.diag(ref) - 1e-12 * np.diag(ref))   # upper bounds
    assert err[0, 1] <= np.sqrt(err[0, 0] * err[1, 1]) * (1 + 1e-6) + 1e-12


def spd_system(n, seed):
    """A random symmetric positive definite system, its operator and a Jacobi
    preconditioner in `pcg`'s calling form, and the generator (for more draws)."""
    rng = np.random.default_rng(seed)
    Q = rng.standard_normal((n, n))
    A = Q @ Q.T + n * np.eye(n)
    b = rng.standard_normal(n)

    def apply_A(x, out):
        out[:] = A @ x
        return float(x @ out)

    def apply_M(r, out):
        out[:] = r / np.diag(A)
        return float(r @ out)

    return A, b, apply_A, apply_M, rng


@settings(max_examples=20, deadline=None)
@given(st.integers(4, 30), st.integers(0, 10_000))
def test_cg_energy_identity(n, seed):
    """‖x_k‖²_A = Σ α_i γ_i = bᵀx_k for CG from zero on a random SPD system (Strakoš &
    Tichý 2002, eq. 3.3; Hestenes & Stiefel 1952), so S − bᵀx_k is the effective entry of
    the iterate."""
    A, b, apply_A, apply_M, _ = spd_system(n, seed)
    seen = {}
    S = 10.0 * float(b @ np.linalg.solve(A, b))
    x, info = pcg(apply_A, apply_M, b, 1e-8, 3 * n, energy=S)
    seen["energy"] = float(x @ A @ x)
    assert np.isclose(b @ x, seen["energy"], rtol=1e-8)
    assert info.converged and info.energy_error <= 1e-8
    exact = float(b @ np.linalg.solve(A, b))
    assert (exact - seen["energy"]) <= 1e-7 * (S - exact)


def test_relative_energy_error_window():
    """The estimate is the window sum over max(5, k/3) steps divided by S − ‖x_k‖²_A, and
    a vanishing entry is measured against 1e-12 S (module notes)."""
    norm = list(np.cumsum([0.0] + [2.0 ** -i for i in range(30)]))
    k = 30
    d = max(5, k // 3)
    assert np.isclose(relative_energy_error(norm, 10.0),
                      (norm[k] - norm[k - d]) / (10.0 - norm[k]))
    assert relative_energy_error(norm[:4], 10.0) is None
    assert np.isclose(relative_energy_error(norm, norm[-1]),
                      (norm[k] - norm[k - d]) / (1e-12 * norm[-1]))


@settings(max_examples=20, deadline=None)
@given(st.integers(4, 30), st.integers(0, 10_000))
def test_warm_start_energy_functional(n, seed):
    """From a start x₀, J(x) = S − bᵀx − xᵀr exceeds J(x*) = S − bᵀx* by exactly
    ‖x − x*‖²_A, and the warm-started iterate reaches the cold one's accuracy (the energy
    identity behind Strakoš & Tichý 2002, ETNA 13, 56, eq. 3.3, applied to the correction)."""
    A, b, apply_A, apply_M, rng = spd_system(n, seed)
    exact = np.linalg.solve(A, b)
    S = 10.0 * float(b @ exact)
    x0 = exact + 0.3 * rng.standard_normal(n)
    r = np.empty(n)
    x, info = pcg(apply_A, apply_M, b, 1e-8, 3 * n, energy=S, residual=r, x0=x0)
    assert np.allclose(r, b - A @ x, atol=1e-10 * np.abs(b).max())
    J = S - b @ x - x @ r
    e = x - exact
    assert np.isclose(J - (S - b @ exact), e @ A @ e, rtol=1e-6, atol=1e-12 * S)
    assert info.converged and (J - (S - b @ exact)) <= 1e-7 * (S - b @ exact)


def test_exact_start_takes_no_iteration():
    """Started from the exact solution (float64, residual at rounding level) CG returns it
    without iterating (cg module notes: EXACT_START); from a random start it iterates
    (Hestenes & Stiefel 1952: CG on the correction)."""
    A, b, apply_A, apply_M, _ = spd_system(20, 5)
    exact = np.linalg.solve(A, b)
    S = 10.0 * float(b @ exact)
    x, info = pcg(apply_A, apply_M, b, 1e-8, 100, energy=S, x0=exact)
    assert info.iterations == 0 and np.array_equal(x, exact)
    _, cold = pcg(apply_A, apply_M, b, 1e-8, 100, energy=S)
    assert cold.iterations > 5


WARM = [
    ("conduction fft", "k", "fft"), ("conduction fe", "k", "fe"),
    ("GPS stiffness fft", "C", "fft"), ("GPS stiffness fe", "C", "fe"),
]


@pytest.mark.parametrize("name,kind,method", WARM, ids=[w[0] for w in WARM])
def test_warm_start_gives_the_cold_answer_in_fewer_iterations(name, kind, method):
    """A solve started from another property set's fluctuations (a temperature change: every
    phase softer by 10–40 %) gives the effective tensor of a tight solve to the tolerance,
    like a cold solve, in fewer iterations; started from its own kept (float32) solution it
    stops at the first estimate, MIN_DELAY iterations per load case (energy identity of the
    correction, Strakoš & Tichý 2002, ETNA 13, 56; cg module notes)."""
    labels = blobs((64, 48), [0.6, 0.3, 0.1], 1.5, seed=11)
    cold_mats = {0: MATRIX, 1: STIFF, 2: PORE}
    hot_mats = {0: Material(conductivity=0.7, youngs_modulus=50.0, poisson_ratio=0.34),
                1: Material(conductivity=600.0, youngs_modulus=370.0, poisson_ratio=0.15),
                2: PORE}
    solve = conductivity if kind == "k" else elasticity
    before = solve(labels, cold_mats, method=method, keep_fluctuations=True)
    ref = effective(labels, hot_mats, kind, method=method, tol=1e-11, criterion="residual",
                    maxiter=20000)
    cold = solve(labels, hot_mats, method=method)
    warm = solve(labels, hot_mats, method=method, start=before, keep_fluctuations=True)
    again = solve(labels, hot_mats, method=method, start=warm)

    def tensor(r):
        return r.tensor if kind == "k" else r.prismatic_stiffness

    for r in (cold, warm, again):
        assert deviation(tensor(r), ref) < 1e-5
        assert np.all(np.diag(tensor(r)) >= np.diag(ref) * (1 - 1e-9))    # J is an upper bound
    assert warm.iterations < cold.iterations
    loads = len(warm.residuals)
    assert again.iterations <= MIN_DELAY * loads < warm.iterations


def test_warm_start_of_another_grid_is_cold():
    """Fluctuations of another grid are not used: the solve runs cold and gives the cold
    answer (common practice, no source)."""
    small = blobs((32, 32), [0.5, 0.5], 1.5, seed=2)
    labels = blobs((48, 32), [0.5, 0.5], 1.5, seed=2)
    mats = {0: MATRIX, 1: STIFF}
    other = conductivity(small, mats, keep_fluctuations=True)
    cold = conductivity(labels, mats)
    warm = conductivity(labels, mats, start=other)
    assert warm.iterations == cold.iterations
    assert np.array_equal(warm.tensor, cold.tensor)
