"""Bench case (l): the cost of the error budget beside the solve of a rendered section.

A deterministic 1024 × 768 section of the fictional Kestrel Foundry Supply castable
(mullite bond, hollow alumina spheres with pore cores, free pores) is rendered as a
backscattered-electron micrograph (`polisect.model3d.synth.render_sem`) and analysed with
`polisect.analyze` from the grey image (multi-Otsu thresholds, so the segmentation reports
its boundary uncertainty), all three properties, library materials with their stated
uncertainties. It runs twice: with the default budget (segmentation term of the
conductivity only) and with the segmentation term of every effective property
(``[uncertainty] segmentation = "all"``). The figures: the solve's and
the budget's wall seconds from the result's ``timings_s``, their ratio (target ≤ 60 %,
issue 16), and the same ratio in CPU seconds of the process (``time.process_time``, all
threads): the budget's from its first progress message to the end of the analysis,
against a solve of the same phase map in the same process right after
(`polisect.properties.effective.solve_effective`). On a shared machine the wall figures
are inflated; the CPU ratio of work done back to back is the steadier one.
"""

from __future__ import annotations

import time

import numpy as np

from ...core.phasemap import PhaseMap
from ...model3d.synth import Inclusions, compose, render_sem
from ...pipeline.analysis import analyze
from ...properties.effective import solve_effective
from ...read.config import config_from_dict

SHAPE = (768, 1024)                                    # rows, columns
TARGET_RATIO = 0.60
GREY = {0: 0.05, 1: 0.45, 2: 0.80}


def rendered_section(shape: tuple[int, int] = SHAPE) -> np.ndarray:
    """The case-(l) micrograph: pores (label 0, also the sphere cores), mullite bond (1),
    alumina sphere shells (2), by random sequential addition (seed 16), rendered with a
    one-pixel blur and noise of 3 % of full scale (seed 16)."""
    scale = max(shape[1] / SHAPE[1], 0.25)
    labels = compose(shape, [Inclusions(2, 0.22, 14.0 * scale, 3.0 * scale,
                                        hollow_ratio=0.5, core_label=0),
                             Inclusions(0, 0.06, 5.0 * scale, 1.0 * scale)],
                     seed=16, matrix_label=1).labels
    return render_sem(labels, GREY, blur_px=1.0, noise_sd=0.03, seed=16)


def config(budget: bool, **uncertainty):
    """The case's run configuration (the castable's phases from the library)."""
    return config_from_dict({
        "image": {"kind": "grayscale", "pixel_size_um": 2.0, "crop_bottom_px": 0},
        "segment": {"method": "multi-otsu", "classes": 3},
        "phase": [{"label": 0, "name": "pore", "material": "air", "particles": False},
                  {"label": 1, "name": "mullite", "material": "mullite", "particles": False},
                  {"label": 2, "name": "alumina", "material": "alumina", "particles": False}],
        "solve": {"properties": ["conductivity", "elasticity", "expansion"]},
        "uncertainty": {"budget": budget, **uncertainty}})


BUDGET_STAGES = ("discretization error", "material data", "segmentation:")
"""Progress messages of the budget's solves (`polisect.pipeline.analysis._uncertainty`);
the budget's CPU seconds run from the first of them to the end of the analysis (the
budget is its last stage; the fractions' and D50's rows before it take milliseconds)."""

VARIANTS = {"default budget (segmentation term of k)": {},
            "budget with the segmentation term of every property": {"segmentation": "all"}}
"""Row name → the ``[uncertainty]`` keys of the budget-on run."""


def measure_budget(shape: tuple[int, int] = SHAPE, **uncertainty) -> dict:
    """Analyse the rendered section with the budget on; the figures of case (l).

    Parameters
    ----------
    shape : (rows, columns)
    **uncertainty
        Further ``[uncertainty]`` keys of the budget-on run.

    Returns
    -------
    dict
        ``solve_s``, ``budget_s`` (wall, ``timings_s`` of the budget-on run), ``ratio``
        (their quotient), ``solve_cpu_s``, ``budget_cpu_s``, ``cpu_ratio`` (see the module
        notes), ``budget`` (the result's ``uncertainty``).
    """
    image = rendered_section(shape)
    marks: dict[str, float] = {}

    def progress(message: str) -> None:
        if message.startswith(BUDGET_STAGES):
            marks.setdefault("budget", time.process_time())

    analysis = analyze(image, config(True, **uncertainty), progress=progress)
    budget_cpu = time.process_time() - marks["budget"]
    pm = analysis.phasemap
    start = time.process_time()
    solve_effective(PhaseMap(pm.labels, pm.phases, pm.voxel_size_um),
                    ("conductivity", "elasticity", "expansion"))
    solve_cpu = time.process_time() - start
    timings = analysis.result.timings_s
    return {"solve_s": timings["solve"], "budget_s": timings["uncertainty"],
            "ratio": timings["uncertainty"] / timings["solve"], "solve_cpu_s": solve_cpu,
            "budget_cpu_s": budget_cpu, "cpu_ratio": budget_cpu / solve_cpu,
            "budget": analysis.result.uncertainty}


def case_budget(quick: bool) -> list[dict]:
    """(l) The error budget's cost beside the solve (target ≤ 60 %), by default and with
    the segmentation term of the effective properties."""
    shape = (192, 256) if quick else SHAPE
    rows = []
    for name, keys in VARIANTS.items():
        r = measure_budget(shape, **keys)
        rows.append({
            "case": "l", "problem": f"{name} beside the solve, rendered castable section, "
                                    "all three properties",
            "size": f"{shape[1]}x{shape[0]}", "seconds": round(r["budget_s"], 2),
            "solve_seconds": round(r["solve_s"], 2), "ratio": r["ratio"],
            "cpu_seconds": round(r["budget_cpu_s"], 2),
            "solve_cpu_seconds": round(r["solve_cpu_s"], 2), "cpu_ratio": r["cpu_ratio"],
            "targets": {"ratio": TARGET_RATIO},
            "figure": (f"budget {r['budget_s']:.1f} s beside a {r['solve_s']:.1f} s solve "
                       f"(wall, {100 * r['ratio']:.0f} %; target ≤ "
                       f"{100 * TARGET_RATIO:.0f} %); CPU {r['budget_cpu_s']:.1f} s beside "
                       f"{r['solve_cpu_s']:.1f} s ({100 * r['cpu_ratio']:.0f} %)")})
    return rows
