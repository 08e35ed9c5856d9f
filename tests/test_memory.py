"""`polisect.core.memory`: the sampled peak resident size sees allocations made by libraries."""

import numpy as np

from polisect.core.memory import PeakRSS, resident_mb
from polisect.pipeline import guard


def test_peak_sees_a_short_lived_allocation():
    """A 256 MB array touched and freed inside the block raises the peak by about that much
    (common practice: the resident size counts touched pages)."""
    with PeakRSS(interval=0.005) as rss:
        block = np.ones(2 ** 25)
        block += 1.0
        del block
    assert rss.peak - rss.start > 200
    assert resident_mb() > 0


def test_check_fits_names_the_figure_and_what_to_change():
    """Common practice (no source): a step that cannot fit is refused before it starts."""
    import pytest

    from polisect import InputError
    from polisect.core.memory import check_fits

    check_fits(1e6, "a step", "do less", available=2 * 10 ** 6)
    with pytest.raises(InputError, match=r"a step needs about 3.0 GB of memory and 2 MB is "
                                         r"free; do less"):
        check_fits(3e9, "a step", "do less", available=2 * 10 ** 6)


def test_available_bytes_is_positive_and_below_the_machine():
    """Common practice (no source): what is free is less than what is installed."""
    import os

    from polisect.core.memory import available_bytes

    free = available_bytes()
    assert free is not None and 0 < free <= os.sysconf("SC_PHYS_PAGES") * os.sysconf(
        "SC_PAGE_SIZE")


def test_estimates_grow_with_size_and_fe_needs_more_than_fft():
    """Bench table of docs/methods.md (measured here): fe's assembled system needs several
    times fft's memory; a 2000³ 3D estimate needs terabytes."""
    from polisect.pipeline.guard import estimate_3d_bytes, solve_bytes

    small = solve_bytes((256, 256), "elasticity")
    assert solve_bytes((512, 512), "elasticity") > 3.9 * small
    assert solve_bytes((128,) * 3, "elasticity", "fe") > 3 * solve_bytes((128,) * 3, "elasticity")
    # the bench's peak for 1024² conduction with fft is 266 MB including the interpreter
    assert 100e6 < solve_bytes((1024, 1024), "conductivity", fields=False) < 266e6
    assert estimate_3d_bytes(2000, ["elasticity"]) > 1e12


def test_3d_estimate_refused_with_the_voxels_that_fit(monkeypatch):
    """Issue 17 probe: --voxels 2000 died after the 2D solves; now refused up front with
    the voxel count that fits (common practice, no source)."""
    import pytest

    from polisect import InputError
    from polisect.core import memory

    monkeypatch.setattr(memory, "available_bytes", lambda: 4 * 10 ** 9)
    with pytest.raises(InputError, match=r"2000³.*lower --voxels \(\[solve\] voxels\) to \d+"):
        guard.check_estimate_3d(2000, ["conductivity", "elasticity"])
    guard.check_estimate_3d(64, ["conductivity", "elasticity"])
    with pytest.raises(InputError, match="method"):
        guard.check_solves((30000, 30000), ["elasticity"], "fe")


def test_check_analysis_names_the_step_that_does_not_fit(monkeypatch):
    """Common practice (no source): the first step that cannot fit is the one named."""
    import pytest

    from polisect import InputError
    from polisect.core import memory

    monkeypatch.setattr(memory, "available_bytes", lambda: 200 * 10 ** 6)
    guard.check_analysis((512, 512), ["conductivity"], voxels=None)
    with pytest.raises(InputError, match="segmenting the 30000×30000-pixel image"):
        guard.check_analysis((30000, 30000), ["conductivity"])
    with pytest.raises(InputError, match="solving elasticity on 1024×1024 pixels"):
        guard.check_analysis((1024, 1024), ["elasticity"])
    with pytest.raises(InputError, match="3D estimate"):
        guard.check_analysis((256, 256), ["conductivity"], voxels=400)


def test_warm_starts_are_counted_before_solving():
    """The kept fluctuations (float32, every load case and component) add to the solve's
    estimate: 2048×1536 generalized plane strain keeps 10 values a pixel, about 126 MB,
    the figure of the warm-start docs (25 MB per load case of 2 components; construction)."""
    shape = (1536, 2048)
    assert guard.starts_bytes(shape, ["elasticity"]) == 4.0 * 10 * 1536 * 2048
    assert guard.starts_bytes(shape, ["conductivity"]) == 4.0 * 2 * 1536 * 2048
    assert guard.starts_bytes((64,) * 3, ["expansion"]) == 4.0 * 18 * 64 ** 3


def test_kept_starts_can_tip_a_solve_over(monkeypatch):
    """A solve that just fits is refused when its fluctuations must also be kept
    (temperatures, the budget's segmentation term): common practice, no source."""
    import pytest

    from polisect import InputError
    from polisect.core import memory

    need = guard.solve_bytes((1024, 1024), "elasticity")
    monkeypatch.setattr(memory, "available_bytes", lambda: int(need * 1.01))
    guard.check_solves((1024, 1024), ["elasticity"])
    with pytest.raises(InputError, match="solving elasticity"):
        guard.check_solves((1024, 1024), ["elasticity"], keep_starts=True)


def test_only_the_starts_kept_are_counted(monkeypatch):
    """Keeping the conductivity's fluctuations only (the budget's default segmentation
    term) adds their bytes alone: a stiffness solve that fits with them is not refused for
    the stiffness fluctuations it does not keep (construction)."""
    from polisect.core import memory

    shape = (1024, 1024)
    need = guard.solve_bytes(shape, "elasticity") + guard.starts_bytes(shape, ["conductivity"])
    monkeypatch.setattr(memory, "available_bytes", lambda: int(need * 1.01))
    guard.check_solves(shape, ["conductivity", "elasticity"], keep_starts=("conductivity",))
