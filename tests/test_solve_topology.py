"""Periodic solid clusters and their winding rank (which rigid motions are periodic)."""

import numpy as np
from hypothesis import given, settings, strategies as st
from scipy import ndimage

from polisect.properties.solve.topology import periodic_clusters


def ranks(solid):
    return sorted(len(c.winding) for c in periodic_clusters(np.asarray(solid, bool)))


def test_island_strip_and_network_2d():
    """An island has rank 0, a strip across the cell rank 1, a full network rank 2
    (percolation on a torus; Hoshen & Kopelman, Phys. Rev. B 14 (1976) 3438)."""
    island = np.zeros((8, 8)); island[2:4, 2:4] = 1
    strip = np.zeros((8, 8)); strip[3] = 1
    assert ranks(island) == [0]
    assert ranks(strip) == [1]
    assert ranks(np.ones((8, 8))) == [2]
    assert ranks(strip + island.T * 0) == [1]


def test_strip_touching_only_through_the_boundary():
    """Two pieces joined only across the periodic boundary form one wrapping cluster;
    diagonal contact counts (node sharing): common practice (no source)."""
    s = np.zeros((6, 6))
    s[0, :3] = 1
    s[0, 3:] = 1
    s[0, 2] = 0          # the row is broken inside but its ends meet across x = 0
    assert ranks(s) == [0]
    s[1, 2] = 1          # diagonal bridge (shares nodes with (0, 1) and (0, 3))
    assert ranks(s) == [1]


def test_3d_fibre_and_sheet():
    """A fibre along z has rank 1, a sheet rank 2, a blob rank 0: common practice."""
    fibre = np.zeros((6, 6, 6)); fibre[2, 2, :] = 1
    sheet = np.zeros((6, 6, 6)); sheet[:, :, 1] = 1
    blob = np.zeros((6, 6, 6)); blob[1:3, 1:3, 1:3] = 1
    (c,) = periodic_clusters(fibre.astype(bool))
    assert len(c.winding) == 1 and abs(c.winding[0][2]) == 1
    assert ranks(sheet) == [2] and ranks(blob) == [0]
    apart = np.zeros((6, 6, 6)); apart[4, 4, 2:4] = 1
    assert ranks(np.maximum(fibre, apart)) == [0, 1]


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 10_000), st.sampled_from([(7, 9), (5, 4, 6)]))
def test_cluster_count_matches_periodic_labelling(seed, shape):
    """The number of clusters equals that of ndimage.label on a 3×-tiled image, counted
    on the central tile's labels modulo periodic copies: an independent count with
    scipy.ndimage (CHECKS.md reference libraries)."""
    rng = np.random.default_rng(seed)
    solid = rng.random(shape) < 0.35
    clusters = periodic_clusters(solid)
    tiled = np.tile(solid, (3,) * solid.ndim)
    lab, _ = ndimage.label(tiled, structure=np.ones((3,) * solid.ndim))
    centre = tuple(slice(n, 2 * n) for n in shape)
    # two central pixels are in one periodic cluster iff their labels are linked by
    # periodic translation; count distinct classes by following pixel→copy links
    central = lab[centre]
    parent = {}
    def find(x):
        while parent.setdefault(x, x) != x:
            x = parent[x]
        return x
    for axis, n in enumerate(shape):
        for shift in (-n, n):
            moved = np.roll(lab, shift, axis=axis)[centre]
            both = (central > 0) & (moved > 0)
            for a, b in set(zip(central[both].tolist(), moved[both].tolist())):
                parent[find(a)] = find(b)
    classes = {find(x) for x in np.unique(central[central > 0]).tolist()}
    assert len(clusters) == len(classes)
    for c in clusters:
        assert solid[c.pixel]
