"""A 3D estimate from one 2D section: statistically equivalent periodic sphere packings.

A 2D section solved as a 2D problem describes a prismatic structure, not the particle
composite it was cut from. Here the section's statistics are turned into periodic 3D
volumes with the same phase fractions, the same (unfolded) sphere-size distribution of
every particle phase and the same hollow particles; the effective properties of several
such volumes (realizations) estimate those of the 3D material.

The steps, each a plain function:

* `section_statistics`: per particle phase, its volume fraction (Delesse), its
  sphere-diameter distribution (Saltykov unfolding of the section diameters) and its
  hollow particles (the share that is hollow and the inner/outer ratio), pores included.
* `plan_volume`: voxel size and box from the size distribution and a voxel budget.
* `reconstruct`: radii drawn from the distributions, packed without overlap
  (`polisect.model3d.packing`), rasterised.
* `estimate_3d`: several realizations, the 3D solves, mean ± 95 % interval (Student t).

The model is one of spheres. Elongated, irregular or interconnected phases (a continuous
porous network, fibres, platelets) are not spheres: their 3D properties need a real
volume (a voxel stack); `section_statistics` warns when the section shows such a phase.

References
----------
Saltykov, S. A. (1967). In Stereology (H. Elias, ed.), Springer, 163-173.
Underwood, E. E. (1970). Quantitative Stereology. Addison-Wesley.
Torquato, S. (2002). Random Heterogeneous Materials. Springer, ch. 12 (reconstruction).
"""

from __future__ import annotations

import dataclasses
import math
import time
from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ..core.errors import InputError
from .packing import SpherePacking, pack_spheres, rasterize
from ..core.materials import Material
from ..core.phasemap import Phase, PhaseMap
from ..measure.morphology import (cores_of_others, particle_cores, phase_particle_labels,
                                  phase_particles)
from ..properties.records import (Conductivity, Effective, Elasticity, Expansion, Solver, Spread,
                                  scalar)
from .summary import (Estimate3DRecord, FamilyRecord, PackingRecord, Versus2D, VolumeRecord)

#: Resolution rule: the volume-weighted D10 sphere spans at least this many voxels ...
MIN_D10_VOXELS = 6.0
#: ... and the box edge is at least this many volume-weighted D90 diameters.
MIN_BOX_D90 = 4.0
#: Area-weighted mean solidity of a phase's sections below which it is not sphere-like.
MIN_SOLIDITY = 0.85
#: Area-weighted mean aspect ratio (max/min Feret) above which a phase is elongated (area
#: weights keep the few-pixel sections, whose digitised outlines look elongated, from
#: deciding).
MAX_ASPECT = 1.5
#: Largest area fraction of a phase left out when none of its sections can be measured
#: (e.g. the open cores of hollow particles cut by the image border).
MIN_UNMEASURED = 0.005

@dataclass(frozen=True, eq=False)
class FamilyStatistics:
    """One particle phase of the section, as spheres.

    Attributes
    ----------
    label : int
        Phase label (of the shells of hollow particles).
    fraction : float
        Volume fraction of the whole spheres, cores included (area fraction of the
        particles' filled outlines, Delesse).
    diameters : ndarray
        Sphere diameter of each Saltykov class (its upper limit), ``units``.
    weights : ndarray
        Number of spheres per unit volume in each class (relative numbers suffice).
    sections : int
        Particle sections measured (not cut by the image border).
    hollow_share : float
        Number fraction of the spheres that are hollow (0 for solid particles).
    hollow_ratio : float or None
        Inner/outer diameter ratio of the hollow spheres.
    core_label : int or None
        Phase inside the hollow spheres.
    aspect_ratio : float
        Area-weighted mean max/min Feret ratio of the sections.
    solidity : float
        Area-weighted mean solidity of the sections.
    """

    label: int
    fraction: float
    diameters: np.ndarray
    weights: np.ndarray
    sections: int
    hollow_share: float
    hollow_ratio: float | None
    core_label: int | None
    aspect_ratio: float
    solidity: float

    def volume_quantile(self, q: float) -> float:
        """Diameter below which a share *q* of the spheres' volume lies."""
        return _volume_quantile(self.diameters, self.weights * self.diameters ** 3, q)

    def summary(self) -> FamilyRecord:
        """The family as the result records it."""
        w = self.weights / self.weights.sum()
        return FamilyRecord(self.label, self.fraction, self.sections, float(w @ self.diameters),
                            self.volume_quantile(0.1), self.volume_quantile(0.5),
                            self.volume_quantile(0.9), self.hollow_share, self.hollow_ratio,
                            self.core_label, self.aspect_ratio, self.solidity)


