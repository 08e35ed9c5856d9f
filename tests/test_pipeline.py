"""Tests of the analysis pipeline on synthetic sections of known composition."""

import numpy as np
import pytest
from scipy import ndimage as ndi

from polisect import InputError
from polisect.read.config import config_from_dict
from polisect.apps.run import write_outputs
from polisect.pipeline.analysis import analyze
from polisect.present.record import from_dict
from polisect.present.record import to_dict as json_form
from polisect.model3d.synth import Inclusions, compose

CONFIG = {"image": {"kind": "labels", "pixel_size_um": 1.0},
          "phase": [{"label": 0, "name": "matrix", "material": "mullite"},
                    {"label": 1, "name": "spheres", "material": "alumina", "particles": True},
                    {"label": 2, "name": "pore", "material": "air", "particles": False}],
          "solve": {"properties": ["conductivity"]}}


@pytest.fixture(scope="module")
def hollow_section():
    """Hollow alumina discs (inner/outer 0.6) with pore cores in a mullite matrix."""
    return compose((192, 192), [Inclusions(1, 0.3, 10.0, hollow_ratio=0.6, core_label=2,
                                           min_gap=2.0)], seed=5, matrix_label=0)


def test_fractions_of_a_label_image_are_exact(hollow_section):
    """Area fractions of a label image are pixel counts (Delesse 1847: A_A = V_V)."""
    a = analyze(hollow_section.labels, config_from_dict(CONFIG))
    d = json_form(a.result)
    for p in d["phases"]:
        assert p["fraction"] == pytest.approx(np.mean(hollow_section.labels == p["label"]))
        lo, hi = p["fraction_ci95"]
        assert lo <= p["fraction"] <= hi
    assert sum(p["fraction"] for p in d["phases"]) == pytest.approx(1.0)


def test_internal_porosity_is_kept_apart(hollow_section):
    """Every pore is a core by construction; a core cut by the image edge is open to the
    edge and not counted as enclosed. Expected: the area of the cores that lie wholly
    inside the image (digital discs, so 5 %)."""
    pk = hollow_section
    d = json_form(analyze(pk.labels, config_from_dict(CONFIG)).result)
    pore = next(p for p in d["phases"] if p["name"] == "pore")
    n = pk.labels.shape[0]
    r = pk.inner_radii[:, None]
    inside = np.all((pk.centres - r > 0) & (pk.centres + r < n - 1), axis=1)
    expected = np.sum(np.pi * pk.inner_radii[inside] ** 2) / pk.labels.size
    assert pore["inside_particles"] == pytest.approx(expected, rel=0.05)
    assert pore["inside_particles"] < pore["fraction"]


def test_hollow_particles_found_and_used_by_the_schemes(hollow_section):
    """Inner/outer ratio 0.6 by construction; the digital ratio is within 0.03 of it."""
    d = json_form(analyze(hollow_section.labels, config_from_dict(CONFIG)).result)
    sph = d["particles"]["spheres"]
    assert sph["hollow_fraction"] > 0.9
    assert sph["inner_outer_ratio_mean"] == pytest.approx(0.6, abs=0.03)
    assert any("treated as hollow" in n for n in d["notes"])
    lo, hi = d["bounds"]["conductivity_W_mK"]["lower"], d["bounds"]["conductivity_W_mK"]["upper"]
    assert lo <= d["schemes"]["mori-tanaka"]["conductivity_W_mK"] <= hi
    assert d["schemes_3d"] and d["bounds_3d"]


