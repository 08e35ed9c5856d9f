"""Resolution warnings: small particles and narrow gaps between high-contrast particles."""

import numpy as np
import pytest

from polisect import InputError
from polisect.trust.resolution import MIN_PIXELS_ACROSS, resolution_check


def sphere_array(n, f, dim=3):
    """One sphere (disc) of volume fraction f per periodic cell, voxel centres inside."""
    R = (3 * f / (4 * np.pi)) ** (1 / 3) if dim == 3 else np.sqrt(f / np.pi)
    x = (np.arange(n) + 0.5) / n - 0.5
    X = np.meshgrid(*([x] * dim), indexing="ij")
    return (sum(a ** 2 for a in X) <= R ** 2).astype(int)


def test_touching_voxel_spheres_warn():
    """Spheres f = 0.5 on a cubic array at 32³, contrast 10⁴: true gap 32 − 2R = 0.49
    voxel (R = (3f/4π)^{1/3}·32; issue 16), voxelised as face contacts: the narrow-gap
    warning fires with gap 0 (geometry, exact)."""
    labels = sphere_array(32, 0.5)
    check = resolution_check(labels, {0: 1.0, 1: 1e4})
    (w,) = [w for w in check.warnings if w.kind == "narrow-gaps"]
    assert w.extreme == 0.0 and w.count == 3          # the +x, +y, +z contacts of the cell
    assert "magnification" in w.advice


def test_well_resolved_spheres_do_not_warn():
    """Spheres f = 0.3 at 32³ (true gap 32 − 26.6 = 5.4 voxels, diameter 26.6 voxels;
    geometry): no warning at contrast 10⁴; and f = 0.5 at contrast 2 is not
    high-contrast, so no gap warning (common practice, no source)."""
    assert resolution_check(sphere_array(32, 0.3), {0: 1.0, 1: 1e4}).warnings == ()
    check = resolution_check(sphere_array(32, 0.5), {0: 1.0, 1: 2.0})
    assert not [w for w in check.warnings if w.kind == "narrow-gaps"]


@pytest.mark.parametrize("gap, warns", [(1, True), (2, False), (3, False)])
def test_gap_width_between_two_squares(gap, warns):
    """Two squares *gap* pixels apart along x (and far apart across the periodic edge):
    the measured gap is exactly the number of matrix pixels between them (geometry)."""
    labels = np.zeros((60, 30), dtype=int)
    labels[10:20, 10:20] = 1
    labels[20 + gap:30 + gap, 10:20] = 1
    check = resolution_check(labels, {0: 1.0, 1: 100.0})
    widths = check.gaps[(1,)]
    assert widths.min() == gap
    assert any(w.kind == "narrow-gaps" for w in check.warnings) == warns


def test_discs_touching_through_a_neck():
    """Two discs of radius 8 whose centres are 16 px apart touch through a short neck:
    they are told apart (watershed) and their gap is 0 (geometry, exact)."""
    yy, xx = np.mgrid[:40, :60]
    labels = (((yy - 20) ** 2 + (xx - 20) ** 2 <= 64) |
              ((yy - 20) ** 2 + (xx - 36) ** 2 <= 64)).astype(int)
    check = resolution_check(labels, {0: 1.0, 1: 0.01})
    (w,) = [w for w in check.warnings if w.kind == "narrow-gaps"]
    assert w.extreme == 0.0 and w.of == 2


def test_pores_with_thin_ligament():
    """Two pores (value 0) separated by a one-pixel ligament of a stiff matrix: the
    below-matrix group warns and says pores (geometry, exact)."""
    labels = np.zeros((40, 40), dtype=int)
    labels[5:15, 5:15] = 2
    labels[16:26, 5:15] = 2
    check = resolution_check(labels, {0: 200.0, 2: 0.0})
    (w,) = [w for w in check.warnings if w.kind == "narrow-gaps"]
    assert w.extreme == 1.0 and w.phases == (2,) and "pores" in w.message


def test_small_particles_warn_with_area_share():
    """Discs of radius 2 (5 px across) and one disc of radius 12 (25 px across): the
    small ones draw the small-particle warning with their share of the phase area
    (geometry, exact count)."""
    labels = np.zeros((100, 100), dtype=int)
    yy, xx = np.mgrid[:100, :100]
    centres = [(10, 10), (10, 40), (40, 10)]
    for cy, cx in centres:
        labels[(yy - cy) ** 2 + (xx - cx) ** 2 <= 4] = 1
    labels[(yy - 65) ** 2 + (xx - 65) ** 2 <= 144] = 1
    check = resolution_check(labels, pixel_size_um=0.5)
    (w,) = [w for w in check.warnings if w.kind == "small-particles"]
    assert w.count == 3 and w.of == 4
    small_area = 3 * np.sum((yy - 10) ** 2 + (xx - 10) ** 2 <= 4)
    assert w.share == pytest.approx(small_area / np.sum(labels == 1))
    assert w.extreme < MIN_PIXELS_ACROSS and "µm" in w.message
    assert sorted(check.widths[1])[-1] > 20


def test_particles_across_the_edge_counted_once():
    """A disc cut by the periodic edge is one particle (periodic map; geometry)."""
    labels = np.roll(sphere_array(40, 0.2, dim=2), 20, axis=0)
    check = resolution_check(labels)
    assert len(check.widths[1]) == 1


def test_bad_input():
    """Non-integer maps, missing property values and an absent matrix are refused with
    an InputError (common practice)."""
    with pytest.raises(InputError):
        resolution_check(np.zeros((8, 8)))
    with pytest.raises(InputError):
        resolution_check(np.eye(8, dtype=int), {0: 1.0})
    with pytest.raises(InputError):
        resolution_check(np.eye(8, dtype=int), matrix=5)
