"""Resident memory of this process, sampled while a block of work runs (for the bench)."""

from __future__ import annotations

import os
import resource
import threading


def resident_mb() -> float:
    """Resident set size of this process now, in MB (/proc/self/statm on Linux; elsewhere
    the lifetime peak from `resource.getrusage`)."""
    try:
        with open("/proc/self/statm") as f:
            return int(f.read().split()[1]) * os.sysconf("SC_PAGE_SIZE") / 2 ** 20
    except (OSError, ValueError, IndexError):
        return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


class PeakRSS:
    """Peak resident memory (MB) of this process while the block runs, sampled every
    *interval* seconds: every buffer counts (numpy, the FFT library's, numba's), unlike
    ``tracemalloc``. ``start`` is the resident memory at entry, ``peak`` the largest seen.

    Examples
    --------
    >>> import numpy as np
    >>> with PeakRSS() as rss:
    ...     block = np.ones(2 ** 25)          # 256 MB, every page touched
    ...     del block
    >>> rss.peak - rss.start > 200
    True
    """

    def __init__(self, interval: float = 0.01):
        self.interval = interval
        self.start = self.peak = 0.0

    def __enter__(self) -> PeakRSS:
        self.start = self.peak = resident_mb()
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._sample, daemon=True)
        self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self._stop.set()
        self._thread.join()
        self.peak = max(self.peak, resident_mb())

    def _sample(self) -> None:
        while not self._stop.wait(self.interval):
            self.peak = max(self.peak, resident_mb())