def test_pore_particles_leave_out_the_cores_of_hollow_particles():
    """Hollow discs with pore cores plus free pore discs of another size: the pore phase's
    particle statistics are those of the free pores only (their count: the pore regions
    that touch no shell; their size: 4 px radius by construction), as the schemes and the 3D estimate treat the cores (common practice,
    no source: a core is part of its hollow particle, not a pore of its own)."""
    pk = compose((256, 256), [Inclusions(1, 0.25, 12.0, hollow_ratio=0.6, core_label=2,
                                         min_gap=3.0),
                              Inclusions(2, 0.03, 4.0, min_gap=3.0)], seed=7, matrix_label=0)
    comp, n = ndi.label(pk.labels == 2, structure=np.ones((3, 3)))
    near_shell = np.unique(comp[ndi.binary_dilation(pk.labels == 1, np.ones((3, 3)))])
    free = n - np.count_nonzero(near_shell)            # pore regions touching no shell
    cfg = dict(CONFIG, phase=[dict(CONFIG["phase"][0]), dict(CONFIG["phase"][1]),
                              dict(CONFIG["phase"][2], particles=True)])
    a = analyze(pk.labels, config_from_dict(cfg))
    pores = next(p for p in a.particles if p.name == "pore")
    assert pores.table.count == free
    assert pores.size.ecd_d50.value == pytest.approx(8.0, rel=0.1)
    assert any("outside the cores" in n for n in a.result.notes)


def test_bounds_of_hollow_particles_hold_the_measured_fractions():
    """With hollow particles, and with pores inside and outside them, the bounds are the
    Hashin–Shtrikman bounds of the measured fractions (Hashin & Shtrikman 1962, multiphase
    form [Σ f/(k + (d−1)k₀)]⁻¹ − (d−1)k₀; fractions by Delesse's principle), in 2D and 3D,
    and the solved conductivity lies within them. Small and large hollow particles make the
    number mean of the particles' ratios differ from the area share of the cores."""
    from polisect.core.materials import get_material

    labels = compose((256, 256), [
        Inclusions(1, 0.15, 14.0, hollow_ratio=0.7, core_label=2, min_gap=2.0),
        Inclusions(1, 0.10, 4.0, hollow_ratio=0.3, core_label=2, min_gap=2.0),
        Inclusions(2, 0.04, 3.0)], seed=2, matrix_label=0).labels
    d = json_form(analyze(labels, config_from_dict(CONFIG)).result)
    assert any("treated as hollow" in n for n in d["notes"])
    f = np.array([np.mean(labels == k) for k in range(3)])
    k = np.array([get_material(m).conductivity for m in ("mullite", "alumina", "air")])
    for key, dim in (("bounds", 2), ("bounds_3d", 3)):
        lo, hi = (np.sum(f / (k + (dim - 1) * k0)) ** -1 - (dim - 1) * k0
                  for k0 in (k.min(), k.max()))
        b = d[key]["conductivity_W_mK"]
        assert b["lower"] == pytest.approx(lo, rel=1e-6)
        assert b["upper"] == pytest.approx(hi, rel=1e-6)
    solved = d["effective"]["conductivity"]["mean_W_mK"]
    assert d["bounds"]["conductivity_W_mK"]["lower"] <= solved <= \
        d["bounds"]["conductivity_W_mK"]["upper"]


def test_labels_without_a_phase_entry_are_refused():
    labels = np.zeros((32, 32), np.int32)
    labels[:4] = 7
    with pytest.raises(InputError, match=r"\[7\]"):
        analyze(labels, config_from_dict(CONFIG))


def test_without_materials_only_fractions_and_particles():
    labels = compose((96, 96), [Inclusions(1, 0.2, 6.0)], seed=1, matrix_label=0).labels
    d = json_form(analyze(labels, config_from_dict({"image": {"kind": "labels"}})).result)
    assert d["schemes"] is None and d["effective"] is None
    assert any("pixel size unknown" in w for w in d["warnings"])
    assert d["particles"]["phase-1"]["units"] == "px"


def test_outputs_are_complete_and_atomic(hollow_section, tmp_path):
    cfg = config_from_dict(CONFIG)
    paths = write_outputs(analyze(hollow_section.labels, cfg), tmp_path, stem="s", config=cfg)
    for p in (paths.json, paths.csv, paths.report, paths.phasemap, paths.overlay,
              paths.particles_csv):
        assert p and (tmp_path / p).stat().st_size > 0
    assert not list(tmp_path.glob(".tmp-*"))
    header = (tmp_path / paths.particles_csv).read_text().splitlines()[0]
    assert header.startswith("phase,")


