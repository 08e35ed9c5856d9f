"""Tests of the material model and the built-in library."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polisect import InputError, Material, get_material, library
from polisect.core.materials import PropertyTable, describe_library

REQUIRED = ["alumina", "silicon-carbide", "zirconia", "zirconia-cubic", "mullite", "magnesia",
            "spinel", "silica-glass", "cordierite", "aluminium", "copper", "steel",
            "tungsten-carbide", "cobalt", "epoxy", "e-glass", "air"]


def test_library_has_the_required_materials_each_value_with_a_source():
    """The foundation issue's list; every property of every entry names a source."""
    lib = library()
    for key in REQUIRED:
        m = lib[key]
        for prop in ("conductivity", "youngs_modulus", "poisson_ratio", "expansion"):
            assert getattr(m, prop) is not None, (key, prop)
            assert m.sources.get(prop), (key, prop)


def test_moduli_conversions():
    """K = E/(3(1-2ν)), G = E/(2(1+ν)): isotropic elasticity (any handbook)."""
    m = Material(youngs_modulus=200.0, poisson_ratio=0.25)
    assert m.bulk_modulus == pytest.approx(200 / 1.5)
    assert m.shear_modulus == pytest.approx(80.0)


@pytest.mark.parametrize("kwargs, words", [
    ({"conductivity": -1.0}, "negative"),
    ({"poisson_ratio": 0.5}, "outside"),
    ({"poisson_ratio": -1.0}, "outside"),
    ({"youngs_modulus": -3.0}, "negative"),
    ({"conductivity": float("nan")}, "finite"),
    ({"conductivity": [[1.0, 2.0], [0.0, 1.0]]}, "symmetric"),
])
def test_unphysical_values_are_refused_with_the_property_named(kwargs, words):
    with pytest.raises(InputError, match=words):
        Material(name="bad", **kwargs)


def test_unknown_material_lists_close_matches():
    with pytest.raises(InputError, match="alumina"):
        get_material("alumnia")


def test_lookup_is_forgiving_about_case_and_separators():
    assert get_material("Silicon_Carbide").name == "silicon-carbide"


def test_missing_property_message_says_what_to_give():
    m = Material(conductivity=1.0, name="k-only")
    with pytest.raises(InputError, match="youngs_modulus"):
        m.require("youngs_modulus", "poisson_ratio")


def test_anisotropic_conductivity_kept_as_array():
    m = Material(conductivity=np.diag([1.0, 2.0]))
    assert m.conductivity.shape == (2, 2)


def test_describe_library_lists_every_material():
    text = describe_library()
    for key in REQUIRED:
        assert key in text


# --- tables over temperature -------------------------------------------------------------

MUNRO_T = [20.0, 500.0, 1000.0, 1200.0, 1400.0]


def test_alumina_modulus_over_temperature_is_munros():
    """E = 416, 390, 364, 354, 343 GPa at 20, 500, 1000, 1200, 1400 °C: Munro, J. Am. Ceram.
    Soc. 80 (1997) 1919, elastic modulus row of the NIST SRD 150 summary (CHECKS.md wave 2)."""
    al = get_material("alumina")
    for t, e in zip(MUNRO_T, [416.0, 390.0, 364.0, 354.0, 343.0]):
        assert al.at(t).youngs_modulus == pytest.approx(e, abs=1e-9)
    assert al.uncertainty["youngs_modulus"] == pytest.approx(30.0, rel=1e-3)


def test_alumina_conductivity_and_expansion_rows():
    """k = 33 W/(m·K) at 20 °C and 7.22 at 1000 °C; mean α 7.1e-6/K at 500 °C and 4.6e-6/K
    at 20 °C: Munro, J. Am. Ceram. Soc. 80 (1997) 1919 (NIST SRD 150 summary; recalled)."""
    al = get_material("alumina")
    assert al.conductivity == 33.0 and al.at(1000).conductivity == pytest.approx(7.22)
    assert al.expansion == pytest.approx(4.6e-6) and al.mean_expansion == pytest.approx(4.6e-6)
    assert al.at(500).mean_expansion == pytest.approx(7.1e-6)


def test_alumina_poisson_ratio_agrees_with_its_bulk_and_elastic_moduli():
    """ν = (3K − E)/(6K) with the bulk modulus row K = 257, 247, 237, 233, 229 GPa and the
    E row of Munro (1997), J. Am. Ceram. Soc. 80, 1919 (NIST SRD 150 summary); the rows are
    rounded, so agreement to 0.005 is what they allow."""
    al = get_material("alumina")
    for t, K in zip(MUNRO_T, [257.0, 247.0, 237.0, 233.0, 229.0]):
        m = al.at(t)
        assert m.poisson_ratio == pytest.approx((3 * K - m.youngs_modulus) / (6 * K), abs=0.005)


