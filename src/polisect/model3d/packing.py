"""Periodic packings of spheres with given radii, and their voxel images.

* `rsa_pack`: random sequential addition in continuous space (low fractions).
* `collective_pack`: collective rearrangement by minimisation of a harmonic overlap
  energy (fractions up to 0.60 and a little beyond).
* `pack_spheres`: picks one of the two from the fraction.
* `rasterize`: the voxel image of a packing (solid or hollow spheres, a label each).
* `SequentialAddition`, `window`, `paint`: the one random-sequential-addition engine (any
  dimension, periodic box) and the one painter, shared with `polisect.model3d.synth`.

The radii here are given (drawn by the caller from any distribution, e.g. an unfolded
Saltykov histogram) and never changed: the packing moves centres only, so the size
distribution of the packed spheres is exactly the requested one. `polisect.model3d.synth.compose`
draws lognormal radii family by family and places them with the same engine.

Lengths are in any unit used consistently (the reconstruction uses voxels).

Examples
--------
>>> import numpy as np
>>> from polisect.model3d.packing import pack_spheres
>>> radii = np.full(200, 1.0)
>>> box = (200 * 4 / 3 * np.pi / 0.5) ** (1 / 3)          # volume fraction 0.5
>>> p = pack_spheres(radii, box, seed=1)
>>> p.method, round(p.fraction, 3), p.min_gap() >= 0
('collective-rearrangement', 0.5, True)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize
from scipy.spatial import cKDTree

from ..core.errors import InputError

__all__ = ["SpherePacking", "SequentialAddition", "pack_spheres", "rsa_pack",
           "collective_pack", "rasterize", "window", "paint", "RSA_LIMIT", "MAX_FRACTION"]

#: Largest total fraction `pack_spheres` gives to random sequential addition; above it the
#: collective rearrangement is used (RSA of equal spheres jams near 0.38, Widom 1966;
#: Feder 1980).
RSA_LIMIT = 0.35
#: Largest total fraction accepted: random close packing of equal spheres, about 0.64
#: (Scott & Kilgour 1969; Jodrey & Tory 1985).
MAX_FRACTION = 0.64


@dataclass(frozen=True, eq=False)
class SpherePacking:
    """Non-overlapping spheres in a periodic cubic box.

    Attributes
    ----------
    centres : ndarray, shape (n, 3)
        Centres, each coordinate in ``[0, box)``.
    radii : ndarray, shape (n,)
        Radii, in the order of *centres* (the order given to the packing function).
    box : float
        Edge of the periodic cube.
    method : str
        ``"rsa"`` or ``"collective-rearrangement"``.
    iterations : int
        Trial positions (RSA) or minimiser iterations (collective rearrangement).
    """

    centres: np.ndarray
    radii: np.ndarray
    box: float
    method: str
    iterations: int

    @property
    def fraction(self) -> float:
        """Volume fraction of the spheres, Σ 4πr³/3 / box³."""
        return float(4.0 / 3.0 * np.pi * np.sum(self.radii ** 3) / self.box ** 3)

    def min_gap(self) -> float:
        """Smallest periodic surface-to-surface distance between two spheres.

        Pairs farther apart than the largest diameter plus the mean radius are not looked
        at; ``inf`` when there is no such pair (or fewer than two spheres).
        """
        if self.radii.size < 2:
            return float("inf")
        tree = cKDTree(np.mod(self.centres, self.box), boxsize=self.box)
        reach = 2.0 * float(self.radii.max()) + float(self.radii.mean())
        pairs = tree.query_pairs(min(reach, self.box / 2), output_type="ndarray")
        if pairs.size == 0:
            return float("inf")
        d = _separation(self.centres[pairs[:, 0]], self.centres[pairs[:, 1]], self.box)
        gap = np.sqrt((d * d).sum(1)) - self.radii[pairs[:, 0]] - self.radii[pairs[:, 1]]
        return float(gap.min())


def _separation(a: np.ndarray, b: np.ndarray, box: float) -> np.ndarray:
    """Minimum-image vectors a − b in a periodic cube."""
    d = a - b
    return d - box * np.round(d / box)


def _max_move(x: np.ndarray, ref: np.ndarray, box: float) -> float:
    d = _separation(x, ref, box)
    return float(np.sqrt((d * d).sum(1)).max())


def _check(radii, box, gap) -> tuple[np.ndarray, float]:
    radii = np.asarray(radii, float)
    if radii.ndim != 1 or radii.size == 0 or not np.all(radii > 0):
        raise InputError("sphere radii must be a non-empty list of positive numbers")
    if not box > 0:
        raise InputError(f"box edge {box} must be positive")
    if gap < 0:
        raise InputError(f"gap {gap} must not be negative")
    if 2 * radii.max() + gap >= box / 2:
        raise InputError(f"the largest sphere (diameter {2 * radii.max():.4g}) does not fit twice "
                         f"into the periodic box of edge {box:.4g}; enlarge the box")
    fraction = 4.0 / 3.0 * np.pi * np.sum(radii ** 3) / box ** 3
    if fraction > MAX_FRACTION:
        raise InputError(f"spheres filling {fraction:.3f} of the box exceed random close packing "
                         f"(about {MAX_FRACTION}); lower the fraction or enlarge the box")
    return radii, float(fraction)


class SequentialAddition:
    """Random sequential addition of hard spheres in a periodic box of any dimension.

    The one placement engine of the package: `rsa_pack` (given radii in a cube) and
    `polisect.model3d.synth.compose` (discs and spheres drawn family by family, placed
    until a pixel count is reached) both add their spheres through it. A sphere goes to the
    first of a stream of positions drawn uniformly over the box at which it overlaps no
    sphere already placed, and is never moved again [1]_, [2]_; the first acceptable point
    of a uniform stream is uniformly distributed over the free region, as the method
    requires. Spheres here are exclusion spheres: a minimum gap g between particles is an
    exclusion radius r + g/2.

    Distances are minimum-image distances, exact while every exclusion diameter pair sum
    stays below half the shortest box edge. Spheres placed since the last rebuild are
    checked one by one, the others through a periodic `scipy.spatial.cKDTree`.

    Near jamming the free region is too small for a random stream to hit. With
    *max_reach* given, a position that the stream misses is then looked for on the grid of
    integer coordinates (the pixel indices of a cell of whole pixels): a map of every grid
    point's distance to the nearest exclusion surface, built once and updated at every
    addition, gives all free grid points; one of them is drawn uniformly and moved by a
    uniform sub-unit offset when that keeps it free.

    Parameters
    ----------
    box : sequence of float
        Box edge along each axis (its length is the dimension); whole numbers when
        *max_reach* is given.
    seed : int or numpy.random.Generator
    max_reach : float, optional
        Largest exclusion radius that will be asked for; enables the grid search.

    References
    ----------
    .. [1] Widom, B. (1966). Random sequential addition of hard spheres to a volume.
       J. Chem. Phys. 44, 3888-3894.
    .. [2] Feder, J. (1980). Random sequential adsorption. J. Theor. Biol. 87, 237-254.

    Examples
    --------
    >>> rsa = SequentialAddition((10.0, 10.0), seed=0)
    >>> c, tried = rsa.find(2.0)
    >>> rsa.add(c, 2.0); rsa.count
    1
    """

    def __init__(self, box, *, seed, max_reach: float | None = None):
        self.box = np.asarray(box, float).ravel()
        if self.box.size not in (2, 3) or not np.all(self.box > 0):
            raise InputError(f"a periodic box needs 2 or 3 positive edges, got {tuple(box)}")
        if max_reach is not None and not np.array_equal(self.box, np.round(self.box)):
            raise InputError("the grid search near jamming needs a box of whole units")
        self.rng = np.random.default_rng(seed)
        self._max_reach = max_reach
        self._clearance = None
        self._centres = np.empty((64, self.box.size))
        self._reach = np.empty(64)
        self.count = 0
        self._tree, self._indexed = None, 0

    @property
    def centres(self) -> np.ndarray:
        """Centres placed so far, in order of addition, shape (count, dimension)."""
        return self._centres[:self.count]

    def find(self, reach: float, max_trials: int = 200_000):
        """A uniformly random free position for an exclusion sphere of radius *reach*.

        Returns
        -------
        (ndarray or None, int)
            The position (None when *max_trials* positions were all taken) and the number
            of positions tried.
        """
        tried, batch = 0, _BATCH
        while tried < max_trials and self._clearance is None:
            b = min(batch, max_trials - tried)
            cand = self.rng.uniform(0.0, 1.0, (b, self.box.size)) * self.box
            ok = self._free(cand, reach)
            hit = np.flatnonzero(ok)
            if hit.size:
                return cand[hit[0]], tried + int(hit[0]) + 1
            tried += b
            batch = min(2 * batch, _MAX_BATCH)
        if self._max_reach is None:
            return None, tried
        return self._on_grid(reach), tried + 1

    def _on_grid(self, reach: float):
        """A free position near a uniformly drawn free grid point, or None."""
        if self._clearance is None:
            self._clearance = np.full(tuple(int(b) for b in self.box), np.inf)
            for c, e in zip(self.centres, self._reach[:self.count]):
                self._carve(c, e)
        free = np.flatnonzero(self._clearance >= reach)
        if free.size == 0:
            return None
        point = np.array(np.unravel_index(free[self.rng.integers(free.size)],
                                          self._clearance.shape), float)
        moved = np.mod(point + self.rng.uniform(-0.5, 0.5, point.size), self.box)
        return moved if self._free(moved[None, :], reach)[0] else point

    def _carve(self, centre, reach: float) -> None:
        """Lower the grid's clearance map around a sphere added at *centre*."""
        index, dist = window(centre, reach + self._max_reach, self._clearance.shape)
        self._clearance[index] = np.minimum(self._clearance[index], dist - reach)

    def add(self, centre, reach: float) -> None:
        """Place an exclusion sphere of radius *reach* at *centre* (from `find`)."""
        if self.count == self._reach.size:
            self._centres = np.concatenate([self._centres, np.empty_like(self._centres)])
            self._reach = np.concatenate([self._reach, np.empty_like(self._reach)])
        self._centres[self.count] = np.mod(centre, self.box)
        self._reach[self.count] = reach
        self.count += 1
        if self._clearance is not None:
            self._carve(self._centres[self.count - 1], reach)
        if self.count - self._indexed >= _REBUILD:
            self._indexed = self.count
            self._tree = cKDTree(self._centres[:self.count], boxsize=self.box)

    def _free(self, cand: np.ndarray, reach: float) -> np.ndarray:
        ok = self._clear(cand, reach, np.arange(self._indexed, self.count))
        if self._tree is not None and ok.any():
            ok[ok] = self._clear_indexed(cand[ok], reach)
        return ok

    def _clear(self, cand, reach, others) -> np.ndarray:
        """Candidates clear of the spheres *others* (checked against each of them)."""
        if others.size == 0:
            return np.ones(len(cand), bool)
        d = _separation(cand[:, None, :], self._centres[others][None, :, :], self.box)
        need = reach + self._reach[others]
        return np.all((d * d).sum(-1) >= need * need, axis=1)

    def _clear_indexed(self, cand, reach) -> np.ndarray:
        """Candidates clear of the spheres in the tree (the first ``_indexed``)."""
        radii = self._reach[:self._indexed]
        far = reach + radii.max()
        k = min(_NEIGHBOURS, self._indexed)
        dist, nb = self._tree.query(cand, k=k, distance_upper_bound=far)
        dist, nb = dist.reshape(len(cand), k), nb.reshape(len(cand), k)
        found = nb < self._indexed
        rj = radii[np.where(found, nb, 0)]
        ok = ~np.any(found & (dist < reach + rj), axis=1)
        for c in np.flatnonzero(ok & found[:, -1]):
            near = np.asarray(self._tree.query_ball_point(cand[c], far), int)
            ok[c] = self._clear(cand[c:c + 1], reach, near)[0]
        return ok


