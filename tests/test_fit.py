"""Tests of polisect.properties.fit and the "fit" of a phase property in an analysis."""

import numpy as np
import pytest

from polisect import InputError, analyze
from polisect.core.materials import Material
from polisect.model3d.synth import Inclusions, compose
from polisect.properties.fit import fit_phase_property
from polisect.properties.solve import elasticity
from polisect.read.config import config_from_dict

BOND_E = 70.0


@pytest.fixture(scope="module")
def section():
    """A rendered section: alumina discs (30 %) in a bond of known modulus."""
    return compose((96, 96), [Inclusions(1, 0.3, 8.0, min_gap=2.0)], seed=3,
                   matrix_label=0).labels


def _config(bond_E, measured=None):
    return config_from_dict({
        "image": {"kind": "labels", "pixel_size_um": 1.0},
        "phase": [{"label": 0, "name": "bond", "youngs_modulus": bond_E, "poisson_ratio": 0.2},
                  {"label": 1, "name": "grain", "material": "alumina"}],
        "solve": {"properties": ["elasticity"], "fields": False, "tolerance": 1e-8},
        "uncertainty": {"budget": False},
        "measured": measured or []})


def test_fit_recovers_the_bond_modulus_from_the_solvers_own_value(section):
    """The "measurement" is the solver's own effective E with the true bond modulus: the fit
    recovers the bond's 70 GPa within 0.5 % (issue 15; the solution is exact for the
    discrete problem, so far closer)."""
    truth = analyze(section, _config(BOND_E)).result.effective.elasticity.youngs_modulus
    r = analyze(section, _config("fit", [{"property": "youngs_modulus", "value": truth,
                                          "uncertainty": 2.0}])).result
    bond = r.phase("bond")
    assert bond.fitted.value == pytest.approx(BOND_E, rel=5e-3)
    assert bond.material.youngs_modulus == pytest.approx(bond.fitted.value)
    assert "fitted to the measured youngs modulus" in bond.material.sources["youngs_modulus"]
    assert r.effective.elasticity.youngs_modulus == pytest.approx(truth, rel=1e-4)


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_interval_covers_the_truth_under_measurement_noise(section, seed):
    """Noise of the stated standard uncertainty added to the measurement: the fitted value's
    95 % interval (first order, GUM §5.1) covers the true modulus exactly when the draw lies
    within 1.96 standard deviations (seed 3 draws 2.04: just outside, as it must be)."""
    mats = {0: Material(youngs_modulus=BOND_E, poisson_ratio=0.2),
            1: Material(youngs_modulus=416.0, poisson_ratio=0.231)}
    labels = np.ascontiguousarray(section.T)
    exact = elasticity(labels, mats, tol=1e-10).isotropic().youngs_modulus
    u = 1.5
    z = np.random.default_rng(seed).normal(0.0, 1.0)
    f = fit_phase_property(labels, mats, 0, "youngs_modulus", "youngs_modulus", exact + z * u, u)
    assert (f.interval[0] <= BOND_E <= f.interval[1]) == (abs(z) <= 1.96)
    assert (f.interval[1] - f.interval[0]) / 2 == pytest.approx(1.96 * u / abs(f.derivative))


def test_fit_needs_a_matching_measurement(section):
    """A "fit" without a measured value it can be fitted to says which one is needed (common
    practice, no source)."""
    with pytest.raises(InputError, match="needs a \\[\\[measured\\]\\] youngs_modulus"):
        analyze(section, _config("fit", [{"property": "conductivity", "value": 3.0}]))
    with pytest.raises(InputError, match="cannot be fitted to a measured conductivity"):
        fit_phase_property(np.zeros((4, 4), int), {0: Material(youngs_modulus=1.0)}, 0,
                           "youngs_modulus", "conductivity", 1.0)
