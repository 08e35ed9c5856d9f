"""The Moulinec–Suquet basic scheme `ms`: a different discretization (pixel-centre strains,
continuous Green operator), so it agrees with `fft` to discretization accuracy."""

import numpy as np
import pytest

from polisect import InputError, Material
from polisect.properties.solve import conductivity, elasticity, expansion
from solve_cases import PORE, boolean_spheres


def two_phase(contrast):
    return {0: Material(conductivity=1.0, youngs_modulus=70.0, poisson_ratio=0.3, expansion=2e-5),
            1: Material(conductivity=contrast, youngs_modulus=70.0 * contrast, poisson_ratio=0.2,
                        expansion=5e-6)}


def rel(a, b):
    return np.abs(a - b).max() / np.abs(a).max()


def test_agrees_with_fft_2d():
    """fft and ms within 2 % without pores (issue 3): 128² overlapping discs, radius 10
    px, contrast 10; conductivity, plane-strain stiffness and expansion (1.4 % measured)."""
    labels = boolean_spheres(128, 40, 10.0, seed=1, dim=2)
    m = two_phase(10.0)
    assert rel(conductivity(labels, m, method="fft").tensor,
               conductivity(labels, m, method="ms").tensor) < 0.02
    ea = elasticity(labels, m, plane="plane-strain", method="fft")
    eb = elasticity(labels, m, plane="plane-strain", method="ms")
    assert rel(ea.stiffness, eb.stiffness) < 0.02
    xa = expansion(labels, m, plane="plane-strain", method="fft", stiffness=ea)
    xb = expansion(labels, m, plane="plane-strain", method="ms", stiffness=eb)
    assert rel(xa.tensor, xb.tensor) < 0.02


def test_agrees_with_fft_3d():
    """fft and ms within 2 % on 32³ overlapping spheres (radius 5 voxels, contrast 5):
    conductivity and stiffness (1.6 % measured; issue 3)."""
    labels = boolean_spheres(32, 15, 5.0, seed=2)
    m = two_phase(5.0)
    assert rel(conductivity(labels, m, method="fft").tensor,
               conductivity(labels, m, method="ms").tensor) < 0.02
    assert rel(elasticity(labels, m, method="fft").stiffness,
               elasticity(labels, m, method="ms").stiffness) < 0.02


def test_laminate_is_exact():
    """Layers are exact for the basic scheme too: harmonic and arithmetic means (Wiener
    1912; Moulinec & Suquet, CMAME 157 (1998) 69), to the tolerance."""
    labels = np.zeros((16, 16), int)
    labels[:5] = 1
    r = conductivity(labels, two_phase(10.0), method="ms", tol=1e-10)
    f = 5 / 16
    assert np.allclose(np.diag(r.tensor), [1 / ((1 - f) + f / 10), (1 - f) + 10 * f], rtol=1e-9)


def test_convergence_history_and_uniform_image():
    """The equilibrium error decreases to the tolerance; a uniform image needs no
    iteration (Moulinec & Suquet 1998, convergence test)."""
    labels = boolean_spheres(48, 10, 6.0, seed=3, dim=2)
    r = conductivity(labels, two_phase(10.0), method="ms")
    h = r.residuals[0]
    assert r.converged and h[-1] <= 1e-6 < h[0] and h[-1] < h[len(h) // 2]
    u = conductivity(np.zeros((8, 8), int), two_phase(10.0), method="ms")
    assert u.iterations == 0


def test_refuses_pores_naming_fft():
    """A zero-property phase makes the basic scheme diverge: refused, naming 'fft'
    (issue 3)."""
    labels = np.eye(6, dtype=int)
    with pytest.raises(InputError, match="'fft'"):
        conductivity(labels, {0: Material(conductivity=1.0), 1: PORE}, method="ms")
    with pytest.raises(InputError, match="'fft'"):
        elasticity(labels, {0: Material(youngs_modulus=1.0, poisson_ratio=0.2), 1: PORE},
                   method="ms")