def rsa_pack(radii, box: float, *, seed, gap: float = 0.0,
             max_trials: int = 200_000) -> SpherePacking:
    """Random sequential addition of spheres of given radii in a periodic cube.

    The spheres are added one by one in order of decreasing radius (common practice for
    polydisperse RSA, no source) by `SequentialAddition`, each keeping at least *gap* from
    every sphere already placed [1]_, [2]_.

    Parameters
    ----------
    radii : array of float
        Sphere radii.
    box : float
        Edge of the periodic cube.
    seed : int or numpy.random.Generator
        Random seed.
    gap : float
        Smallest surface-to-surface distance.
    max_trials : int
        Trial positions allowed for one sphere before the box counts as jammed.

    Returns
    -------
    SpherePacking
        Spheres in the order of *radii*.

    Raises
    ------
    InputError
        If a sphere finds no place (the fraction is too high for RSA; use
        `collective_pack`).

    References
    ----------
    .. [1] Widom, B. (1966). J. Chem. Phys. 44, 3888-3894.
    .. [2] Feder, J. (1980). J. Theor. Biol. 87, 237-254.

    Examples
    --------
    >>> p = rsa_pack(np.full(50, 1.0), 10.0, seed=0)
    >>> round(p.fraction, 3), p.min_gap() >= 0
    (0.209, True)
    """
    radii, _ = _check(radii, box, gap)
    rsa = SequentialAddition((box,) * 3, seed=seed)
    order = np.argsort(-radii, kind="stable")
    centres = np.empty((radii.size, 3))
    trials = 0
    for k, i in enumerate(order):
        centre, tried = rsa.find(radii[i] + gap / 2, max_trials)
        trials += tried
        if centre is None:
            raise InputError(
                f"random sequential addition jammed at a fraction of "
                f"{4 / 3 * np.pi * np.sum(radii[order[:k]] ** 3) / box ** 3:.3f} "
                f"({k} of {radii.size} spheres placed); use the collective rearrangement "
                "(collective_pack) for this fraction")
        rsa.add(centre, radii[i] + gap / 2)
        centres[i] = rsa.centres[-1]
    return SpherePacking(centres, radii.copy(), float(box), "rsa", int(trials))


