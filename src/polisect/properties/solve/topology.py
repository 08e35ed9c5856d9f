"""Connected solid clusters of a periodic pixel grid, and how often they wrap around it.

Two solid pixels are connected when they share a node (8-connectivity in 2D, 26 in 3D).
A cluster that meets a periodic copy of itself *wraps*; the rank of its winding vectors
(0 = an island, 1 = a fibre or strip, 2 or 3 = a sheet or a network) decides which rigid
motions of it are periodic, hence which ones the assembled system cannot fix.

References
----------
.. [1] Hoshen, J. & Kopelman, R. (1976). Percolation and cluster distribution. Phys.
   Rev. B 14, 3438–3445 (cluster labelling with union–find).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
from scipy import ndimage


@dataclass(frozen=True)
class Cluster:
    """One periodic solid cluster.

    Attributes
    ----------
    pixel : tuple of int
        A pixel of the cluster (its first in C order).
    winding : (r, d) int ndarray
        Independent winding vectors (r = rank, 0 for an island).
    """

    pixel: tuple[int, ...]
    winding: np.ndarray


class _OffsetUnionFind:
    """Union–find that tracks the periodic offset of each label relative to its root."""

    def __init__(self, n: int, dim: int):
        self.parent = list(range(n))
        self.offset = [np.zeros(dim, dtype=np.int64) for _ in range(n)]
        self.windings: dict[int, list[np.ndarray]] = {}

    def find(self, x: int) -> tuple[int, np.ndarray]:
        path = []
        while self.parent[x] != x:
            path.append(x)
            x = self.parent[x]
        acc = np.zeros_like(self.offset[0])
        for y in reversed(path):
            acc = acc + self.offset[y]
            self.offset[y] = acc
            self.parent[y] = x
        return x, (self.offset[path[0]] if path else acc)

    def union(self, a: int, b: int, shift: np.ndarray) -> None:
        """Record that the copy of *b* shifted by *shift* periods touches *a*."""
        ra, oa = self.find(a)
        rb, ob = self.find(b)
        if ra == rb:
            loop = oa + shift - ob
            if np.any(loop):
                self.windings.setdefault(ra, []).append(loop)
            return
        self.parent[rb] = ra
        self.offset[rb] = oa + shift - ob
        self.windings.setdefault(ra, []).extend(self.windings.pop(rb, []))


def periodic_clusters(solid: np.ndarray) -> list[Cluster]:
    """Node-connected clusters of the True pixels of a periodic grid.

    Parameters
    ----------
    solid : (*grid) bool ndarray

    Returns
    -------
    list of Cluster
    """
    dim = solid.ndim
    labels, n = ndimage.label(solid, structure=np.ones((3,) * dim))
    uf = _OffsetUnionFind(n + 1, dim)
    shape = np.array(solid.shape)
    for step in itertools.product((-1, 0, 1), repeat=dim):
        step = np.array(step)
        if not np.any(step):
            continue
        boundary = np.zeros(solid.shape, dtype=bool)
        for k in range(dim):
            index = [slice(None)] * dim
            if step[k] == 1:
                index[k] = slice(-1, None)
            elif step[k] == -1:
                index[k] = slice(0, 1)
            else:
                continue
            boundary[tuple(index)] = True
        coords = np.array(np.nonzero(boundary & solid))
        if coords.size == 0:
            continue
        target = coords + step[:, None]
        shift = np.floor_divide(target, shape[:, None])
        target -= shift * shape[:, None]
        a = labels[tuple(coords)]
        b = labels[tuple(target)]
        keep = b > 0
        pairs = np.unique(np.column_stack([a[keep], b[keep], shift.T[keep]]), axis=0)
        for row in pairs:
            uf.union(int(row[0]), int(row[1]), row[2:])
    roots = np.array([uf.find(x)[0] for x in range(n + 1)])
    flat = roots[labels.ravel()]
    found, first = np.unique(flat, return_index=True)
    clusters = []
    for root, index in zip(found, first):
        if root == 0:
            continue
        vectors = np.array(uf.windings.get(int(root), []), dtype=np.int64).reshape(-1, dim)
        clusters.append(Cluster(tuple(int(i) for i in np.unravel_index(index, solid.shape)),
                                _independent(vectors)))
    return clusters


def _independent(vectors: np.ndarray) -> np.ndarray:
    """A maximal linearly independent subset of the rows of *vectors*."""
    chosen: list[np.ndarray] = []
    for v in vectors:
        if len(chosen) == vectors.shape[1]:
            break
        trial = np.array(chosen + [v], dtype=float)
        if np.linalg.matrix_rank(trial) > len(chosen):
            chosen.append(v)
    return np.array(chosen, dtype=np.int64).reshape(-1, vectors.shape[1])