@dataclass(frozen=True, eq=False)
class SectionStatistics:
    """What a 2D section says about the 3D structure, for `reconstruct`.

    Attributes
    ----------
    matrix_label : int
        The phase that fills the space between the spheres.
    families : tuple of FamilyStatistics
        One per particle phase (pores included), in decreasing order of fraction.
    fractions : dict
        label → area fraction of the section.
    units : str
        ``"um"`` or ``"px"`` (lengths in pixels when the pixel size is unknown).
    warnings : tuple of str
        Why spheres may misrepresent the section.
    """

    matrix_label: int
    families: tuple[FamilyStatistics, ...]
    fractions: dict
    units: str
    warnings: tuple[str, ...] = ()

    def volume_quantile(self, q: float) -> float:
        """Pooled volume-weighted diameter quantile over all families."""
        d = np.concatenate([f.diameters for f in self.families])
        w = np.concatenate([f.fraction * f.weights * f.diameters ** 3
                            / np.sum(f.weights * f.diameters ** 3) for f in self.families])
        return _volume_quantile(d, w, q)



def _volume_quantile(d: np.ndarray, volume: np.ndarray, q: float) -> float:
    order = np.argsort(d, kind="stable")
    c = np.cumsum(volume[order])
    return float(d[order][np.searchsorted(c, q * c[-1] * (1 - 1e-12))])


def section_statistics(labels: np.ndarray, pixel_size_um: float | None = None, *,
                       matrix_label: int | None = None, names: dict | None = None
                       ) -> SectionStatistics:
    """Measure a section's phases as families of (possibly hollow) spheres.

    Every phase other than the matrix, pores included, is measured by the package's one
    particle path, `polisect.measure.morphology.phase_particles`, with touching particles
    split; so the 3D estimate and the report read the same particles, size classes and
    hollow-particle model. On top of it:

    * cores: the holes of particles of another phase are the cores of hollow particles;
      regions of the phase that lie in such holes are cores, not particles of their own
      (``exclude``), and so are the regions at the image border that one particle of
      another phase surrounds everywhere else (the open cores of hollow particles cut by
      the border);
    * size: the Saltykov unfolding of `phase_particles` (Miles–Lantuéjoul weights,
      `polisect.measure.stereology.UNFOLD_CLASSES` geometric classes), classes with
      spheres only;
    * fraction: the area fraction of the filled outlines, cores included (Delesse 1847);
    * hollow particles: `PhaseParticles.hollow`, the hollow-sphere model of
      `polisect.measure.stereology.hollow_spheres` (a share η of the spheres hollow with
      inner/outer ratio q), with the phase filling most of the holes as the core;
    * warnings: phases whose sections are irregular, elongated, or cross the section.

    Parameters
    ----------
    labels : ndarray of int, 2D
        Phase map of the section.
    pixel_size_um : float, optional
        Pixel edge; sizes in µm, otherwise in pixels.
    matrix_label : int, optional
        The continuous phase around the particles (default: the phase with the largest
        area fraction).
    names : dict, optional
        label → phase name, for the warnings.

    Returns
    -------
    SectionStatistics

    Raises
    ------
    InputError
        For a 3D array, or a particle phase with no section away from the image border.

    References
    ----------
    Delesse, A. (1847). Procédé mécanique pour déterminer la composition des roches.
    C. R. Acad. Sci. Paris 25, 544-545.
    Saltykov, S. A. (1967). In Stereology (H. Elias, ed.), Springer, 163-173.
    Wicksell, S. D. (1925). The corpuscle problem. Biometrika 17, 84-99.

    Examples
    --------
    >>> from polisect.model3d.synth import rsa_discs
    >>> lab = rsa_discs((256, 256), 0.2, 8.0, seed=0).labels
    >>> s = section_statistics(lab)
    >>> s.matrix_label, [f.label for f in s.families], s.families[0].hollow_share
    (0, [1], 0.0)
    """
    labels = np.asarray(labels)
    if labels.ndim != 2:
        raise InputError(f"a 3D estimate is built from a 2D section; got an array of shape "
                         f"{labels.shape} (a volume is solved as it is)")
    names = names or {}
    present, counts = np.unique(labels, return_counts=True)
    fractions = {int(v): c / labels.size for v, c in zip(present, counts)}
    if matrix_label is None:
        matrix_label = max(fractions, key=fractions.get)
    if matrix_label not in fractions:
        raise InputError(f"matrix label {matrix_label} does not occur in the section "
                         f"(labels present: {sorted(fractions)})")
    if len(fractions) < 2:
        raise InputError("the section holds a single phase; there are no particles to "
                         "reconstruct in 3D")
    phasemap = PhaseMap(labels, tuple(Phase(v, names.get(v, f"label {v}"), Material())
                                      for v in fractions), pixel_size_um)
    others = [v for v in fractions if v != matrix_label]
    particles = {p: phase_particle_labels(labels == p, split_touching=True) for p in others}
    holes = particle_cores(labels, particles)
    warnings: list[str] = []
    families = []
    for p in others:
        foreign = cores_of_others(holes, p, labels.shape)
        fam = _family(phasemap, p, foreign, holes[p] & ~foreign, warnings,
                      None if (foreign & (labels == p)).any() else particles[p])
        if fam is not None:
            families.append(fam)
    families.sort(key=lambda f: -f.fraction)
    if not families:
        raise InputError("no particles found outside the matrix; nothing to reconstruct")
    return SectionStatistics(int(matrix_label), tuple(families), fractions,
                             "um" if pixel_size_um else "px", tuple(warnings))