#: RSA: first batch of candidate positions (doubled on every miss up to the largest),
#: spheres placed between rebuilds of the tree, and neighbours asked of the tree per
#: candidate before looking at all within reach.
_BATCH, _MAX_BATCH, _REBUILD, _NEIGHBOURS = 64, 4096, 64, 16


def _close_pairs(x: np.ndarray, radii: np.ndarray, margin: float, box: float):
    """Index pairs (i < j, each once) whose centres may be closer than
    radii_i + radii_j + margin.

    The spheres are binned by radius (a factor of 2 per bin) and every pair of bins is
    searched with the largest radii of the two bins, so that small spheres are not
    searched with the reach of the largest ones.
    """
    level = np.floor(np.log2(radii / radii.min())).astype(int)
    bins = [np.flatnonzero(level == k) for k in np.unique(level)]
    trees = [cKDTree(x[b], boxsize=box) for b in bins]
    out_i, out_j = [], []
    for a, (ba, ta) in enumerate(zip(bins, trees)):
        same = ta.query_pairs(2 * radii[ba].max() + margin, output_type="ndarray")
        out_i.append(ba[same[:, 0]])
        out_j.append(ba[same[:, 1]])
        for bb, tb in zip(bins[a + 1:], trees[a + 1:]):
            m = ta.sparse_distance_matrix(tb, radii[ba].max() + radii[bb].max() + margin,
                                          output_type="ndarray")
            out_i.append(ba[m["i"]])
            out_j.append(bb[m["j"]])
    i, j = np.concatenate(out_i), np.concatenate(out_j)
    return np.minimum(i, j), np.maximum(i, j)


