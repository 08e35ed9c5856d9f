"""Tests of pore conduction and radiation (polisect.properties.radiation)."""

import pytest

from polisect import InputError, get_material
from polisect.properties.radiation import (RADIATION_ON_ABOVE_C, STEFAN_BOLTZMANN,
                                           air_conductivity, pore_conductivity,
                                           radiation_conductivity)


def test_loeb_term_by_hand():
    """k_r = 4 γ σ ε d T³ (Loeb, J. Am. Ceram. Soc. 37 (1954) 96; CHECKS.md wave 2):
    γ = 2/3, ε = 0.8, d = 100 µm, 1000 °C → 0.02496 W/(m·K) by hand."""
    by_hand = 4 * (2 / 3) * 5.670374419e-8 * 0.8 * 100e-6 * 1273.15 ** 3
    assert by_hand == pytest.approx(0.02496, abs=1e-5)
    assert radiation_conductivity(1000.0, 100.0) == pytest.approx(by_hand, rel=1e-12)
    assert STEFAN_BOLTZMANN == 5.670374419e-8


def test_loeb_term_scales_with_size_and_cube_of_temperature():
    """Loeb (1954): k_r ∝ d T³ (T absolute)."""
    a = radiation_conductivity(726.85, 50.0)
    assert radiation_conductivity(726.85, 100.0) == pytest.approx(2 * a)
    assert radiation_conductivity(1726.85, 50.0) == pytest.approx(8 * a)


def test_radiation_on_by_default_from_the_stated_temperature():
    below = pore_conductivity(RADIATION_ON_ABOVE_C - 1, 100.0)
    at = pore_conductivity(RADIATION_ON_ABOVE_C, 100.0)
    assert not below.radiation_included and below.radiation == 0.0
    assert below.total == below.gas
    assert at.radiation_included and at.total == pytest.approx(at.gas + at.radiation)
    assert pore_conductivity(200.0, 100.0, radiation=True).radiation > 0
    assert pore_conductivity(1200.0, 100.0, radiation=False).radiation == 0.0
    assert "Loeb" in at.source and "Kadoya" in at.source


def test_pore_gas_is_the_library_air():
    """The gas term is the library's air table at that temperature (Kadoya et al. 1985)."""
    r = pore_conductivity(750.0, 10.0)
    assert r.gas == pytest.approx(get_material("air").at(750.0).conductivity)


def test_air_at_300_K_against_a_reference_value():
    """Dry air at 300 K and 0.1 MPa conducts 26.2-26.4 mW/(m·K): Kadoya, Matsunaga &
    Nagashima, J. Phys. Chem. Ref. Data 14 (1985) 947, and Lemmon & Jacobsen, Int. J.
    Thermophys. 25 (2004) 21 (from memory: 26.36 mW/(m·K)); 1 % tolerance."""
    assert air_conductivity(26.85) == pytest.approx(0.0263, rel=0.01)


def test_air_conductivity_rises_with_temperature_and_has_a_range():
    """Gas conductivity rises with temperature (kinetic theory, common practice)."""
    ks = [air_conductivity(t) for t in (20, 400, 800, 1200, 1600)]
    assert all(b > a for a, b in zip(ks, ks[1:]))
    with pytest.raises(InputError, match="85-2000 K"):
        air_conductivity(1800.0)


@pytest.mark.parametrize("kwargs, words", [
    ({"pore_size_um": -1.0}, "pore size"),
    ({"pore_size_um": 10.0, "emissivity": 0.0}, "emissivity"),
    ({"pore_size_um": 10.0, "shape_factor": 2.0}, "shape factor"),
])
def test_bad_radiation_input(kwargs, words):
    with pytest.raises(InputError, match=words):
        radiation_conductivity(1000.0, **kwargs)


def test_pore_phase_carries_gas_plus_radiation():
    """The pore phase at 1200 °C conducts air (Kadoya et al. 1985) plus Loeb's term, and
    still carries no load."""
    from polisect.properties.radiation import pore_phase
    m = pore_phase(1200.0, 200.0)
    r = pore_conductivity(1200.0, 200.0)
    assert m.conductivity == pytest.approx(r.total) and m.is_pore
    assert m.temperature_C == 1200.0 and "Loeb" in m.sources["conductivity"]