def test_multipage_tiff_volume_through_the_pipeline(tmp_path):
    """A synthetic volume written as a multi-page TIFF comes back with its shape, voxel size
    and exact volume fractions (Delesse: voxel counts), cubic voxels checked."""
    from polisect.read.image import write_tiff
    from polisect.model3d.synth import rsa_spheres

    labels = rsa_spheres((16, 24, 32), 0.2, 4.0, seed=3, hollow_ratio=0.5).labels
    path = tmp_path / "volume.tif"
    write_tiff(path, labels.astype(np.uint8), pixel_size_um=2.0)
    cfg = config_from_dict({**CONFIG, "image": {"kind": "labels", "volume": True,
                                                "slice_spacing_um": 2.0}})
    d = json_form(analyze(path, cfg).result)
    assert d["source"]["shape"] == [16, 24, 32]
    assert d["source"]["pixel_size_um"] == pytest.approx(2.0)
    for p in d["phases"]:
        assert p["fraction"] == pytest.approx(np.mean(labels == p["label"]))
    assert d["effective"]["dimension"] == 3
    assert json_form(from_dict(d)) == d
    bad = config_from_dict({**CONFIG, "image": {"kind": "labels", "volume": True,
                                                "slice_spacing_um": 3.0}})
    with pytest.raises(InputError, match="cubic voxels"):
        analyze(path, bad)


def test_estimate_3d_block(hollow_section):
    """[solve] estimate_3d = true adds effective_3d beside the 2D effective block, with the
    2D values compared."""
    cfg = config_from_dict({**CONFIG, "solve": {"properties": ["conductivity"],
                                                "estimate_3d": True, "voxels": 24,
                                                "realizations": 2}})
    d = json_form(analyze(hollow_section.labels, cfg).result)
    e3 = d["effective_3d"]
    assert e3["dimension"] == 3 and e3["realizations"] == 2
    assert e3["versus_2d"][0]["section_2d"] == pytest.approx(
        d["effective"]["conductivity"]["mean_W_mK"])
    assert "estimate_3d" in d["timings_s"]
    assert json_form(from_dict(d)) == d                     # the JSON form reads back exactly


def test_estimate_3d_that_cannot_be_built_leaves_a_warning():
    """A section whose particle phase crosses the whole image (layers) has no sphere sizes:
    the 2D results stand and a warning says why there is no 3D estimate."""
    from polisect.model3d.synth import laminate

    layers = laminate((64, 64), 0.3, periods=4)
    cfg = config_from_dict({**CONFIG, "phase": CONFIG["phase"][:2],
                            "solve": {"properties": ["conductivity"], "estimate_3d": True,
                                      "voxels": 16, "realizations": 1}})
    d = json_form(analyze(layers, cfg).result)
    assert d["effective_3d"] is None and d["effective"]["conductivity"] is not None
    assert any(w.startswith("3D estimate not built") and "interconnected" in w
               for w in d["warnings"])


def test_volume_with_solve_writes_a_report(tmp_path):
    """A voxel volume through the whole path: 3D solve, field maps of its middle slice,
    orthogonal sections in the report. A 3D checkerboard-free random structure: only the
    path is checked here (the solver is validated in tests/test_solve_*.py)."""
    labels = compose((24, 24, 24), [Inclusions(1, 0.2, 4.0)], seed=4, matrix_label=0).labels
    cfg = config_from_dict({"image": {"kind": "labels"},
                            "phase": [{"label": 0, "material": "aluminium"},
                                      {"label": 1, "material": "silicon-carbide"}],
                            "solve": {"properties": ["conductivity"]}})
    a = analyze(labels, cfg)
    assert a.result.effective.dimension == 3
    assert a.field_maps["heat_flux"].shape == (24, 24)
    paths = write_outputs(a, tmp_path, stem="vol", config=cfg)
    html = (tmp_path / paths.report).read_text()
    assert "orthogonal sections" in html and "Effective properties" in html


TEMPERATURES = [20.0, 500.0, 1000.0, 1200.0]