def _family(phasemap: PhaseMap, p: int, foreign: np.ndarray, holes: np.ndarray,
            warnings: list, labelled: np.ndarray | None) -> FamilyStatistics | None:
    """One phase's sphere family from its particles (`phase_particles`, the cores of other
    phases' particles *foreign* left out; *labelled* when that leaves them as they were)
    and its cores *holes* (see `section_statistics`); None when it has no particles of its
    own (only cores, or a few open cores at the border). Appends the reasons spheres
    misrepresent it to *warnings*."""
    pp = phase_particles(phasemap, p, split_touching=True, n_boot=0, exclude=foreign,
                         labelled=labelled)
    table, name = pp.table, pp.name
    if table.count == 0:
        return None
    used = table.weight > 0
    size = phasemap.labels.size
    shell = np.count_nonzero(pp.particle_labels) / size
    if not used.any():
        if shell < MIN_UNMEASURED:
            return None
        raise InputError(f"phase {name}: every region of it touches the image border, so "
                         "no particle size can be measured; the phase is interconnected "
                         "or its particles are as large as the image — spheres cannot "
                         "stand for it (use a larger image, or a real volume)")
    keep = pp.spheres.number_density > 0
    core = np.count_nonzero(holes) / size
    wa = table.weight[used] * table.area_filled[used]
    aspect = float(wa @ table.aspect_ratio[used] / wa.sum())
    solidity = float(wa @ table.solidity[used] / wa.sum())
    if solidity < MIN_SOLIDITY:
        warnings.append(f"phase {name}: irregular, non-convex sections (mean solidity "
                        f"{solidity:.2f}); it may be interconnected — spheres misrepresent "
                        "it and a real volume (a voxel stack) is needed")
    if aspect > MAX_ASPECT:
        warnings.append(f"phase {name}: elongated sections (mean aspect ratio "
                        f"{aspect:.2f}); spheres misrepresent elongated particles")
    if _spans(pp.particle_labels):
        warnings.append(f"phase {name}: a single region crosses the whole section; the "
                        "phase looks interconnected and spheres misrepresent it — a real "
                        "volume (a voxel stack) is needed")
    hollow = pp.hollow
    return FamilyStatistics(label=p, fraction=shell + core,
                            diameters=pp.spheres.diameters[keep],
                            weights=pp.spheres.number_density[keep],
                            sections=pp.size.count_measured, hollow_share=hollow.share,
                            hollow_ratio=hollow.ratio,
                            core_label=pp.core_label if hollow.ratio is not None else None,
                            aspect_ratio=aspect, solidity=solidity)


def _spans(plab: np.ndarray) -> bool:
    """Whether one particle touches two opposite borders of the section."""
    rows = set(np.unique(plab[0])) & set(np.unique(plab[-1]))
    cols = set(np.unique(plab[:, 0])) & set(np.unique(plab[:, -1]))
    return bool((rows | cols) - {0})


@dataclass(frozen=True)
class VolumePlan:
    """Voxel grid of the reconstructed volumes.

    Attributes
    ----------
    voxels : int
        Voxels per edge of the periodic cube.
    voxel_size : float
        Voxel edge, ``units``.
    d10, d90, d_max : float
        Pooled volume-weighted D10 and D90 and the largest class diameter, ``units``.
    units : str
    compromise : str or None
        What the voxel budget forced, in words (``None`` when both rules hold).
    """

    voxels: int
    voxel_size: float
    d10: float
    d90: float
    d_max: float
    units: str
    compromise: str | None = None

    @property
    def box(self) -> float:
        """Edge of the cube, ``units``."""
        return self.voxels * self.voxel_size

    def summary(self) -> VolumeRecord:
        """The plan as the result records it."""
        return VolumeRecord((self.voxels,) * 3, self.voxel_size, self.box, self.units,
                            self.d10, self.d90, self.d10 / self.voxel_size,
                            self.box / self.d90, self.compromise)


