"""End-to-end tests of the command line: outputs, exit codes and the bad-input list of the
foundation issue (each: exit 2, one clear line, nothing half-written)."""

import json
import os
import subprocess
import sys

import numpy as np
import pytest
import tifffile

from polisect.model3d import synth
from polisect.apps.cli import main

AMC = """
[segment]
classes = 3
denoise = "median"
[[phase]]
label = 0
name = "pore"
material = "air"
[[phase]]
label = 1
name = "matrix"
material = "aluminium"
[[phase]]
label = 2
name = "SiC"
material = "silicon-carbide"
particles = true
[solve]
properties = ["conductivity"]
"""


@pytest.fixture(scope="module")
def section(tmp_path_factory):
    """A rendered three-phase section with resolution tags (0.5 µm) and its config."""
    d = tmp_path_factory.mktemp("sec")
    labels = synth.compose((96, 96), [synth.Inclusions(label=2, fraction=0.25, radius=6.0),
                                      synth.Inclusions(label=0, fraction=0.03, radius=2.5)],
                           matrix_label=1, seed=3).labels
    img = synth.render_sem(labels, {0: 0.08, 1: 0.45, 2: 0.8}, blur_px=0.7, noise_sd=0.02, seed=1)
    path = d / "sec.tif"
    tifffile.imwrite(path, img, resolution=(2e4, 2e4), resolutionunit="CENTIMETER")
    cfg = d / "amc.toml"
    cfg.write_text(AMC)
    return path, cfg, labels


def _run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_analyze_writes_every_output(section, tmp_path, capsys):
    path, cfg, _ = section
    code, out, err = _run(capsys, "analyze", path, "--config", cfg, "--out", tmp_path,
                          "--json", "-")
    assert code == 0, err
    d = json.loads(out)
    assert d["schema"] == "polisect.result/1"
    assert d["source"]["pixel_size_um"] == pytest.approx(0.5)
    assert d["source"]["pixel_size_from"] == "tiff-tags"
    assert sum(p["fraction"] for p in d["phases"]) == pytest.approx(1.0)
    for suffix in (".json", ".csv", "_report.html", "_phases.tif", "_overlay.png"):
        assert (tmp_path / f"sec{suffix}").stat().st_size > 0
    assert not list(tmp_path.glob(".tmp-*"))
    html = (tmp_path / "sec_report.html").read_text()
    assert "Phase fractions" in html and "data:image/png;base64" in html


def test_long_solves_print_their_iterations(section, tmp_path, capsys, monkeypatch):
    """During a solve the progress shows the solver's iterations (here at every iteration:
    the interval is set to zero); --quiet prints nothing."""
    from polisect.apps import cli

    path, cfg, _ = section
    monkeypatch.setattr(cli._Progress, "SOLVER_EVERY", 0.0)
    code, _, err = _run(capsys, "analyze", path, "--config", cfg, "--out", tmp_path)
    assert code == 0, err
    lines = [ln for ln in err.splitlines() if "solver, load case" in ln]
    assert lines and "fft solver, load case 1 of 2 (gradient x): iteration 1, residual" in \
        lines[0]
    assert "stops at 1e-06" in lines[0]
    code, _, err = _run(capsys, "analyze", path, "--config", cfg, "--out", tmp_path, "--quiet")
    assert code == 0 and err == ""


def test_quick_options_without_config(section, tmp_path, capsys):
    path, _, _ = section
    code, out, err = _run(capsys, "analyze", path, "--classes", "3", "--assign",
                          "0=air,1=aluminium,2=silicon-carbide", "--pixel-size", "0.25",
                          "--out", tmp_path, "--json", "-", "--quiet")
    assert code == 0, err
    d = json.loads(out)
    assert [p["material"]["name"] for p in d["phases"]] == ["air", "aluminium", "silicon-carbide"]
    assert d["source"]["pixel_size_um"] == 0.25


