"""Tests of polisect.apps.batch: discovery, grouping, bad files, manifest, resume after a kill,
the Dask path, a crashing worker, the progress bar and the lock."""

import csv
import io
import json
import os
import shutil
import signal
import subprocess
import sys
import time

import numpy as np
import pytest
import tifffile

from polisect.apps.batch import (MANIFEST, Grouping, ProgressBar, Settings, Task, _local_results,
                            discover, read_manifest, run_batch)
from polisect.apps.cli import main
from polisect.read.config import load_config
from polisect.core.errors import InputError
from polisect.model3d.synth import rsa_discs

CONFIG = ('[image]\nkind = "labels"\n[solve]\nproperties = ["conductivity"]\nfields = false\n'
          '[[phase]]\nlabel = 0\nname = "matrix"\nconductivity = 1.0\n'
          '[[phase]]\nlabel = 1\nname = "grain"\nconductivity = 10.0\n')
GOOD = [f"{lot}/s{i}.tif" for lot in ("A", "B") for i in range(2)]


def _make_folder(root):
    """Four 64² label images in two folders, a truncated TIFF, a text file named .tif, a PNG
    the pattern skips and a hidden file."""
    for i, rel in enumerate(GOOD):
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        fraction = 0.25 if rel.startswith("A") else 0.35
        lab = rsa_discs((64, 64), fraction, 3.0, seed=i).labels.astype(np.uint8)
        tifffile.imwrite(path, lab)
    data = (root / "A" / "s0.tif").read_bytes()
    (root / "A" / "cut.tif").write_bytes(data[: len(data) // 2])
    (root / "B" / "readme.tif").write_text("notes on batch B, not an image\n")
    (root / "B" / "other.png").write_bytes(b"")
    (root / "A" / ".hidden.tif").write_bytes(data)
    cfg = root.parent / f"{root.name}.toml"
    cfg.write_text(CONFIG)
    return cfg


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    root = tmp_path_factory.mktemp("batch") / "images"
    cfg = _make_folder(root)
    return root, cfg


@pytest.fixture(scope="module")
def reference(folder, tmp_path_factory):
    """An uninterrupted run with the local process pool (2 jobs)."""
    root, cfg = folder
    out = tmp_path_factory.mktemp("ref") / "out"
    result = run_batch(root, out, config=load_config(cfg), jobs=2, quiet=True)
    return result, (out / "summary.csv").read_text()


def test_discovery_is_recursive_sorted_and_filtered(folder, tmp_path):
    """Recursive, case-insensitive patterns; hidden files and the output folder skipped."""
    root, _ = folder
    assert discover(root, "*.tif") == ["A/cut.tif", "A/s0.tif", "A/s1.tif", "B/readme.tif",
                                       "B/s0.tif", "B/s1.tif"]
    assert discover(root, "*.PNG, s0.*") == ["A/s0.tif", "B/other.png", "B/s0.tif"]
    assert "A/s0.tif" not in discover(root, "*.tif", exclude=[root / "A"])
    with pytest.raises(InputError, match="not a folder"):
        discover(tmp_path / "nothing")


def test_grouping_by_folder_and_regex():
    """Folder grouping uses the path below the batch folder; a regex needs (?P<batch>...)."""
    g = Grouping.parse(None)
    assert g.group("/d/in/A/s1.tif", "/d/in") == "A"
    assert g.group("/d/in/A/x/s1.tif", "/d/in") == "A/x"
    assert g.group("/d/in/s1.tif", "/d/in") == "in"
    r = Grouping.parse(r"(?P<batch>K\d+)-")
    assert r.group("/d/K12-s3.tif") == "K12" and r.group("/d/other.tif") == "(unmatched)"
    with pytest.raises(InputError, match="batch"):
        Grouping.parse(r"K\d+")
    with pytest.raises(InputError, match="regular expression"):
        Grouping.parse("(")


def test_bad_files_fail_and_the_rest_complete(reference):
    """A truncated TIFF and a text file named .tif end in failures.csv with a one-line reason;
    every good image has a row in summary.csv, its outputs and a manifest entry; no temporary
    file is left (atomic writes)."""
    result, summary = reference
    out = result.out
    assert (result.total, result.done, result.failed, result.skipped) == (6, 4, 2, 0)
    rows = list(csv.DictReader(io.StringIO(summary)))
    assert [r["image"] for r in rows] == GOOD
    assert {r["batch"] for r in rows} == {"A", "B"}
    assert all(float(r["conductivity_W_mK"]) > 1.0 for r in rows)
    with open(os.path.join(out, "failures.csv"), newline="") as f:
        failures = {r["image"]: r for r in csv.DictReader(f)}
    assert set(failures) == {"A/cut.tif", "B/readme.tif"}
    assert "truncated" in failures["A/cut.tif"]["reason"]
    assert "text" in failures["B/readme.tif"]["reason"]
    assert all("\n" not in r["reason"] for r in failures.values())
    manifest = read_manifest(out)
    entry = manifest["entries"]["A/s1.tif"]
    assert entry["status"] == "done" and len(entry["sha256"]) == 64
    assert entry["config_sha256"] == manifest["config_sha256"]
    for path in entry["outputs"].values():
        assert os.path.exists(os.path.join(out, path))
    assert manifest["entries"]["A/cut.tif"]["status"] == "failed"
    index = open(os.path.join(out, "index.html"), encoding="utf-8").read()
    assert "sections/A/s1_report.html" in index and "truncated" in index
    leftovers = [f for _, _, files in os.walk(out) for f in files if f.startswith(".tmp-")]
    assert leftovers == []


def test_resume_redoes_only_changed_images_and_configs(folder, reference, tmp_path):
    """--resume skips what is done and what failed on bad input (the stored hash is trusted
    while size and modification time are unchanged), redoes a changed image or one whose
    result JSON does not read back, and redoes all after a config change."""
    root, cfg = folder
    work, out = tmp_path / "images", tmp_path / "out"
    shutil.copytree(root, work)
    shutil.copytree(reference[0].out, out)
    manifest = read_manifest(out)
    for rel, entry in manifest["entries"].items():   # the copy moved the images
        entry["path"] = str(work / rel)
    (out / MANIFEST).write_text(json.dumps(manifest))
    config = load_config(cfg)
    again = run_batch(work, out, config=config, jobs=2, resume=True, quiet=True)
    assert (again.skipped, again.done, again.failed) == (6, 4, 2)
    lab = rsa_discs((64, 64), 0.3, 3.0, seed=99).labels.astype(np.uint8)
    tifffile.imwrite(work / "B" / "s1.tif", lab)
    (out / "sections" / "A" / "s0.json").write_text('{"schema": "polisect.res')  # torn copy
    changed = run_batch(work, out, config=config, jobs=2, resume=True, quiet=True)
    assert (changed.skipped, changed.done) == (4, 4)
    old = read_manifest(reference[0].out)["entries"]["B/s1.tif"]["sha256"]
    assert read_manifest(out)["entries"]["B/s1.tif"]["sha256"] != old
    new_cfg = tmp_path / "new.toml"
    new_cfg.write_text(CONFIG.replace("conductivity = 10.0", "conductivity = 12.0"))
    redo = run_batch(work, out, config=load_config(new_cfg), pattern="s0.tif", resume=True,
                     quiet=True)
    assert (redo.skipped, redo.done) == (0, 2)


def test_killed_batch_resumes_to_the_same_summary(folder, reference, tmp_path):
    """A real `polisect batch` subprocess killed with SIGKILL mid-run, then run again with
    --resume: nothing done is redone, the summary equals the uninterrupted run's (no
    duplicate rows) and no half-written file is left."""
    root, cfg = folder
    out = tmp_path / "out"
    cmd = [sys.executable, "-m", "polisect.apps.cli", "batch", str(root), "--config", str(cfg),
           "--out", str(out), "--jobs", "1", "--quiet"]
    proc = subprocess.Popen(cmd, start_new_session=True, stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL)
    done = []
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and proc.poll() is None:
            try:
                entries = json.loads((out / MANIFEST).read_text())["entries"]
            except (OSError, ValueError, KeyError):
                entries = {}
            done = [k for k, e in entries.items() if e["status"] == "done"]
            if len(done) >= 2:
                break
            time.sleep(0.05)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)
    assert len(done) >= 2, "the batch ended before it could be killed"
    assert proc.returncode == -signal.SIGKILL
    assert not (out / "summary.csv").exists()
    stamps = {rel: os.stat(out / "sections" / (rel[:-4] + ".json")).st_mtime_ns for rel in done}
    resumed = run_batch(root, out, config=load_config(cfg), jobs=2, resume=True, quiet=True)
    assert resumed.skipped >= len(done)
    for rel, stamp in stamps.items():
        assert os.stat(out / "sections" / (rel[:-4] + ".json")).st_mtime_ns == stamp
    summary = (out / "summary.csv").read_text()
    assert summary == reference[1]
    images = [r["image"] for r in csv.DictReader(io.StringIO(summary))]
    assert len(images) == len(set(images)) == 4
    leftovers = [f for _, _, files in os.walk(out) for f in files if f.startswith(".tmp-")]
    assert leftovers == []


def test_dask_local_cluster_gives_the_same_summary(folder, reference, tmp_path):
    """The Dask distributed path (a LocalCluster, two worker processes) writes the same
    summary.csv and failures as the local process pool."""
    import distributed
    root, cfg = folder
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=":0") as cluster:
        r = run_batch(root, tmp_path / "out", config=load_config(cfg),
                      scheduler=cluster.scheduler_address, quiet=True)
    assert (r.done, r.failed) == (4, 2)
    assert (tmp_path / "out" / "summary.csv").read_text() == reference[1]
    assert (tmp_path / "out" / "failures.csv").read_text() == \
        open(os.path.join(reference[0].out, "failures.csv")).read()