def collective_pack(radii, box: float, *, seed, gap: float = 0.0, inflate: float = 0.005,
                    max_iter: int = 20_000) -> SpherePacking:
    """Overlap-free packing by collective rearrangement: minimise a harmonic overlap energy.

    The spheres start at uniformly random positions, overlapping freely. All centres then
    move together to minimise the energy U = Σ_{i<j} (1 − r_ij/σ_ij)² over the overlapping
    pairs (r_ij < σ_ij), with σ_ij = (R_i + R_j)(1 + *inflate*) + *gap*, the harmonic
    soft-sphere energy of O'Hern et al. [1]_, by L-BFGS [2]_ (`scipy.optimize.minimize`).
    Below the jamming fraction (about 0.64 for equal spheres [1]_) the minimum is U = 0: no
    overlap is left. The small inflation of the contact distance makes the true spheres
    (radii R_i) come apart with a margin, so that the final packing has no overlap at all;
    the minimisation stops as soon as none is left. Like the force-biased and
    overlap-removal algorithms of Jodrey & Tory [3]_ and Mościński et al. [4]_, this is a
    collective rearrangement; the energy formulation makes its stopping rule exact.

    Neighbour pairs come from a periodic `scipy.spatial.cKDTree` with a skin (a Verlet
    list), rebuilt whenever a centre has moved by more than half the skin.

    Parameters
    ----------
    radii : array of float
        Sphere radii (never changed).
    box : float
        Edge of the periodic cube.
    seed : int or numpy.random.Generator
        Random seed of the starting positions.
    gap : float
        Smallest surface-to-surface distance in the result.
    inflate : float
        Relative enlargement of the contact distance during the minimisation.
    max_iter : int
        Largest total number of L-BFGS iterations.

    Returns
    -------
    SpherePacking

    Raises
    ------
    InputError
        If overlaps remain after *max_iter* iterations (the fraction is too close to
        jamming for these radii).

    References
    ----------
    .. [1] O'Hern, C. S., Silbert, L. E., Liu, A. J. & Nagel, S. R. (2003). Jamming at zero
       temperature and zero applied stress: the epitome of disorder. Phys. Rev. E 68,
       011306.
    .. [2] Liu, D. C. & Nocedal, J. (1989). On the limited memory BFGS method for large
       scale optimization. Math. Programming 45, 503-528.
    .. [3] Jodrey, W. S. & Tory, E. M. (1985). Computer simulation of close random packing
       of equal spheres. Phys. Rev. A 32, 2347-2351.
    .. [4] Mościński, J., Bargieł, M., Rycerz, Z. A. & Jacobs, P. W. M. (1989). The
       force-biased algorithm for the irregular close packing of equal hard spheres.
       Mol. Simul. 3, 201-212.

    Examples
    --------
    >>> r = np.full(100, 1.0)
    >>> p = collective_pack(r, (100 * 4 / 3 * np.pi / 0.6) ** (1 / 3), seed=0)
    >>> round(p.fraction, 2), p.min_gap() >= 0
    (0.6, True)
    """
    radii, _ = _check(radii, box, gap)
    if not 0 < inflate < 0.1:
        raise InputError(f"inflate = {inflate}: give a small positive relative enlargement "
                         "(default 0.005)")
    rng = np.random.default_rng(seed)
    n = radii.size
    x0 = rng.uniform(0.0, box, (n, 3))
    contact = radii * (1.0 + inflate)
    skin = 0.3 * float(np.mean(radii))
    state = {"ref": None, "i": None, "j": None, "sigma": None}

    def neighbours(x):
        i, j = _close_pairs(np.mod(x, box), contact, gap + skin, box)
        sigma = contact[i] + contact[j] + gap
        d = _separation(x[i], x[j], box)
        keep = (d * d).sum(1) < (sigma + skin) ** 2
        state.update(ref=x.copy(), i=i[keep], j=j[keep], sigma=sigma[keep])

    def energy(flat):
        x = flat.reshape(n, 3)
        if state["ref"] is None or _max_move(x, state["ref"], box) > skin / 2:
            neighbours(x)
        i, j, sigma = state["i"], state["j"], state["sigma"]
        d = _separation(x[i], x[j], box)
        r = np.sqrt((d * d).sum(1))
        over = r < sigma
        i, j, d, r, sigma = i[over], j[over], d[over], r[over], sigma[over]
        delta = 1.0 - r / sigma
        force = (-2.0 * delta / (sigma * np.maximum(r, 1e-12)))[:, None] * d
        grad = np.stack([np.bincount(i, force[:, k], n) - np.bincount(j, force[:, k], n)
                         for k in range(3)], axis=1)
        return float(np.sum(delta * delta)), grad.ravel()

    x = x0.ravel()
    used = 0
    while True:
        res = minimize(energy, x, jac=True, method="L-BFGS-B",
                       options={"maxiter": min(2000, max_iter - used), "gtol": 0.0,
                                "ftol": 0.0, "maxcor": 20})
        used += int(res.nit)
        x = res.x
        packing = SpherePacking(np.mod(x.reshape(n, 3), box), radii.copy(), float(box),
                                "collective-rearrangement", used)
        if packing.min_gap() >= gap:
            return packing
        if used >= max_iter or res.nit == 0:
            raise InputError(
                f"the collective rearrangement left overlaps after {used} iterations at a "
                f"fraction of {packing.fraction:.3f}; this is too close to jamming for these "
                "radii — lower the fraction")
        state["ref"] = None


