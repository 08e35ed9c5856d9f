"""Tests of polisect.model3d.reconstruct: section statistics, volume plan, reconstruction, 3D estimate."""

import math

import numpy as np
import pytest
from scipy import stats

from polisect import Material
from polisect.core.errors import InputError
from polisect.core.materials import get_material
from polisect.model3d.packing import pack_spheres
from polisect.core.phasemap import Phase, PhaseMap
from polisect.model3d.reconstruct import (compare_2d, draw_diameters, estimate_3d, plan_volume,
                                          reconstruct, section_statistics)
from polisect.properties.records import (Conductivity, Effective, Elasticity, Expansion, Solver,
                                         Spread, value_of)


def _two_d(k=None, E=None, alpha=None):
    """A 2D section's effective properties with only the isotropic values set."""
    solver = Solver("fft", 1, 0.0, 1e-6, True)
    return Effective(
        2, "generalized-plane-strain", "2D test section", None, "x, y",
        None if k is None else Conductivity(k * np.eye(2), k, 0.0, solver),
        None if E is None else Elasticity(np.eye(3), E, None, None, None, 0.0,
                                          "generalized-plane-strain", solver),
        None if alpha is None else Expansion(alpha * np.eye(2), alpha, alpha, 0.0, solver))
from polisect.model3d.synth import Inclusions, compose, laminate
from polisect.pipeline.result import Result, Source
from polisect.present import record

MATRIX, SHELL, PORE, SOLID = 1, 2, 0, 3


def section_image(centres, radii, inner, labels, cores, box, z, n_px, matrix=MATRIX):
    """Exact section x2 = z of a periodic sphere arrangement on an n_px² pixel grid
    (pixel centres; independent of the package's rasteriser)."""
    h = box / n_px
    img = np.full((n_px, n_px), matrix, dtype=np.int32)
    dz = centres[:, 2] - z
    dz -= box * np.round(dz / box)
    for c, r, ri, lab, core, d in zip(centres, radii, inner, labels, cores, dz):
        if abs(d) >= r:
            continue
        rho = math.sqrt(r * r - d * d) / h
        rho_in = math.sqrt(ri * ri - d * d) / h if abs(d) < ri else 0.0
        cy, cx = c[0] / h - 0.5, c[1] / h - 0.5
        ys = np.arange(int(np.floor(cy - rho)), int(np.ceil(cy + rho)) + 1)
        xs = np.arange(int(np.floor(cx - rho)), int(np.ceil(cx + rho)) + 1)
        dist = np.hypot(*np.meshgrid(ys - cy, xs - cx, indexing="ij"))
        block = img[np.ix_(ys % n_px, xs % n_px)]
        block[dist < rho] = lab
        block[dist < rho_in] = core
        img[np.ix_(ys % n_px, xs % n_px)] = block
    return img


@pytest.fixture(scope="module")
def spheres():
    """Lognormal spheres (mean radius 1, cv 0.15) at a volume fraction of 0.25, box 40."""
    rng = np.random.default_rng(11)
    s2 = np.log1p(0.15 ** 2)
    radii = rng.lognormal(-s2 / 2, np.sqrt(s2), 4000)
    box = float((4 / 3 * np.pi * np.sum(radii ** 3) / 0.25) ** (1 / 3))
    p = pack_spheres(radii, box, seed=12)
    return p.centres, p.radii, box


def volume_d50(d):
    order = np.argsort(d)
    c = np.cumsum(d[order] ** 3)
    return d[order][np.searchsorted(c, 0.5 * c[-1])]


