"""Memory: the resident size of this process sampled while a block of work runs (for the
bench), and estimates of the heavy steps checked against the free memory before they start."""

from __future__ import annotations

import os
import resource
import threading

import numpy as np

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
#: Peak bytes per unknown of the Fourier-preconditioned solvers (fft, ms), fields included:
#: 2D conduction 1024² 266 MB, 3D stiffness 128³ 815 MB in the bench table.
FFT_BYTES_PER_DOF = 130


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


def solve_bytes(shape: tuple[int, ...], prop: str, method: str = "auto",
                fields: bool = True) -> float:
    """Peak bytes of one property's solve on a pixel/voxel map of *shape*.

    Parameters
    ----------
    shape : tuple of int
        2D or 3D map shape.
    prop : {'conductivity', 'elasticity', 'expansion'}
    method : {'auto', 'fft', 'fe', 'ms'}
    fields : bool
        Whether the local fields of a load case are kept for the maps.
    """
    from ..properties.solve.fe import memory_estimate

    n, dim = float(np.prod(shape)), len(shape)
    ncomp = 1 if prop == "conductivity" else dim
    if method == "fe":
        peak = memory_estimate(tuple(shape), ncomp)
    elif method == "ms":
        peak = FFT_BYTES_PER_DOF * n * (dim if ncomp == 1 else dim * (dim + 1) // 2)
    else:
        peak = FFT_BYTES_PER_DOF * n * ncomp
    nv = dim if ncomp == 1 else dim * (dim + 1) // 2
    return peak + (2 * 8.0 * n * nv if fields else 0.0)


def check_solves(shape: tuple[int, ...], properties, method: str = "auto",
                 fields: bool = True) -> None:
    """Refuse before solving when the largest of the solves of *properties* on a map of
    *shape* does not fit (the solves run one after another)."""
    if not properties:
        return
    need = max(solve_bytes(shape, p, method, fields) for p in properties)
    size = "×".join(str(s) for s in shape)
    advice = ("use [solve] method = \"fft\" (it needs far less memory)" if method == "fe" else
              "crop the image or downsample it, or ask for fewer [solve] properties")
    check_fits(need, f"solving {'/'.join(properties)} on {size} pixels", advice)


def estimate_3d_bytes(voxels: int, properties, method: str = "auto") -> float:
    """Peak bytes of one realization of the 3D estimate: the reconstruction's cube (labels,
    a Gaussian field and its transform) and the largest solve on it."""
    shape = (voxels,) * 3
    solve = max((solve_bytes(shape, p, method, fields=False) for p in properties), default=0.0)
    return float(voxels) ** 3 * 40.0 + solve


def check_estimate_3d(voxels: int, properties, method: str = "auto") -> None:
    """Refuse the 3D estimate before any work when one realization does not fit."""
    fit = voxels
    available = available_bytes()
    while fit > 16 and available is not None and \
            estimate_3d_bytes(fit, properties, method) > available:
        fit = int(fit * 0.9)
    check_fits(estimate_3d_bytes(voxels, properties, method),
               f"the 3D estimate ({voxels}³ voxels per realization)",
               f"lower --voxels ([solve] voxels) to {fit} or less, or ask for fewer properties",
               available)


def check_analysis(shape: tuple[int, ...], properties=(), method: str = "auto",
                   fields: bool = True, voxels: int | None = None) -> None:
    """Every check of an analysis in one call, before any work on the image read: the phase
    map and measurements, each solve on the map of *shape*, and with *voxels* the 3D
    estimate. Raises `InputError` with the figure and what to change."""
    size = "×".join(str(s) for s in shape)
    check_fits(phasemap_bytes(int(np.prod(shape))), f"segmenting the {size}-pixel image",
               "crop a region of interest or downsample it")
    check_solves(shape, tuple(properties), method, fields)
    if voxels is not None:
        check_estimate_3d(voxels, tuple(properties), method)
