"""Tests of porosity below the pixel size (polisect.properties.porous)."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polisect import InputError, Material, get_material
from polisect.properties.porous import (depolarization, porous, porous_conductivity,
                                        porous_moduli, void_concentration)


def _E(K, G):
    return 9 * K * G / (3 * K + G)


def test_no_porosity_gives_the_dense_values():
    """p → 0: the dense solid back, for every scheme and shape (limit of any scheme)."""
    m = get_material("alumina")
    for scheme in ("mori-tanaka", "differential"):
        for shape, w in (("spherical", None), ("oblate", 0.2)):
            d = porous(m, 0.0, pore_shape=shape, aspect_ratio=w, scheme=scheme)
            assert d.conductivity == m.conductivity
            assert d.youngs_modulus == pytest.approx(m.youngs_modulus, rel=1e-12)
            assert d.poisson_ratio == pytest.approx(m.poisson_ratio, rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.01, 0.9), st.floats(1.0, 100.0), st.floats(0.0, 0.5))
def test_spherical_mori_tanaka_is_the_hashin_shtrikman_upper_bound(p, k, kp):
    """Spherical pores, Mori–Tanaka = the 3D Hashin–Shtrikman upper bound
    k_HS+ = k + p / (1/(k_p − k) + (1 − p)/(3k)) (Hashin & Shtrikman, J. Appl. Phys. 33
    (1962) 3125; CHECKS.md, 3D form); the differential scheme lies below it and above the
    lower bound."""
    hs_up = k + p / (1 / (kp - k) + (1 - p) / (3 * k))
    hs_lo = kp + (1 - p) / (1 / (k - kp) + p / (3 * kp)) if kp > 0 else 0.0
    mt = porous_conductivity(k, p, kp)
    diff = porous_conductivity(k, p, kp, scheme="differential")
    assert mt == pytest.approx(hs_up, rel=1e-12)
    assert hs_lo - 1e-12 <= diff <= mt + 1e-12


@settings(max_examples=30, deadline=None)
@given(st.floats(0.01, 0.9), st.floats(0.0, 0.45))
def test_spherical_moduli_are_the_hashin_shtrikman_upper_bound_for_voids(p, nu):
    """Mori–Tanaka with spherical voids = the Hashin–Shtrikman upper bounds on K and G with
    a void phase (Hashin & Shtrikman, J. Mech. Phys. Solids 11 (1963) 127); the
    differential scheme lies below; both below the Voigt bound (1 − p)·modulus."""
    K, G = 100.0 / (3 * (1 - 2 * nu)), 100.0 / (2 * (1 + nu))
    hs_K = K + p / (-1 / K + (1 - p) / (K + 4 * G / 3))
    hs_G = G + p / (-1 / G + 6 * (1 - p) * (K + 2 * G) / (5 * G * (3 * K + 4 * G)))
    Km, Gm = porous_moduli(K, G, p)
    Kd, Gd = porous_moduli(K, G, p, scheme="differential")
    assert Km == pytest.approx(hs_K, rel=1e-10) and Gm == pytest.approx(hs_G, rel=1e-10)
    assert Kd <= Km * (1 + 1e-9) and Gd <= Gm * (1 + 1e-9)
    assert Km <= (1 - p) * K and Gm <= (1 - p) * G


@pytest.mark.parametrize("p", [0.05, 0.1, 0.2, 0.3, 0.4])
def test_porous_alumina_against_coble_and_kingery(p):
    """E/E₀ ≈ 1 − 1.9p + 0.9p² for sintered alumina with isolated pores, p ≤ 0.4 (Coble &
    Kingery, J. Am. Ceram. Soc. 39 (1956) 377; empirical, loose tolerance: CHECKS.md).
    Both schemes stay within 0.05 of it; from p = 0.15 on they bracket it (Mori–Tanaka
    above, differential below)."""
    m = get_material("alumina")
    ck = 1 - 1.9 * p + 0.9 * p * p
    mt = porous(m, p).youngs_modulus / m.youngs_modulus
    diff = porous(m, p, scheme="differential").youngs_modulus / m.youngs_modulus
    assert abs(mt - ck) < 0.05 and abs(diff - ck) < 0.05
    if p >= 0.15:
        assert diff < ck < mt


def test_nearly_spherical_spheroid_gives_the_sphere():
    """Aspect ratio → 1: the spheroid's concentration factors tend to the sphere's
    a_K = (3K + 4G)/(4G), a_G = 5(3K + 4G)/(9K + 8G) (Eshelby, Proc. R. Soc. Lond. A 241
    (1957) 376); the quadrature at aspect 0.999999 agrees to 1e-6."""
    from polisect.properties.porous import _spheroid_void_concentration
    K, G = 2.0, 1.0
    aK, aG = _spheroid_void_concentration(K / G, 0.999999)
    assert aK == pytest.approx((3 * K + 4 * G) / (4 * G), rel=1e-6)
    assert aG == pytest.approx(5 * (3 * K + 4 * G) / (9 * K + 8 * G), rel=1e-6)


def test_flat_pores_approach_budiansky_oconnell_cracks():
    """Thin oblate voids (aspect w) behave as penny cracks of density ε = 3p/(4πw): dilute
    K/K₀ = 1 − (16/9)(1 − ν²)/(1 − 2ν) ε and G/G₀ = 1 − (32/45)(1 − ν)(5 − ν)/(2 − ν) ε
    (Budiansky & O'Connell, Int. J. Solids Struct. 12 (1976) 81). At w = 0.02 the bulk
    factor agrees to 1 %; the shear factor carries an O(1) term beside the 1/w one, so
    5 % (the crack limit drops it)."""
    K, G = 2.0, 1.0
    nu = (3 * K - 2 * G) / (2 * (3 * K + G))
    w = 0.02
    aK, aG = void_concentration(K, G, w)
    crack_K = (16 / 9) * (1 - nu ** 2) / (1 - 2 * nu) * 3 / (4 * math.pi * w)
    crack_G = (32 / 45) * (1 - nu) * (5 - nu) / (2 - nu) * 3 / (4 * math.pi * w)
    assert aK == pytest.approx(crack_K, rel=0.01)
    assert aG == pytest.approx(crack_G, rel=0.08)
    assert aG - crack_G == pytest.approx(1.0, abs=0.2)


def test_depolarization_factors():
    """Spheroid depolarization factors sum to 1, are 1/3 for a sphere and N_c → 1 for a flat
    disc (Stoner, Phil. Mag. 36 (1945) 803)."""
    for w in (0.02, 0.3, 0.9, 1.0):
        assert sum(depolarization(w)) == pytest.approx(1.0)
    assert depolarization(1.0) == pytest.approx((1 / 3,) * 3)
    assert depolarization(0.9999)[2] == pytest.approx(1 / 3, abs=1e-4)
    assert depolarization(0.02)[2] > 0.96


def test_flat_pores_lower_stiffness_and_conductivity_more():
    """At the same porosity oblate pores lower E and k more than spherical ones (the
    concentration factor grows as 1/aspect; Budiansky & O'Connell 1976)."""
    m = get_material("mullite")
    sph = porous(m, 0.2)
    flat = porous(m, 0.2, pore_shape="oblate", aspect_ratio=0.1)
    assert flat.youngs_modulus < 0.75 * sph.youngs_modulus
    assert flat.conductivity < sph.conductivity


def test_expansion_unchanged_and_sources_state_the_scheme():
    """Empty pores leave α of a single solid unchanged (Levin, Mech. Solids 2 (1967) 58;
    Rosen & Hashin, Int. J. Eng. Sci. 8 (1970) 157)."""
    m = get_material("alumina").at(1000)
    d = porous(m, 0.3, scheme="differential")
    assert d.expansion == m.expansion and d.mean_expansion == m.mean_expansion
    assert "differential" in d.sources["youngs_modulus"] and "0.3" in d.source
    assert "air at 1000 °C" in d.sources["conductivity"]
    assert d.temperature_C == 1000.0 and not d.tables
    assert d.uncertainty["youngs_modulus"] == pytest.approx(
        m.uncertainty["youngs_modulus"] * d.youngs_modulus / m.youngs_modulus)


def test_pores_conduct_what_they_are_given():
    """Pore conductivity equal to the solid's: no change (any scheme, exact)."""
    m = Material(conductivity=2.0, youngs_modulus=100.0, poisson_ratio=0.2, name="s")
    assert porous(m, 0.4, pore_conductivity=2.0).conductivity == pytest.approx(2.0)
    assert porous(m, 0.4, pore_conductivity=0.0).conductivity < porous(m, 0.4).conductivity


@pytest.mark.parametrize("kwargs, words", [
    ({"porosity": 1.0}, "0 ≤ p < 1"),
    ({"porosity": -0.1}, "0 ≤ p < 1"),
    ({"porosity": 0.2, "pore_shape": "cubic"}, "spherical, oblate"),
    ({"porosity": 0.2, "pore_shape": "oblate"}, "needs aspect_ratio"),
    ({"porosity": 0.2, "pore_shape": "oblate", "aspect_ratio": 0.001}, "aspect_ratio"),
    ({"porosity": 0.2, "aspect_ratio": 0.5}, "for pore_shape"),
    ({"porosity": 0.2, "scheme": "self-consistent"}, "mori-tanaka, differential"),
])
def test_bad_porosity_input_says_what_to_fix(kwargs, words):
    with pytest.raises(InputError, match=words):
        porous(get_material("mullite"), **kwargs)


def test_a_pore_or_an_anisotropic_phase_is_refused():
    with pytest.raises(InputError, match="pore already"):
        porous(get_material("air"), 0.2)
    with pytest.raises(InputError, match="isotropic"):
        porous(Material(conductivity=np.diag([1.0, 2.0, 3.0]), name="aniso"), 0.2)