def test_hollow_spheres_ratio_share_and_size(spheres):
    """All spheres hollow, inner/outer 0.5, pores inside: the section gives a hollow share
    of 1 and q within 0.03 (Delesse within the particles: core area share = q³), the core
    phase, the family fraction (filled outlines, Delesse 1847; the open cores of particles
    cut by the border are left out, 0.2 %), and the volume-weighted D50 within 5 %
    (Saltykov 1967)."""
    c, r, box = spheres
    img = section_image(c, r, 0.5 * r, np.full(r.size, SHELL), np.full(r.size, PORE), box,
                        box / 2, 800)
    s = section_statistics(img, box / 800, matrix_label=MATRIX)
    (fam,) = s.families
    assert fam.label == SHELL and fam.core_label == PORE
    assert fam.hollow_share == 1.0
    assert fam.hollow_ratio == pytest.approx(0.5, abs=0.03)
    assert fam.fraction == pytest.approx(np.mean(img != MATRIX), abs=2e-3)
    assert fam.volume_quantile(0.5) == pytest.approx(volume_d50(2 * r), rel=0.05)
    assert not s.warnings


def test_mixed_hollow_and_solid(spheres):
    """Half the spheres hollow with q = 0.6: the hollow sections are a share ηq of all and
    the core area a share ηq³ (Wicksell-type reasoning: a plane cuts the core of a sphere it
    cuts with probability q), so η ≈ 0.5 and q ≈ 0.6."""
    c, r, box = spheres
    hollow = np.random.default_rng(3).random(r.size) < 0.5
    img = section_image(c, r, np.where(hollow, 0.6 * r, 0.0), np.full(r.size, SHELL),
                        np.full(r.size, PORE), box, box / 3, 800)
    (fam,) = section_statistics(img, box / 800, matrix_label=MATRIX).families
    assert fam.hollow_share == pytest.approx(0.5, abs=0.12)
    assert fam.hollow_ratio == pytest.approx(0.6, abs=0.06)


def test_pores_inside_particles_are_cores_not_pores(spheres):
    """Free pores and hollow-particle cores share a label; only the free ones form the pore
    family, the cores count in the hollow family's fraction (construction; open cores of
    particles cut by the border are neither, 0.2 %)."""
    c, r, box = spheres
    kind = np.random.default_rng(5).random(r.size) < 0.7
    labels = np.where(kind, SHELL, PORE)
    img = section_image(c, r, np.where(kind, 0.5 * r, 0.0), labels, np.full(r.size, PORE),
                        box, box / 2, 800)
    s = section_statistics(img, None, matrix_label=MATRIX)
    fams = {f.label: f for f in s.families}
    assert set(fams) == {SHELL, PORE} and s.units == "px"
    assert fams[SHELL].hollow_share == 1.0 and fams[PORE].hollow_ratio is None
    total = fams[SHELL].fraction + fams[PORE].fraction
    assert total == pytest.approx(np.mean(img != MATRIX), abs=2e-3)
    share = np.sum(4 / 3 * np.pi * r[~kind] ** 3) / np.sum(4 / 3 * np.pi * r ** 3)
    assert fams[PORE].fraction / total == pytest.approx(share, abs=0.06)


def test_families_are_the_reports_particles():
    """One particle path: the 3D estimate's family is `phase_particles` of the report with
    touching particles split — the same sphere classes and weights, the same sections, the
    same hollow-sphere model (construction; common practice, no source)."""
    from polisect.measure.morphology import phase_particles

    lab = compose((192, 192), [Inclusions(SHELL, 0.2, 7.0, 1.5, hollow_ratio=0.5,
                                          core_label=PORE)], seed=4, matrix_label=MATRIX).labels
    m = Material(conductivity=1.0)
    pm = PhaseMap(lab, (Phase(MATRIX, "m", m), Phase(SHELL, "s", m), Phase(PORE, "p", m)), 0.5)
    (fam,) = section_statistics(lab, 0.5, matrix_label=MATRIX).families
    pp = phase_particles(pm, SHELL, split_touching=True, n_boot=0)
    keep = pp.spheres.number_density > 0
    assert np.array_equal(fam.diameters, pp.spheres.diameters[keep])
    assert np.array_equal(fam.weights, pp.spheres.number_density[keep])
    assert fam.sections == pp.size.count_measured
    assert (fam.hollow_share, fam.hollow_ratio) == (pp.hollow.share, pp.hollow.ratio)
    assert fam.core_label == pp.core_label == PORE


