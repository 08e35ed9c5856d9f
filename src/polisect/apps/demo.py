"""The built-in demo: the sample sections analysed and written, in parallel where the
machine has the cores.

Each section goes through `polisect.apps.run.run_section` exactly as ``polisect analyze``
would run it with the section's shipped config. With two or more cores the sections run in
worker processes (`polisect.apps.batch.worker_pool`, the batch's pool), cores shared out
between them; the results come back in the sections' order.
"""

from __future__ import annotations

import os
import time
from concurrent.futures import as_completed
from dataclasses import dataclass
from typing import Callable

from . import samples
from .samples import SampleSection


@dataclass(frozen=True)
class DemoSection:
    """One analysed demo section: its title, headline row and report path, and the wall
    seconds its analysis and outputs took."""

    title: str
    row: dict
    report: str
    seconds: float


def demo_section(section: SampleSection, out: str,
                 progress: Callable[[str], None] | None = None) -> DemoSection:
    """Analyse one demo section with its shipped config and write its outputs into
    ``out/<group>``."""
    from ..present.record import headline
    from ..read.config import load_config
    from .run import run_section

    start = time.perf_counter()
    analysis, paths = run_section(section.image, load_config(section.config),
                                  os.path.join(out, section.group), progress=progress)
    return DemoSection(section.title, headline(analysis.result), str(paths.report),
                       time.perf_counter() - start)


def run_demo(out: str, progress: Callable[[str], None] | None = None,
             jobs: int | None = None) -> list[DemoSection]:
    """Analyse every demo section into *out*.

    Parameters
    ----------
    out : str
        Output folder (one subfolder per product line).
    progress : callable, optional
        Called with a line per stage (one process) or per section started and finished
        (worker processes).
    jobs : int, optional
        Worker processes; default: one per core, at most one per section. With one, the
        sections run here, one after the other.

    Returns
    -------
    list of DemoSection
        In the order of `polisect.apps.samples.demo_sections`.
    """
    say = progress or (lambda msg: None)
    sections = samples.demo_sections()
    cores = os.cpu_count() or 1
    jobs = max(1, min(len(sections), cores) if jobs is None else jobs)
    if jobs == 1:
        done = []
        for section in sections:
            say(f"demo: {section.title}")
            done.append(demo_section(section, out, progress=say))
        return done
    from .batch import worker_pool

    say(f"demo: {len(sections)} sections on {jobs} worker processes")
    results: dict[int, DemoSection] = {}
    pool = worker_pool(jobs, max(1, cores // jobs))
    try:
        futures = {pool.submit(demo_section, s, out): i for i, s in enumerate(sections)}
        for future in as_completed(futures):
            r = future.result()
            results[futures[future]] = r
            say(f"demo: {r.title} done in {r.seconds:.1f} s")
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
    return [results[i] for i in range(len(sections))]
