"""Tests of the material model and the built-in library."""

import numpy as np
import pytest

from polisect import InputError, Material, get_material, library
from polisect.core.materials import describe_library

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
