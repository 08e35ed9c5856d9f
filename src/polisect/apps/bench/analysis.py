"""Bench cases (g)–(i): the 3D estimate, particle statistics and batch throughput.

Moved here from the domain modules (`model3d.reconstruct`, `measure.morphology`,
`apps.batch`), which keep no bench code.
"""

from __future__ import annotations

import os
import tempfile
import time

import numpy as np
import tifffile

from ...core.materials import Material, get_material
from ...core.memory import PeakRSS
from ...core.phasemap import Phase, PhaseMap
from ...measure.morphology import enclosed_fractions, field_fractions, phase_particles
from ...measure.stereology import two_point_correlation
from ...model3d.reconstruct import estimate_3d
from ...model3d.synth import Inclusions, compose, rsa_discs
from ..run import run_section
from ...read.config import config_from_dict
from ..batch import run_batch


def estimate_section(n: int) -> PhaseMap:
    """The bench's section: a mullite castable with silicon carbide particles, hollow alumina
    spheres with pore cores and free pores (total particle fraction 0.35), n × n pixels of
    1 µm, by random sequential addition (`polisect.model3d.synth.compose`, seed 1)."""
    scale = n / 1024
    labels = compose((n, n), [Inclusions(2, 0.17, 9.0 * max(scale, 0.5), 2.0 * max(scale, 0.5)),
                              Inclusions(3, 0.13, 11.0 * max(scale, 0.5), 2.0 * max(scale, 0.5),
                                         hollow_ratio=0.5, core_label=0),
                              Inclusions(0, 0.05, 4.0 * max(scale, 0.5))],
                     seed=1, matrix_label=1).labels
    names = {0: "air", 1: "mullite", 2: "silicon-carbide", 3: "alumina"}
    return PhaseMap(labels, tuple(Phase(k, v, get_material(v)) for k, v in names.items()), 1.0)


def bench_estimate_3d(quick: bool = False, tol: float = 1e-6) -> list[dict]:
    """Speed and memory of one realization of the 3D estimate with all three properties.

    One realization of `estimate_3d` at the default budget of 160³ voxels (quick: 48³) from
    `estimate_section` (1024² pixels; quick: 256²), method "auto", after a
    small warm-up run (so that compiling the solver kernels is not counted). Rows in the
    form of `polisect bench` (case "g"): the reconstruction (section statistics, packing,
    rasterising), each property's solve, and the total with the process's peak resident
    memory (``peak_rss_mb``, sampled; the target is ≤ 180 s and ≤ 4096 MB at 160³).

    Parameters
    ----------
    quick : bool
        Small sizes (a smoke run of a few seconds).
    tol : float
        Solver tolerance (the pipeline's default 1e-6; effective properties change by less
        than 1e-6 relative at 1e-4, with about 40 % fewer iterations).

    Returns
    -------
    list of dict
        Keys ``case``, ``problem``, ``size``, ``method``, ``iterations``, ``seconds``,
        ``seconds_per_iteration``, ``fft_floor`` (None), ``ratio`` (None), ``peak_mb`` (the
        growth of the resident memory over the realization, sampled: tracemalloc would slow
        the particle measurements twentyfold), ``converged``; the total row adds
        ``peak_rss_mb`` (the process's peak resident memory), ``limit_seconds`` and
        ``limit_mb``.
    """
    n_px, voxels = (256, 48) if quick else (1024, 160)
    phasemap = estimate_section(n_px)
    estimate_3d(estimate_section(256), voxels=16, realizations=1, tol=1e-2)     # compile kernels
    size = f"{voxels}x{voxels}x{voxels}"
    tick = time.perf_counter()
    with PeakRSS() as rss:
        est = estimate_3d(phasemap, voxels=voxels, realizations=1, tol=tol)
    total = time.perf_counter() - tick
    grown = rss.peak - rss.start
    (run,) = est.realizations
    solves = [("conductivity", run.conductivity), ("stiffness", run.elasticity),
              ("expansion (stiffness reused)", run.expansion)]

    def row(problem, method, iterations, seconds, converged=True):
        return {"case": "g", "problem": f"3D estimate: {problem}", "size": size,
                "method": method, "iterations": int(iterations), "seconds": round(seconds, 3),
                "seconds_per_iteration": seconds / max(int(iterations), 1), "fft_floor": None,
                "ratio": None, "peak_mb": round(grown, 1), "converged": converged,
                "tolerance": tol}

    build = run.seconds - sum(r.seconds for _, r in solves)
    rows = [row(f"reconstruction of {run.spheres} spheres (statistics, packing, rasterising)",
                run.packing, 1, build + (total - run.seconds))]
    rows += [row(name, r.method, r.iterations, r.seconds, r.converged) for name, r in solves]
    rows.append({**row("one realization, all three properties", solves[0][1].method,
                       sum(r.iterations for _, r in solves), total,
                       all(r.converged for _, r in solves)),
                 "peak_rss_mb": round(rss.peak, 1), "limit_seconds": 180, "limit_mb": 4096})
    return rows


