"""polisect.apps.bench: rows, the FFT floor and the table (speed itself is not asserted)."""

import json

import numpy as np
import pytest

from polisect.apps import bench
from polisect.properties.solve import conductivity


def test_measure_row_and_table():
    """A measured row carries the documented figures (the FFT floor from the solve's own
    transforms, one pair per iteration plus the first preconditioning of each load case);
    the table shows one line per row and skipped methods with their reason (common
    practice, no source)."""
    labels = bench.smoothed_noise_image(32)
    row = bench.measure("x", "tiny conductivity", labels.shape, "fft",
                        lambda: conductivity(labels, bench.MATERIALS, method="fft"))
    assert row["iterations"] > 0 and row["converged"]
    assert row["fft_floor"] > 0 and np.isclose(
        row["ratio"], row["seconds_per_iteration"] / row["fft_floor"])
    assert row["peak_mb"] >= 0
    assert row["peak_rss_mb"] > row["peak_mb"]
    rows = [row, bench.skipped("x", "tiny conductivity", labels.shape, "fe", "too big")]
    table = bench.format_table(rows)
    assert len(table.splitlines()) == 4 and "skipped: too big" in table
    json.dumps(rows)


def test_images_have_the_stated_fractions():
    """Bench microstructures: 60 % matrix, 30 % particles, 10 % pores (RSA targets within
    half a particle; Widom 1966 via polisect.model3d.synth)."""
    for labels in (bench.image_2d(128), bench.image_3d(24), bench.smoothed_noise_image(64)):
        fractions = np.bincount(labels.ravel(), minlength=3) / labels.size
        assert np.allclose(fractions, [0.6, 0.3, 0.1], atol=0.01)


@pytest.mark.slow
def test_quick_bench_writes_json(tmp_path):
    """run_bench(quick=True) runs every case and writes the JSON rows."""
    path = tmp_path / "bench.json"
    rows = bench.run_bench(quick=True, json_path=str(path))
    doc = json.loads(path.read_text())
    assert doc["schema"] == "polisect.bench/1" and len(doc["rows"]) == len(rows)
    assert {r["case"] for r in rows} >= set("abcdef")


def test_select_cases_by_letter():
    """--cases picks the functions that make the named rows; unknown letters are refused
    with the list to choose from (common practice, no source)."""
    assert bench.select_cases(None) == bench.CASES
    assert bench.select_cases("bc") == [bench.case_2d_elasticity]
    assert bench.select_cases("a,e") == [bench.case_2d_conductivity, bench.case_3d_elasticity]
    with pytest.raises(bench.InputError, match="choose letters from abcdefghi"):
        bench.select_cases("az")
