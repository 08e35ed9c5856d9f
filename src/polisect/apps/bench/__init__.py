"""`polisect bench`: speed and memory of the solvers and the analysis on fixed cases.

Every case is a function ``case(quick) -> list[dict]`` in `CASES`; other modules may
append their own. Cases (a)–(f) measure the solvers (`bench.solvers`, where the row
figures are explained), (g)–(i) the 3D estimate, particle statistics and batch
throughput (`bench.analysis`), (j) a full-size section with all three properties and
its accuracy against a tight reference (`bench.section`), (k) the first-run compile time
of the solver kernels in a fresh process with an empty cache (`bench.compile`), (l) the
cost of the error budget beside the solve of a rendered section (`bench.budget`).
"""

from __future__ import annotations

import json
import os
import textwrap
import time
from typing import Callable

from ...core.atomic import atomic_write_text
from ...core.errors import InputError
from ...properties.solve.fft import workers
from . import analysis
from .budget import case_budget
from .compile import case_compile
from .section import case_section
from .solvers import (MATERIALS, PORE_FREE, case_2d_conductivity, case_2d_elasticity,
                      case_2d_scaling, case_3d_conductivity, case_3d_elasticity, image_2d,
                      image_3d, measure, skipped, smoothed_noise_image)

__all__ = ["run_bench", "format_table", "select_cases", "CASES", "measure", "skipped",
           "image_2d", "image_3d", "smoothed_noise_image", "MATERIALS", "PORE_FREE",
           "InputError"]


def case_3d_estimate(quick: bool) -> list[dict]:
    """(g) One realization of the 3D estimate from a section, all three properties."""
    return analysis.bench_estimate_3d(quick)


def case_morphology(quick: bool) -> list[dict]:
    """(h) Every particle and stereology statistic of a 2048² section (~5000 particles)."""
    r = analysis.bench_morphology(size=512 if quick else 2048)
    stages = ", ".join(f"{k} {v:.2f} s" for k, v in r["seconds"].items())
    return [{"case": "h", "problem": "particle statistics (target ≤ 10 s at 2048²)",
             "size": "x".join(str(n) for n in r["shape"]), "seconds": r["total_s"],
             "figure": f"{r['particles']} particles; {stages}"}]


def case_batch(quick: bool) -> list[dict]:
    """(i) Batch throughput at 1 and 2 jobs and the batch's overhead."""
    out = []
    for r in analysis.bench_batch(quick):
        extra = [f"{r['images_per_s']:.3g} images/s"]
        for key, words in (("speedup", "speed-up"), ("overhead_pct", "overhead %"),
                           ("overhead_in_workers_pct", "overhead in workers %")):
            if r.get(key) is not None:
                extra.append(f"{words} {r[key]:.3g}")
        out.append({"case": "i", "problem": f"batch: {r['case']}",
                    "size": f"{r['images']} × {r['side_px']}²", "seconds": r["seconds"],
                    "figure": ", ".join(extra)})
    return out


CASES: list[Callable[[bool], list[dict]]] = [case_2d_conductivity, case_2d_elasticity,
                                             case_3d_conductivity, case_3d_elasticity,
                                             case_2d_scaling, case_3d_estimate,
                                             case_morphology, case_batch, case_section,
                                             case_compile, case_budget]


CASE_INDEX = {"a": 0, "b": 1, "c": 1, "d": 2, "e": 3, "f": 4, "g": 5, "h": 6, "i": 7, "j": 8,
              "k": 9, "l": 10}
"""The entry of `CASES` that makes the rows of each case letter (b and c share one)."""
CASE_LETTERS = "".join(CASE_INDEX)


def select_cases(letters: str | None) -> list[Callable[[bool], list[dict]]]:
    """The case functions that produce the rows of *letters* (all for None)."""
    if letters is None:
        return list(CASES)
    letters = letters.replace(",", "").replace(" ", "").lower()
    unknown = sorted(set(letters) - set(CASE_LETTERS))
    if unknown or not letters:
        raise InputError(f"bench cases {''.join(unknown) or repr(letters)} are not known; "
                         f"choose letters from {CASE_LETTERS}, e.g. --cases ab")
    return [CASES[i] for i in sorted({CASE_INDEX[c] for c in letters})]