def test_warnings_for_phases_that_are_not_spheres():
    """A band crossing the section and elongated particles are no spheres: the statistics
    say so (the model's limits, stated in docs/methods.md); a phase with no section inside
    the image (layers) cannot be measured at all."""
    yy, xx = np.mgrid[:240, :240]
    img = np.zeros((240, 240), np.int32)
    for cy in range(20, 240, 40):
        for cx in range(20, 240, 40):
            img[np.hypot(yy - cy, xx - cx) < 8] = 1
    img[118:122, :] = 1
    assert "crosses the whole section" in " ".join(section_statistics(img).warnings)
    rods = np.zeros((200, 200), np.int32)
    for k in range(8):
        rods[10 + 24 * k:16 + 24 * k, 20 + 10 * k:80 + 10 * k] = 1
    assert "elongated" in " ".join(section_statistics(rods).warnings)
    with pytest.raises(InputError, match="interconnected"):
        section_statistics(laminate((200, 200), 0.3, periods=4), matrix_label=0)


def test_section_statistics_bad_input():
    """A volume, a single phase, a matrix label that is absent."""
    with pytest.raises(InputError, match="2D section"):
        section_statistics(np.zeros((4, 4, 4), int))
    with pytest.raises(InputError, match="single phase"):
        section_statistics(np.zeros((8, 8), int))
    with pytest.raises(InputError, match="does not occur"):
        section_statistics(np.eye(8, dtype=int), matrix_label=5)


@pytest.fixture(scope="module")
def section_stats():
    lab = compose((384, 384), [Inclusions(SOLID, 0.2, 7.0, 1.0),
                               Inclusions(SHELL, 0.12, 9.0, 1.0, hollow_ratio=0.5,
                                          core_label=PORE),
                               Inclusions(PORE, 0.04, 3.0)], seed=2, matrix_label=MATRIX).labels
    return lab, section_statistics(lab, 0.5)


def test_plan_meets_both_rules_within_budget(section_stats):
    """D10 spans ≥ 6 voxels and the box is ≥ 4 D90 when the budget allows (the rule of
    the issue); the spare room is shared: both exceed their minimum by the same factor."""
    _, s = section_stats
    p = plan_volume(s, voxels=160)
    assert p.compromise is None and p.voxels == 160
    gain_res, gain_box = p.d10 / p.voxel_size / 6, p.box / max(4 * p.d90, 2.2 * p.d_max)
    assert gain_res >= 1 and gain_box >= 1
    assert gain_res == pytest.approx(gain_box, rel=1e-9)


def test_plan_says_what_a_short_budget_costs(section_stats):
    """A budget too small for both rules keeps the box and says that D10 is coarse."""
    _, s = section_stats
    p = plan_volume(s, voxels=24)
    assert p.box >= 4 * p.d90 * (1 - 1e-12)
    assert p.d10 / p.voxel_size < 6
    assert "D10 spans only" in p.compromise and "--voxels" in p.compromise
    with pytest.raises(InputError, match="voxels"):
        plan_volume(s, voxels=8)


def test_draw_diameters_volume_and_frequencies():
    """The drawn spheres fill the volume exactly, all class diameters are scaled by one
    factor close to 1, and the classes follow the weights (chi-square test,
    scipy.stats.chisquare; common practice, no source)."""
    d = np.array([1.0, 1.5, 2.0])
    w = np.array([5.0, 3.0, 2.0])
    out = draw_diameters(d, w, 4000.0, np.random.default_rng(1))
    assert np.sum(np.pi / 6 * out ** 3) == pytest.approx(4000.0, rel=1e-12)
    scale = [s for s in out[0] / d if np.all(np.min(np.abs(out[:, None] / s - d), 1) < 1e-9)]
    assert len(scale) == 1 and abs(scale[0] - 1) < 0.01
    counts = np.array([np.sum(np.isclose(out, x * scale[0])) for x in d])
    assert counts.sum() == out.size
    assert stats.chisquare(counts, w / w.sum() * out.size).pvalue > 0.01


