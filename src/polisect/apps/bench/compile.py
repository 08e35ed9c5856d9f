"""Bench case (k): first-run compile time of the solver kernels.

A fresh Python process with an empty numba cache (``NUMBA_CACHE_DIR`` pointed at a new
temporary folder) imports the solvers and solves a small set of problems that reach
every kernel variant (2D and 3D, scalar and elastic, the serial path of small images and
the parallel path of a 1024² image), then solves them again. The compile time is the
first pass minus the second, in wall time and in the process's CPU time (compiling is
serial, so on a loaded machine the CPU time is the figure that does not depend on the
load); the import time is reported beside it.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile

TARGET_SECONDS = 10.0
OLD_SECONDS = 44.5
"""Issue 19: 17.5 s for the serial path plus 27 s for the parallel path on landed main."""

SCRIPT = r"""
import json, time
t0 = time.perf_counter()
import numpy as np
from polisect import Material
from polisect.properties.solve import conductivity, elasticity
imported = time.perf_counter() - t0
m = {0: Material(conductivity=1.0, youngs_modulus=70.0, poisson_ratio=0.3),
     1: Material(conductivity=10.0, youngs_modulus=400.0, poisson_ratio=0.2),
     2: Material(conductivity=0.0, youngs_modulus=0.0)}
def work():
    small = np.zeros((32, 32), dtype=int); small[8:20, 8:20] = 1; small[24:28, 2:6] = 2
    cube = np.zeros((12, 12, 12), dtype=int); cube[3:8, 3:8, 3:8] = 1
    big = np.zeros((1024, 1024), dtype=int); big[200:600, 300:700] = 1; big[700:760, :60] = 2
    conductivity(small, m); elasticity(small, m)
    conductivity(cube, m); elasticity(cube, m)
    conductivity(big, m, tol=1e-2); elasticity(big, m, tol=1e-2)
times, cpu = [], []
for _ in range(2):
    t, c = time.perf_counter(), time.process_time()
    work()
    times.append(time.perf_counter() - t)
    cpu.append(time.process_time() - c)
print(json.dumps({"import": imported, "first": times[0], "second": times[1],
                  "first_cpu": cpu[0], "second_cpu": cpu[1]}))
"""


def measure_compile() -> dict:
    """Import, first-pass and second-pass seconds (wall and CPU) in a fresh process with an
    empty cache."""
    with tempfile.TemporaryDirectory(prefix="polisect-numba-cache-") as cache:
        env = {**os.environ, "NUMBA_CACHE_DIR": cache}
        out = subprocess.run([sys.executable, "-c", SCRIPT], env=env, check=True,
                             capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def case_compile(quick: bool) -> list[dict]:
    """(k) compile time of the solver kernels on first use (empty cache)."""
    r = measure_compile()
    compile_s = r["first"] - r["second"]
    compile_cpu = r["first_cpu"] - r["second_cpu"]
    return [{"case": "k", "problem": "first run: kernel compile time, empty numba cache",
             "size": "all kernels", "seconds": round(compile_s, 2), "compile_s": compile_s,
             "compile_cpu_s": compile_cpu, "import_s": r["import"],
             "target_seconds": TARGET_SECONDS,
             "figure": (f"compile {compile_s:.1f} s wall, {compile_cpu:.1f} s CPU (target ≤ "
                        f"{TARGET_SECONDS:.0f} s; old {OLD_SECONDS:.1f} s), import "
                        f"{r['import']:.1f} s, warm solves {r['second']:.1f} s")}]
