"""Tests of polisect.present.report and polisect.present.units: the report an engineer files
(scale, inputs with sources, solver agreement, units, plain statements; issue 18) and the one
place that formats numbers and units."""

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polisect import analyze, config_from_dict
from polisect.apps.cli import main
from polisect.present import record
from polisect.present.report import html_report
from polisect.present.units import (number, scale_of, show, tensor_cells, with_uncertainty,
                                    with_unit)


# ------------------------------------------------------------------------ units

def test_numbers_are_plain_decimals_with_grouped_thousands():
    """ISO 80000-1 digit grouping and a × 10ⁿ form outside 10⁻³…10⁶, never e-notation —
    common practice (no source)."""
    assert number(113400.0) == "113 400"
    assert number(1.134e5, 3) == "113 000"
    assert number(0.0058217) == "0.005822"
    assert number(2.5e-7) == "2.5 × 10⁻⁷"
    assert number(7.2e6) == "7.2 × 10⁶"
    assert "e" not in number(1.234e-12) and "e+" not in number(9.9e9)
    assert number(None) == number(float("nan")) == "–"


def test_uncertainty_sets_the_digits():
    """A value is quoted to the decimal place of its uncertainty's second significant digit
    (GUM practice of at most two significant digits in an uncertainty) — common practice."""
    assert with_uncertainty(0.20137, 0.0123) == "0.201 ± 0.012"
    assert with_uncertainty(75.3149, 2.04) == "75.3 ± 2.0"
    assert with_uncertainty(1234.5, 56.0) == "1234 ± 56"
    assert with_uncertainty(1234.5, 560.0) == "1230 ± 560"
    assert with_uncertainty(7.1e-6, 2.2e-7, scale_of("expansion")) == "7.10 ± 0.22"
    assert with_uncertainty(0.7, 1e-17) == "0.7"


def test_expansion_is_shown_in_ppm_per_kelvin():
    """Expansion reads in 10⁻⁶/K wherever a person reads it (stored in 1/K) — DESIGN.md."""
    assert show(7.1e-6, "expansion") == "7.100 × 10⁻⁶/K"
    assert show(7.1e-6, "expansion", trim=True) == "7.1 × 10⁻⁶/K"
    assert with_unit("5.6", "10⁻⁶/K") == "5.6 × 10⁻⁶/K"
    assert show(33.0, "conductivity", trim=True) == "33 W/(m·K)"


def test_tensor_noise_is_zero_and_one_resolution_per_tensor():
    """Entries below 1e-6 of the largest show as 0; all entries to the resolution of the
    largest (issue 18's 0.005822 GPa off-diagonal in a ~150 GPa stiffness) — common practice."""
    c = np.array([[154.32, 46.61, 0.005822], [46.61, 155.54, -1e-9], [0.005822, -1e-9, 53.47]])
    cells = tensor_cells(c)
    assert cells[0] == ["154.3", "46.6", "0"] and cells[1][2] == "0" and cells[2][2] == "53.5"


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=-1e12, max_value=1e12, allow_nan=False).filter(lambda v: v != 0))
def test_number_reads_back_to_four_digits(value):
    """What `number` prints reads back within its four significant digits — a round trip
    (common practice, no source)."""
    text = number(value).replace(" ", "").replace("×10", "e").replace("−", "-")
    for sup, digit in zip("⁻⁰¹²³⁴⁵⁶⁷⁸⁹", "-0123456789"):
        text = text.replace(sup, digit)
    assert float(text) == pytest.approx(value, rel=6e-4)


# ------------------------------------------------------------------------ the report

def _hollow_section(n=96):
    """A matrix (1) with hollow particles (2) whose cores are pore (0), and free pores."""
    yy, xx = np.mgrid[:n, :n]
    labels = np.ones((n, n), dtype=np.int32)
    for cy, cx in ((24, 24), (24, 72), (72, 48)):
        r = np.hypot(yy - cy, xx - cx)
        labels[r < 14] = 2
        labels[r < 8] = 0
    for cy, cx in ((60, 10), (86, 86), (8, 50)):
        labels[np.hypot(yy - cy, xx - cx) < 4] = 0
    return labels


@pytest.fixture(scope="module")
def hollow():
    cfg = config_from_dict({
        "image": {"kind": "labels", "pixel_size_um": 2.0},
        "solve": {"properties": ["conductivity", "elasticity", "expansion"], "verify": True},
        "phase": [{"label": 0, "name": "pore", "material": "air"},
                  {"label": 1, "name": "mullite", "material": "mullite", "particles": False},
                  {"label": 2, "name": "shell", "material": "alumina", "conductivity": 30.0}]})
    return analyze(_hollow_section(), cfg)


def test_report_shows_scale_inputs_and_models(hollow):
    """Field size on every image, the materials used with their sources (library or changed),
    properties saying which model each number is, proper scheme names, no ν bounds,
    particle headers with units, the hollow-pore split (issue 18) — common practice."""
    page = html_report(hollow)
    assert page.count("field 192 × 192 µm (96 × 96 px)") >= 2
    assert "Materials used" in page and "Munro, J. Am. Ceram. Soc. 80 (1997)" in page
    assert "library, changed: conductivity" in page
    assert "Bulk modulus, areal K_A" in page and "transverse plane-strain k_T" in page
    assert "Mori–Tanaka" in page and "mori-tanaka</td>" not in page
    assert "Hashin–Shtrikman lower bound" in page
    bound_row = page[page.index("Hashin–Shtrikman lower bound"):].split("</tr>")[0]
    assert bound_row.count("<td>–</td>") >= 1 and "-1</td>" not in bound_row
    assert "ECD mean (µm)" in page and "Hollow particles" in page
    assert "pore inside particles (cores of hollow particles)" in page
    assert "×10⁻⁶/K" not in page.replace(" × 10⁻⁶/K", "")
    assert "E_T and nu_TT" not in page.split("Scheme notes as recorded")[0]