def _bad_files(tmp):
    text = tmp / "notes.tif"
    text.write_text("this is not an image\n")
    empty = tmp / "empty.tif"
    empty.write_bytes(b"")
    good = tmp / "good.tif"
    tifffile.imwrite(good, np.random.default_rng(0).integers(0, 255, (64, 64), dtype=np.uint8))
    trunc = tmp / "trunc.tif"
    trunc.write_bytes(good.read_bytes()[: 600])
    tiny = tmp / "tiny.tif"
    tifffile.imwrite(tiny, np.zeros((1, 1), np.uint8))
    nan = tmp / "nan.tif"
    a = np.random.default_rng(1).random((32, 32)).astype(np.float32)
    a[3, 4] = np.nan
    tifffile.imwrite(nan, a)
    uniform = tmp / "uniform.tif"
    tifffile.imwrite(uniform, np.full((64, 64), 128, np.uint8))
    labels = tmp / "labels.tif"
    tifffile.imwrite(labels, np.tile(np.array([0, 1, 2, 5], np.uint8), (16, 4)))
    return {"missing": tmp / "nope.tif", "empty": empty, "text": text, "trunc": trunc,
            "tiny": tiny, "nan": nan, "uniform": uniform, "labels": labels}


CASES = [
    ("missing", [], "no such file"),
    ("empty", [], "empty"),
    ("text", [], "content is text"),
    ("trunc", [], "truncated|damaged|incomplete"),
    ("tiny", [], "too small"),
    ("nan", [], "NaN|not a number"),
    ("uniform", ["--classes", "3"], "contrast"),
    ("labels", ["--kind", "labels", "--assign", "0=air,1=alumina,2=zirconia"], r"\[5\]"),
    ("labels", ["--kind", "labels", "--assign", "0=air,1=alumina,2=unobtainium,5=air"],
     "unknown material"),
]


@pytest.mark.parametrize("name, extra, words", CASES, ids=[c[0] + str(i) for i, c in enumerate(CASES)])
def test_bad_input_exits_2_with_one_clear_line(tmp_path, capsys, name, extra, words):
    import re

    files = _bad_files(tmp_path)
    out = tmp_path / "out"
    code, _, err = _run(capsys, "analyze", files[name], "--out", out, "--quiet", *extra)
    assert code == 2
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("polisect: error:"), err
    assert re.search(words, lines[0]), lines[0]
    assert "Traceback" not in err
    assert not out.exists() or not any(out.iterdir())


@pytest.mark.parametrize("toml, words", [
    ("[[phase]]\nlabel = 0\nmaterial = \"alumina\"\npoisson_ratio = 0.5\n", "Poisson"),
    ("[[phase]]\nlabel = 0\nmaterial = \"alumina\"\nconductivity = -1.0\n", "negative"),
    ("[segment]\nclases = 3\n", "unknown key 'clases'"),
    ("[[phase]]\nlabel = 0\nmaterial = \"alumnia\"\n", "did you mean alumina"),
])
def test_bad_config_exits_2(section, tmp_path, capsys, toml, words):
    path, _, _ = section
    cfg = tmp_path / "bad.toml"
    cfg.write_text(toml)
    code, _, err = _run(capsys, "analyze", path, "--config", cfg, "--out", tmp_path / "o")
    assert code == 2 and words in err and "Traceback" not in err


def test_materials_lists_library(capsys):
    code, out, _ = _run(capsys, "materials")
    assert code == 0 and "silicon-carbide" in out and "tungsten-carbide" in out


def test_console_script_entry_point(tmp_path):
    """The installed `polisect` command exists and reports its version."""
    exe = os.path.join(os.path.dirname(sys.executable), "polisect")
    res = subprocess.run([exe, "--version"], capture_output=True, text=True)
    assert res.returncode == 0 and "polisect" in res.stdout


