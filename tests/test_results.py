"""Tests of the Result record and its JSON/CSV forms."""

import json

import numpy as np

from polisect.pipeline.results import (SCHEMA, PhaseFraction, Result, Source, csv_text, quantity_keys,
                              quantity_label, read_json, write_json)


def _result():
    src = Source(path="a.tif", sha256="0" * 64, shape=(4, 5), pixel_size_um=None,
                 pixel_size_from="unknown")
    phases = (PhaseFraction(0, "pore", {"name": "air"}, np.float64(0.25), (0.2, 0.3), 8.0, 16),
              PhaseFraction(1, "matrix", {"name": "alumina"}, 0.75, (0.7, 0.8), 2.0, 16))
    return Result(source=src, phases=phases, version="0.0",
                  effective={"conductivity": {"mean_W_mK": np.float32(3.5),
                                              "tensor_W_mK": np.eye(2)}},
                  warnings=("pixel size unknown",))


def test_json_schema_and_plain_types(tmp_path):
    r = _result()
    write_json(r, tmp_path / "r.json")
    d = read_json(tmp_path / "r.json")
    assert d["schema"] == SCHEMA
    assert d["effective"]["conductivity"]["tensor_W_mK"] == [[1.0, 0.0], [0.0, 1.0]]
    assert d["phases"][0]["fraction"] == 0.25


def test_nan_becomes_null():
    r = _result()
    d = json.loads(Result(**{**r.__dict__, "effective": {"x": float("nan")}}).to_json())
    assert d["effective"]["x"] is None


def test_headline_row_and_csv():
    row = _result().headline()
    assert row["fraction_pore"] == 0.25
    assert row["conductivity_W_mK"] == 3.5
    text = csv_text([row, {"path": "b.tif", "extra": 1}])
    head = text.splitlines()[0].split(",")
    assert head[0] == "path" and head[-1] == "extra"
    assert len(text.splitlines()) == 3


def test_quantity_keys_and_labels_of_the_headline_row():
    """The compared columns are the fractions, particle D50 and effective properties; the
    interval bounds, counts and text are not (the project's own naming, no source)."""
    row = {**_result().headline(), "particles_SiC_count": 12, "particles_SiC_ecd_d50": 4.2,
           "flag": True}
    assert quantity_keys(row) == ["fraction_pore", "fraction_matrix", "conductivity_W_mK",
                                  "particles_SiC_ecd_d50"]
    assert quantity_label("fraction_pore") == ("pore fraction", "")
    assert quantity_label("particles_SiC_ecd_d50") == ("SiC particle D50", "µm")
    assert quantity_label("conductivity_W_mK") == ("conductivity", "W/(m·K)")
    assert quantity_label("something_else") == ("something_else", "")