def test_second_solver_agrees_on_a_section(hollow):
    """fe and fft solve the same pixel-element equations: their effective tensors agree to
    far below 1e-5 at tolerance 1e-6 (DESIGN.md, solve/) — the `--verify` record, its JSON
    round trip, and the report saying it ran."""
    v = hollow.result.verification
    assert v is not None and v.method == "fft" and v.second_method == "fe" and v.crop is None
    assert set(v.differences) == {"conductivity", "elasticity", "expansion"}
    assert v.max_relative_difference < 1e-5
    d = record.to_dict(hollow.result)
    assert d["verification"]["max_relative_difference"] == v.max_relative_difference
    assert record.to_dict(record.from_dict(d)) == d
    assert "Second solver (verification)" in html_report(hollow)


def test_phase_names_are_escaped_and_the_page_runs_no_scripts():
    """A phase name carrying markup is shown as text; the page carries a content security
    policy with no script source (issue 17) — common practice (no source)."""
    labels = np.zeros((32, 32), dtype=np.int32)
    labels[8:24, 8:24] = 1
    cfg = config_from_dict({"image": {"kind": "labels"}, "solve": {"properties": []},
                            "phase": [{"label": 0, "name": "<script>alert(1)</script>",
                                       "conductivity": 1.0},
                                      {"label": 1, "name": "b&c", "conductivity": 2.0}]})
    page = html_report(analyze(labels, cfg))
    assert "<script>" not in page and "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert "b&amp;c" in page
    assert 'http-equiv="Content-Security-Policy"' in page and "script-src" not in page
    assert "default-src 'none'" in page


# ------------------------------------------------------------------------ the CLI

def _section_file(tmp_path):
    import tifffile

    path = tmp_path / "kfs.tif"
    tifffile.imwrite(path, (_hollow_section(64) * 100).astype(np.uint8),
                     resolution=(1e4, 1e4), resolutionunit="CENTIMETER")
    return path


def test_analyze_without_assign_says_the_properties_were_skipped(tmp_path, capsys):
    """No --assign: the summary says the properties were skipped and how to ask for them;
    --quiet hides the progress, not the summary (issue 18)."""
    code = main(["analyze", str(_section_file(tmp_path)), "--classes", "3", "--out",
                 str(tmp_path / "out"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 0
    assert "properties: skipped, no materials assigned" in err and "--assign" in err
    assert "[" not in err.split("\n")[0] and "reading image" not in err
    assert "field 64 × 64 µm" in err and "report: " in err


def test_analyze_verify_option(tmp_path, capsys):
    """--verify sets [solve] verify: the summary states the second solver's difference."""
    code = main(["analyze", str(_section_file(tmp_path)), "--classes", "3", "--assign",
                 "0=air,1=mullite,2=alumina", "--out", str(tmp_path / "out"), "--verify",
                 "--json", "-", "--quiet"])
    out = capsys.readouterr()
    assert code == 0
    d = json.loads(out.out)
    assert d["verification"]["max_relative_difference"] < 1e-5
    assert "second solver (fe vs fft, whole map): largest relative difference" in out.err


def test_demo_says_where_it_writes(tmp_path, capsys, monkeypatch):
    """The demo states the absolute output folder before it starts and at the end (issue 18:
    it wrote polisect-demo/ into the current folder without saying so)."""
    from polisect.apps import cli, samples

    monkeypatch.setattr(samples, "demo_sections", lambda: [])
    monkeypatch.chdir(tmp_path)
    assert cli.main(["demo", "--quiet"]) == 0
    out = capsys.readouterr()
    assert f"Writing the demo into {tmp_path / 'polisect-demo'}" in out.err
    assert f"All outputs: {tmp_path / 'polisect-demo'}" in out.out


def test_bench_help_explains_its_columns(capsys):
    """`bench --help` explains the method labels and 'conv no' (issue 18)."""
    with pytest.raises(SystemExit):
        main(["bench", "--help"])
    text = capsys.readouterr().out
    assert "FFT-preconditioned" in text and "'no' when it stopped" in text


def test_report_shows_the_3d_estimate_over_temperature():
    """With [solve] temperatures_C and estimate_3d the temperature section has the 3D
    estimate's table (means with their 95 % intervals) beside the 2D one, and the curves
    (issue 15; common practice, no source)."""
    labels = np.zeros((64, 64), dtype=np.int32)
    yy, xx = np.mgrid[:64, :64]
    for cy, cx in ((16, 16), (16, 48), (48, 16), (48, 48)):
        labels[(yy - cy) ** 2 + (xx - cx) ** 2 <= 49] = 1
    cfg = config_from_dict({
        "image": {"kind": "labels", "pixel_size_um": 1.0},
        "solve": {"properties": ["conductivity"], "tolerance": 1e-4, "estimate_3d": True,
                  "voxels": 24, "realizations": 2, "temperatures_C": [20, 800]},
        "phase": [{"label": 0, "name": "mullite", "material": "mullite"},
                  {"label": 1, "name": "alumina", "material": "alumina", "particles": True}]})
    analysis = analyze(labels, cfg)
    page = html_report(analysis)
    section = page[page.index("Effective properties over temperature"):]
    section = section[:section.index("</section>")]
    assert "3D estimate over temperature" in section
    table_3d = section[section.index("3D estimate over temperature"):]
    hot = analysis.result.effective_3d_by_temperature[1].effective.conductivity.mean
    assert f"{number(hot.mean, trim=True)} [" in table_3d
    assert 'alt="properties over temperature"' in section
