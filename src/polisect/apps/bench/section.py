"""Bench case (j): a full-size section, all three properties with the default settings.

A deterministic 2048 × 1536 label image (aluminium matrix, 26 % silicon carbide, 8 %
pores) goes through `polisect.properties.effective.solve_effective` as an analysis would
(default tolerance, maps kept). The figures: wall time, peak resident memory, and the
largest relative deviation of every reported effective value from a reference solved to
a relative residual of 1e-10 (computed once and cached beside the bench, since it takes
minutes).
"""

from __future__ import annotations

import json
import os
import time
from pathlib import Path

import numpy as np

from ...core.materials import Material, get_material
from ...core.memory import PeakRSS
from ...core.phasemap import Phase, PhaseMap
from ...model3d.synth import Inclusions, compose
from ...properties.effective import solve_effective
from ...properties.solve import conductivity, elasticity, expansion

SHAPE = (1536, 2048)                                   # rows, columns
PROPERTIES = ("conductivity", "elasticity", "expansion")
TARGET_SECONDS = 30.0
TARGET_RSS_MB = 1024.0
TARGET_DEVIATION = 1e-4
REFERENCE_TOL = 1e-10
OLD_DEFAULTS = {"seconds": 157.0, "rss_mb": 2.4 * 1024,
                "note": "landed main before issue 19: residual 1e-6 stop, separate expansion "
                        "solve (issue 19 text)"}


def section(shape: tuple[int, int] = SHAPE) -> PhaseMap:
    """The case-(j) section (quick runs use a smaller *shape*, same fractions)."""
    scale = shape[1] / SHAPE[1]
    labels = compose(shape, [Inclusions(1, 0.26, max(12.0 * scale, 3.0)),
                             Inclusions(2, 0.08, max(6.0 * scale, 2.0))], seed=19).labels
    return PhaseMap(labels.astype(np.int32), (
        Phase(0, "aluminium", get_material("aluminium")),
        Phase(1, "SiC", get_material("silicon-carbide")),
        Phase(2, "pore", Material(conductivity=0.0, youngs_modulus=0.0, name="pore"))))


def values(effective) -> dict[str, np.ndarray]:
    """Every effective number of an `Effective`, by name."""
    c, e, x = effective.conductivity, effective.elasticity, effective.expansion
    return {"conductivity tensor": np.asarray(c.tensor),
            "prismatic stiffness": np.asarray(e.prismatic_stiffness),
            "stiffness": np.asarray(e.stiffness),
            "expansion tensor": np.asarray(x.tensor),
            "axial expansion": np.array([x.axial]),
            "moduli": np.array([e.youngs_modulus, e.poisson_ratio, e.bulk_modulus,
                                e.shear_modulus]),
            "axial moduli": np.array([e.axial.youngs_modulus, e.axial.poisson_ratio,
                                      e.axial.shear_modulus])}


def deviation(got: dict, ref: dict) -> float:
    """Largest relative deviation over the values in *got*: tensors entry-wise against
    ``√(T_ii T_jj)`` (so that zero off-diagonal entries are measured on the scale of the
    tensor), scalars against themselves."""
    worst = 0.0
    for key, g in got.items():
        g = np.asarray(g, dtype=float)
        r = np.asarray(ref[key], dtype=float)
        if r.ndim == 2:
            d = np.sqrt(np.abs(np.outer(np.diag(r), np.diag(r))))
            scale = np.where(d > 0, d, np.abs(r).max())
        else:
            scale = np.abs(r)
        worst = max(worst, float(np.max(np.abs(g - r) / np.where(scale > 0, scale, 1.0))))
    return worst


def reference(phasemap: PhaseMap, path: Path | None) -> dict:
    """Values solved to a relative residual of `REFERENCE_TOL`, cached in *path*."""
    if path is not None and path.exists():
        doc = json.loads(path.read_text())
        if doc.get("shape") == list(phasemap.labels.shape):
            return {k: np.asarray(v) for k, v in doc["values"].items()}
    eff = solve_effective(phasemap, PROPERTIES, tol=REFERENCE_TOL, maps=False,
                          criterion="residual")
    out = values(eff.effective)
    if path is not None:
        path.write_text(json.dumps({"shape": list(phasemap.labels.shape),
                                    "values": {k: v.tolist() for k, v in out.items()}}))
    return out