def test_reconstruction_fractions_and_cores(section_stats):
    """The voxel fractions of a reconstruction match the section's (Delesse: V_V = A_A)
    within 0.01; hollow spheres carry cores of the core phase; the sphere diameters come
    from the unfolded classes (construction)."""
    lab, s = section_stats
    plan = plan_volume(s, voxels=64)
    rec = reconstruct(s, plan, seed=4)
    fr = rec.fractions()
    area = {v: float(np.mean(lab == v)) for v in (MATRIX, SHELL, SOLID, PORE)}
    for v in (MATRIX, SHELL, SOLID, PORE):
        assert fr[v] == pytest.approx(area[v], abs=0.01)
    fams = {f.label: (k, f) for k, f in enumerate(s.families)}
    k, shell = fams[SHELL]
    hollow = (rec.family == k) & (rec.inner_radii > 0)
    assert hollow.mean() / (rec.family == k).mean() == pytest.approx(shell.hollow_share)
    assert np.allclose(rec.inner_radii[hollow] / rec.packing.radii[hollow], shell.hollow_ratio)
    for k, f in enumerate(s.families):
        d = 2 * rec.packing.radii[rec.family == k] * plan.voxel_size
        ratio = d[:, None] / f.diameters[None, :]
        nearest = ratio[np.arange(d.size), np.argmin(np.abs(np.log(ratio)), axis=1)]
        assert np.allclose(nearest, nearest[0]) and abs(np.log(nearest[0])) < 0.05
    assert rec.packing.min_gap() >= 0


def test_spread_is_a_student_t_interval():
    """Mean ± t·s/√n, t = 4.303 for 2 degrees of freedom at 95 % (ASTM E562 table)."""
    s = Spread.of([1.0, 2.0, 3.0])
    assert s.mean == 2.0
    assert s.ci95[1] - 2.0 == pytest.approx(4.303 / math.sqrt(3), rel=1e-3)
    assert Spread.of([5.0]).ci95 is None


def uniform_phasemap(section, material):
    return PhaseMap(section, tuple(Phase(v, f"p{v}", material) for v in np.unique(section)), 0.5)


def test_uniform_material_returns_its_own_properties(section_stats):
    """All phases of one material: the 3D estimate is that material's k, E, ν and α in every
    realization (a uniform body; CHECKS.md solver identities)."""
    lab, _ = section_stats
    m = get_material("alumina")
    est = estimate_3d(uniform_phasemap(lab, m), voxels=24, realizations=2, tol=1e-8)
    assert est.conductivity.mean == pytest.approx(m.conductivity, rel=1e-6)
    assert est.youngs_modulus.mean == pytest.approx(m.youngs_modulus, rel=1e-6)
    assert est.poisson_ratio.mean == pytest.approx(m.poisson_ratio, rel=1e-6)
    assert est.expansion.mean == pytest.approx(m.expansion, rel=1e-6)
    assert est.conductivity.ci95[1] - est.conductivity.ci95[0] < 1e-6 * m.conductivity


def test_hill_equal_shear_modulus_in_the_reconstructions(section_stats):
    """Equal shear moduli: 1/(K* + 4μ/3) = Σ fᵢ/(Kᵢ + 4μ/3) for any geometry (Hill 1963),
    with the voxel fractions of the realization; within 1 % on voxel elements (CHECKS.md;
    the discretization error falls with the voxel size)."""
    lab, _ = section_stats
    mu = 40.0
    bulk = {MATRIX: 80.0, SHELL: 200.0, SOLID: 150.0, PORE: 60.0}
    mats = {v: Material(youngs_modulus=9 * k * mu / (3 * k + mu),
                        poisson_ratio=(3 * k - 2 * mu) / (2 * (3 * k + mu)), name=f"p{v}")
            for v, k in bulk.items()}
    pm = PhaseMap(lab, tuple(Phase(v, f"p{v}", m) for v, m in mats.items()), 0.5)
    est = estimate_3d(pm, ["elasticity"], voxels=48, realizations=1, tol=1e-8)
    (run,) = est.realizations
    hill = 1 / sum(f / (bulk[v] + 4 * mu / 3) for v, f in run.fractions.items()) - 4 * mu / 3
    assert est.bulk_modulus.mean == pytest.approx(hill, rel=0.01)
    assert est.shear_modulus.mean == pytest.approx(mu, rel=1e-6)
    assert est.bulk_modulus.ci95 is None and any("single realization" in w
                                                 for w in est.warnings)


