"""Bench cases (a)–(f): speed and memory of the solvers on fixed synthetic images.

A row holds, for one case and method:

* ``iterations`` — total over the load cases;
* ``seconds`` — wall time of the property, set-up included;
* ``seconds_per_iteration``;
* ``fft_floor`` — the time of the Fourier transforms one iteration needs (one forward
  and one inverse real FFT of the ``nc`` stacked components for ``fft``, of the stored
  strain components for ``ms``): the solvers' own transforms, timed inside the same solve
  (reported to the bench through `solve.progress`), so that both figures see the same machine load (on a shared
  machine a separate measurement differed by up to 2×);
* ``ratio`` — seconds per iteration / fft floor;
* ``peak_mb`` — peak of the memory traced by ``tracemalloc`` during the solve (numpy
  arrays; the FFT library's and numba's internal work buffers are not traced);
* ``peak_rss_mb`` — the largest resident size of the whole process seen during the solve
  (`memory.PeakRSS`, every 10 ms; interpreter and libraries included, every buffer
  counted): the figure to hold against a memory limit;
* ``converged``.

`ms` runs on a pore-free variant (pores replaced by matrix) with at most
`MS_BUDGET` iterations per load case, enough to measure its cost per iteration; its
iteration count to full convergence grows with the contrast. `fe` runs where the
assembled system fits `FE_MEMORY_LIMIT`.
"""

from __future__ import annotations

import tracemalloc
import warnings
from typing import Callable

import numpy as np
from scipy import ndimage

from ...core.materials import Material
from ...core.memory import PeakRSS
from ...properties.solve import conductivity, elasticity, expansion
from ...properties.solve.fe import memory_estimate
from ...properties.solve import progress
from ...model3d.synth import Inclusions, compose

MATRIX = Material(conductivity=1.0, youngs_modulus=70.0, poisson_ratio=0.33, expansion=23e-6,
                  name="matrix")
PARTICLE = Material(conductivity=1000.0, youngs_modulus=410.0, poisson_ratio=0.14,
                    expansion=4e-6, name="particle")
PORE = Material(conductivity=0.0, youngs_modulus=0.0, name="pore")
MATERIALS = {0: MATRIX, 1: PARTICLE, 2: PORE}
PORE_FREE = {0: MATRIX, 1: PARTICLE, 2: MATRIX}
MS_BUDGET = 100
FE_MEMORY_LIMIT = 8e9


class Transforms:
    """Progress observer that sums the time of the solvers' Fourier transforms
    (`solve.progress` "transform" events): ``seconds`` and forward/inverse ``pairs``."""

    def __init__(self):
        self.seconds = 0.0
        self.pairs = 0

    def __call__(self, event: dict) -> None:
        if event["event"] == "transform":
            self.seconds += event["seconds"]
            self.pairs += event["kind"] == "forward"


def measure(case: str, problem: str, shape: tuple[int, ...], method: str,
            run: Callable[[], object]) -> dict:
    """Run *run* (returns a result with solver facts) under tracemalloc with its Fourier
    transforms timed; one table row."""
    tracemalloc.start()
    transforms = Transforms()
    with warnings.catch_warnings(), progress.observe(transforms), PeakRSS() as rss:
        warnings.simplefilter("ignore", RuntimeWarning)      # ms stops at its budget
        result = run()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    iterations = max(result.iterations, 1)
    per_iteration = result.seconds / iterations
    floor = transforms.seconds / transforms.pairs if transforms.pairs else None
    return {"case": case, "problem": problem, "size": "x".join(map(str, shape)),
            "method": method, "iterations": result.iterations,
            "seconds": round(result.seconds, 3), "seconds_per_iteration": per_iteration,
            "fft_floor": floor, "ratio": None if floor is None else per_iteration / floor,
            "peak_mb": round(peak / 2 ** 20, 1),
            "peak_rss_mb": round(rss.peak, 1),
            "converged": result.converged}


def skipped(case: str, problem: str, shape: tuple[int, ...], method: str, why: str) -> dict:
    return {"case": case, "problem": problem, "size": "x".join(map(str, shape)),
            "method": method, "skipped": why}


def image_2d(n: int) -> np.ndarray:
    """Matrix, 30 % particles (radius n/85) and 10 % pores (radius n/170), periodic RSA."""
    return compose((n, n), [Inclusions(1, 0.3, max(n / 85, 1.5)),
                            Inclusions(2, 0.1, max(n / 170, 1.0))], seed=1).labels