def plan_volume(stats: SectionStatistics, voxels: int = 160,
                voxel_size: float | None = None) -> VolumePlan:
    """Choose the voxel size and box of the reconstructed cube within a voxel budget.

    The rules: the volume-weighted D10 sphere spans at least `MIN_D10_VOXELS` voxels and
    the box edge is at least `MIN_BOX_D90` volume-weighted D90 diameters (and at least
    2.2 times the largest diameter, so that no sphere meets its own periodic image).
    Volume-weighted, because the properties depend on where the volume is; a few tiny
    spheres do not make a fine grid necessary. Both rules need n = 6 · 4 · D90/D10 voxels
    per edge. The cube always uses the whole budget (*voxels* per edge); spare room is
    shared evenly between resolution and box (each gains the factor √(voxels/n)). When the
    budget is short, the box rule is kept and the resolution gives way, and
    `VolumePlan.compromise` says so.

    Parameters
    ----------
    stats : SectionStatistics
    voxels : int
        Voxels per edge of the cube (budget voxels³).
    voxel_size : float, optional
        Use this voxel edge (``stats.units``) instead of the rule's, e.g. the section's
        pixel size, so that the reconstruction has the discretization of the section;
        `VolumePlan.compromise` names any rule it breaks.

    Returns
    -------
    VolumePlan

    Raises
    ------
    InputError
        For a budget below 16 voxels per edge, or a given voxel size whose box cannot hold
        the largest sphere.

    Examples
    --------
    >>> from polisect.model3d.synth import rsa_discs
    >>> s = section_statistics(rsa_discs((256, 256), 0.2, 8.0, seed=0).labels)
    >>> p = plan_volume(s, voxels=96)
    >>> p.voxels, p.d10 / p.voxel_size >= 6, p.box / p.d90 >= 4
    (96, True, True)
    """
    if not isinstance(voxels, (int, np.integer)) or voxels < 16:
        raise InputError(f"voxels = {voxels!r}: give a whole number of voxels per edge of at "
                         "least 16 (default 160)")
    d10, d90 = stats.volume_quantile(0.1), stats.volume_quantile(0.9)
    d_max = max(float(f.diameters.max()) for f in stats.families)
    box_min = max(MIN_BOX_D90 * d90, 2.2 * d_max)
    need = MIN_D10_VOXELS * box_min / d10
    u = stats.units
    if voxel_size is not None:
        return _given_voxel_size(int(voxels), float(voxel_size), d10, d90, d_max, box_min, u)
    if need <= voxels:
        h = d10 / MIN_D10_VOXELS / math.sqrt(voxels / need)
        return VolumePlan(int(voxels), h, d10, d90, d_max, u)
    h = box_min / voxels
    span = d10 / h
    text = (f"the budget of {voxels}³ voxels cannot resolve the volume-weighted D10 "
            f"({d10:.3g} {u}) with {MIN_D10_VOXELS:g} voxels in a box of {box_min / d90:.1f} "
            f"D90: the box was kept and D10 spans only {span:.1f} voxels, so the smaller "
            f"spheres are coarsely resolved; --voxels {int(math.ceil(need))} would meet both "
            "rules")
    return VolumePlan(int(voxels), h, d10, d90, d_max, u, text)


def _given_voxel_size(n, h, d10, d90, d_max, box_min, u) -> VolumePlan:
    if not h > 0:
        raise InputError(f"voxel size {h} {u} must be positive")
    if n * h <= 2.2 * d_max:
        raise InputError(f"a box of {n} voxels of {h:.3g} {u} ({n * h:.3g} {u}) cannot hold the "
                         f"largest sphere ({d_max:.3g} {u}) clear of its periodic images; give "
                         f"at least {int(math.ceil(2.2 * d_max / h)) + 1} voxels")
    broken = []
    if d10 / h < MIN_D10_VOXELS:
        broken.append(f"D10 spans only {d10 / h:.1f} voxels (rule: {MIN_D10_VOXELS:g})")
    if n * h < box_min:
        broken.append(f"the box is only {n * h / d90:.1f} D90 (rule: {MIN_BOX_D90:g})")
    text = ("with the voxel size given, " + " and ".join(broken)) if broken else None
    return VolumePlan(n, h, d10, d90, d_max, u, text)


@dataclass(frozen=True, eq=False)
class Reconstruction:
    """One reconstructed periodic volume.

    Attributes
    ----------
    labels : ndarray of int32, shape (n, n, n)
        Phase labels.
    packing : SpherePacking
        The spheres, in voxel units.
    family : ndarray of int
        Index into ``stats.families`` of every sphere.
    inner_radii : ndarray
        Core radius of every sphere, voxels (0: solid).
    """

    labels: np.ndarray
    packing: SpherePacking
    family: np.ndarray
    inner_radii: np.ndarray

    def fractions(self) -> dict:
        """label → voxel fraction."""
        values, counts = np.unique(self.labels, return_counts=True)
        return {int(v): c / self.labels.size for v, c in zip(values, counts)}


