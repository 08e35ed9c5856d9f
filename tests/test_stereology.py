"""Tests of polisect.measure.stereology: Saltykov unfolding, Fullman spacing, contiguity, nearest
neighbours, two-point correlation."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.optimize import brentq

from polisect.core.errors import InputError
from polisect.measure.particles import label_particles, measure_particles
from polisect.measure.stereology import (ALL_HOLLOW, LineDensities, boundary_densities,
                                         hollow_spheres, nearest_neighbour, saltykov,
                                         saltykov_matrix, spacing, two_point_correlation)
from polisect.model3d.synth import Inclusions, compose, rsa_discs, rsa_spheres


@pytest.fixture(scope="module")
def spheres():
    """RSA packing of monodisperse spheres, R = 10 px, V_V = 0.2, periodic 128³ cell."""
    return rsa_spheres((128, 128, 128), 0.2, 10.0, seed=1)


@pytest.fixture(scope="module")
def sphere_sections(spheres):
    """Sections of every z slice of the sphere packing (split where touching)."""
    return sections(spheres.labels)


def sections(labels, split=True):
    """Section ECDs and Miles–Lantuéjoul weights of every z slice, and the total frame area."""
    ecd, w = [], []
    for z in range(labels.shape[0]):
        t = measure_particles(label_particles(labels[z] == 1, split_touching=split))
        ecd.append(t.ecd)
        w.append(t.weight)
    return np.concatenate(ecd), np.concatenate(w), float(np.prod(labels.shape))


def test_wicksell_mean_section_radius_and_area(sphere_sections):
    """Sections of monodisperse spheres of radius R: mean section radius πR/4 and mean
    section area (2/3)πR², both within 3 %.

    Source: Wicksell (1925), Biometrika 17, 84 (CHECKS.md).
    """
    ecd, w, _ = sphere_sections
    r = ecd / 2
    assert np.average(r, weights=w) == pytest.approx(math.pi * 10 / 4, rel=0.03)
    assert np.average(math.pi * r ** 2, weights=w) == pytest.approx(2 / 3 * math.pi * 100, rel=0.03)


def test_delesse_slices_estimate_volume_fraction(spheres):
    """Mean area fraction of 8 slices 16 px apart covers the volume fraction of the spheres
    (N·4/3πR³/V) within its Student-t 95 % interval.

    Source: Delesse (1847) A_A = V_V; interval as ASTM E562.
    """
    from polisect.measure.morphology import student_t

    f = np.array([np.mean(spheres.labels[z] == 1) for z in range(3, 128, 16)])
    v_v = len(spheres.radii) * 4 / 3 * math.pi * 1000 / 128 ** 3
    ci = student_t(f.size) * f.std(ddof=1) / math.sqrt(f.size)
    assert abs(f.mean() - v_v) <= ci


def test_saltykov_recovers_monodisperse_spheres(spheres, sphere_sections):
    """Saltykov unfolding of the sections: mean and median sphere diameter within 5 % of 2R,
    number per volume within 5 % of the construction, volume fraction within 5 %.

    Source: Saltykov (1967) (CHECKS.md); truth from the synth construction.
    """
    ecd, w, area = sphere_sections
    s = saltykov(ecd, w, area)
    n_v = len(spheres.radii) / 128 ** 3
    assert s.mean_diameter == pytest.approx(20.0, rel=0.05)
    assert s.d50 == pytest.approx(20.0, rel=0.05)
    assert s.number_per_volume == pytest.approx(n_v, rel=0.05)
    assert s.volume_fraction == pytest.approx(np.mean(spheres.labels == 1), rel=0.05)
    assert np.all(s.number_density >= 0)


@pytest.mark.slow
def test_saltykov_bimodal_modes():
    """Spheres of diameters 10 and 28 px: the unfolded distribution has its two largest peaks
    in the classes holding 10 and 28, nothing between, and the numbers within 10 %.

    Source: Saltykov (1967); truth from the synth construction.
    """
    p = compose((160, 160, 160), [Inclusions(1, 0.15, 14.0), Inclusions(1, 0.06, 5.0)], seed=2)
    ecd, w, area = sections(p.labels)
    s = saltykov(ecd, w, area)
    n = s.number_density * area
    lo = np.searchsorted(s.edges, 10.0) - 1
    hi = np.searchsorted(s.edges, 28.0 * 0.999) - 1
    peaks = [i for i in range(n.size) if n[i] > 0 and n[i] >= n[max(i - 1, 0)]
             and n[i] >= n[min(i + 1, n.size - 1)]]
    top2 = sorted(peaks, key=lambda i: -n[i])[:2]
    assert sorted(top2) == [lo, hi]
    assert n[lo + 1:hi].sum() < 0.02 * n.sum()
    small = np.sum(np.round(p.radii) == 5)
    assert n[:lo + 2].sum() == pytest.approx(small, rel=0.1)
    assert n[hi] == pytest.approx(len(p.radii) - small, rel=0.1)


def test_saltykov_matrix_is_wicksell_probability():
    """Column j times N_V = N_V·D_j·P(section class); columns sum to D_j (every section of a
    sphere lies in some class when the lowest limit is 0).

    Source: Wicksell (1925): N_A = N_V·D, P(a < d ≤ b) = (√(D²−a²) − √(D²−b²))/D.
    """
    edges = np.linspace(0, 5, 6)
    k = saltykov_matrix(edges)
    assert np.allclose(k.sum(axis=0), edges[1:])
    assert np.allclose(np.tril(k, -1), 0)
    assert k[0, 1] == pytest.approx(math.sqrt(4) - math.sqrt(3))


@settings(max_examples=20, deadline=None)
@given(st.lists(st.floats(0.05, 1.0), min_size=1, max_size=6), st.sampled_from(["geometric", "linear"]))
def test_saltykov_inverts_exact_section_densities(nv, classes):
    """Exact section densities of a sphere distribution at the class diameters unfold back
    to it (the NNLS solution of an exactly consistent triangular system is exact).

    Source: Saltykov (1967) — the forward model N_A = K N_V, inverted.
    """
    edges = 8.0 * 10 ** (-0.1 * np.arange(len(nv), -1, -1)) if classes == "geometric" \
        else np.linspace(0, 8.0, len(nv) + 1)
    k = saltykov_matrix(edges)
    n_a = k @ np.array(nv)
    mids = 0.5 * (edges[:-1] + edges[1:])
    s = saltykov(mids, n_a, 1.0, n_classes=len(nv), classes=classes, d_max=8.0)
    assert np.allclose(s.number_density, nv, rtol=1e-6, atol=1e-9)


def test_fullman_spheres_mean_intercept_and_free_path(spheres):
    """Sections of spheres: mean intercept L3 = 2D/3 = 4R/3 and mean free path
    λ = (1 − V_V)/N_L with N_L = N_V·πR², both within 3 %; the same from the 3D volume.

    Source: Fullman (1953), Trans. AIME 197, 447 (CHECKS.md).
    """
    lab = spheres.labels == 1
    per = [boundary_densities(lab[z]) for z in range(0, 128, 2)]
    pooled = LineDensities(np.mean([d.volume_fraction for d in per]),
                           np.mean([d.p_l_other for d in per]), None, "px")
    n_v = len(spheres.radii) / 128 ** 3
    v_v = n_v * 4 / 3 * math.pi * 1000
    lam = (1 - v_v) / (n_v * math.pi * 100)
    for s in (spacing(pooled), spacing(boundary_densities(lab))):
        assert s.mean_intercept == pytest.approx(40 / 3, rel=0.03)
        assert s.mean_free_path == pytest.approx(lam, rel=0.03)
        assert s.contiguity is None


def test_boundary_length_of_discs():
    """Non-overlapping discs: P_L = (2/π)L_A = 4·n_A·R within 2 %.

    Source: Smith & Guttman (1953) L_A = (π/2)P_L (Underwood 1970); truth from synth.
    """
    p = rsa_discs((512, 512), 0.3, 10.0, seed=3, min_gap=2.0)
    ld = boundary_densities(p.labels == 1)
    n_a = len(p.radii) / 512 ** 2
    assert ld.p_l_other == pytest.approx(4 * n_a * 10.0, rel=0.02)


def test_contiguity_of_square_pairs():
    """Pairs of touching 20 px squares: αα boundary 20, αβ boundary 120 per pair, so
    C = 2·20/(2·20 + 120) = 0.25 within 0.01.

    Source: Gurland (1958) C = 2S_V^αα/(2S_V^αα + S_V^αβ); geometry of the fixture.
    """
    lab = np.zeros((400, 400), np.int32)
    k = 0
    for y in range(20, 380, 60):
        for x in range(20, 340, 80):
            lab[y:y + 20, x:x + 20] = k + 1
            lab[y:y + 20, x + 20:x + 40] = k + 2
            k += 2
    ld = boundary_densities(lab > 0, lab)
    s = spacing(ld)
    assert s.contiguity == pytest.approx(0.25, abs=0.01)
    assert spacing(boundary_densities(lab > 0, np.where(lab > 0, 1, 0))).contiguity == 0.0


def test_contiguity_of_split_touching_discs_is_positive():
    """Common practice (no source): splitting touching discs exposes αα boundaries."""
    p = rsa_discs((256, 256), 0.45, 8.0, seed=1)
    m = p.labels == 1
    s = spacing(boundary_densities(m, label_particles(m, split_touching=True)))
    assert 0 < s.contiguity < 0.2


@pytest.mark.parametrize("periodic", [False, True])
def test_nearest_neighbour_poisson(periodic):
    """Poisson points: mean nearest-neighbour distance 1/(2√λ) within 4 % (Clark–Evans R ≈ 1),
    with the Hanisch border correction or the periodic box.

    Source: Clark & Evans (1954), Ecology 35, 445; Hanisch (1984).
    """
    rng = np.random.default_rng(7)
    pts = rng.random((4000, 2)) * [100.0, 50.0]
    nn = nearest_neighbour(pts, (100.0, 50.0), periodic=periodic)
    assert nn.mean == pytest.approx(0.5 / math.sqrt(4000 / 5000), rel=0.04)
    assert nn.clark_evans == pytest.approx(1.0, abs=0.04)


def test_nearest_neighbour_3d_and_lattice():
    """A periodic cubic lattice of step a: every nearest neighbour at a; Clark–Evans R equals
    a/(Γ(4/3)(3/(4π))^(1/3)·a) for intensity 1/a³.

    Source: Clark & Evans (1954) (Poisson mean Γ(1 + 1/d)/(λV_d)^(1/d)); lattice geometry.
    """
    g = (np.mgrid[:6, :6, :6].reshape(3, -1).T + 0.5) * 3.0
    nn = nearest_neighbour(g, (18.0, 18.0, 18.0), periodic=True)
    assert nn.mean == pytest.approx(3.0)
    assert nn.clark_evans == pytest.approx(1 / (math.gamma(4 / 3) * (3 / (4 * math.pi)) ** (1 / 3)))
    with pytest.raises(InputError):
        nearest_neighbour(g, (18.0, 18.0))


def boolean_discs(shape, n, radius, seed):
    """Union of n discs with uniform random centres in a periodic cell (Boolean model)."""
    rng = np.random.default_rng(seed)
    covered = np.zeros(shape, bool)
    grids = np.ogrid[tuple(slice(0, s) for s in shape)]
    for c in rng.random((n, len(shape))) * shape:
        d2 = 0
        for g, ci, s in zip(grids, c, shape):
            d = g - ci
            d2 = d2 + (d - s * np.round(d / s)) ** 2
        covered |= d2 < radius ** 2
    return covered


def lens_2d(r, radius):
    r = np.minimum(r, 2 * radius)
    return 2 * radius ** 2 * np.arccos(r / (2 * radius)) - r / 2 * np.sqrt(4 * radius ** 2 - r ** 2)


@pytest.mark.parametrize("periodic", [True, False])
def test_s2_of_boolean_discs(periodic):
    """Matrix of a Boolean model of discs: S2(r) = φ²·exp(λ·lens(r)) with φ = exp(−λπR²),
    within 0.01; correlation length (1/e point) within 5 %.

    Source: Matheron (1975) Random Sets and Integral Geometry; Torquato (2002), ch. 5
    (covariance of the Boolean model).
    """
    R = 8.0
    covered = boolean_discs((512, 512), 650, R, seed=5)
    c = two_point_correlation(~covered, r_max=40, periodic=periodic)
    phi = c.fraction
    lam = -math.log(phi) / (math.pi * R * R)
    theory = phi ** 2 * np.exp(lam * lens_2d(c.r, R))
    assert np.max(np.abs(c.s2 - theory)) < 0.01
    assert c.s2[0] == pytest.approx(phi)

    def norm(r):
        return (phi ** 2 * math.exp(lam * lens_2d(r, R)) - phi ** 2) / (phi - phi ** 2) - math.exp(-1)
    assert c.correlation_length == pytest.approx(brentq(norm, 0.1, 2 * R), rel=0.05)


def test_s2_of_boolean_spheres_3d():
    """3D Boolean spheres: S2 of the matrix = φ²·exp(λ·lens₃(r)), lens₃ = (π/12)(4R + r)(2R − r)²,
    within 0.015.

    Source: Torquato (2002), ch. 5 (Boolean model of spheres); lens volume from elementary
    geometry.
    """
    R = 5.0
    covered = boolean_discs((64, 64, 64), 300, R, seed=2)
    c = two_point_correlation(~covered, r_max=16, periodic=True)
    phi = c.fraction
    lam = -math.log(phi) / (4 / 3 * math.pi * R ** 3)
    r = np.minimum(c.r, 2 * R)
    theory = phi ** 2 * np.exp(lam * math.pi / 12 * (4 * R + r) * (2 * R - r) ** 2)
    assert np.max(np.abs(c.s2 - theory)) < 0.015


def test_s2_bad_input():
    """Common practice (no source): lags beyond half the image are refused."""
    with pytest.raises(InputError, match="r_max"):
        two_point_correlation(np.zeros((32, 32), bool), r_max=20)
    with pytest.raises(InputError):
        two_point_correlation(np.zeros(32, bool))


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 2**31 - 1), st.booleans())
def test_s2_equals_brute_force_pair_counts(seed, periodic):
    """Radial S2 equals the ring average of directly counted pair fractions, lag by lag
    (inside-image pairs, or periodic pairs with np.roll).

    Source: definition of S2 (Torquato 2002, ch. 2) — an independent direct count.
    """
    rng = np.random.default_rng(seed)
    m = rng.random((23, 31)) < rng.uniform(0.1, 0.9)
    c = two_point_correlation(m, r_max=4, periodic=periodic)
    sums, counts = np.zeros(5), np.zeros(5)
    for dy in range(-4, 5):
        for dx in range(-4, 5):
            ring = int(np.rint(math.hypot(dy, dx)))
            if ring > 4:
                continue
            if periodic:
                value = np.mean(m & np.roll(m, (-dy, -dx), axis=(0, 1)))
            else:
                a = m[max(0, -dy):m.shape[0] - max(0, dy), max(0, -dx):m.shape[1] - max(0, dx)]
                b = m[max(0, dy):m.shape[0] - max(0, -dy), max(0, dx):m.shape[1] - max(0, -dx)]
                value = np.mean(a & b)
            sums[ring] += value
            counts[ring] += 1
    assert np.allclose(c.s2, sums / counts, atol=1e-12)
    assert c.s2[0] == pytest.approx(m.mean())


@pytest.mark.parametrize("share, ratio", [(0.5, 0.6), (0.2, 0.4), (0.8, 0.7)])
def test_hollow_spheres_inverts_the_section_shares(share, ratio):
    """A share η of spheres hollow with inner/outer ratio q: a random plane shows a hole in
    a share n = ηq of the sections and the cores fill A = ηq³ of the area (Wicksell 1925:
    section heights uniform over the diameter; Delesse 1847); the model recovers η and q."""
    h = hollow_spheres(share * ratio, share * ratio ** 3)
    assert h.share == pytest.approx(share) and h.ratio == pytest.approx(ratio)


def test_hollow_spheres_all_hollow_and_solid():
    """Above ALL_HOLLOW every sphere is hollow with q = A^(1/3) (the area estimate alone);
    without holed sections or with a negligible core area the particles are solid; shares
    outside [0, 1] are refused (construction of the model; Delesse 1847)."""
    h = hollow_spheres(0.5, 0.125)                  # η = 1, q = 0.5: n = 0.5, A = 0.125
    assert h.share == 1.0 and h.ratio == pytest.approx(0.5)
    h = hollow_spheres(0.48, 0.125)                 # holes missed in small sections: η = 0.94
    assert h.share == 1.0 and h.ratio == pytest.approx(0.5) and ALL_HOLLOW < 1
    assert hollow_spheres(0.0, 0.1).ratio is None
    assert hollow_spheres(0.3, 0.001).share == 0.0
    with pytest.raises(InputError):
        hollow_spheres(1.2, 0.1)