def test_linear_interpolation_between_tabulated_temperatures():
    """Halfway between 500 and 1000 °C the alumina modulus is the mean of 390 and 364 GPa
    (linear interpolation of Munro's row, J. Am. Ceram. Soc. 80 (1997) 1919)."""
    assert get_material("alumina").at(750).youngs_modulus == pytest.approx(377.0)


@pytest.mark.parametrize("name, temperature, words", [
    ("alumina", 1600.0, "from 20 to 1500 °C"),
    ("alumina", -10.0, "from 20 to 1500 °C"),
    ("magnesia", 500.0, "only at 20 °C"),
    ("air", 1800.0, "from 20 to 1700 °C"),
])
def test_temperature_outside_a_table_is_an_error_naming_the_range(name, temperature, words):
    with pytest.raises(InputError, match=words):
        get_material(name).at(temperature)


def test_only_the_properties_asked_for_are_evaluated():
    """Silicon carbide's expansion is tabulated at 20 °C only; its conductivity to 1500 °C
    (Munro, J. Phys. Chem. Ref. Data 26 (1997) 1195, recalled: 35.7 W/(m·K) at 1000 °C)."""
    sic = get_material("silicon-carbide")
    with pytest.raises(InputError, match="expansion"):
        sic.at(1000)
    hot = sic.at(1000, properties=("conductivity", "youngs_modulus"))
    assert hot.conductivity == pytest.approx(35.7) and hot.expansion is None
    assert hot.temperature_C == 1000.0


def test_plain_material_has_no_temperature_table():
    with pytest.raises(InputError, match="no table over temperature"):
        Material(conductivity=1.0, name="plain").at(500)


def test_overriding_a_property_drops_its_table_and_uncertainty():
    m = get_material("alumina").replace(conductivity=20.0)
    assert m.conductivity == 20.0 and "conductivity" not in m.uncertainty
    with pytest.raises(InputError, match="conductivity"):
        m.at(500)
    assert m.at(500, properties=("youngs_modulus",)).youngs_modulus == pytest.approx(390.0)
    assert m.at(20).conductivity == 20.0


def _strain(material, t_hi, n=5):
    """∫₂₀ᵀ α dT by the trapezoidal rule on each stretch between tabulated temperatures
    (α is linear there, so the rule is exact), just inside the stretch's ends because α
    may step at a tabulated temperature."""
    nodes = np.asarray(material.tables["expansion"].temperatures_C)
    cuts = np.concatenate(([20.0], nodes[(nodes > 20.0) & (nodes < t_hi)], [t_hi]))
    total = 0.0
    for a, b in zip(cuts[:-1], cuts[1:]):
        eps = 1e-9 * (b - a)
        grid = np.linspace(a + eps, b - eps, n)
        alpha = [material.at(t, properties=("expansion",)).expansion for t in grid]
        total += np.trapezoid(alpha, grid) * (b - a) / (b - a - 2 * eps)
    return total


@pytest.mark.parametrize("name, t_hi", [("alumina", 1500.0), ("alumina", 730.0),
                                        ("mullite", 1400.0)])
def test_mean_expansion_is_the_integral_of_the_instantaneous(name, t_hi):
    """ᾱ(T)(T − 20) = ∫₂₀ᵀ α dT, the definition of the mean coefficient (any handbook on
    thermal expansion, e.g. Touloukian et al., TPRC Data Series Vol. 12, introduction)."""
    m = get_material(name)
    mean = m.at(t_hi).mean_expansion
    assert _strain(m, t_hi) == pytest.approx(mean * (t_hi - 20.0), rel=1e-7)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.floats(0.5e-6, 30e-6), min_size=2, max_size=6),
       st.sampled_from(["instantaneous", "mean"]), st.floats(0.0, 1.0))
def test_mean_and_instantaneous_expansion_agree_for_any_table(values, basis, where):
    """ᾱ(T)(T − 20) = ∫₂₀ᵀ α dT for tables of either basis (definition of the mean
    coefficient, common practice, no source)."""
    temps = 20.0 + 150.0 * np.arange(len(values))
    table = PropertyTable(tuple(temps), tuple(values), "test table", basis=basis)
    m = Material(name="t", tables={"expansion": table})
    t_hi = 20.0 + where * (temps[-1] - 20.0)
    if t_hi - 20.0 < 1.0:
        return
    mean = m.at(t_hi).mean_expansion
    assert _strain(m, t_hi) == pytest.approx(mean * (t_hi - 20.0), rel=1e-7, abs=1e-15)
    assert m.at(20.0).expansion == pytest.approx(m.at(20.0).mean_expansion)