def pack_spheres(radii, box: float, *, seed, gap: float = 0.0,
                 method: str = "auto") -> SpherePacking:
    """Pack spheres of given radii into a periodic cube without overlap.

    Parameters
    ----------
    radii : array of float
        Sphere radii.
    box : float
        Edge of the periodic cube.
    seed : int or numpy.random.Generator
        Random seed.
    gap : float
        Smallest surface-to-surface distance.
    method : {"auto", "rsa", "collective-rearrangement"}
        ``"auto"``: random sequential addition (`rsa_pack`) up to a total fraction of
        `RSA_LIMIT`, collective rearrangement (`collective_pack`) above, and also below
        it when the addition jams (a box only a few diameters wide can jam at 0.3).

    Returns
    -------
    SpherePacking

    References
    ----------
    Widom, B. (1966). J. Chem. Phys. 44, 3888-3894.
    O'Hern, C. S., Silbert, L. E., Liu, A. J. & Nagel, S. R. (2003). Phys. Rev. E 68, 011306.
    """
    _, fraction = _check(radii, box, gap)
    if method == "auto":
        if fraction <= RSA_LIMIT:
            try:
                return rsa_pack(radii, box, seed=seed, gap=gap)
            except InputError:          # jammed early: a box only a few diameters wide
                pass
        method = "collective-rearrangement"
    if method == "rsa":
        return rsa_pack(radii, box, seed=seed, gap=gap)
    if method == "collective-rearrangement":
        return collective_pack(radii, box, seed=seed, gap=gap)
    raise InputError(f"packing method {method!r} is not one of auto, rsa, "
                     "collective-rearrangement")


