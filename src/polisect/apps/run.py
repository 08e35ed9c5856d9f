"""`run_section`: one section from its source to its written outputs — the one path that
`polisect analyze`, `demo`, `batch` (local and Dask) and the page all take.

The outputs of a section (JSON, headline CSV, label TIFF, overlay PNG, HTML report and,
when particles were measured, the particle CSV) are written as a set: every file first into
a hidden staging folder beside them, then moved into place one by one with the JSON last,
so a reader that finds the JSON finds the whole set of the same run; a run killed while
writing leaves the previous set untouched (and its staging folder is swept by the next run).
"""

from __future__ import annotations

import dataclasses
import os
import shutil
import tempfile
import time
from dataclasses import dataclass
from typing import Callable

import numpy as np

from ..core.atomic import atomic_write
from ..core.errors import InputError
from ..pipeline.analysis import Analysis, analyze
from ..present import record, report
from ..read.config import Config

STAGING_PREFIX = ".polisect-staging-"
STALE_STAGING_S = 3600.0
"""Staging folders older than this are left over from a killed run and are removed."""


@dataclass(frozen=True)
class Outputs:
    """Paths of the files `write_outputs` wrote."""

    json: str
    csv: str
    report: str
    phasemap: str
    overlay: str
    particles_csv: str | None = None
    segmenter: str | None = None

    def files(self) -> dict[str, str]:
        """Kind → path of every file written."""
        return {k: v for k, v in dataclasses.asdict(self).items() if v}


def run_section(source, config: Config | None, out_dir: str | os.PathLike, *,
                stem: str | None = None, pixel_size_um: float | None = None,
                progress: Callable[[str], None] | None = None) -> tuple[Analysis, Outputs]:
    """Analyse one section and write its outputs.

    Parameters
    ----------
    source : path or ndarray
        As for `polisect.pipeline.analysis.analyze`.
    config : Config or None
        The run configuration (the optional steps it asks for run as part of the analysis).
    out_dir : path
        Output folder; checked writable before the analysis starts.
    stem : str, optional
        Base name of the outputs (default: the image's file name without extension).
    pixel_size_um : float, optional
        Pixel size override.
    progress : callable, optional
        Called with a short stage description.

    Returns
    -------
    (Analysis, Outputs)
    """
    out_dir = os.fspath(out_dir)
    check_writable(out_dir)
    analysis = analyze(source, config, pixel_size_um=pixel_size_um, progress=progress)
    if progress:
        progress("writing outputs")
    return analysis, write_outputs(analysis, out_dir, stem=stem, config=config)


def check_writable(out_dir: str) -> None:
    """Raise `InputError` when *out_dir* cannot be created or written (before any work)."""
    if os.path.exists(out_dir) and not os.path.isdir(out_dir):
        raise InputError(f"--out {out_dir}: this is a file, not a folder; give a folder name")
    try:
        os.makedirs(out_dir, exist_ok=True)
        probe = tempfile.NamedTemporaryFile(dir=out_dir, prefix=STAGING_PREFIX, delete=True)
        probe.close()
    except OSError as exc:
        raise InputError(f"--out {out_dir}: cannot write there ({exc.strerror}); choose a "
                         "folder you may write to") from None


def write_outputs(analysis: Analysis, out_dir: str | os.PathLike, *, stem: str | None = None,
                  config: Config | None = None) -> Outputs:
    """Write the JSON, the headline CSV, the label TIFF, the overlay PNG and the HTML report
    as one set (see the module notes)."""
    out_dir = os.fspath(out_dir)
    os.makedirs(out_dir, exist_ok=True)
    _sweep_staging(out_dir)
    res = analysis.result
    stem = stem or _stem(res.source.path)
    given = {p.label: p.color for p in config.phases} if config else {}
    colors = report.phase_colors(analysis.phasemap.phases, given)
    rows = analysis.particle_rows
    names = Outputs(json=stem + ".json", csv=stem + ".csv", report=stem + "_report.html",
                    phasemap=stem + "_phases.tif", overlay=stem + "_overlay.png",
                    particles_csv=stem + "_particles.csv" if rows else None,
                    segmenter=(stem + "_segmenter.npz" if analysis.segmenter is not None
                               else None))
    staging = tempfile.mkdtemp(prefix=STAGING_PREFIX, dir=out_dir)
    try:
        def at(name):
            return os.path.join(staging, name)

        analysis.phasemap.save(at(names.phasemap))
        atomic_write(at(names.overlay), lambda tmp: _save_overlay(tmp, analysis, colors))
        if names.segmenter:
            analysis.segmenter.save(at(names.segmenter))
        if names.particles_csv:
            record.write_csv(rows, at(names.particles_csv))
        record.write_csv([record.headline(res)], at(names.csv))
        report.write_report(analysis, at(names.report), colors)
        record.write_json(res, at(names.json))
        files = names.files()
        for kind in [k for k in files if k != "json"] + ["json"]:
            os.replace(at(files[kind]), os.path.join(out_dir, files[kind]))
    except OSError as exc:
        if exc.errno == 28:
            raise InputError(f"disk full writing the outputs of {stem} into {out_dir}; free "
                             "some space and run again (nothing of this run was kept)") from None
        raise
    finally:
        shutil.rmtree(staging, ignore_errors=True)
    return Outputs(**{k: (os.path.join(out_dir, v) if v else None)
                      for k, v in dataclasses.asdict(names).items()})


def _sweep_staging(out_dir: str) -> None:
    now = time.time()
    for name in os.listdir(out_dir):
        path = os.path.join(out_dir, name)
        if name.startswith(STAGING_PREFIX) and os.path.isdir(path):
            try:
                if now - os.path.getmtime(path) > STALE_STAGING_S:
                    shutil.rmtree(path, ignore_errors=True)
            except OSError:
                continue


def _stem(path: str | None) -> str:
    if not path:
        return "section"
    return os.path.splitext(os.path.basename(path))[0]


def _save_overlay(tmp: str, analysis: Analysis, colors: dict[int, str]) -> None:
    import imageio.v3 as iio
    from matplotlib.colors import to_rgb

    pm = analysis.phasemap
    labels = pm.labels if pm.ndim == 2 else pm.labels[pm.shape[0] // 2]
    rgb = np.zeros(labels.shape + (3,), dtype=np.float32)
    for label, color in colors.items():
        rgb[labels == label] = to_rgb(color)
    img = analysis.image
    if img is not None and img.ndim == 2 and img.shape == labels.shape:
        g = (img - img.min()) / max(float(np.ptp(img)), 1e-12)
        rgb = 0.45 * g[..., None] + 0.55 * rgb
    iio.imwrite(tmp, (np.clip(rgb, 0, 1) * 255).astype(np.uint8), extension=".png")
