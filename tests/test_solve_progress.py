"""Live solver progress (`polisect.properties.solve.progress`): what an observer sees, and that the
results do not depend on it (common practice, no source)."""

import numpy as np
import pytest

from polisect import Material
from polisect.properties.solve import conductivity, elasticity, progress

MATS = {0: Material(conductivity=1.0, youngs_modulus=70.0, poisson_ratio=0.3),
        1: Material(conductivity=20.0, youngs_modulus=400.0, poisson_ratio=0.2)}


def _labels():
    labels = np.zeros((24, 24), dtype=int)
    labels[4:14, 6:18] = 1
    return labels


@pytest.mark.parametrize("method", ["fft", "fe", "ms"])
def test_observer_sees_every_load_case_and_iteration(method):
    seen = []
    with progress.observe(seen.append):
        r = conductivity(_labels(), MATS, method=method)
    starts = [e for e in seen if e["event"] == "load case"]
    steps = [e for e in seen if e["event"] == "iteration"]
    assert [e["load_case"] for e in starts] == [1, 2]
    assert all(e["load_cases"] == 2 and e["method"] == method for e in starts)
    assert [e["name"] for e in starts] == ["gradient x", "gradient y"]
    assert len(steps) >= r.iterations
    last = [e for e in steps if e["load_case"] == 2][-1]
    assert last["residual"] == pytest.approx(r.residuals[1][-1])
    assert last["tolerance"] == 1e-6


def test_results_do_not_depend_on_the_observer_and_it_ends_with_the_block():
    plain = elasticity(_labels(), MATS, method="fft")
    seen = []
    with progress.observe(seen.append):
        watched = elasticity(_labels(), MATS, method="fft")
    count = len(seen)
    elasticity(_labels(), MATS, method="fft")
    assert len(seen) == count > 0
    np.testing.assert_array_equal(plain.stiffness, watched.stiffness)


def test_load_cases_of_a_generalized_plane_strain_solve_are_named():
    seen = []
    with progress.observe(seen.append):
        elasticity(_labels(), MATS, method="fft")
    names = [e["name"] for e in seen if e["event"] == "load case"]
    assert names == ["strain xx", "strain yy", "strain xy", "axial strain zz",
                     "axial shear xz", "axial shear yz"]
