"""Memory: the resident size of this process sampled while a block of work runs (for the
bench), and estimates of the heavy steps checked against the free memory before they start."""

from __future__ import annotations

import os
import resource
import threading


from .errors import InputError


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


# Memory estimates of the heavy steps, checked against the memory this process can still
# take before the step starts. The bytes per pixel are rough (measured peaks of
# `polisect bench` rounded up, docs/methods.md), meant to catch work that cannot fit, not
# to budget tightly.

#: Images with more pixels (or voxels, over all pages read) are refused before decoding:
#: 16384² pixels.
MAX_PIXELS = 2 ** 28
#: Grey copies, labels, masks and particle labels of reading, segmenting and measuring.
PHASEMAP_BYTES_PER_PIXEL = 48

def available_bytes() -> int | None:
    """Bytes this process can still allocate without swapping: the smaller of the
    system's available memory (``MemAvailable``) and what the cgroup limit leaves; None
    when neither can be read (then nothing is refused)."""
    found = []
    try:
        with open("/proc/meminfo") as f:
            for line in f:
                if line.startswith("MemAvailable:"):
                    found.append(int(line.split()[1]) * 1024)
    except (OSError, ValueError, IndexError):
        pass
    for limit, usage in (("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory.current"),
                         ("/sys/fs/cgroup/memory/memory.limit_in_bytes",
                          "/sys/fs/cgroup/memory/memory.usage_in_bytes")):
        try:
            with open(limit) as f, open(usage) as g:
                cap = f.read().strip()
                if cap != "max" and int(cap) < 2 ** 60:
                    found.append(int(cap) - int(g.read()))
        except (OSError, ValueError):
            pass
    if not found:
        try:
            found.append(os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
        except (OSError, ValueError):
            return None
    return max(0, min(found))


def gib(n: float) -> str:
    """Bytes as a short figure: '3.2 GB', '850 MB'."""
    return f"{n / 1e9:.1f} GB" if n >= 1e9 else f"{n / 1e6:.0f} MB"


def check_fits(estimate: float, what: str, advice: str, available: int | None = None) -> None:
    """Raise `InputError` when *estimate* bytes exceed the memory available.

    Parameters
    ----------
    estimate : float
        Rough peak bytes of the step.
    what : str
        The step, e.g. "the 3D estimate (3 cubes of 2000³ voxels)".
    advice : str
        What to change, e.g. "lower --voxels".
    available : int, optional
        Bytes available; by default `available_bytes()`.
    """
    available = available_bytes() if available is None else available
    if available is not None and estimate > available:
        raise InputError(f"{what} needs about {gib(estimate)} of memory and "
                         f"{gib(available)} is free; {advice}")


def reading_bytes(n_pixels: int, bytes_per_pixel: int) -> float:
    """Reading an image: the decoded pixels twice (decoder and normalised copy) and a
    float grey copy."""
    return n_pixels * (2.0 * bytes_per_pixel + 8.0)


def check_pixel_count(n_pixels: int, bytes_per_pixel: int, what: str) -> None:
    """Refuse an image of more than `MAX_PIXELS` pixels, or one whose reading does not fit,
    before it is decoded."""
    if n_pixels > MAX_PIXELS:
        raise InputError(f"{what} has {n_pixels:,} pixels, more than the {MAX_PIXELS:,} "
                         "polisect reads; crop a region of interest or downsample it")
    check_fits(reading_bytes(n_pixels, bytes_per_pixel), f"reading {what}",
               "crop a region of interest or downsample it")


def phasemap_bytes(n_pixels: int) -> float:
    """Segmenting and measuring a phase map of *n_pixels* pixels."""
    return float(n_pixels) * PHASEMAP_BYTES_PER_PIXEL
