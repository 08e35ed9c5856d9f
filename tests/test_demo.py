"""Tests of polisect.apps.demo: the demo's sections run in worker processes or here, with
the same results in the same order."""

from pathlib import Path

from polisect.apps import samples
from polisect.apps.demo import run_demo


def _label_sections(tmp_path) -> list:
    """The shipped sections' true label maps with a fractions-only config (fast)."""
    config = tmp_path / "labels.toml"
    config.write_text('[image]\nkind = "labels"\npixel_size_um = 2.0\n\n[solve]\nproperties = []\n')
    return [samples.SampleSection(s.name, s.line, s.title, s.truth, s.truth, config)
            for s in samples.sample_files()]


def test_parallel_demo_gives_the_serial_results_in_order(tmp_path, monkeypatch):
    """Two worker processes and one process give the same headline rows, in the order of
    the sections, and every report is written (construction: the same `run_section` on
    the same inputs)."""
    sections = _label_sections(tmp_path)
    monkeypatch.setattr(samples, "demo_sections", lambda: sections)
    serial = run_demo(str(tmp_path / "one"), jobs=1)
    parallel = run_demo(str(tmp_path / "two"), jobs=2)
    assert [d.title for d in parallel] == [s.title for s in sections]
    for a, b in zip(serial, parallel):
        assert {k: v for k, v in a.row.items() if k != "created"} == \
            {k: v for k, v in b.row.items() if k != "created"}
        assert Path(b.report).exists() and str(tmp_path / "two") in b.report