def crash_on_named(task, settings):
    """Stands in for analyze_one: kills its worker process on images named crash*."""
    if os.path.basename(task.rel).startswith("crash"):
        os._exit(3)
    return {"status": "done", "reason": "", "retry": False, "outputs": {}, "seconds": 0.0}


def test_a_dying_worker_fails_only_its_image(tmp_path):
    """A worker process that dies (as under the out-of-memory killer) takes only its own
    image down; the others are still analysed (common practice for process pools)."""
    tasks = [Task(rel, str(tmp_path / rel), "g", "0" * 64, str(tmp_path), rel[:-4])
             for rel in ("a.tif", "b.tif", "crash.tif", "d.tif", "e.tif", "f.tif")]
    results = dict((t.rel, rec) for t, rec in _local_results(tasks, Settings(config=None), 2,
                                                            work=crash_on_named))
    assert set(results) == {t.rel for t in tasks}
    assert results["crash.tif"]["status"] == "failed"
    assert "worker process died" in results["crash.tif"]["reason"]
    assert all(results[r]["status"] == "done" for r in results if r != "crash.tif")


def test_progress_bar_counts_failures_and_time_left():
    """Counts, failures, rate and time left; one line per update interval off a terminal."""
    stream = io.StringIO()
    bar = ProgressBar(10, skipped=2, stream=stream, interval=0.0)
    bar.update("done")
    bar.update("failed")
    line = bar.line()
    assert line.startswith("[") and "4/10" in line and "2 from before" in line
    assert "1 failed" in line and "left" in line and "img/s" in line
    assert len(stream.getvalue().splitlines()) == 2
    ProgressBar(3, stream=stream, quiet=True).draw(final=True)
    assert len(stream.getvalue().splitlines()) == 2