def test_estimate_json_has_the_effective_keys_and_the_spread(section_stats):
    """The effective_3d block: the keys of the effective block, each scalar with its
    interval and per-realization values, solver facts, plan, section and 2D comparison."""
    lab, _ = section_stats
    mats = {MATRIX: get_material("mullite"), SHELL: get_material("alumina"),
            SOLID: get_material("silicon-carbide"), PORE: get_material("air")}
    pm = PhaseMap(lab, tuple(Phase(v, m.name, m) for v, m in mats.items()), 0.5)
    two_d = _two_d(k=10.0, E=200.0, alpha=5e-6)
    est = estimate_3d(pm, voxels=20, realizations=2, tol=1e-4, effective_2d=two_d)
    s = est.summary()
    assert s.effective.elasticity.poisson_ratio.ci95 is not None
    d = record.to_dict(Result(Source(None, None, lab.shape, 0.5, "given"), (), "test",
                              effective_3d=s))["effective_3d"]
    assert d["dimension"] == 3 and d["realizations"] == 2
    for prop, keys in (("conductivity", ("tensor_W_mK", "mean_W_mK", "anisotropy", "solver")),
                       ("elasticity", ("stiffness_GPa", "youngs_modulus_GPa", "poisson_ratio",
                                       "bulk_modulus_GPa", "shear_modulus_GPa", "solver")),
                       ("expansion", ("tensor_per_K", "mean_per_K", "solver"))):
        assert set(keys) <= set(d[prop])
    el = d["elasticity"]
    lo, hi = el["youngs_modulus_GPa_ci95"]
    assert lo <= el["youngs_modulus_GPa"] <= hi
    assert len(el["youngs_modulus_GPa_realizations"]) == 2
    assert np.shape(el["stiffness_GPa"]) == (6, 6)
    assert d["elasticity"]["solver"]["realizations"] == 2
    assert any("D10 spans only" in w for w in d["warnings"])
    quantities = {c["quantity"]: c for c in d["versus_2d"]}
    assert set(quantities) == {"mean_W_mK", "youngs_modulus_GPa", "mean_per_K"}
    c = quantities["mean_W_mK"]
    assert c["difference_pct"] == pytest.approx(100 * (d["conductivity"]["mean_W_mK"] - 10) / 10)
    assert ("higher" if c["difference_pct"] > 0 else "lower") in c["sentence"]


def test_compare_2d_within_spread_says_so():
    """A 2D value inside the realizations' interval is reported as agreeing."""
    est = type("E", (), {"conductivity": Spread.of([9.0, 10.0, 11.0]), "youngs_modulus": None,
                         "shear_modulus": None, "poisson_ratio": None, "expansion": None})
    (c,) = compare_2d(est, _two_d(k=10.5))
    assert "agree" in c.sentence and c.difference_pct == pytest.approx(-100 / 21)


def test_estimate_bad_input(section_stats):
    """Volumes, bad properties, bad realization counts and a missing matrix say what to do."""
    lab, _ = section_stats
    pm = uniform_phasemap(lab, get_material("alumina"))
    with pytest.raises(InputError, match="already a volume"):
        estimate_3d(uniform_phasemap(np.zeros((4, 4, 4), np.int32), get_material("alumina")))
    with pytest.raises(InputError, match="choose from"):
        estimate_3d(pm, ["viscosity"])
    with pytest.raises(InputError, match="realizations"):
        estimate_3d(pm, realizations=0)
    marked = PhaseMap(lab, tuple(Phase(p.label, p.name, p.material, True) for p in pm.phases))
    with pytest.raises(InputError, match="matrix"):
        estimate_3d(marked)