def rasterize(packing: SpherePacking, n: int, labels, *, matrix_label: int,
              inner_radii=None, core_labels=None) -> np.ndarray:
    """The voxel image of a packing in a periodic n³ grid spanning the box.

    A voxel belongs to a sphere when the periodic distance from its centre to the sphere's
    centre is less than the radius (to its core when less than the inner radius). For a
    sphere at a uniformly random position the expected number of voxel centres inside it
    equals its volume in voxels, so voxel fractions are unbiased estimates of the packing's
    fractions (common practice, no source).

    Parameters
    ----------
    packing : SpherePacking
    n : int
        Voxels per box edge; the voxel edge is ``packing.box / n``.
    labels : array of int, shape (n_spheres,)
        Label of each sphere (of its shell for hollow spheres).
    matrix_label : int
        Label of the voxels outside every sphere.
    inner_radii : array of float, optional
        Core radius of each sphere (0 for solid spheres), box units.
    core_labels : array of int, optional
        Label of each core (needed where an inner radius is positive).

    Returns
    -------
    ndarray of int32, shape (n, n, n)
        Coordinate k of the centres runs along axis k; voxel m spans [m h, (m + 1) h).

    Examples
    --------
    >>> p = SpherePacking(np.array([[5.0, 5.0, 5.0]]), np.array([3.0]), 10.0, "given", 0)
    >>> vox = rasterize(p, 10, [1], matrix_label=0)
    >>> int(vox.sum()), round(4 / 3 * np.pi * 27)
    (136, 113)
    """
    if n < 2:
        raise InputError(f"a voxel image needs at least 2 voxels per edge, got {n}")
    count = packing.radii.size
    labels = np.broadcast_to(np.asarray(labels, np.int32), (count,))
    inner = np.zeros(count) if inner_radii is None else np.asarray(inner_radii, float)
    cores = np.broadcast_to(np.asarray(core_labels if core_labels is not None else 0,
                                       np.int32), (count,))
    h = packing.box / n
    out = np.full((n, n, n), matrix_label, dtype=np.int32)
    for c, r, ri, lab, core in zip(packing.centres / h - 0.5, packing.radii / h, inner / h,
                                   labels, cores):
        index, dist = window(c, r, out.shape)
        paint(out, index, dist, r, lab, ri, core)
    return out


def paint(out: np.ndarray, index, dist: np.ndarray, radius: float, label: int,
          inner: float = 0.0, core: int = 0) -> None:
    """Write a (hollow) sphere into *out* over the `window` (*index*, *dist*) of its centre."""
    block = out[index]
    block[dist < radius] = label
    if inner > 0:
        block[dist < inner] = core
    out[index] = block


def window(centre, radius: float, shape):
    """Wrapped indices of the pixels (voxels) within *radius* of *centre*, and their periodic
    distances to it; coordinates are pixel indices (pixel m at m along each axis)."""
    idx, off = [], []
    for c, n in zip(centre, shape):
        lo, hi = int(np.ceil(c - radius)), int(np.floor(c + radius))
        k = np.arange(lo, hi + 1)
        if k.size > n:
            k = np.arange(n) + int(np.round(c)) - n // 2
        d = k - c
        idx.append(k % n)
        off.append(d - n * np.round(d / n))
    grids = np.meshgrid(*off, indexing="ij", sparse=True)
    return np.ix_(*idx), np.sqrt(sum(g * g for g in grids))