def test_one_batch_per_output_folder(folder, tmp_path):
    """A live batch's lock in the output folder refuses a second batch; a stale lock (its
    process gone) is taken over, and the temporary files of a killed run are removed."""
    root, cfg = folder
    out = tmp_path / "out"
    out.mkdir()
    (out / ".polisect-batch.lock").write_text(str(os.getpid()))
    with pytest.raises(InputError, match="another polisect batch"):
        run_batch(root, out, config=load_config(cfg), pattern="s0.tif", quiet=True)
    gone = subprocess.Popen([sys.executable, "-c", "pass"])
    gone.wait()
    (out / ".polisect-batch.lock").write_text(str(gone.pid))
    (out / ".tmp-left-by-a-kill.json").write_text("{")
    r = run_batch(root, out, config=load_config(cfg), pattern="s0.tif", group_by="(?P<batch>zz)",
                  quiet=True)
    assert r.done == 2 and not (out / ".polisect-batch.lock").exists()
    assert not (out / ".tmp-left-by-a-kill.json").exists()
    assert any("temporary" in n for n in r.notes)
    assert any("do not match --group-by" in n for n in r.notes)


def test_cli_batch_and_bad_input(folder, tmp_path, capsys):
    """`polisect batch` with --group-by REGEX and --windows (fractions only, to keep it
    quick); bad input exits with code 2."""
    root, _ = folder
    cfg = tmp_path / "fractions.toml"
    cfg.write_text(CONFIG.replace('properties = ["conductivity"]', "properties = []"))
    out = tmp_path / "out"
    code = main(["batch", str(root), "--config", str(cfg), "--out", str(out), "--pattern",
                 "s1.tif", "--group-by", r"(?P<batch>s\d)", "--windows", "--quiet"])
    assert code == 0
    rows = list(csv.DictReader(open(out / "summary.csv", newline="")))
    assert [r["batch"] for r in rows] == ["s1", "s1"]
    assert all(r["window_verdict_enough"] in ("True", "False") for r in rows)
    d = json.loads((out / "sections" / "A" / "s1.json").read_text())
    assert d["windows"]["edges"] == "periodic"
    assert main(["batch", str(tmp_path / "missing"), "--out", str(out)]) == 2
    assert main(["batch", str(root), "--out", str(out), "--jobs", "0"]) == 2
    assert main(["batch", str(root), "--out", str(out), "--pattern", "*.xyz"]) == 2
    assert "no files matching" in capsys.readouterr().err


