"""Tests of polisect.trust.measured: measured values beside the computed ones."""

import numpy as np
import pytest

from polisect.properties.records import Conductivity, Effective, Elasticity, Solver
from polisect.properties.schemes import Bound
from polisect.read.config import config_from_dict
from polisect.trust.measured import agreement, compare_measured
from polisect import InputError

SOLVER = Solver("fft", 1, 0.0, 1e-6, True)


def _effective(k, E=None):
    el = None if E is None else Elasticity(np.eye(3), E, 0.25, E, E / 2.5, 0.0, None, SOLVER)
    return Effective(3, None, "3D volume", None, "x, y, z",
                     Conductivity(k * np.eye(3), k, 0.0, SOLVER), el)


def _measured(*entries):
    return config_from_dict({"measured": list(entries)}).measured


def test_difference_in_standard_uncertainties():
    """z = (computed − measured)/u, as the GUM states a difference in units of the standard
    uncertainty (JCGM 100:2008); |z| ≤ 2 is agreement at about 95 %."""
    m = _measured({"property": "conductivity", "value": 2.0, "uncertainty": 0.2},
                  {"property": "youngs_modulus", "value": 100.0, "uncertainty": 2.0})
    (c, e) = compare_measured(m, {20.0: _effective(2.3, E=108.0)})
    assert c.z_section == pytest.approx(1.5) and "within 2" in c.verdict
    assert e.z_section == pytest.approx(4.0) and "4.0 standard uncertainties (above)" in e.verdict
    assert agreement(2.0, 2.0, None).startswith("differs by +0.0 %")


def test_outside_the_bounds_is_flagged_and_temperatures_matched():
    """A measured value outside the Hashin–Shtrikman bounds (Hashin & Shtrikman 1962) cannot
    come from any isotropic arrangement of these phases: the verdict says so. A measurement at
    a temperature that was not solved says which temperatures were."""
    m = _measured({"property": "conductivity", "value": 9.0, "uncertainty": 0.5},
                  {"property": "conductivity", "value": 1.0, "temperature_C": 800.0})
    (c, hot) = compare_measured(m, {20.0: _effective(3.0)},
                                bounds={"conductivity": Bound(1.0, 5.0)})
    assert "outside the bounds" in c.verdict and (c.lower, c.upper) == (1.0, 5.0)
    assert hot.section is None and "temperatures_C" in hot.verdict and hot.lower is None


def test_measured_at_a_temperature_meets_the_3d_estimate_there():
    """A measurement at 800 °C is compared with the 3D estimate solved at 800 °C, one at
    20 °C with the room-temperature estimate, and one at 400 °C (not solved in 3D) with no
    3D value (the GUM difference z = (computed − measured)/u, JCGM 100:2008)."""
    m = _measured({"property": "conductivity", "value": 2.0, "uncertainty": 0.5,
                   "temperature_C": 800.0},
                  {"property": "conductivity", "value": 4.0, "uncertainty": 0.5},
                  {"property": "conductivity", "value": 3.0, "uncertainty": 0.5,
                   "temperature_C": 400.0})
    hot, room, mid = compare_measured(
        m, {20.0: _effective(4.2), 400.0: _effective(3.1), 800.0: _effective(2.4)},
        effective_3d=_effective(4.5), by_temperature_3d={20.0: _effective(4.5),
                                                         800.0: _effective(2.5)})
    assert hot.estimate_3d == 2.5 and hot.z_3d == pytest.approx(1.0)
    assert hot.section == 2.4 and "3D estimate agrees within 1" in hot.verdict
    assert room.estimate_3d == 4.5
    assert mid.estimate_3d is None and mid.section == 3.1


@pytest.mark.parametrize("entry,text", [
    ({"property": "hardness", "value": 1.0}, "choose one of"),
    ({"property": "conductivity", "value": "2"}, "finite number"),
    ({"property": "conductivity", "value": 2.0, "uncertainty": -1.0}, "zero or positive"),
    ({"property": "expansion", "value": 7.5}, "10⁻⁶/K"),
    ({"property": "conductivity", "value": 2.0, "colour": "red"}, "colour"),
])
def test_bad_measured_entries(entry, text):
    """Each bad [[measured]] entry gets one message naming what to fix (common practice, no
    source)."""
    with pytest.raises(InputError, match=text):
        _measured(entry)