def image_3d(n: int) -> np.ndarray:
    """Matrix, 30 % spheres (radius n/16) and 10 % spherical pores (radius n/26), not
    below 2.5 and 1.5 voxels (smaller pixelated spheres jam the packing)."""
    return compose((n, n, n), [Inclusions(1, 0.3, max(n / 16, 2.5)),
                               Inclusions(2, 0.1, max(n / 26, 1.5))], seed=1).labels


def _fe_fits(shape, nc) -> bool:
    return memory_estimate(shape, nc) <= FE_MEMORY_LIMIT


def _methods(case, problem, shape, nc, run_with):
    """fft, fe (if it fits) and ms (pore-free, `MS_BUDGET` iterations) rows of one
    property; ``run_with(method, materials, maxiter)`` returns the result."""
    rows = [measure(case, problem, shape, "fft", lambda: run_with("fft", MATERIALS, None))]
    if _fe_fits(shape, nc):
        rows.append(measure(case, problem, shape, "fe", lambda: run_with("fe", MATERIALS, None)))
    else:
        rows.append(skipped(case, problem, shape, "fe",
                            f"assembled system ~{memory_estimate(shape, nc) / 1e9:.0f} GB"))
    rows.append(measure(case, problem + ", pore-free", shape, "ms",
                        lambda: run_with("ms", PORE_FREE, MS_BUDGET)))
    return rows


def case_2d_conductivity(quick: bool) -> list[dict]:
    """(a) 2D conductivity, three phases with 10 % pores, contrast 1e3."""
    n = 128 if quick else 1024
    labels = image_2d(n)
    return _methods("a", "2D conductivity, 10 % pores, contrast 1e3", labels.shape, 1,
                    lambda m, mats, it: conductivity(labels, mats, method=m, maxiter=it))


def case_2d_elasticity(quick: bool) -> list[dict]:
    """(b) plane-strain stiffness of the image of (a); (c) its thermal expansion with the
    stiffness of the same method (from its strain localisation: no solve since issue 19)."""
    n = 128 if quick else 1024
    labels = image_2d(n)
    stiff: dict = {}

    def stiffness(m, mats, it):
        stiff[m] = elasticity(labels, mats, plane="plane-strain", method=m, maxiter=it)
        return stiff[m]

    def thermal(m, mats, it):
        return expansion(labels, mats, plane="plane-strain", method=m, stiffness=stiff[m],
                         maxiter=it)

    rows = _methods("b", "2D plane-strain stiffness, same image", labels.shape, 2, stiffness)
    rows += _methods("c", "2D plane-strain expansion, same image", labels.shape, 2, thermal)
    return rows


def case_3d_conductivity(quick: bool) -> list[dict]:
    """(d) 3D conductivity of spheres and spherical pores."""
    n = 24 if quick else 128
    labels = image_3d(n)
    return _methods("d", "3D conductivity, spheres, 10 % pores", labels.shape, 1,
                    lambda m, mats, it: conductivity(labels, mats, method=m, maxiter=it))


def case_3d_elasticity(quick: bool) -> list[dict]:
    """(e) 3D stiffness of the image of (d)."""
    n = 24 if quick else 128
    labels = image_3d(n)
    return _methods("e", "3D stiffness, spheres, 10 % pores", labels.shape, 3,
                    lambda m, mats, it: elasticity(labels, mats, method=m, maxiter=it))


def smoothed_noise_image(n: int, seed: int = 2) -> np.ndarray:
    """Periodic three-phase image at any size: Gaussian-smoothed noise (σ = 3 px) cut at
    its 60 % and 90 % quantiles (matrix, particles, pores); the same statistics at every n."""
    field = ndimage.gaussian_filter(np.random.default_rng(seed).random((n, n)), 3.0, mode="wrap")
    return np.searchsorted(np.quantile(field, [0.6, 0.9]), field).astype(np.int32)


def case_2d_scaling(quick: bool) -> list[dict]:
    """(f) growth of the fft cost of a 2D conductivity with the image size (same
    structure statistics); the last row carries the exponent p of seconds ∝ N^p fitted
    over the sizes. A small solve first compiles the kernels, so that compile time does
    not inflate the smallest size (it made a quick run print N^−0.30, issue 18)."""
    sizes = (64, 128, 256) if quick else (256, 512, 1024, 2048)
    conductivity(smoothed_noise_image(32), MATERIALS, method="fft")   # compile before timing
    rows = []
    for n in sizes:
        labels = smoothed_noise_image(n)
        rows.append(measure("f", "2D conductivity scaling", labels.shape, "fft",
                            lambda: conductivity(labels, MATERIALS, method="fft")))
    pixels = np.array([n * n for n in sizes], dtype=float)
    seconds = np.array([r["seconds"] for r in rows])
    rows[-1]["exponent"] = float(np.polyfit(np.log(pixels), np.log(seconds), 1)[0])
    return rows