def test_estimate_3d_options(section, tmp_path, capsys):
    """--estimate-3d --voxels --realizations: the JSON carries effective_3d with the spread of
    the realizations, and the summary prints it (the issue's contract)."""
    path, cfg, _ = section
    code, out, err = _run(capsys, "analyze", path, "--config", cfg, "--out", tmp_path,
                          "--json", "-", "--estimate-3d", "--voxels", "24",
                          "--realizations", "2")
    assert code == 0, err
    e3 = json.loads(out)["effective_3d"]
    assert e3["realizations"] == 2 and e3["volume"]["voxels"] == [24, 24, 24]
    assert len(e3["conductivity"]["mean_W_mK_realizations"]) == 2
    assert "3D conductivity" in err
    with pytest.raises(SystemExit) as exc:
        main(["analyze", str(path), "--config", str(cfg), "--voxels", "8"])
    assert exc.value.code == 2 and "smallest allowed, 16" in capsys.readouterr().err


def test_stack_folder(tmp_path, capsys):
    """--stack reads a folder of label slices as one volume of the right shape and voxel size;
    --stack on a file says it needs a folder."""
    labels = synth.rsa_spheres((12, 24, 24), 0.2, 3.0, seed=2).labels.astype(np.uint8)
    folder = tmp_path / "stack"
    folder.mkdir()
    for k, plane in enumerate(labels):
        tifffile.imwrite(folder / f"z{k:02d}.tif", plane, resolution=(1e4, 1e4),
                         resolutionunit="CENTIMETER")
    code, out, err = _run(capsys, "analyze", folder, "--stack", "--kind", "labels", "--out",
                          tmp_path / "out", "--json", "-", "--quiet")
    assert code == 0, err
    d = json.loads(out)
    assert d["source"]["shape"] == [12, 24, 24] and d["source"]["pixel_size_um"] == 1.0
    code, _, err = _run(capsys, "analyze", folder / "z00.tif", "--stack", "--kind", "labels")
    assert code == 2 and "not a folder" in err


def test_closed_output_pipe_ends_quietly(tmp_path):
    """Issue 17 probe: `polisect materials --json | head` died with a BrokenPipe traceback
    (common practice, no source)."""
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    proc = subprocess.Popen([sys.executable, "-m", "polisect.apps.cli", "materials", "--json"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    proc.stdout.close()
    err = proc.stderr.read().decode()
    assert proc.wait() == 0 and "Traceback" not in err and "BrokenPipe" not in err


def _raising(exc):
    def run(args):
        raise exc
    return run


@pytest.mark.parametrize("exc, code, words", [
    (BrokenPipeError(), 0, None),
    (KeyboardInterrupt(), 130, "interrupted"),
    (RuntimeError("something odd\nsecond line"), 1, "internal error: RuntimeError: something "
                                                    "odd (run again with --debug"),
    (OSError(28, "No space left on device"), 2, "disk full"),
    (MemoryError(), 2, "out of memory"),
])
def test_every_failure_is_one_line_with_its_exit_code(monkeypatch, capsys, exc, code, words):
    """Common practice (no source): exit 0, 1, 2 or 130 and one line, never a traceback."""
    import polisect.apps.cli as cli

    monkeypatch.setattr(cli, "_run_materials", _raising(exc))
    assert main(["materials"]) == code
    err = capsys.readouterr().err
    assert "Traceback" not in err and len(err.splitlines()) <= 1
    if words:
        assert words in err


def test_debug_shows_the_traceback(monkeypatch, capsys):
    """Common practice (no source): --debug, before or after the command, shows it."""
    import polisect.apps.cli as cli

    monkeypatch.setattr(cli, "_run_materials", _raising(RuntimeError("odd")))
    for argv in (["--debug", "materials"], ["materials", "--debug"]):
        assert main(argv) == 1
        err = capsys.readouterr().err
        assert "Traceback" in err and "RuntimeError: odd" in err