def case_title(case: Callable[[bool], list[dict]], width: int = 100) -> str:
    """``(a) 2D conductivity …``: the first sentence of the case function's docstring,
    shortened to *width* characters."""
    paragraph = " ".join((case.__doc__ or case.__name__).strip().split("\n\n")[0].split())
    return textwrap.shorten(paragraph.split(". ")[0].rstrip("."), width, placeholder=" …")


def run_bench(quick: bool = False, json_path: str | None = None,
              cases: str | None = None,
              say: Callable[[str], None] | None = None) -> list[dict]:
    """Run the cases of `CASES`; write the rows as JSON to *json_path* when given.

    Parameters
    ----------
    quick : bool
        Small sizes (the whole run in well under a minute).
    json_path : str, optional
    cases : str, optional
        Letters of the cases to run (`select_cases`); all when omitted.
    say : callable, optional
        Receives a progress line as each case starts and ends (with its wall and CPU
        seconds), so that a long run shows where it is.

    Returns
    -------
    list of dict
        One row per case and method (see the module notes).
    """
    rows = []
    chosen = select_cases(cases)
    for number, case in enumerate(chosen, start=1):
        title = case_title(case)
        if say:
            say(f"[{number}/{len(chosen)}] running {title}")
        wall, cpu = time.perf_counter(), time.process_time()
        rows.extend(case(quick))
        if say:
            say(f"[{number}/{len(chosen)}] done in {time.perf_counter() - wall:.1f} s "
                f"({time.process_time() - cpu:.1f} s CPU)")
    if json_path is not None:
        doc = {"schema": "polisect.bench/1", "quick": quick, "cpus": os.cpu_count(),
               "fft_workers": workers(), "rows": rows}
        atomic_write_text(json_path, json.dumps(doc, indent=1) + "\n")
    return rows


def _fmt(value, spec: str) -> str:
    return "-" if value is None else format(value, spec)


def format_table(rows: list[dict]) -> str:
    """Plain-text table of bench rows."""
    head = ("case", "method", "size", "iter", "seconds", "s/iter", "fft floor", "ratio",
            "peak MB", "RSS MB", "conv", "problem")
    lines = [head]
    others = [r for r in rows if "figure" in r]
    for r in rows:
        if "figure" in r:
            continue
        if "skipped" in r:
            lines.append((r["case"], r["method"], r["size"], "-", "-", "-", "-", "-", "-", "-", "-",
                          f"{r['problem']} (skipped: {r['skipped']})"))
            continue
        note = r["problem"] + (f" (N^{r['exponent']:.2f})" if "exponent" in r else "")
        lines.append((r["case"], r["method"], r["size"], str(r["iterations"]),
                      f"{r['seconds']:.2f}", f"{r['seconds_per_iteration'] * 1e3:.1f} ms",
                      _fmt(r["fft_floor"] and r["fft_floor"] * 1e3, ".1f") +
                      (" ms" if r["fft_floor"] else ""),
                      _fmt(r["ratio"], ".2f"), f"{r['peak_mb']:.0f}",
                      _fmt(r.get("peak_rss_mb"), ".0f"),
                      "yes" if r["converged"] else "no", note))
    widths = [max(len(line[i]) for line in lines) for i in range(len(head) - 1)]
    out = ["  ".join(c.ljust(w) for c, w in zip(line[:-1], widths)) + "  " + line[-1]
           for line in lines]
    out.insert(1, "-" * len(out[0]))
    if others:
        out += ["", "Analysis figures"]
        out += [f"  {r['case']}  {r['problem']}  [{r['size']}]  {r['seconds']:.2f} s  "
                f"{r['figure']}" for r in others]
    return "\n".join(out)