def draw_diameters(diameters: np.ndarray, weights: np.ndarray, volume: float, rng
                   ) -> np.ndarray:
    """Diameters drawn from a class distribution until their spheres fill *volume*.

    Spheres are drawn one by one (class j with probability ∝ weights[j], at the class
    diameter) and kept while each makes the total sphere volume closer to *volume*; then
    every diameter is scaled by the cube root of (volume / drawn volume), a factor
    within half a sphere's volume of 1, so the volume is met exactly.

    Parameters
    ----------
    diameters, weights : ndarray
        Class diameters and their number weights.
    volume : float
        Total sphere volume wanted (same length unit cubed).
    rng : numpy.random.Generator

    Returns
    -------
    ndarray

    Examples
    --------
    >>> d = draw_diameters(np.array([1.0, 2.0]), np.array([1.0, 1.0]), 100.0,
    ...                    np.random.default_rng(0))
    >>> round(float(np.sum(np.pi / 6 * d ** 3)), 6)
    100.0
    """
    p = weights / weights.sum()
    mean_v = float(p @ (np.pi / 6 * diameters ** 3))
    out = []
    total = 0.0
    while True:
        block = diameters[rng.choice(diameters.size, max(16, int(1.2 * (volume - total)
                                                              / mean_v) + 1), p=p)]
        for d in block:
            v = np.pi / 6 * d ** 3
            if total + v / 2 > volume:
                break
            out.append(d)
            total += v
        else:
            continue
        break
    if not out:
        out, total = [float((6 * volume / np.pi) ** (1 / 3))], volume
    return np.array(out) * (volume / total) ** (1 / 3)


def reconstruct(stats: SectionStatistics, plan: VolumePlan, *, seed) -> Reconstruction:
    """Build one periodic 3D volume statistically equivalent to the section.

    For each family, sphere diameters are drawn from its unfolded distribution until the
    spheres (cores included) fill the family's volume fraction of the box
    (`draw_diameters`), a share `FamilyStatistics.hollow_share` of them (chosen at random)
    gets a core of the family's inner/outer ratio, and all spheres of all families are
    packed together without overlap (`polisect.model3d.packing.pack_spheres`: random sequential
    addition at total fractions up to 0.35, collective rearrangement above), then
    rasterised on the plan's grid.

    Parameters
    ----------
    stats : SectionStatistics
    plan : VolumePlan
    seed : int or numpy.random.Generator

    Returns
    -------
    Reconstruction

    Examples
    --------
    >>> from polisect.model3d.synth import rsa_discs
    >>> s = section_statistics(rsa_discs((256, 256), 0.2, 8.0, seed=0).labels)
    >>> r = reconstruct(s, plan_volume(s, voxels=48), seed=1)
    >>> r.labels.shape, bool(abs(r.fractions()[1] - s.families[0].fraction) < 0.02)
    ((48, 48, 48), True)
    """
    rng = np.random.default_rng(seed)
    box_vox = float(plan.voxels)
    radii, family, inner, shell, cores = [], [], [], [], []
    for k, fam in enumerate(stats.families):
        d = draw_diameters(fam.diameters / plan.voxel_size, fam.weights,
                           fam.fraction * box_vox ** 3, rng)
        r = d / 2
        hollow = np.zeros(r.size, bool)
        if fam.hollow_ratio is not None:
            hollow = rng.random(r.size) < fam.hollow_share
        radii.append(r)
        family.append(np.full(r.size, k))
        inner.append(np.where(hollow, r * (fam.hollow_ratio or 0.0), 0.0))
        shell.append(np.full(r.size, fam.label))
        cores.append(np.full(r.size, fam.core_label if fam.core_label is not None else 0))
    radii = np.concatenate(radii)
    packing = pack_spheres(radii, box_vox, seed=rng)
    inner = np.concatenate(inner)
    vox = rasterize(packing, plan.voxels, np.concatenate(shell), matrix_label=stats.matrix_label,
                    inner_radii=inner, core_labels=np.concatenate(cores))
    return Reconstruction(vox, packing, np.concatenate(family), inner)


PROPERTIES = ("conductivity", "elasticity", "expansion")


@dataclass(frozen=True, eq=False)
class Realization:
    """One reconstructed volume and its solver results (``None`` where not asked for)."""

    seed: int
    spheres: int
    packing: str
    fractions: dict
    seconds: float
    conductivity: object | None = None
    elasticity: object | None = None
    expansion: object | None = None


#: The scalars compared with 2D (`polisect.properties.records.SCALARS` names) and their words.
_COMPARED = (("conductivity", "mean conductivity"), ("youngs_modulus", "Young's modulus"),
             ("shear_modulus", "shear modulus"), ("poisson_ratio", "Poisson's ratio"),
             ("expansion", "mean thermal expansion"))


