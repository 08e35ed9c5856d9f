"""Tests of polisect.apps.run: one section to a whole set of outputs, or none."""

import errno
import os

import numpy as np
import pytest

from polisect import InputError
from polisect.apps import run
from polisect.present import record
from polisect.read.config import config_from_dict

CFG = config_from_dict({"image": {"kind": "labels"},
                        "phase": [{"label": 0, "name": "matrix", "conductivity": 1.0},
                                  {"label": 1, "name": "grain", "conductivity": 4.0}],
                        "solve": {"properties": ["conductivity"], "fields": False}})


def _labels(seed=0):
    rng = np.random.default_rng(seed)
    return (rng.random((32, 32)) < 0.3).astype(np.int32)


def test_a_set_is_written_whole(tmp_path):
    """Every output of a section is there, nothing of the staging is left."""
    analysis, out = run.run_section(_labels(), CFG, tmp_path, stem="s")
    assert sorted(os.listdir(tmp_path)) == sorted(os.path.basename(p)
                                                  for p in out.files().values())
    assert record.read_result(out.json).phases[1].fraction == analysis.result.phases[1].fraction


def test_a_run_that_fails_while_writing_keeps_the_previous_set(tmp_path, monkeypatch):
    """A failure (or a kill) while the outputs are written leaves the previous run's set as
    it was and no half-written file: the new set is staged and moved in, JSON last."""
    _, first = run.run_section(_labels(0), CFG, tmp_path, stem="s")
    before = {p: open(p, "rb").read() for p in first.files().values()}

    def broken(*args, **kwargs):
        raise RuntimeError("killed while writing the report")

    monkeypatch.setattr(run.report, "write_report", broken)
    with pytest.raises(RuntimeError):
        run.run_section(_labels(1), CFG, tmp_path, stem="s")
    assert {p: open(p, "rb").read() for p in first.files().values()} == before
    assert sorted(os.listdir(tmp_path)) == sorted(os.path.basename(p) for p in before)


def test_disk_full_is_a_clear_error_and_leaves_nothing(tmp_path, monkeypatch):
    """ENOSPC while writing → InputError "disk full", nothing of the run kept."""
    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(run.record, "write_json", full)
    with pytest.raises(InputError, match="disk full"):
        run.run_section(_labels(), CFG, tmp_path, stem="s")
    assert os.listdir(tmp_path) == []


def test_out_that_is_a_file_is_refused_before_the_analysis(tmp_path, monkeypatch):
    """--out naming a file is an input error found before any work."""
    target = tmp_path / "out"
    target.write_text("not a folder")

    def no_analysis(*args, **kwargs):
        raise AssertionError("the analysis ran although the output folder is unusable")

    monkeypatch.setattr(run, "analyze", no_analysis)
    with pytest.raises(InputError, match="is a file"):
        run.run_section(_labels(), CFG, target)


def test_stale_staging_folders_are_swept(tmp_path):
    """A staging folder left by a killed run (older than an hour) is removed by the next run;
    a fresh one (another run in progress) is left alone."""
    stale = tmp_path / (run.STAGING_PREFIX + "old")
    fresh = tmp_path / (run.STAGING_PREFIX + "new")
    stale.mkdir()
    fresh.mkdir()
    os.utime(stale, (0, 0))
    run.run_section(_labels(), CFG, tmp_path, stem="s")
    assert not stale.exists() and fresh.exists()
