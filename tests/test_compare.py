"""Tests of polisect.apps.compare: sections of batches, the comparison, its HTML, JSON and CLI."""

import json

import numpy as np
import pytest

from polisect.apps.cli import main
from polisect.apps.compare import Section, compare, html_comparison, load_sections
from polisect.core.errors import InputError
from polisect.core.materials import Material
from polisect.pipeline.result import PhaseFraction, Result, Source
from polisect.present.record import write_json
from polisect.properties.records import Conductivity, Effective, Solver
from polisect.trust.records import QuantityFit, WindowRecord


def _sections():
    rng = np.random.default_rng(11)
    out = []
    for batch, k, n in (("A", 10.0, 6), ("B", 9.3, 6), ("C", 10.1, 5)):
        for i, v in enumerate(rng.normal(k, 0.25, n)):
            out.append(Section(f"{batch}/s{i}.tif", batch, {"conductivity_W_mK": float(v),
                                                           "fraction_SiC": 0.3 + 0.01 * i}))
    out[2] = Section("A/s2.tif", "A", {"conductivity_W_mK": 13.0, "fraction_SiC": 0.32})
    return out


def test_compare_batches_end_to_end():
    """Three batches: ANOVA and Welch's ANOVA per quantity, each batch against the first with
    Holm-adjusted p-values (Holm 1979, Scand. J. Statist. 6, 65), Grubbs flags the planted
    section."""
    c = compare(_sections())
    assert c.batches == ("A", "B", "C")
    q = next(q for q in c.quantities if q.key == "conductivity_W_mK")
    assert [t.name for t in q.tests] == ["one-way ANOVA", "Welch's ANOVA"]
    assert [o.section for o in q.outliers] == ["A/s2.tif"]
    raw = [d.test.p_value for d in q.differences]
    adj = [d.p_adjusted for d in q.differences]
    assert all(p2 >= p1 for p1, p2 in zip(raw, adj))
    assert min(adj) == pytest.approx(min(1.0, 2 * min(raw)))
    assert any("stands out" in s and "A/s2.tif" in s for s in q.sentences)
    two = compare([s for s in _sections() if s.batch != "C"])
    q2 = next(q for q in two.quantities if q.key == "conductivity_W_mK")
    assert [t.name for t in q2.tests] == ["Welch t-test"]
    d = json.loads(c.to_json())
    assert d["schema"] == "polisect.compare/1" and len(d["quantities"]) == 2
    page = html_comparison(c)
    assert "data:image/png;base64," in page and "Welch" in page and "A/s2.tif" in page


def _write_result(path, name, fraction, conductivity, whole_image_variance=None):
    phases = (PhaseFraction(0, "matrix", Material(name="m"), 1 - fraction, (0, 1)),
              PhaseFraction(1, "SiC", Material(name="SiC"), fraction, (0, 1)))
    effective = Effective(2, "plane-strain", "test model", None, "x, y",
                          Conductivity(conductivity * np.eye(2), conductivity, 0.0,
                                       Solver("fft", 1, 0.0, 1e-6, True)))
    windows = None
    if whole_image_variance is not None:
        fit = QuantityFit("conductivity_W_mK", conductivity, None, None, None, None, (),
                          whole_image_variance, None, None, None, None, None, "")
        windows = WindowRecord("periodic", 5.0, 0.95, (64, 64), None, 4.0, 8, 20.0, (), (),
                               {"conductivity_W_mK": fit}, (), "")
    r = Result(source=Source(path=f"/data/{name}", sha256=None, shape=(64, 64),
                             pixel_size_um=None, pixel_size_from="unknown"),
               phases=phases, version="test", effective=effective, windows=windows)
    write_json(r, path)


def test_load_sections_grouping(tmp_path):
    """Without a manifest each folder is a batch; --group-by regex takes (?P<batch>...) from
    the image file name; the window study's whole-image variance is carried along."""
    for folder, lot in (("run1", "K1"), ("run2", "K2")):
        (tmp_path / folder).mkdir()
        for i in range(3):
            _write_result(tmp_path / folder / f"{lot}_s{i}.json", f"{lot}_s{i}.tif", 0.3,
                          20.0 + i, whole_image_variance=0.25)
    (tmp_path / "run1" / "notes.json").write_text('{"not": "a result"}')
    secs = load_sections([tmp_path / "run1", tmp_path / "run2"])
    assert sorted({s.batch for s in secs}) == ["run1", "run2"] and len(secs) == 6
    assert secs[0].within_variance == {"conductivity_W_mK": 0.25}
    by_lot = load_sections([tmp_path], group_by=r"(?P<batch>K\d)_")
    assert sorted({s.batch for s in by_lot}) == ["K1", "K2"]
    assert {s.batch for s in load_sections([tmp_path], group_by="folder")} == {"data"}
    c = compare(secs)
    q = next(q for q in c.quantities if q.key == "conductivity_W_mK")
    assert set(q.spreads) == {"run1", "run2"}
    with pytest.raises(InputError, match="batch"):
        load_sections([tmp_path], group_by="(no group)")
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(InputError, match="no result JSON"):
        load_sections([empty])