def test_lock_with_a_reused_process_id_is_stale(folder, tmp_path):
    """A lock whose process id now belongs to another process (its start time differs) is
    taken over; a live batch's lock is refused with the lock file named (common practice,
    no source)."""
    from polisect.apps.batch import _start_time

    root, cfg = folder
    out = tmp_path / "out"
    out.mkdir()
    lock = out / ".polisect-batch.lock"
    lock.write_text(f"{os.getpid()} {_start_time(os.getpid())}")
    with pytest.raises(InputError, match=r"delete the lock file .*\.polisect-batch\.lock"):
        run_batch(root, out, config=load_config(cfg), pattern="s0.tif", quiet=True)
    lock.write_text(f"{os.getpid()} 1")          # this id, started at another time
    r = run_batch(root, out, config=load_config(cfg), pattern="s0.tif", quiet=True)
    assert r.done == 2 and not lock.exists()


WATCHED = """
import sys, time
from polisect.apps.batch import _die_with
_die_with(int(sys.argv[1]), kernel=False)    # the parent-check thread alone
print("watching", flush=True)
time.sleep(60)
"""

SLEEPY = """
import os, time
def sleepy(task, settings):
    with open(os.path.join(os.environ["PIDS"], str(os.getpid())), "w"):
        pass
    time.sleep(60)
"""

BATCH = """
import sys
sys.path.insert(0, sys.argv[1])
from sleepy import sleepy
from polisect.apps.batch import _local_results
list(_local_results(["a", "b", "c"], None, 2, work=sleepy))
"""


def _gone_within(pids, seconds):
    from polisect.apps.batch import _alive

    end = time.monotonic() + seconds
    while time.monotonic() < end and any(_alive(p) for p in pids):
        time.sleep(0.02)
    return [p for p in pids if _alive(p)]


@pytest.mark.slow
def test_workers_die_within_a_second_of_a_killed_batch(tmp_path):
    """Issue 17 probe: killed batches left their workers running; now the kernel's
    parent-death signal ends them (common practice, no source)."""
    (tmp_path / "sleepy.py").write_text(SLEEPY)
    pids = tmp_path / "pids"
    pids.mkdir()
    env = dict(os.environ, PIDS=str(pids),
               PYTHONPATH=os.pathsep.join([str(tmp_path)] + sys.path))
    batch = subprocess.Popen([sys.executable, "-c", BATCH, str(tmp_path)], env=env)
    end = time.monotonic() + 120
    while len(os.listdir(pids)) < 2 and time.monotonic() < end and batch.poll() is None:
        time.sleep(0.05)
    workers = [int(n) for n in os.listdir(pids)]
    assert len(workers) == 2
    batch.kill()
    batch.wait()
    assert _gone_within(workers, 1.0) == []


