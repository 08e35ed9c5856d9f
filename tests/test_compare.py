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
    assert "batch B's conductivity is" in out.err and "higher than batch A's" in out.err
    assert main(["compare", str(tmp_path / "missing")]) == 2