def test_cli_compare(tmp_path, capsys):
    """`polisect compare DIR DIR --json -` prints the comparison JSON and writes the HTML; a
    missing folder is an input error (exit 2)."""
    for folder, k in (("A", 10.0), ("B", 12.0)):
        (tmp_path / folder).mkdir()
        for i in range(3):
            _write_result(tmp_path / folder / f"s{i}.json", f"s{i}.tif", 0.3, k + 0.1 * i)
    html_path = tmp_path / "cmp.html"
    code = main(["compare", str(tmp_path / "A"), str(tmp_path / "B"), "--out", str(html_path),
                 "--json", "-"])
    out = capsys.readouterr()
    assert code == 0 and html_path.exists()
    d = json.loads(out.out)
    assert d["batches"] == {"A": ["s0.json", "s1.json", "s2.json"],
                            "B": ["s0.json", "s1.json", "s2.json"]}
    assert "batch B's conductivity is" in out.err and "higher (relative) than batch A's" in out.err
    assert main(["compare", str(tmp_path / "missing")]) == 2



def test_cli_compare_says_when_no_test_between_batches_is_possible(tmp_path, capsys):
    """One section in a batch: no test between batches can run (a variance needs two
    sections), and the console says so instead of an empty findings list (common practice,
    no source)."""
    for folder, n in (("A", 2), ("B", 1)):
        (tmp_path / folder).mkdir()
        for i in range(n):
            _write_result(tmp_path / folder / f"s{i}.json", f"s{i}.tif", 0.3, 10.0 + i)
    assert main(["compare", str(tmp_path / "A"), str(tmp_path / "B"), "--out",
                 str(tmp_path / "cmp.html")]) == 0
    assert "none: a test between batches needs at least two sections" in capsys.readouterr().err

def _lots():
    rng = np.random.default_rng(7)
    out = []
    for batch, pore, k in (("A", 0.20, 1.90), ("B", 0.24, 1.70), ("C", 0.201, 1.91)):
        for i in range(5):
            out.append(Section(f"{batch}/s{i}.tif", batch, {
                "fraction_pore": pore + rng.normal(0, 0.004),
                "conductivity_W_mK": k + rng.normal(0, 0.02),
                "expansion_per_K": 5.6e-6 + rng.normal(0, 2e-8)}))
    return out


def test_differences_in_points_and_per_cent_significant_first():
    """Fractions differ in percentage points, properties in per cent of the first batch
    (relative); ± is the 95 % Welch interval; quantities with a significant finding come
    first (issue 18). Welch (1947), Holm (1979)."""
    c = compare(_lots())
    order = [q.key for q in c.grouped()]
    assert order.index("expansion_per_K") > max(order.index("fraction_pore"),
                                                order.index("conductivity_W_mK"))
    pore = next(q for q in c.quantities if q.key == "fraction_pore")
    assert pore.significant
    b = next(s for s in pore.sentences if s.startswith("batch B's"))
    mean_a = np.mean([s.values["fraction_pore"] for s in _lots() if s.batch == "A"])
    mean_b = np.mean([s.values["fraction_pore"] for s in _lots() if s.batch == "B"])
    shown = float(b.split(" is ")[1].split(" ±")[0])
    assert "percentage points higher" in b and shown == pytest.approx((mean_b - mean_a) * 100,
                                                                      abs=0.06)
    k = next(q for q in c.quantities if q.key == "conductivity_W_mK")
    assert any("% lower (relative)" in s and "W/(m·K)" in s for s in k.sentences)
    x = next(q for q in c.quantities if q.key == "expansion_per_K")
    assert x.unit == "10⁻⁶/K" and x.scale == 1e6


def test_specification_limits_per_batch_and_section(tmp_path, capsys):
    """--spec 'porosity<=0.22' --spec 'k>=1.8': pass, marginal or fail per batch (the whole
    95 % interval, the mean), pass/fail per section; JSON, console and page (issue 18) —
    common practice (no source)."""
    c = compare(_lots(), specs=["porosity<=0.22", "k>=1.8", "alpha<=5.7"])
    pore, k, alpha = c.specs
    assert pore.spec.key == "fraction_pore" and alpha.spec.limit == pytest.approx(5.7e-6)
    assert pore.batches["A"][2] == "pass" and pore.batches["B"][2] == "fail"
    assert k.batches["B"][2] == "fail" and k.batches["C"][2] == "pass"
    assert all(not ok for _, b, _, ok in k.sections if b == "B")
    page = html_comparison(c)
    assert "Specification limits" in page and "marginal" in page or "pass" in page
    with pytest.raises(InputError, match="not a quantity"):
        compare(_lots(), specs=["hardness>=3"])
    with pytest.raises(InputError, match="NAME<=LIMIT"):
        compare(_lots(), specs=["porosity about 0.2"])
    for folder, pore_f, cond in (("A", 0.2, 1.9), ("B", 0.25, 1.6)):
        (tmp_path / folder).mkdir()
        for i in range(3):
            _write_result(tmp_path / folder / f"s{i}.json", f"s{i}.tif", pore_f + 0.001 * i,
                          cond + 0.01 * i)
    code = main(["compare", str(tmp_path / "A"), str(tmp_path / "B"), "--out",
                 str(tmp_path / "c.html"), "--spec", "SiC<=0.22", "--spec", "k>=1.8"])
    err = capsys.readouterr().err
    assert code == 0
    assert "batch means (± = 95 % interval of the mean):" in err
    assert "spec SiC<=0.22: A PASS, B FAIL; sections 3 of 6 pass" in err
    assert "spec k>=1.8: A PASS, B FAIL" in err


