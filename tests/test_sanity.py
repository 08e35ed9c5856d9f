"""Tests of the physical sanity checks of solver results."""

import numpy as np
import pytest

from polisect import Material
from polisect.core import tensors
from polisect.properties.sanity import (REFUSE, WARN, check_conductivity, check_elasticity,
                                        check_expansion, check_result, fractions_of, refusals)
from polisect.properties.solve import (ConductivityResult, ElasticityResult, SolverFacts,
                                       conductivity, elasticity, expansion)

ALUMINA = Material(conductivity=30.0, youngs_modulus=380.0, poisson_ratio=0.22,
                   expansion=8e-6, name="alumina")
EPOXY = Material(conductivity=0.2, youngs_modulus=3.0, poisson_ratio=0.35, expansion=6e-5,
                 name="epoxy")
PORE = Material(conductivity=0.0, youngs_modulus=0.0, poisson_ratio=0.2, name="pore")


def _square(n=32, dim=2):
    labels = np.zeros((n,) * dim, dtype=int)
    labels[(slice(n // 4, 3 * n // 4),) * dim] = 1
    assert fractions_of(labels) == {0: 1 - 0.5 ** dim, 1: 0.5 ** dim}
    return labels, fractions_of(labels)


def _facts(tol=1e-6):
    return SolverFacts("fft", 1, 0.0, (), tol, True)


@pytest.mark.parametrize("dim, plane", [(2, "generalized-plane-strain"), (2, "plane-strain"),
                                        (2, "plane-stress"), (3, None)])
def test_sound_results_pass(dim, plane):
    """Wiener (1912) and Hill (1952) bounds: a converged solve of a sound composite lies
    inside them, so nothing is found."""
    labels, f = _square(16 if dim == 2 else 8, dim)
    m = {0: EPOXY, 1: ALUMINA}
    kw = {} if plane is None else {"plane": plane}
    for result in (conductivity(labels, m), elasticity(labels, m, **kw),
                   expansion(labels, m, **kw)):
        assert check_result(result, m, f) == ()


def test_matrix_without_stiffness_is_refused_naming_it():
    """Issue 17 probe: a matrix with E = 0 around isolated particles gave E < 0 and ν = 3 as
    'converged'; the section carries no load (common practice, no source)."""
    labels, f = _square()
    matrix = Material(conductivity=1.0, youngs_modulus=0.0, poisson_ratio=0.2, name="matrix")
    m = {0: matrix, 1: ALUMINA}
    for plane in ("generalized-plane-strain", "plane-strain", "plane-stress"):
        found = check_elasticity(elasticity(labels, m, plane=plane), m, f)
        assert found[0].level == REFUSE and "'matrix'" in found[0].message
        assert "load-bearing" in found[0].message


def test_matrix_of_vanishing_conductivity_is_refused_naming_it():
    """Issue 17 probe: k = 1e-12 for the matrix gave a result below the lower bound; a
    contrast of 1e13 is beyond the solver's resolution (common practice, no source)."""
    labels, f = _square()
    matrix = Material(conductivity=1e-12, name="matrix")
    m = {0: matrix, 1: ALUMINA}
    found = check_conductivity(conductivity(labels, m), m, f)
    assert [x.level for x in found] == [REFUSE]
    assert "'matrix'" in found[0].message and "1e-12" in found[0].message


def test_negative_and_out_of_bounds_tensors_are_refused():
    """Wiener (1912): the conductivity lies between the harmonic and arithmetic means."""
    m = {0: EPOXY, 1: ALUMINA}
    f = {0: 0.5, 1: 0.5}
    for tensor, words in ((np.diag([-1.0, 5.0]), "negative"),
                          (np.diag([20.0, 5.0]), "bounds"),       # arithmetic mean 15.1
                          (np.diag([0.3, 5.0]), "bounds"),        # harmonic mean 0.399
                          (np.diag([np.nan, 5.0]), "finite")):
        found = check_conductivity(ConductivityResult(tensor, _facts()), m, f)
        assert found[0].level == REFUSE and words in found[0].message


def test_bounds_hold_whatever_the_anisotropy():
    """Wiener (1912): a laminate reaches the arithmetic mean along its layers and the
    harmonic mean across; rotated, the tensor still lies within the bounds, while one a
    little beyond either is refused."""
    m = {0: EPOXY, 1: ALUMINA}
    f = {0: 0.5, 1: 0.5}
    along, across = 0.5 * (0.2 + 30.0), 1 / (0.5 / 0.2 + 0.5 / 30.0)
    c, s = np.cos(0.5), np.sin(0.5)
    R = np.array([[c, -s], [s, c]])
    for a, b, expected in ((1.0, 1.0, ()), (1.001, 1.0, REFUSE), (1.0, 0.999, REFUSE)):
        lam = np.diag([along * a, across * b])
        found = check_conductivity(ConductivityResult(R @ lam @ R.T, _facts()), m, f)
        assert found == () if expected == () else found[0].level == expected


def test_layers_of_pores_warn_of_a_missing_path():
    """Wiener (1912): across layers of a zero-conductivity phase the harmonic mean is zero;
    along them the arithmetic mean holds, so this is physical and only warned."""
    labels = np.zeros((16, 16), dtype=int)
    labels[:, :4] = 1
    m = {0: ALUMINA, 1: PORE}
    f = {0: 0.75, 1: 0.25}
    for result in (conductivity(labels, m), elasticity(labels, m)):
        found = check_result(result, m, f)
        assert [x.level for x in found] == [WARN] and "'pore'" in found[0].message


def test_poisson_ratio_outside_its_range_is_refused():
    """Common practice (no source): ν of an isotropic solid lies in (−1, 0.5) in 3D; a stiffness
    a little indefinite within a loose solver tolerance still gives no result."""
    C = tensors.stiffness_from_bulk_shear(100.0, -5.0, dim=3)
    m = {0: ALUMINA, 1: PORE}
    found = check_elasticity(ElasticityResult(C, None, _facts(0.05)), m, {0: 0.5, 1: 0.5})
    assert REFUSE in [x.level for x in found]
    assert any("Poisson's ratio" in x.message for x in found)
    assert refusals(found)


@pytest.mark.parametrize("plane", ["generalized-plane-strain", "plane-strain", "plane-stress"])
def test_expansion_of_a_porous_solid_is_the_solids(plane):
    """Levin (1967): with one solid phase, a stress-free uniform expansion is the exact
    solution, so pores leave α unchanged (in plane strain it is (1 + ν)α in-plane)."""
    labels, f = _square(16)
    m = {0: ALUMINA, 1: PORE}
    result = expansion(labels, m, plane=plane)
    assert check_expansion(result, m, f) == ()
    wrong = type(result)(result.tensor * 1.01, result.plane, result.facts, result.axial,
                         result.thermal_stress, result.stiffness)
    assert check_expansion(wrong, m, f)[0].level == REFUSE


def test_fractions_must_describe_the_solved_phases():
    """Common practice (no source): fractions that do not sum to 1 are a caller's error."""
    from polisect import InputError

    with pytest.raises(InputError, match="sum"):
        check_conductivity(ConductivityResult(np.eye(2), _facts()), {0: ALUMINA}, {0: 0.5})


@pytest.mark.parametrize("dim, plane", [(2, "generalized-plane-strain"), (2, "plane-strain"),
                                        (2, "plane-stress"), (3, None)])
def test_two_phase_expansion_must_obey_levin(dim, plane):
    """Levin (1967): for two phases α* = ᾱ + (S* − S̄)(S₁ − S₂)⁻¹(α₁ − α₂) exactly with the
    effective compliance S*; the solver meets it to ~1e-9 of α₁ − α₂, a result off by 2 %
    of α₁ − α₂ is refused."""
    labels, f = _square(16 if dim == 2 else 8, dim)
    m = {0: EPOXY, 1: ALUMINA}
    result = expansion(labels, m, **({} if plane is None else {"plane": plane}))
    assert check_expansion(result, m, f) == ()
    shifted = result.tensor + 0.02 * (6e-5 - 8e-6) * np.eye(dim)
    wrong = type(result)(shifted, result.plane, result.facts, result.axial,
                         result.thermal_stress, result.stiffness)
    found = check_expansion(wrong, m, f)
    assert found[0].level == REFUSE and "Levin" in found[0].message
