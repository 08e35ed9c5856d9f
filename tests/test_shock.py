"""Tests of polisect.properties.shock: Hasselman's thermal-shock indices."""


import pytest

from polisect import InputError
from polisect.properties.shock import CAUTION, INDEX_WORDS, thermal_shock_indices


def test_indices_follow_hasselman_definitions():
    """R = σ(1 − ν)/(Eα), R′ = Rk, R′′′′ = Eγ/(σ²(1 − ν)) in SI units (Hasselman, J. Am.
    Ceram. Soc. 52 (1969) 600); values worked by hand for E = 380 GPa, ν = 0.22,
    α = 8e-6 /K, k = 30 W/(m·K), σ = 300 MPa, γ = 20 J/m²."""
    s = thermal_shock_indices(380.0, 0.22, 8e-6, 30.0, 300.0, 20.0)
    R = 300e6 * 0.78 / (380e9 * 8e-6)
    assert s.R == pytest.approx(R, rel=1e-12) and s.R == pytest.approx(76.97, abs=0.01)
    assert s.R_prime == pytest.approx(30.0 * R, rel=1e-12)
    assert s.R_4prime == pytest.approx(380e9 * 20.0 / (300e6 ** 2 * 0.78), rel=1e-12)


def test_ranking_alumina_against_silicon_carbide():
    """Dense SiC ranks above dense alumina on R and R′ — its lower expansion and higher
    conductivity (Hasselman, J. Am. Ceram. Soc. 52 (1969) 600, the trend of his Table;
    property values from the built-in library: alumina's mean expansion 20-500 °C,
    7.1e-6/K (Munro, J. Am. Ceram. Soc. 80 (1997) 1919), against SiC's 4.0e-6/K over the
    same range, from memory; strength 400 MPa for both, common practice, no source)."""
    from polisect import get_material
    al, sic = get_material("alumina"), get_material("silicon-carbide")
    alpha_al = al.at(500.0).mean_expansion
    a = thermal_shock_indices(al.youngs_modulus, al.poisson_ratio, alpha_al, al.conductivity, 400.0)
    b = thermal_shock_indices(sic.youngs_modulus, sic.poisson_ratio, sic.expansion, sic.conductivity, 400.0)
    assert b.R > a.R and b.R_prime > 5 * a.R_prime


def test_optional_inputs_and_caution():
    """Without conductivity or fracture energy those indices are None; the caution text
    travels with the numbers (issue 5; common practice, no source)."""
    s = thermal_shock_indices(200.0, 0.3, -5e-6, None, 150.0)
    assert s.R_prime is None and s.R_4prime is None
    assert s.R == pytest.approx(150e6 * 0.7 / (200e9 * 5e-6))
    assert s.caution == CAUTION and "confirmed by test" in CAUTION and "licensed" in CAUTION
    assert all("comparative" in words for words in INDEX_WORDS.values())
    text = s.format()
    assert CAUTION in text and "R'" in text


@pytest.mark.parametrize("args,text", [
    ((0.0, 0.2, 5e-6, 10.0, 100.0), "Young's modulus"),
    ((100.0, 0.5, 5e-6, 10.0, 100.0), "Poisson"),
    ((100.0, 0.2, 0.0, 10.0, 100.0), "nonzero thermal expansion"),
    ((100.0, 0.2, 5e-6, -1.0, 100.0), "conductivity"),
    ((100.0, 0.2, 5e-6, 10.0, -5.0), "strength"),
    ((100.0, 0.2, 5e-6, 10.0, 100.0, 0.0), "fracture energy"),
    ((100.0, 0.2, 5e-6, 10.0, "abc"), "not a number")])
def test_bad_input(args, text):
    """Unphysical inputs raise InputError naming the quantity (common practice, no source)."""
    with pytest.raises(InputError, match=text):
        thermal_shock_indices(*args)