def test_plan_with_a_given_voxel_size(section_stats):
    """A given voxel size is used as it is; the rules it breaks are named, and a box too small
    for the largest sphere is refused."""
    _, s = section_stats
    p = plan_volume(s, voxels=64, voxel_size=0.5)
    assert p.voxel_size == 0.5 and p.box == 32.0
    assert p.compromise is None or "with the voxel size given" in p.compromise
    coarse = plan_volume(s, voxels=40, voxel_size=2.0)
    assert "D10 spans only" in coarse.compromise
    with pytest.raises(InputError, match="cannot hold the largest sphere"):
        plan_volume(s, voxels=16, voxel_size=0.5)


def _validation(shape, scale, properties, voxels, realizations, seed=7, tol=1e-5):
    """A known 3D structure (synth: SiC particles, hollow alumina spheres with pore cores and
    free pores, total 0.35, in mullite), one section through its middle, the 3D estimate from
    that section alone at the section's pixel size, the original volume's own 3D properties,
    and the 2D section solved as a prismatic structure."""
    from polisect.properties.effective import solve_effective
    from polisect.properties.solve import conductivity, elasticity, expansion

    mats = {MATRIX: get_material("mullite"), SOLID: get_material("silicon-carbide"),
            SHELL: get_material("alumina"), PORE: get_material("air")}
    original = compose(shape, [Inclusions(SOLID, 0.17, 4.5 * scale, 0.9 * scale),
                               Inclusions(SHELL, 0.13, 5.5 * scale, 1.0 * scale,
                                          hollow_ratio=0.5, core_label=PORE),
                               Inclusions(PORE, 0.05, 2.5 * scale, 0.5 * scale)],
                       seed=seed, matrix_label=MATRIX).labels
    pm = PhaseMap(original[shape[0] // 2], tuple(Phase(v, m.name, m) for v, m in mats.items()),
                  1.0)
    two_d = solve_effective(pm, properties, tol=1e-6, maps=False).effective
    est = estimate_3d(pm, properties, voxels=voxels, realizations=realizations, tol=tol,
                      voxel_size=1.0, effective_2d=two_d)
    volume = np.ascontiguousarray(original.T)
    truth, e3 = {}, est.summary().effective
    if "conductivity" in properties:
        truth["mean_W_mK"] = conductivity(volume, mats, tol=tol).mean()
    if "elasticity" in properties or "expansion" in properties:
        stiff = elasticity(volume, mats, tol=tol)
        iso = stiff.isotropic()
        if "elasticity" in properties:
            truth.update(youngs_modulus_GPa=iso.youngs_modulus,
                         shear_modulus_GPa=iso.shear_modulus, bulk_modulus_GPa=iso.bulk_modulus)
        if "expansion" in properties:
            truth["mean_per_K"] = expansion(volume, mats, tol=tol, stiffness=stiff).mean()
    rows = []
    for prop, key, attr in (("conductivity", "mean_W_mK", "mean"),
                            ("elasticity", "youngs_modulus_GPa", "youngs_modulus"),
                            ("elasticity", "shear_modulus_GPa", "shear_modulus"),
                            ("elasticity", "bulk_modulus_GPa", "bulk_modulus"),
                            ("expansion", "mean_per_K", "mean")):
        if key in truth:
            spread = getattr(getattr(e3, prop), attr)
            block_2d = getattr(two_d, prop)
            rows.append((key, truth[key], spread.mean, spread.ci95,
                         None if block_2d is None else value_of(getattr(block_2d, attr))))
    print(f"\n3D estimate from one {shape[1]}×{shape[2]} section of a {shape} volume "
          f"({realizations} reconstructions of {voxels}³):")
    for key, t, v, ci, v2 in rows:
        print(f"  {key:<20} original {t:.5g}  3D estimate {v:.5g} ({100 * (v - t) / t:+.2f} %, "
              f"95 % {ci[0]:.5g}–{ci[1]:.5g})  2D section {v2 if v2 is None else f'{v2:.5g}'}"
              + ("" if v2 is None else f" ({100 * (v2 - t) / t:+.2f} %)"))
    return {key: (t, v) for key, t, v, _, _ in rows}


def test_3d_estimate_from_a_section_small():
    """Fast variant of the validation below, conductivity only, on a 160² section with
    coarser particles: within 6 % (the fraction of a phase in one section this small deviates
    from the volume's by several per cent; the field-to-field scatter of ASTM E562 is of that
    order)."""
    out = _validation((24, 160, 160), 0.6, ["conductivity"], voxels=64, realizations=2,
                      tol=1e-4)
    t, v = out["mean_W_mK"]
    assert v == pytest.approx(t, rel=0.06)


@pytest.mark.slow
def test_3d_estimate_from_a_section_matches_the_volume():
    """A known 3D structure, one 400² section of it, the 3D estimate from that section alone
    (3 reconstructions, at the section's pixel size so that both carry the same voxel
    discretization): conductivity and expansion within 3 %, stiffness (E, G, K) within 5 %
    of the original volume's (the issue's acceptance limits; common practice, no source).
    The 2D section values are printed beside, for contrast."""
    out = _validation((40, 400, 400), 1.0, ["conductivity", "elasticity", "expansion"],
                      voxels=112, realizations=3)
    for key, rel in (("mean_W_mK", 0.03), ("mean_per_K", 0.03), ("youngs_modulus_GPa", 0.05),
                     ("shear_modulus_GPa", 0.05), ("bulk_modulus_GPa", 0.05)):
        t, v = out[key]
        assert v == pytest.approx(t, rel=rel), key


def test_temperatures_solve_the_same_volumes_again(section_stats):
    """The 3D estimate at a further set of phase properties equals a separate estimate with
    those properties and the same seed (the same volumes, solved from a warm start to the
    same tolerance; energy identity of CG, Strakoš & Tichý 2002, ETNA 13, 56)."""
    lab, _ = section_stats
    cool = {MATRIX: Material(conductivity=2.0, youngs_modulus=100.0, poisson_ratio=0.2),
            SOLID: Material(conductivity=30.0, youngs_modulus=400.0, poisson_ratio=0.23),
            SHELL: Material(conductivity=30.0, youngs_modulus=400.0, poisson_ratio=0.23),
            PORE: Material(conductivity=0.0, youngs_modulus=0.0, poisson_ratio=0.0)}
    hot = {MATRIX: Material(conductivity=1.5, youngs_modulus=90.0, poisson_ratio=0.21),
           SOLID: Material(conductivity=10.0, youngs_modulus=360.0, poisson_ratio=0.24),
           SHELL: Material(conductivity=10.0, youngs_modulus=360.0, poisson_ratio=0.24),
           PORE: Material(conductivity=0.1, youngs_modulus=0.0, poisson_ratio=0.0)}

    def phasemap(mats):
        return PhaseMap(lab, tuple(Phase(v, f"p{v}", m) for v, m in mats.items()), 0.5)

    both = estimate_3d(phasemap(cool), ["conductivity", "elasticity"], voxels=32,
                       realizations=2, tol=1e-7, temperatures=[(800.0, hot)])
    alone = estimate_3d(phasemap(hot), ["conductivity", "elasticity"], voxels=32,
                        realizations=2, tol=1e-7)
    ((t, at),) = both.at_temperatures
    assert t == 800.0
    for name in ("conductivity", "youngs_modulus", "poisson_ratio"):
        assert getattr(at, name).mean == pytest.approx(getattr(alone, name).mean, rel=1e-5)
    assert both.conductivity.mean > 1.5 * at.conductivity.mean
    assert at.summary().effective.conductivity.mean.mean == at.conductivity.mean
