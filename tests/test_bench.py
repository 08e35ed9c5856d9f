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
    assert bench.select_cases("jk") == [bench.case_section, bench.case_compile]
    with pytest.raises(bench.InputError, match="choose letters from abcdefghijkl"):
        bench.select_cases("az")


@pytest.mark.slow
def test_bench_batch_quick_runs():
    """The batch benchmark runs and reports its figures (no timing assertion)."""
    from polisect.apps.bench.analysis import bench_batch

    rows = bench_batch(quick=True)
    assert [r["case"] for r in rows][1:] == ["batch, 1 job", "batch, 2 jobs"]
    assert rows[2]["speedup"] > 0 and "overhead_pct" in rows[1]


def test_section_case_reports_targets_and_accuracy(tmp_path, monkeypatch):
    """Case (j), quick size: the defaults and the old defaults side by side, each with its
    deviation from the tol-1e-10 reference below the 1e-4 target, and the targets printed
    beside the figures (common practice, no source; no timing asserted)."""
    from polisect.apps.bench import section

    monkeypatch.setenv("POLISECT_BENCH_CACHE", str(tmp_path))
    new, old = section.case_section(quick=True)
    assert new["deviation"] < 1e-4 and old["deviation"] < 1e-4
    assert "target ≤ 30 s" in new["figure"] and "target ≤ 1024 MB" in new["figure"]
    assert list(tmp_path.iterdir())               # the reference is cached
    assert "old defaults" in bench.format_table([new, old])


def test_section_fractions():
    """The case-(j) section: 26 % SiC and 8 % pores (RSA targets within half a particle;
    Widom 1966 via polisect.model3d.synth)."""
    from polisect.apps.bench.section import section

    f = np.bincount(section((192, 256)).labels.ravel(), minlength=3) / (192 * 256)
    assert np.allclose(f, [0.66, 0.26, 0.08], atol=0.01)


@pytest.mark.slow
def test_compile_case_runs_in_a_fresh_process():
    """Case (k) measures the compile time in a new process with an empty cache and
    prints the target (no timing asserted)."""
    from polisect.apps.bench.compile import case_compile

    (row,) = case_compile(quick=True)
    assert row["compile_s"] > 0 and "target ≤ 10 s" in row["figure"]


def test_progress_lines_name_each_case_as_it_runs(monkeypatch):
    """run_bench(say=...) reports each case when it starts and when it ends, with its
    letter and words from the case's docstring, before the table (issue 18: a quick run
    showed nothing for 98 s; common practice, no source)."""
    calls = []

    def fake_case(quick):
        """(a) A stand-in case. More words that are not shown."""
        calls.append(quick)
        return []

    monkeypatch.setattr(bench, "CASES", [fake_case] + bench.CASES[1:])
    lines = []
    bench.run_bench(quick=True, cases="a", say=lines.append)
    assert calls == [True] and len(lines) == 2
    assert lines[0] == "[1/1] running (a) A stand-in case"
    assert lines[1].startswith("[1/1] done in ") and "s CPU" in lines[1]


def test_scaling_case_compiles_before_the_first_timed_size(monkeypatch):
    """Case (f) solves a smaller image before it times the first size, so compile time does
    not bend the fitted exponent (issue 18 saw N^−0.30; common practice, no source)."""
    from polisect.apps.bench import solvers

    events = []

    class Fake:
        iterations, seconds, converged = 1, 1.0, True

    def fake_conductivity(labels, materials, **kw):
        events.append(("solve", labels.shape[0]))
        return Fake()

    def fake_measure(case, problem, shape, method, run):
        events.append(("timed", shape[0]))
        run()
        return {"seconds": float(shape[0])}

    monkeypatch.setattr(solvers, "conductivity", fake_conductivity)
    monkeypatch.setattr(solvers, "measure", fake_measure)
    rows = solvers.case_2d_scaling(quick=True)
    assert events[0][0] == "solve" and events[1][0] == "timed"
    assert events[0][1] < events[1][1]
    assert rows[-1]["exponent"] == pytest.approx(0.5)