def test_air_table_is_kadoya():
    """Air at 0.1 MPa: the library table reproduces the correlation of Kadoya, Matsunaga &
    Nagashima, J. Phys. Chem. Ref. Data 14 (1985) 947 (to its 4-digit rounding), and
    gives 0.0916 W/(m·K) at 1200 °C and 0.0257 at 20 °C (CHECKS.md wave 2)."""
    from polisect.properties.radiation import air_conductivity
    air = get_material("air")
    for t in air.tables["conductivity"].temperatures_C:
        assert air.at(t).conductivity == pytest.approx(air_conductivity(t), rel=5e-4)
    assert air.conductivity == pytest.approx(0.0257, abs=1e-4)
    assert air.at(1200).conductivity == pytest.approx(0.0916, abs=1e-4)


def test_every_table_names_a_source_and_expansion_its_basis():
    """Issue 15: every library value has a findable source; expansion says its basis."""
    for key, m in library().items():
        for prop, table in m.tables.items():
            assert len(table.source) > 20, (key, prop)
            if prop == "expansion" and len(table.values) > 1:
                assert table.basis in ("instantaneous", "mean"), key


def test_describe_material_prints_tables_with_sources():
    from polisect.core.materials import describe_material
    text = describe_material(get_material("alumina"))
    assert "Munro" in text and "1500.0" in text and "mean" in text


def test_cli_show_prints_one_material(capsys):
    from polisect.apps.cli import main
    assert main(["materials", "--show", "Alumina"]) == 0
    out = capsys.readouterr().out
    assert "Munro" in out and "390" in out
    assert main(["materials", "--show", "unobtainium"]) == 2


# --- a lab's own file --------------------------------------------------------------------

LAB = """
[bond-b7]
description = "Kestrel Foundry Supply bond B7 (invented demo grade)"
conductivity = 1.8
youngs_modulus = 40.0
poisson_ratio = 0.2
expansion = 5.5e-6
[bond-b7.sources]
conductivity = "laser flash, invented demo value"
youngs_modulus = "resonance, invented demo value"
poisson_ratio = "resonance, invented demo value"
expansion = "dilatometer, invented demo value"
[bond-b7.uncertainty]
conductivity = 0.2

[alumina]
description = "our alumina (invented demo grade)"
[alumina.youngs_modulus]
temperature_C = [20, 800]
value = [380.0, 350.0]
uncertainty = [10.0, 15.0]
source = "resonance, invented demo values"
"""


def test_lab_file_merges_over_the_builtin_library(tmp_path):
    from polisect.core.materials import load_library_file
    path = tmp_path / "our_grades.toml"
    path.write_text(LAB, encoding="utf-8")
    lib = load_library_file(path)
    assert lib["mullite"].youngs_modulus == library()["mullite"].youngs_modulus
    bond = get_material("bond_B7", lib)
    assert bond.conductivity == 1.8 and bond.uncertainty == {"conductivity": 0.2}
    ours = lib["alumina"]
    assert ours.conductivity is None and ours.youngs_modulus == 380.0
    hot = ours.at(410.0)
    assert hot.youngs_modulus == pytest.approx(365.0) and hot.uncertainty["youngs_modulus"] == 12.5


@pytest.mark.parametrize("text, words", [
    ("[x]\nconductivity = 1.0\n", "names no source"),
    ("[x]\nconductivty = 1.0\n", "did you mean 'conductivity'"),
    ("[x.expansion]\ntemperature_C = [20, 500]\nvalue = [1e-6, 2e-6]\nsource = \"s\"\n",
     "basis"),
    ("[x.conductivity]\ntemperature_C = [500, 20]\nvalue = [1.0, 2.0]\nsource = \"s\"\n",
     "increase strictly"),
    ("[x.conductivity]\ntemperature_C = [20, 500]\nvalue = [1.0]\nsource = \"s\"\n",
     "as many values"),
    ("[x\n", "not valid TOML"),
])
def test_bad_lab_file_says_what_to_fix(tmp_path, text, words):
    from polisect.core.materials import load_library_file
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(InputError, match=words):
        load_library_file(path)


def test_missing_lab_file_is_an_input_error(tmp_path):
    from polisect.core.materials import load_library_file
    with pytest.raises(InputError, match="not found"):
        load_library_file(tmp_path / "nope.toml")


def test_plain_form_round_trips_with_temperature_and_uncertainty():
    """to_dict → Material(**...) keeps the values, their temperature and uncertainties (the
    saved phase map reads materials back this way)."""
    m = get_material("alumina").at(1000)
    back = Material(**m.to_dict())
    for prop in ("conductivity", "youngs_modulus", "poisson_ratio", "expansion",
                 "mean_expansion", "temperature_C"):
        assert getattr(back, prop) == getattr(m, prop)
    assert back.uncertainty == m.uncertainty and back.sources == m.sources