def test_outliers_are_listed_on_the_page():
    """Grubbs' outliers have their own table on the page (Grubbs 1969)."""
    secs = _lots()
    secs[2] = Section("A/s2.tif", "A", {**secs[2].values, "conductivity_W_mK": 2.6})
    page = html_comparison(compare(secs))
    table = page.split("<h2>Outliers</h2>")[1].split("</section>")[0]
    assert "A/s2.tif" in table and "2.6" in table


def _hot_result(path, name, k20, k800, k800_3d):
    """A result solved at 20 and 800 °C with a 3D estimate at 800 °C (three realizations)
    and the run configuration's measured conductivity at 800 °C (invented for the test)."""
    from dataclasses import replace

    from polisect.pipeline.result import AtTemperature
    from polisect.properties.records import Spread
    from polisect.read.config import measured_values
    from polisect.trust.measured import compare_measured

    def eff(k, dim=2):
        return Effective(dim, None, "test model", None, "x, y",
                         Conductivity(getattr(k, "mean", k) * np.eye(dim), k, 0.0,
                                      Solver("fft", 1, 0.0, 1e-6, True)))

    base = Result(source=Source(path=f"/data/{name}", sha256=None, shape=(64, 64),
                                pixel_size_um=None, pixel_size_from="unknown"),
                  phases=(PhaseFraction(0, "matrix", Material(name="m"), 1.0, (0, 1)),),
                  version="test", effective=eff(k20))
    measured = compare_measured(measured_values([{"property": "conductivity", "value": 2.0,
                                                  "uncertainty": 0.1, "temperature_C": 800,
                                                  "method": "hot wire (invented)"}]),
                                {20.0: eff(k20), 800.0: eff(k800)})
    spread = Spread.of(k800_3d)
    r = replace(base, effective_by_temperature=(AtTemperature(20.0, eff(k20)),
                                                AtTemperature(800.0, eff(k800))),
                effective_3d_by_temperature=(AtTemperature(800.0, eff(spread, 3)),),
                measured=measured)
    write_json(r, path)


def test_compare_shows_measured_beside_the_batch_means(tmp_path, capsys):
    """A measured value at 800 °C is set beside each batch's mean of the computed values at
    800 °C (2D model and 3D estimate) with their Student-t intervals over the sections
    (ASTM E562) and z = (mean − measured)/√(u² + SE²) (combined standard uncertainty, JCGM
    100:2008), on the console, the page and the JSON."""
    values = {"A": [2.1, 2.3, 2.2], "B": [2.6, 2.8, 2.7]}
    for batch, ks in values.items():
        (tmp_path / batch).mkdir()
        for i, k in enumerate(ks):
            _hot_result(tmp_path / batch / f"s{i}.json", f"s{i}.tif", 5.0, k,
                        [k + 0.2, k + 0.3, k + 0.25])
    sections = load_sections([tmp_path / "A", tmp_path / "B"])
    c = compare(sections)
    (a,) = c.measured["A"]
    ks = np.array(values["A"])
    se = ks.std(ddof=1) / np.sqrt(3)
    assert a.section_mean == pytest.approx(ks.mean()) and a.n == 3
    assert a.z_section == pytest.approx((ks.mean() - 2.0) / np.hypot(0.1, se))
    half = 4.302653 * se                                   # t(0.975, 2)
    assert a.section_ci95 == pytest.approx((ks.mean() - half, ks.mean() + half), rel=1e-5)
    assert a.estimate_3d_mean == pytest.approx(ks.mean() + 0.25) and a.n_3d == 3
    (b,) = c.measured["B"]
    assert b.z_section > 3 and "differs by" in b.verdict
    page = html_comparison(c)
    assert "Measured beside computed" in page and "hot wire (invented)" in page
    d = json.loads(c.to_json())
    assert d["measured"]["A"][0]["section"]["mean"] == pytest.approx(ks.mean())
    assert main(["compare", str(tmp_path / "A"), str(tmp_path / "B"),
                 "--out", str(tmp_path / "c.html")]) == 0
    err = capsys.readouterr().err
    assert "measured beside computed" in err
    assert "A: conductivity at 800 °C measured 2.00 ± 0.10 W/(m·K)" in err
    assert f"section model {ks.mean():.3g}" in err