@dataclass(frozen=True, eq=False)
class Estimate3D:
    """The 3D estimate of a section's effective properties over several reconstructions.

    Attributes
    ----------
    properties : tuple of str
        Properties solved.
    realizations : tuple of Realization
    statistics : SectionStatistics
        What the reconstructions were built from.
    plan : VolumePlan
    conductivity : Spread or None
        Mean conductivity tr(k)/3.
    youngs_modulus, poisson_ratio, bulk_modulus, shear_modulus : Spread or None
        Moduli of the nearest isotropic stiffness (`polisect.core.tensors.isotropic_projection`).
    expansion : Spread or None
        Mean linear expansion tr(α)/3.
    versus_2d : tuple of Versus2D
        The 2D section's values beside (empty when none were given).
    seed : int
    warnings : tuple of str
    at_temperatures : tuple of (float, Estimate3D)
        The same volumes solved with the phase properties at further temperatures (°C),
        each an estimate of its own (its own realizations' results; `estimate_3d`'s
        *temperatures*).
    """

    properties: tuple[str, ...]
    realizations: tuple[Realization, ...]
    statistics: SectionStatistics
    plan: VolumePlan
    conductivity: Spread | None
    youngs_modulus: Spread | None
    poisson_ratio: Spread | None
    bulk_modulus: Spread | None
    shear_modulus: Spread | None
    expansion: Spread | None
    versus_2d: tuple[Versus2D, ...]
    seed: int
    warnings: tuple[str, ...]
    at_temperatures: tuple = ()

    def _mean_tensor(self, prop: str, attr: str) -> list:
        return np.mean([getattr(getattr(r, prop), attr) for r in self.realizations], axis=0)

    def _anisotropy(self, prop: str) -> float:
        return float(np.mean([getattr(r, prop).anisotropy() for r in self.realizations]))

    def _solver(self, prop: str) -> Solver:
        facts = [getattr(r, prop).facts for r in self.realizations]
        return Solver(facts[0].method, sum(f.iterations for f in facts),
                      round(sum(f.seconds for f in facts), 4), facts[0].tolerance,
                      all(f.converged for f in facts), realizations=len(facts))

    def summary(self) -> Estimate3DRecord:
        """The estimate as the result records it: the effective properties of the 3D model
        (every scalar a `Spread` over the realizations, tensors their means), the volume,
        the section statistics it was built from, the packings and the comparison with 2D."""
        n = len(self.realizations)
        c = e = x = None
        if self.conductivity is not None:
            c = Conductivity(self._mean_tensor("conductivity", "tensor"), self.conductivity,
                             self._anisotropy("conductivity"), self._solver("conductivity"))
        if self.youngs_modulus is not None:
            e = Elasticity(self._mean_tensor("elasticity", "stiffness"), self.youngs_modulus,
                           self.poisson_ratio, self.bulk_modulus, self.shear_modulus,
                           self._anisotropy("elasticity"), None, self._solver("elasticity"))
        if self.expansion is not None:
            x = Expansion(self._mean_tensor("expansion", "tensor"), self.expansion, None,
                          self._anisotropy("expansion"), self._solver("expansion"))
        model = (f"3D estimate from the section's statistics: {n} periodic reconstructions of "
                 f"{self.plan.voxels}³ voxels, (hollow) spheres with the section's fractions "
                 "and unfolded size distributions")
        effective = Effective(3, None, model, LIMITS_NOTE,
                              "x, y, z of the reconstructed volumes (statistically isotropic)",
                              c, e, x)
        return Estimate3DRecord(
            effective, n, self.seed, CONFIDENCE_WORDS, self.plan.summary(),
            self.statistics.units, self.statistics.matrix_label,
            tuple(f.summary() for f in self.statistics.families),
            tuple(PackingRecord(r.seed, r.spheres, r.packing, r.fractions, round(r.seconds, 3))
                  for r in self.realizations),
            self.versus_2d, self.warnings)


CONFIDENCE_WORDS = ("95 % interval of the mean over the realizations, Student t with n − 1 "
                    "degrees of freedom; it covers the variation between reconstructions, not "
                    "the sampling error of the section's own fractions and sizes (see the "
                    "fractions' intervals)")

LIMITS_NOTE = (
    "The reconstructions are packings of spheres (hollow where the section shows hollow "
    "particles) with the section's phase fractions and unfolded sphere-size distributions. "
    "They stand for the 3D particle composite only if its particles are sphere-like; "
    "elongated, irregular or interconnected phases (e.g. a continuous porous network) need "
    "a real volume (a voxel stack).")