def _hot_config(phases):
    return config_from_dict({"image": {"kind": "labels", "pixel_size_um": 1.0},
                             "phase": phases,
                             "solve": {"properties": ["conductivity", "elasticity"],
                                       "temperatures_C": TEMPERATURES, "fields": False}})


def test_single_phase_gives_its_own_values_at_every_temperature():
    """A one-phase image is its phase: k(T) and E(T) of sintered alumina as tabulated
    (Munro, J. Am. Ceram. Soc. 80 (1997) 1919, E = 416, 390, 364, 354 GPa at 20, 500, 1000,
    1200 °C), interpolated by the library."""
    labels = np.zeros((32, 32), dtype=np.int32)
    r = analyze(labels, _hot_config([{"label": 0, "name": "a", "material": "alumina"}])).result
    from polisect import get_material

    alumina = get_material("alumina")
    assert [t.temperature_C for t in r.effective_by_temperature] == TEMPERATURES
    for t in r.effective_by_temperature:
        hot = alumina.at(t.temperature_C)
        assert t.effective.conductivity.mean == pytest.approx(hot.conductivity, rel=1e-6)
        assert t.effective.elasticity.youngs_modulus == pytest.approx(hot.youngs_modulus,
                                                                      rel=1e-6)
    assert [round(t.effective.elasticity.youngs_modulus) for t in
            r.effective_by_temperature] == [416, 390, 364, 354]


def test_laminate_gives_the_wiener_bounds_at_every_temperature():
    """Layers of alumina and mullite: along the layers the arithmetic, across them the
    harmonic mean of the phases' conductivities at each temperature (Wiener 1912)."""
    labels = np.zeros((32, 32), dtype=np.int32)
    labels[:, 16:] = 1
    cfg = _hot_config([{"label": 0, "name": "a", "material": "alumina"},
                       {"label": 1, "name": "m", "material": "mullite"}])
    r = analyze(labels, cfg).result
    from polisect import get_material

    for t in r.effective_by_temperature:
        k1 = get_material("alumina").at(t.temperature_C).conductivity
        k2 = get_material("mullite").at(t.temperature_C).conductivity
        k = t.effective.conductivity.tensor
        assert k[1, 1] == pytest.approx((k1 + k2) / 2, rel=1e-6)       # along (y)
        assert k[0, 0] == pytest.approx(2 / (1 / k1 + 1 / k2), rel=1e-6)   # across (x)


def test_a_temperature_without_data_is_left_out_with_a_warning():
    """A phase given as single numbers (20 °C only) cannot be solved hot: that temperature is
    left out with a warning naming the material; the room-temperature result stands (common
    practice, no source)."""
    labels = np.zeros((16, 16), dtype=np.int32)
    cfg = config_from_dict({"image": {"kind": "labels"},
                            "phase": [{"label": 0, "name": "bond", "conductivity": 2.0}],
                            "solve": {"properties": ["conductivity"],
                                      "temperatures_C": [20.0, 800.0]}})
    r = analyze(labels, cfg).result
    assert [t.temperature_C for t in r.effective_by_temperature] == [20.0]
    assert any(w.startswith("not solved at 800 °C") and "bond" in w for w in r.warnings)


def _grey_two_phase():
    """A rendered two-phase section (alumina discs, f = 0.3, in mullite) and its config:
    multi-Otsu thresholds, so the segmentation reports its boundary uncertainty."""
    from polisect.model3d.synth import render_sem, rsa_discs

    truth = rsa_discs((96, 96), 0.3, 8.0, seed=4).labels.astype(np.int32)
    grey = render_sem(truth, {0: 0.35, 1: 0.75}, blur_px=1.0, noise_sd=0.03, seed=4)
    cfg = {"image": {"kind": "grayscale", "pixel_size_um": 1.0, "crop_bottom_px": 0},
           "segment": {"method": "multi-otsu", "classes": 2},
           "phase": [{"label": 0, "name": "matrix", "material": "mullite"},
                     {"label": 1, "name": "discs", "material": "alumina"}],
           "solve": {"properties": ["conductivity"]}}
    return grey, cfg