def old_defaults(phasemap: PhaseMap) -> dict:
    """The work of the defaults before issue 19, on this code: stop on the relative
    residual 1e-6 and solve the thermal eigenstrain as a fifth load case. Returns the
    main values (conductivity, prismatic stiffness, expansion)."""
    labels = np.ascontiguousarray(phasemap.labels.T)
    mats = phasemap.materials
    c = conductivity(labels, mats, fields=True, criterion="residual")
    e = elasticity(labels, mats, fields=True, criterion="residual")
    x = expansion(labels, mats, stiffness=e, direct=True, criterion="residual")
    return {"conductivity tensor": c.tensor, "prismatic stiffness": e.prismatic_stiffness,
            "expansion tensor": x.tensor, "axial expansion": np.array([x.axial]),
            "iterations": c.iterations + e.iterations + x.iterations}


def timed(run) -> tuple[object, float, float, float]:
    """Result, wall seconds, process CPU seconds and peak resident MB of *run*()."""
    with PeakRSS() as rss:
        start, cpu = time.perf_counter(), time.process_time()
        out = run()
        seconds, cpu = time.perf_counter() - start, time.process_time() - cpu
    return out, seconds, cpu, rss.peak


def case_section(quick: bool) -> list[dict]:
    """(j) a 2048 × 1536 section, all three properties: the defaults, and the old
    defaults beside them."""
    shape = (192, 256) if quick else SHAPE
    phasemap = section(shape)
    cache = os.environ.get("POLISECT_BENCH_CACHE")
    ref_path = None if cache is None else Path(cache) / f"case-j-{shape[0]}x{shape[1]}.json"
    eff, seconds, cpu, rss = timed(lambda: solve_effective(phasemap, PROPERTIES))
    block = eff.effective
    del eff
    ref = reference(phasemap, ref_path)
    dev = deviation(values(block), ref)
    old, old_s, old_cpu, old_rss = timed(lambda: old_defaults(phasemap))
    old_iterations = old.pop("iterations")
    old_dev = deviation(old, ref)
    iterations = sum(getattr(block, p).solver.iterations for p in ("conductivity", "elasticity"))
    parts = ", ".join(f"{p} {getattr(block, p).solver.seconds:.1f} s" for p in PROPERTIES)
    size = f"{shape[1]}x{shape[0]}"
    return [{"case": "j", "problem": "section, all three properties, defaults", "size": size,
             "seconds": round(seconds, 2), "cpu_seconds": round(cpu, 2),
             "peak_rss_mb": round(rss, 1), "deviation": dev, "iterations": iterations,
             "targets": {"seconds": TARGET_SECONDS, "rss_mb": TARGET_RSS_MB,
                         "deviation": TARGET_DEVIATION},
             "figure": (f"{seconds:.1f} s wall (target ≤ {TARGET_SECONDS:.0f} s), {cpu:.1f} s "
                        f"CPU, peak RSS {rss:.0f} MB (target ≤ {TARGET_RSS_MB:.0f} MB), "
                        f"largest deviation from the tol-1e-10 reference {dev:.1e} (target "
                        f"≤ {TARGET_DEVIATION:.0e}); {parts}; {iterations} CG iterations")},
            {"case": "j", "problem": "same section, old defaults (residual 1e-6, expansion "
                                     "solved)", "size": size,
             "seconds": round(old_s, 2), "cpu_seconds": round(old_cpu, 2),
             "peak_rss_mb": round(old_rss, 1), "deviation": old_dev,
             "iterations": old_iterations,
             "figure": (f"{old_s:.1f} s wall, {old_cpu:.1f} s CPU, peak RSS {old_rss:.0f} MB, "
                        f"largest deviation {old_dev:.1e}; {old_iterations} CG iterations "
                        f"(issue 19 measured {OLD_DEFAULTS['seconds']:.0f} s and "
                        f"{OLD_DEFAULTS['rss_mb']:.0f} MB on landed main)")}]
