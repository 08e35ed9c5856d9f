"""Tests of polisect.present.record: the result's JSON and CSV forms, and back."""

import json

import numpy as np
import pytest

from polisect.core.materials import Material
from polisect.core.quantities import quantity_keys, quantity_label
from polisect.model3d.synth import Inclusions, compose
from polisect.pipeline.analysis import analyze
from polisect.pipeline.result import PhaseFraction, Result, Source
from polisect.present.record import (SCHEMA, csv_text, from_dict, headline, read_result,
                                     to_dict, to_json, write_json)
from polisect.properties.records import Conductivity, Effective, Solver
from polisect.read.config import config_from_dict


def _result(k=3.5):
    src = Source(path="a.tif", sha256="0" * 64, shape=(4, 5), pixel_size_um=None,
                 pixel_size_from="unknown")
    phases = (PhaseFraction(0, "pore", Material(name="air"), np.float64(0.25), (0.2, 0.3), 8.0,
                            16),
              PhaseFraction(1, "matrix", Material(name="alumina"), 0.75, (0.7, 0.8), 2.0, 16))
    eff = Effective(2, "plane-strain", "test model", None, "x, y",
                    Conductivity(np.eye(2) * k, np.float32(k), 0.0,
                                 Solver("fft", 3, 0.01, 1e-6, True, ((1.0, 1e-7),))))
    return Result(source=src, phases=phases, version="0.0", effective=eff,
                  warnings=("pixel size unknown",))


@pytest.fixture(scope="module")
def full_result():
    """A section through every step that adds to the result: particles (hollow), schemes in
    2D and 3D, all three properties, thermal-shock indices and the window study."""
    labels = compose((96, 96), [Inclusions(1, 0.25, 7.0, hollow_ratio=0.5, core_label=2,
                                           min_gap=2.0)], seed=2, matrix_label=0).labels
    cfg = config_from_dict({
        "image": {"kind": "labels", "pixel_size_um": 0.5},
        "phase": [{"label": 0, "name": "matrix", "material": "mullite"},
                  {"label": 1, "name": "spheres", "material": "alumina", "particles": True},
                  {"label": 2, "name": "pore", "material": "air", "particles": False}],
        "solve": {"tolerance": 1e-4, "fields": False},
        "service": {"strength_MPa": 150.0, "fracture_energy_J_m2": 30.0},
        "windows": {"study": True},
        "measured": [{"property": "conductivity", "value": 4.0, "uncertainty": 0.3,
                      "method": "laser flash (invented for the test)"}]})
    return analyze(labels, cfg).result


def test_json_form_reads_back_exactly(full_result, tmp_path):
    """Result → JSON → Result → JSON gives the same JSON, every block filled (the contract of
    docs/results.md; common practice, no source)."""
    d = to_dict(full_result)
    assert d["schema"] == SCHEMA
    for block in ("effective", "particles", "schemes", "bounds", "schemes_3d", "bounds_3d",
                  "shock", "windows", "correlation", "measured"):
        assert d[block], block
    back = from_dict(json.loads(json.dumps(d)))
    assert to_dict(back) == d
    write_json(full_result, tmp_path / "r.json")
    again = read_result(tmp_path / "r.json")
    assert again.effective.elasticity.youngs_modulus == full_result.effective.elasticity.youngs_modulus
    assert np.array_equal(again.effective.elasticity.stiffness,
                          full_result.effective.elasticity.stiffness)
    assert again.particles["spheres"].ecd.d50 == full_result.particles["spheres"].ecd.d50
    assert again.windows.quantities.keys() == full_result.windows.quantities.keys()
    assert again.phase("pore").material.conductivity == pytest.approx(0.026, rel=0.5)


def test_plain_types_and_nan_become_null():
    """numpy scalars and arrays become JSON numbers and lists; NaN becomes null."""
    d = to_dict(_result())
    assert d["effective"]["conductivity"]["tensor_W_mK"] == [[3.5, 0.0], [0.0, 3.5]]
    assert d["phases"][0]["fraction"] == 0.25
    assert json.loads(to_json(_result(k=float("nan"))))["effective"]["conductivity"][
        "mean_W_mK"] is None


def test_reading_a_file_of_another_schema_says_so(tmp_path):
    (tmp_path / "x.json").write_text('{"schema": "something/1"}')
    with pytest.raises(ValueError, match="polisect.result/1"):
        read_result(tmp_path / "x.json")


def test_headline_row_and_csv():
    row = headline(_result())
    assert row["fraction_pore"] == 0.25
    assert row["conductivity_W_mK"] == 3.5
    assert "youngs_modulus_GPa" not in row
    text = csv_text([row, {"path": "b.tif", "extra": 1}])
    head = text.splitlines()[0].split(",")
    assert head[0] == "path" and head[-1] == "extra"
    assert len(text.splitlines()) == 3


def test_quantity_keys_and_labels_of_the_headline_row():
    """The compared columns are the fractions, particle D50 and effective properties; the
    interval bounds, counts and text are not (the project's own naming, no source)."""
    row = {**headline(_result()), "particles_SiC_count": 12, "particles_SiC_ecd_d50": 4.2,
           "flag": True}
    assert quantity_keys(row) == ["fraction_pore", "fraction_matrix", "conductivity_W_mK",
                                  "particles_SiC_ecd_d50"]
    assert quantity_label("fraction_pore") == ("pore fraction", "")
    assert quantity_label("particles_SiC_ecd_d50") == ("SiC particle D50", "µm")
    assert quantity_label("conductivity_W_mK") == ("conductivity", "W/(m·K)")
    assert quantity_label("something_else") == ("something_else", "")


@pytest.fixture(scope="module")
def hot_result():
    """A section solved at two temperatures with a small 3D estimate (two realizations)."""
    labels = compose((64, 64), [Inclusions(1, 0.25, 6.0, min_gap=2.0)], seed=3,
                     matrix_label=0).labels
    cfg = config_from_dict({
        "image": {"kind": "labels", "pixel_size_um": 0.5},
        "phase": [{"label": 0, "name": "matrix", "material": "mullite"},
                  {"label": 1, "name": "spheres", "material": "alumina", "particles": True}],
        "solve": {"tolerance": 1e-4, "fields": False, "estimate_3d": True, "voxels": 32,
                  "realizations": 2, "temperatures_C": [20, 800]},
        "measured": [{"property": "conductivity", "value": 4.0, "uncertainty": 0.3,
                      "temperature_C": 800,
                      "method": "hot wire (invented for the test)"}]})
    return analyze(labels, cfg).result


def test_json_form_of_the_temperature_blocks_reads_back_exactly(hot_result):
    """The 2D and 3D effective blocks over temperature go to JSON and back unchanged, the
    3D one at every temperature of [solve] temperatures_C (docs/results.md; common
    practice, no source)."""
    d = to_dict(hot_result)
    assert [b["temperature_C"] for b in d["effective_by_temperature"]] == [20, 800]
    assert [b["temperature_C"] for b in d["effective_3d_by_temperature"]] == [20, 800]
    back = from_dict(json.loads(json.dumps(d)))
    assert to_dict(back) == d
    hot3 = back.effective_3d_by_temperature[1].effective
    assert hot3.conductivity.mean.mean == \
        hot_result.effective_3d_by_temperature[1].effective.conductivity.mean.mean
    assert back.effective_3d_by_temperature[0].effective.conductivity.mean.mean == \
        hot_result.effective_3d.effective.conductivity.mean.mean