def _matrix_of(phasemap: PhaseMap) -> int:
    """The phase with the largest fraction among those not marked as particles."""
    fr = phasemap.fractions()
    candidates = [p.label for p in phasemap.phases if p.particles is not True and fr[p.label] > 0]
    if not candidates:
        raise InputError("every phase is marked particles = true; one phase must be the "
                         "matrix around the particles for a 3D estimate")
    return max(candidates, key=fr.get)


def estimate_3d(phasemap: PhaseMap, properties=PROPERTIES, *, voxels: int = 160,
                realizations: int = 3, seed: int = 0, tol: float = 1e-6,
                method: str = "auto", effective_2d: Effective | None = None,
                voxel_size: float | None = None, progress=None,
                temperatures: Sequence[tuple[float, Mapping]] = ()) -> Estimate3D:
    """Estimate a section's 3D effective properties from reconstructed sphere packings.

    `section_statistics` → `plan_volume` → *realizations* × (`reconstruct` → 3D solves
    with `polisect.properties.solve`), then the mean and 95 % interval (Student t) of each quantity
    over the realizations, and the comparison with the 2D section's values when given.

    Parameters
    ----------
    phasemap : PhaseMap
        A 2D section with its materials.
    properties : iterable of {'conductivity', 'elasticity', 'expansion'}
    voxels : int
        Voxels per edge of each reconstructed cube (the budget is voxels³).
    realizations : int
        Number of independent reconstructions (at least 1; 2 or more for an interval).
    seed : int
        Seed of the first realization; the others follow from it
        (`numpy.random.SeedSequence.spawn`), so the same seed gives the same estimate.
    tol, method
        Passed to the solvers.
    effective_2d : Effective, optional
        The effective properties of the 2D section, to compare with.
    voxel_size : float, optional
        Voxel edge of the reconstructions (µm, or pixels when the pixel size is unknown)
        instead of the resolution rule's (`plan_volume`); e.g. the section's pixel size.
    progress : callable, optional
        Called with a stage description.
    temperatures : sequence of (float, mapping label → Material)
        Further phase properties (e.g. at each of ``[solve] temperatures_C``) at which the
        same reconstructed volumes are solved again: the volumes are built once, only the
        phase properties change, and each solve starts from the previous one's solution
        (warm start, `polisect.properties.solve.cg`). Their estimates are in
        ``Estimate3D.at_temperatures``.

    Returns
    -------
    Estimate3D

    Raises
    ------
    InputError
        For a 3D phase map, unknown properties, a bad budget or number of realizations,
        or a section without particles.

    References
    ----------
    ASTM E562 (Student t interval of a mean over n − 1 degrees of freedom).
    Saltykov, S. A. (1967). In Stereology (H. Elias, ed.), Springer, 163-173.
    """
    say = progress or (lambda msg: None)
    props = tuple(properties)
    unknown = [p for p in props if p not in PROPERTIES]
    if unknown or not props:
        raise InputError(f"properties {unknown or '[]'}: choose from {', '.join(PROPERTIES)}")
    if isinstance(realizations, bool) or not isinstance(realizations, (int, np.integer)) \
            or realizations < 1:
        raise InputError(f"realizations = {realizations!r}: give a whole number ≥ 1 (default 3)")
    if phasemap.ndim != 2:
        raise InputError("the 3D estimate reconstructs a volume from a 2D section; this phase "
                         "map is already a volume and is solved in 3D as it is")
    say("3D estimate: section statistics")
    stats = section_statistics(phasemap.labels, phasemap.voxel_size_um,
                               matrix_label=_matrix_of(phasemap),
                               names={p.label: p.name for p in phasemap.phases})
    plan = plan_volume(stats, voxels, voxel_size)
    warnings = list(stats.warnings) + ([plan.compromise] if plan.compromise else [])
    if realizations < 2:
        warnings.append("a single realization gives no interval; use 3 or more")
    mats = phasemap.materials
    runs, hot_runs = [], []
    for k, child in enumerate(np.random.SeedSequence(seed).spawn(realizations)):
        tick = time.perf_counter()
        say(f"3D estimate: realization {k + 1} of {realizations}: packing "
            f"{plan.voxels}³ voxels")
        rec = reconstruct(stats, plan, seed=np.random.default_rng(child))
        res, start = _solve_volume(rec.labels, mats, props, method, tol, bool(temperatures),
                                   lambda what: say(f"3D estimate: realization {k + 1}: {what}"))
        hot = []
        for i, (t, mats_t) in enumerate(temperatures, start=1):
            res_t, start = _solve_volume(
                rec.labels, mats_t, props, method, tol, i < len(temperatures),
                lambda what: say(f"3D estimate: realization {k + 1}: {what} at {t:g} °C"),
                start)
            hot.append(res_t)
        del start
        for at, results in [(None, res)] + list(zip((t for t, _ in temperatures), hot)):
            for what, r in results.items():
                if r is not None and not r.converged:
                    where = "" if at is None else f" at {at:g} °C"
                    warnings.append(f"realization {k + 1}: the {what} solver stopped before "
                                    f"its tolerance{where} after {r.iterations} iterations")
        runs.append(Realization(seed=k, spheres=int(rec.packing.radii.size),
                                packing=rec.packing.method, fractions=rec.fractions(),
                                seconds=time.perf_counter() - tick, **res))
        hot_runs.append([dataclasses.replace(runs[-1], **h) for h in hot])
    est = _summarise(props, tuple(runs), stats, plan, seed, warnings)
    if temperatures:
        est = dataclasses.replace(est, at_temperatures=tuple(
            (t, _summarise(props, tuple(r[i] for r in hot_runs), stats, plan, seed, ()))
            for i, (t, _) in enumerate(temperatures)))
    if effective_2d:
        est = dataclasses.replace(est, versus_2d=compare_2d(est, effective_2d))
    return est