def bench_morphology(size: int = 2048, radius: float = 9.0, fraction: float = 0.3,
                         seed: int = 0) -> dict:
    """Time every statistic of this module on a synthetic section of *size*² pixels.

    The section is a periodic random-sequential-addition cell of *size*/2 pixels
    (`polisect.model3d.synth.compose`: solid discs and hollow discs with pore cores, radius
    *radius* ± 2 px) tiled 2 × 2, about 5000 particles at the defaults. Timed: field
    fractions and enclosed fractions, particles with splitting, bootstrap size statistics
    (1000 resamples), Saltykov, spacing, contiguity, nearest neighbours
    (`phase_particles`), and the two-point correlation of the particle and pore phases.
    Building the cell is not timed.

    Returns
    -------
    dict
        ``{"shape", "particles", "seconds": {stage: s}, "total_s"}``.
    """
    cell = compose((size // 2, size // 2),
                   [Inclusions(1, fraction * 0.8, radius, size_sd=2.0),
                    Inclusions(1, fraction * 0.2, radius, size_sd=2.0, hollow_ratio=0.5,
                               core_label=2)], seed=seed).labels
    labels = np.tile(cell, (2, 2))
    m = Material(conductivity=1.0)
    pm = PhaseMap(labels, (Phase(0, "matrix", m), Phase(1, "particle", m), Phase(2, "pore", m)),
                  voxel_size_um=0.5)
    seconds = {}
    tick = time.perf_counter()
    field_fractions(labels, [0, 1, 2])
    enclosed_fractions(labels, [1])
    seconds["fractions"] = time.perf_counter() - tick
    tick = time.perf_counter()
    res = phase_particles(pm, 1, split_touching=True)
    seconds["particles"] = time.perf_counter() - tick
    tick = time.perf_counter()
    for label in (1, 2):
        two_point_correlation(labels == label, voxel_size_um=0.5)
    seconds["two_point_correlation"] = time.perf_counter() - tick
    return {"shape": list(labels.shape), "particles": res.table.count,
            "seconds": seconds, "total_s": sum(seconds.values())}


def bench_batch(quick: bool = False) -> list[dict]:
    """Throughput of a batch of conductivity-only label images at 1 and 2 jobs.

    100 images of 512² (quick: 8 of 128²), two phases (conductivity 1 and 10 W/(m·K),
    random discs). Figures: images per second at 1 and 2 jobs, the speed-up, and the batch
    overhead over the sum of the analyses run one after another in this (warmed-up) process
    (`run_section` per image, the work of ``polisect analyze``); the overhead
    includes starting the workers. ``overhead_in_workers_pct`` compares the batch's wall
    time with the per-image times measured inside its workers.

    Returns
    -------
    list of dict
        One row per case: ``case``, ``images``, ``side_px``, ``seconds``,
        ``images_per_s`` and, where it applies, ``speedup`` or ``overhead_pct``.
    """
    n, side = (8, 128) if quick else (100, 512)
    cfg = config_from_dict({"image": {"kind": "labels"}, "solve": {"properties": ["conductivity"]},
                            "phase": [{"label": 0, "name": "matrix", "conductivity": 1.0},
                                      {"label": 1, "name": "grain", "conductivity": 10.0}]})
    rows = []
    with tempfile.TemporaryDirectory(prefix="polisect-bench-batch-") as tmp:
        src = os.path.join(tmp, "images")
        os.makedirs(src)
        for i in range(n):
            lab = rsa_discs((side, side), 0.3, side / 40.0, seed=i).labels.astype(np.uint8)
            tifffile.imwrite(os.path.join(src, f"s{i:03d}.tif"), lab)
        names = sorted(os.listdir(src))
        run_section(os.path.join(src, names[0]), cfg, os.path.join(tmp, "warm"))
        t0 = time.perf_counter()
        for name in names:
            run_section(os.path.join(src, name), cfg, os.path.join(tmp, "serial"))
        serial = time.perf_counter() - t0
        rows.append({"case": "sum of analyses (serial, in process)", "images": n,
                     "side_px": side, "seconds": serial, "images_per_s": n / serial})
        timings = {}
        for jobs in (1, 2):
            r = run_batch(src, os.path.join(tmp, f"out{jobs}"), config=cfg, jobs=jobs,
                          quiet=True)
            if r.failed:
                raise RuntimeError(f"bench batch: {r.failed} images failed")
            timings[jobs] = r.seconds
            row = {"case": f"batch, {jobs} job{'s' if jobs > 1 else ''}", "images": n,
                   "side_px": side, "seconds": r.seconds, "images_per_s": n / r.seconds}
            if jobs == 1:
                row["overhead_pct"] = (r.seconds / serial - 1.0) * 100.0
                row["overhead_in_workers_pct"] = (r.seconds / r.analysis_seconds - 1.0) * 100.0
            else:
                row["speedup"] = timings[1] / r.seconds
            rows.append(row)
    return rows