@pytest.mark.slow
def test_parent_check_thread_ends_the_worker(tmp_path):
    """Where there is no parent-death signal, a thread ends the worker within a second of
    the batch process (common practice, no source)."""
    parent = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    worker = subprocess.Popen([sys.executable, "-c", WATCHED, str(parent.pid)], env=env,
                              stdout=subprocess.PIPE, text=True)
    assert worker.stdout.readline().strip() == "watching"
    parent.kill()
    parent.wait()
    assert _gone_within([worker.pid], 1.0) == []
    worker.wait(timeout=5)
    assert worker.returncode == 1


def test_index_page_escapes_names_and_forbids_scripts():
    """Issue 17 probe: user strings in written pages must not run as script."""
    from polisect.apps.batch import index_html

    evil = "<script>alert(1)</script>.tif"
    manifest = {"folder": "/data/<b>", "pattern": "*<i>", "entries": {
        evil: {"outputs": {"report": f"{evil}.html", "json": f"{evil}.json"}}}}
    text = index_html(manifest, [{"batch": "<img src=x onerror=alert(1)>", "image": evil}],
                      [{"image": evil, "reason": "<script>x</script>"}])
    assert "<script>" not in text and "<img src=x" not in text
    assert 'http-equiv="Content-Security-Policy"' in text


MEASURED_A = ('# invented values for the test\n[[measured]]\nproperty = "conductivity"\n'
              'value = 2.0\nuncertainty = 0.2\nmethod = "laser flash (invented)"\n')


def test_measured_file_beside_the_images(tmp_path, capsys):
    """A measured.toml next to a batch's images is compared with that batch's mean of the
    computed values: mean and Student-t interval over the sections (ASTM E562) and z in the
    combined standard uncertainty √(u² + SE²) (JCGM 100:2008); measured.csv, the index and
    the console say so; a batch without a file has none."""
    root = tmp_path / "images"
    for i, rel in enumerate(GOOD):
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        fraction = 0.25 if rel.startswith("A") else 0.35
        tifffile.imwrite(path, rsa_discs((64, 64), fraction, 3.0, seed=i).labels.astype(np.uint8))
    (root / "A" / "measured.toml").write_text(MEASURED_A)
    cfg = tmp_path / "c.toml"
    cfg.write_text(CONFIG)
    out = tmp_path / "out"
    assert main(["batch", str(root), "--out", str(out), "--config", str(cfg), "--quiet"]) == 0
    err = capsys.readouterr().err
    assert "measured values beside the batch means" in err and "A: conductivity at 20 °C" in err
    manifest = read_manifest(out)
    assert manifest["measured_files"] == {"A/measured.toml": [
        {"property": "conductivity", "value": 2.0, "uncertainty": 0.2, "temperature_C": 20.0,
         "method": "laser flash (invented)"}]}
    computed = []
    for rel in ("A/s0.tif", "A/s1.tif"):
        with open(out / manifest["entries"][rel]["outputs"]["json"]) as f:
            computed.append(json.load(f)["effective"]["conductivity"]["mean_W_mK"])
    rows = list(csv.DictReader(open(out / "measured.csv")))
    assert [r["batch"] for r in rows] == ["A"]
    mean = float(np.mean(computed))
    se = float(np.std(computed, ddof=1)) / np.sqrt(2)
    assert float(rows[0]["section_mean"]) == pytest.approx(mean)
    assert float(rows[0]["section_z"]) == pytest.approx((mean - 2.0) / np.hypot(0.2, se))
    assert rows[0]["section_n"] == "2"
    page = (out / "index.html").read_text()
    assert "Measured beside computed" in page and "laser flash (invented)" in page


def test_malformed_measured_file_names_the_file_and_the_entry(folder, tmp_path):
    """A bad measured.toml stops the batch before any image, naming the file and the entry
    (common practice, no source)."""
    root = tmp_path / "images"
    shutil.copytree(folder[0] / "A", root / "A")
    (root / "A" / "measured.toml").write_text(
        MEASURED_A + '[[measured]]\nproperty = "hardness"\nvalue = 1.0\n')
    with pytest.raises(InputError, match=r"measured\.toml: \[\[measured\]\] number 2: "
                                         r"property = 'hardness'"):
        run_batch(root, tmp_path / "out", config=load_config(folder[1]), quiet=True)
    (root / "A" / "measured.toml").write_text('[other]\nx = 1\n')
    with pytest.raises(InputError, match=r"measured\.toml: only \[\[measured\]\] tables"):
        run_batch(root, tmp_path / "out", config=load_config(folder[1]), quiet=True)