def _solve_volume(labels, mats, props, method, tol, keep, say, start=None):
    """The 3D solves of one volume: solver results by property (``elasticity`` None when
    only the expansion was asked for) and the solver results that start the next solve of
    the same volume (warm start, `polisect.properties.solve.cg`; kept when *keep*)."""
    from ..properties.solve import conductivity, elasticity, expansion

    start = start or {}
    res, kept = {}, {}
    if "conductivity" in props:
        say("conductivity")
        res["conductivity"] = conductivity(labels, mats, method=method, tol=tol,
                                           start=start.get("conductivity"),
                                           keep_fluctuations=keep)
        kept["conductivity"] = res["conductivity"]
    if "elasticity" in props or "expansion" in props:
        say("stiffness")
        stiff = elasticity(labels, mats, method=method, tol=tol,
                           start=start.get("elasticity"), keep_fluctuations=keep)
        res["elasticity"] = stiff if "elasticity" in props else None
        if "expansion" in props:
            say("thermal expansion")
            res["expansion"] = expansion(labels, mats, method=method, tol=tol, stiffness=stiff)
        kept["elasticity"] = stiff
    if not keep:
        return res, {}
    return {name: (dataclasses.replace(r, fluctuations=None)
                   if getattr(r, "fluctuations", None) is not None else r)
            for name, r in res.items()}, kept


def _summarise(props, runs, stats, plan, seed, warnings) -> Estimate3D:
    cond = Spread.of([r.conductivity.mean() for r in runs]) if "conductivity" in props else None
    moduli = {}
    if "elasticity" in props:
        iso = [r.elasticity.isotropic() for r in runs]
        moduli = {k: Spread.of([getattr(m, k) for m in iso])
                  for k in ("youngs_modulus", "poisson_ratio", "bulk_modulus", "shear_modulus")}
    exp = Spread.of([r.expansion.mean() for r in runs]) if "expansion" in props else None
    return Estimate3D(properties=props, realizations=runs, statistics=stats, plan=plan,
                      conductivity=cond, youngs_modulus=moduli.get("youngs_modulus"),
                      poisson_ratio=moduli.get("poisson_ratio"),
                      bulk_modulus=moduli.get("bulk_modulus"),
                      shear_modulus=moduli.get("shear_modulus"), expansion=exp, versus_2d=(),
                      seed=seed, warnings=tuple(warnings))


def compare_2d(est: Estimate3D, effective_2d: Effective) -> tuple[Versus2D, ...]:
    """The 3D estimate beside the 2D section's values, with the difference and its meaning.

    Parameters
    ----------
    est : Estimate3D
    effective_2d : Effective
        The effective properties of the 2D section (a prismatic structure).

    Returns
    -------
    tuple of Versus2D
        One per quantity both hold.
    """
    out = []
    for name, words in _COMPARED:
        v2, s3 = scalar(effective_2d, name), getattr(est, name)
        if v2 is None or s3 is None or v2 == 0:
            continue
        diff = 100.0 * (s3.mean - v2) / abs(v2)
        half = s3.half_width_pct
        if half is not None and abs(diff) <= half:
            meaning = ("within the spread of the realizations: for this quantity the 2D "
                       "(prismatic) model and the 3D particle composite agree")
        else:
            meaning = ("the 2D value describes the section extruded into columns, not the "
                       "particle composite; for the material, use the 3D estimate (spheres "
                       "assumed)")
        sentence = (f"The 3D estimate of the {words} is {abs(diff):.1f} % "
                    f"{'higher' if diff > 0 else 'lower'} than the 2D section's value: "
                    f"{meaning}.")
        out.append(Versus2D(name, float(v2), s3.mean, diff, sentence))
    return tuple(out)