def test_budget_carries_the_segmentation_bound_of_the_conductivity():
    """With the segmentation's boundary uncertainty, the conductivity's budget row has a
    segmentation component: the half-width of the two extreme maps, which bound every
    assignment of the boundary pixels (energy minimum principle: Milton 2002, The Theory
    of Composites, ch. 13). Checked against the extreme maps solved here to 1e-8."""
    from polisect.pipeline.analysis import _micrograph, _phasemap
    from polisect.properties.solve import conductivity
    from polisect.trust.boundaries import extreme_maps

    grey, cfg = _grey_two_phase()
    cfg = config_from_dict(cfg)
    a = analyze(grey, cfg)
    row = a.result.uncertainty["conductivity_W_mK"]
    seg = row.components["segmentation"]
    assert seg is not None and seg > 0
    assert any("not a 95 % interval" in n and "bound" in n for n in row.notes)
    u = _phasemap(_micrograph(grey, cfg, None), cfg)[4].uncertainty
    mats = {p.label: p.material for p in a.phasemap.phases}
    k = [float(np.trace(conductivity(m.T, mats, tol=1e-8).tensor)) / 2
         for m in extreme_maps(u.labels, u.alternative,
                               {v: m.conductivity for v, m in mats.items()}) + (u.labels,)]
    assert k[0] < k[2] < k[1]
    assert seg == pytest.approx(max(k[1] - k[2], k[2] - k[0]), rel=0.05)


def test_label_image_has_no_segmentation_component(hollow_section):
    """A label image has no segmentation: its budget rows leave the segmentation component
    null even when the term is switched on (common practice, no source)."""
    cfg = dict(CONFIG, uncertainty={"segmentation": "all"})
    a = analyze(hollow_section.labels, config_from_dict(cfg))
    assert a.result.uncertainty["conductivity_W_mK"].components["segmentation"] is None


def test_segmentation_term_started_from_the_analysis_solve_equals_a_cold_one(monkeypatch):
    """The extreme phase maps of the budget start from the fluctuations of the analysis's
    solve; warm or cold, CG answers to the same tolerance (the energy identity J(x) − J(x*)
    = ‖x − x*‖²_A, Strakoš & Tichý 2002), so the segmentation terms agree within the
    budget's segmentation tolerance (1e-3 on the energies; 3 % on the half-widths)."""
    import polisect.pipeline.analysis as analysis
    from polisect.apps.bench.budget import config, rendered_section

    image = rendered_section((192, 256))
    cfg = config(True, segmentation="all")
    warm = analyze(image, cfg).result.uncertainty
    monkeypatch.setattr(analysis, "_segmentation_term", lambda cfg: False)
    cold = analyze(image, cfg).result.uncertainty
    for key in ("conductivity_W_mK", "youngs_modulus_GPa"):
        w, c = warm[key].components["segmentation"], cold[key].components["segmentation"]
        assert w is not None and c is not None
        assert w == pytest.approx(c, rel=0.03)


def test_solve_keeps_only_the_starts_asked_for():
    """`solve_effective(keep_fluctuations=("conductivity",))` keeps the conductivity's
    fluctuations only (what the default segmentation term uses), True keeps every solve's
    (construction)."""
    from polisect.core.materials import get_material
    from polisect.core.phasemap import Phase, PhaseMap
    from polisect.properties.effective import solve_effective

    labels = compose((48, 48), [Inclusions(1, 0.3, 5.0, min_gap=1.0)], seed=2,
                     matrix_label=0).labels
    pm = PhaseMap(labels, (Phase(0, "matrix", get_material("mullite")),
                           Phase(1, "spheres", get_material("alumina"))))
    props = ["conductivity", "elasticity"]
    assert set(solve_effective(pm, props, maps=False,
                               keep_fluctuations=("conductivity",)).starts) == {"conductivity"}
    assert set(solve_effective(pm, props, maps=False,
                               keep_fluctuations=True).starts) == {"conductivity", "elasticity"}
    assert not solve_effective(pm, props, maps=False).starts
