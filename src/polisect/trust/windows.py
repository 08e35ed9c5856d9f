"""Is this image big enough? Window-size study, integral range and required section size.

The phase map is tiled into windows of side 1, 1/2, 1/4, … of the image down to a few
particle diameters. In every window the phase fractions (and, when asked, the effective
properties) are measured. For a quantity Z the variance over windows of area A follows,
once the windows are large compared with the microstructure,

    D²_Z(A) = D²_Z · A₃ / A                                   (Kanit et al. 2003)

with A₃ the integral range (for a fraction p the point variance is D²_Z = p(1 − p)). The
product K = D²_Z·A₃ is fitted over the windows; it gives the relative error the whole image
supports at 95 %, ε = z·√(K/A_image)/|Z|, and the area needed for a target error ε_t,
A = K·(z/(ε_t·|Z|))², as one image or as a number of images of the present size.

Edges. Effective properties of a window are computed with periodic boundary conditions.
A window cut out of a section is not periodic: particles cut at one edge meet unrelated
material at the opposite edge, which biases small windows (usually softer / less
conductive than the material). ``edges = "mirror"`` solves the window reflected across
its edges instead (2ᵈ times the pixels): the mirrored cell is periodic without seams, and
by symmetry it is the window under mixed uniform boundary conditions (uniform potential or
normal displacement on the faces normal to the load, no flux or shear traction on the
others). Mirrored windows have no seam but impose a mirror symmetry the material does not
have; their apparent tensor has no off-diagonal (shear coupling) terms. Both converge to
the same effective value as the window grows; the difference between them at a given size
is itself a measure of how far that size is from representative (Hazanov & Huet 1994).

The chi-square criterion of Gitman, Askes & Sluys (2007) is given for every window size as
an additional adequacy column (`polisect.trust.sectionstats.gitman_chi2`).

References
----------
.. [1] Kanit, T., Forest, S., Galliet, I., Mounoury, V., Jeulin, D. (2003). Determination
   of the size of the representative volume element for random composites: statistical
   and numerical approach. Int. J. Solids Struct. 40, 3647-3679.
.. [2] Matheron, G. (1975). Random Sets and Integral Geometry. Wiley, New York.
.. [3] Lantuéjoul, C. (1991). Ergodicity and integral range. J. Microsc. 161, 387-403.
.. [4] Gitman, I. M., Askes, H., Sluys, L. J. (2007). Representative volume: existence and
   size determination. Eng. Fract. Mech. 74, 2518-2534.
.. [5] Hazanov, S., Huet, C. (1994). Order relationships for boundary conditions effect in
   heterogeneous bodies smaller than the representative volume. J. Mech. Phys. Solids 42,
   1995-2011.

Examples
--------
>>> import numpy as np
>>> from polisect import Material
>>> from polisect.core.phasemap import Phase, PhaseMap
>>> rng = np.random.default_rng(0)
>>> labels = (rng.random((128, 128)) < 0.3).astype(np.int32)
>>> pm = PhaseMap(labels, (Phase(0, "matrix", Material()), Phase(1, "grain", Material())))
>>> study = window_study(pm)
>>> q = study.quantities["fraction_grain"]
>>> 0.5 < q.integral_range_px < 2.0     # white noise: A₃ is one pixel
True
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy import stats

from ..core.choices import WINDOW_EDGES
from ..core.errors import InputError
from ..core.quantities import SOLVED_COLUMNS, fraction_column
from ..properties import solve
from ..properties.effective import solver_labels
from .records import LevelStats, QuantityFit, WindowLevelRecord, WindowRecord
from .sectionstats import gitman_chi2
from .verdicts import need_words, overall_verdict, percent_words, quantity_words

EDGES = WINDOW_EDGES
PROPERTY_KEYS = SOLVED_COLUMNS
MIN_WINDOW_PX = 8
"""No window is smaller than this many pixels a side."""
@dataclass(frozen=True)
class WindowLevel:
    """All windows of one size.

    Attributes
    ----------
    side_px : tuple of int
        Window shape in pixels.
    n_windows : int
        Windows that tile the image at this size.
    n_solved : int
        Windows in which the effective properties were computed (all, or an evenly spread
        subset of at most ``max_solves``).
    values : dict
        Quantity → ndarray of its value in each window measured.
    """

    side_px: tuple[int, ...]
    n_windows: int
    n_solved: int
    values: dict

    @property
    def area_px(self) -> int:
        return math.prod(self.side_px)

    def summary(self) -> WindowLevelRecord:
        """Count, mean, standard deviation and chi-square adequacy of every quantity."""
        stats_ = {key: LevelStats(int(v.size), float(v.mean()),
                                  float(v.std(ddof=1)) if v.size > 1 else None,
                                  gitman_chi2(v) if v.size > 1 else None)
                  for key, v in self.values.items()}
        return WindowLevelRecord(tuple(self.side_px), self.area_px, self.n_windows,
                                 self.n_solved, stats_)


@dataclass(frozen=True)
class WindowStudy:
    """A window-size study of one section.

    Attributes
    ----------
    shape : tuple of int
        Image shape.
    pixel_size_um : float or None
    edges : str
        ``"periodic"`` or ``"mirror"`` (see the module notes).
    target_error : float
        Target relative error (0.05 = 5 %) for the required size.
    confidence : float
        Confidence of the errors (0.95).
    particle_diameter_px : float
        Feature size used to set the smallest window: 4/π × the mean chord of the minority
        phases (the diameter for discs).
    min_side_px : int
        Smallest window side studied.
    fit_min_side_px : float
        Smallest window side the fit uses (windows must be large against the features for
        the 1/A law to hold).
    levels : tuple of WindowLevel
    quantities : dict
        Key → `QuantityFit`.
    properties : tuple of str
        Effective properties computed per window.
    notes : tuple of str
    verdict : str
    """

    shape: tuple[int, ...]
    pixel_size_um: float | None
    edges: str
    target_error: float
    confidence: float
    particle_diameter_px: float
    min_side_px: int
    fit_min_side_px: float
    levels: tuple[WindowLevel, ...]
    quantities: dict
    properties: tuple[str, ...]
    notes: tuple[str, ...]
    verdict: str

    def summary(self) -> WindowRecord:
        """The study as it goes into the result (per-window values summarised)."""
        return WindowRecord(self.edges, self.target_error * 100.0, self.confidence,
                            tuple(self.shape), self.pixel_size_um, self.particle_diameter_px,
                            self.min_side_px, self.fit_min_side_px, tuple(self.properties),
                            tuple(lv.summary() for lv in self.levels),
                            dict(self.quantities),
                            tuple(self.notes), self.verdict)


def feature_diameter_px(labels: np.ndarray) -> float:
    """A feature size of a phase map: 4/π × the mean chord of its minority phases.

    The mean chord (intercept) length of every phase is measured along all rows and columns
    (and planes in 3D); for discs of diameter d it is πd/4, so 4/π × chord is the
    disc-equivalent diameter. The largest over all phases except the most abundant one is
    returned (1.0 for a one-phase map).

    Parameters
    ----------
    labels : ndarray of int, 2D or 3D

    Returns
    -------
    float
        Diameter in pixels.

    References
    ----------
    Underwood, E. E. (1970). Quantitative Stereology. Addison-Wesley (mean intercept length).

    Examples
    --------
    >>> lab = (np.indices((32, 32)) // 4).sum(axis=0) % 2   # 4-pixel checkerboard
    >>> round(feature_diameter_px(lab), 3)                  # chord 4 → 16/π
    5.093
    """
    labels = np.asarray(labels)
    values, inverse = np.unique(labels, return_inverse=True)
    inverse = inverse.reshape(labels.shape)
    if values.size < 2:
        return 1.0
    pixels = np.zeros(values.size)
    runs = np.zeros(values.size)
    for axis in range(labels.ndim):
        a = np.moveaxis(inverse, axis, -1)
        starts = np.ones(a.shape, dtype=bool)
        starts[..., 1:] = a[..., 1:] != a[..., :-1]
        runs += np.bincount(a[starts], minlength=values.size)
        pixels += np.bincount(a.ravel(), minlength=values.size)
    chords = pixels / np.maximum(runs, 1)
    order = np.argsort(pixels)[::-1]
    return float(4.0 / math.pi * chords[order[1:]].max())


def tile_levels(shape: tuple[int, ...], min_side_px: int) -> list[tuple[int, ...]]:
    """Window shapes for sides 1, 1/2, 1/4, … of *shape* down to *min_side_px* (shortest edge).

    Examples
    --------
    >>> tile_levels((256, 128), 20)
    [(256, 128), (128, 64), (64, 32)]
    """
    out, k = [], 0
    while True:
        side = tuple(n >> k for n in shape)
        if k > 0 and min(side) < min_side_px:
            return out
        out.append(side)
        k += 1


def windows_of(labels: np.ndarray, side: tuple[int, ...]):
    """The windows of shape *side* tiling *labels* (centred, remainder dropped), as views.

    Returns
    -------
    list of ndarray
        In C order of the window grid.
    """
    counts = [n // s for n, s in zip(labels.shape, side)]
    offsets = [(n - c * s) // 2 for n, c, s in zip(labels.shape, counts, side)]
    out = []
    for index in np.ndindex(*counts):
        sl = tuple(slice(o + i * s, o + (i + 1) * s) for o, i, s in zip(offsets, index, side))
        out.append(labels[sl])
    return out


def mirrored(window: np.ndarray) -> np.ndarray:
    """The window reflected across its far edges along every axis (2ᵈ times the pixels).

    The result is periodic without seams: a periodic solve on it is the window under mixed
    uniform boundary conditions (see the module notes).

    Examples
    --------
    >>> mirrored(np.array([[1, 2]]))
    array([[1, 2, 2, 1],
           [1, 2, 2, 1]])
    """
    out = np.asarray(window)
    for axis in range(out.ndim):
        out = np.concatenate([out, np.flip(out, axis=axis)], axis=axis)
    return out


Evaluate = Callable[[np.ndarray], dict]


def solver_evaluator(phasemap, properties, *, method: str = "auto", tol: float = 1e-6,
                     plane: str = "generalized-plane-strain") -> Evaluate:
    """A function window labels → {headline key: value} for the asked effective properties.

    The values are the solver results' own isotropic projections, the numbers the section
    reports: conductivity ``tr(k)/d`` (W/(m·K)), Young's modulus of the nearest isotropic
    stiffness (GPa; in 2D for the plane mode), expansion ``tr(α)/d`` (1/K). Solved with
    `polisect.properties.solve`.
    """
    unknown = [p for p in properties if p not in PROPERTY_KEYS]
    if unknown:
        raise InputError(f"window study: unknown properties {unknown}; choose from "
                         f"{', '.join(PROPERTY_KEYS)}")
    materials = phasemap.materials

    def evaluate(window: np.ndarray) -> dict:
        labels = solver_labels(window)
        out, stiff = {}, None
        if "conductivity" in properties:
            out[PROPERTY_KEYS["conductivity"]] = solve.conductivity(
                labels, materials, method=method, tol=tol).mean()
        if "elasticity" in properties:
            stiff = solve.elasticity(labels, materials, plane=plane, method=method, tol=tol)
            out[PROPERTY_KEYS["elasticity"]] = stiff.isotropic().youngs_modulus
        if "expansion" in properties:
            out[PROPERTY_KEYS["expansion"]] = solve.expansion(
                labels, materials, plane=plane, method=method, tol=tol, stiffness=stiff).mean()
        return out

    return evaluate


def window_study(phasemap, properties=(), *, evaluate: Evaluate | None = None,
                 method: str = "auto", tol: float = 1e-6,
                 plane: str = "generalized-plane-strain", edges: str = "periodic",
                 target_error: float = 0.05, confidence: float = 0.95,
                 min_diameters: float = 2.0, fit_diameters: float = 5.0,
                 max_solves: int = 64, whole: dict | None = None,
                 progress: Callable[[str], None] | None = None) -> WindowStudy:
    """Window-size study of one phase map: integral ranges, supported error, required size.

    Parameters
    ----------
    phasemap : PhaseMap
        The section (2D) or volume (3D), with materials when properties are asked.
    properties : sequence of str
        Effective properties to compute in every window: ``"conductivity"``,
        ``"elasticity"``, ``"expansion"`` (default: fractions only).
    evaluate : callable, optional
        Window labels → {key: value}; replaces the built-in solver calls (keys should be
        headline columns, e.g. ``"conductivity_W_mK"``).
    method, tol, plane : optional
        Passed to `polisect.properties.solve`.
    edges : {"periodic", "mirror"}
        Boundary treatment of the windows for the effective properties (module notes).
    target_error : float
        Relative error wanted at *confidence*, e.g. 0.02 for 2 %.
    confidence : float
        Two-sided confidence of the errors (normal quantile: 1.96 at 0.95; Kanit et al.
        round it to 2).
    min_diameters : float
        Smallest window side, in feature diameters (`feature_diameter_px`); never below
        `MIN_WINDOW_PX` pixels.
    fit_diameters : float
        Smallest window side, in feature diameters, taken into the integral-range fit.
        A finite window's variance falls short of the 1/A law by a boundary term of
        order (feature size)/(side): for a Boolean model of discs (cover 0.5), from its
        exact covariance, by 12 % at three and 7 % at five feature diameters, 2 % at
        seventeen. Fitting from five diameters up keeps that bias to a few percent (the
        integral range comes out 1–6 % low in tests on such models) without losing the
        many small windows that make the fit precise.
    max_solves : int
        At most this many windows per size get the (costly) property solves, evenly
        spread over the tiling; fractions are measured in every window.
    whole : dict, optional
        The properties of the whole image, already solved with the same settings (keys as
        *evaluate* returns); with periodic edges the whole image is then not solved again.
    progress : callable, optional
        Called with a short message per window size.

    Returns
    -------
    WindowStudy

    References
    ----------
    Kanit et al. (2003), Int. J. Solids Struct. 40, 3647; Gitman, Askes & Sluys (2007),
    Eng. Fract. Mech. 74, 2518; Hazanov & Huet (1994), J. Mech. Phys. Solids 42, 1995.
    """
    if edges not in EDGES:
        raise InputError(f"edges = {edges!r}: choose \"periodic\" or \"mirror\"")
    if not 0.0 < target_error < 1.0:
        raise InputError(f"target error {target_error!r} must lie between 0 and 1 "
                         "(e.g. 0.02 or --target-error 2%)")
    if not 0.5 <= confidence < 1.0:
        raise InputError(f"confidence {confidence!r} must lie in [0.5, 1)")
    if max_solves < 4:
        raise InputError("max_solves must be at least 4 (windows per size for a variance)")
    say = progress or (lambda msg: None)
    labels = phasemap.labels
    properties = tuple(properties)
    if properties and evaluate is None:
        evaluate = solver_evaluator(phasemap, properties, method=method, tol=tol, plane=plane)
    diameter = feature_diameter_px(labels)
    min_side = max(MIN_WINDOW_PX, int(math.ceil(min_diameters * diameter)))
    notes = []
    sides = tile_levels(labels.shape, min_side)
    levels = []
    for i, side in enumerate(sides):
        say(f"window study: windows of {' × '.join(map(str, side))} px")
        known = i == 0 and edges == "periodic" and whole is not None and evaluate is not None
        levels.append(_measure_level(labels, side, phasemap,
                                     (lambda _labels: dict(whole)) if known else evaluate,
                                     edges, max_solves))
    z = float(stats.norm.ppf(0.5 + confidence / 2.0))
    fit_min = fit_diameters * diameter
    usable = [lv for lv in levels if lv.n_windows >= 4]
    fit_levels = [lv for lv in usable if min(lv.side_px) >= fit_min]
    if not usable:
        notes.append(f"the image ({' × '.join(map(str, labels.shape))} px) is too small for a "
                     f"window study with features of about {diameter:.1f} px: it cannot be cut "
                     f"into 4 or more windows of at least {min_side} px")
    elif not fit_levels:
        fit_levels = usable[:2]
        notes.append(f"no window of 4 or more per image is {fit_diameters:g} feature diameters "
                     f"({fit_min:.0f} px) wide: the fit uses smaller windows, which "
                     "underestimates the integral range and the errors")
    fractions = phasemap.fractions()
    names = {p.label: p.name for p in phasemap.phases}
    whole = levels[0]
    quantities = {}
    area = math.prod(labels.shape)
    for key in whole.values:
        label = next((lab for lab, n in names.items() if key == fraction_column(n)), None)
        point_var = None if label is None else fractions[label] * (1.0 - fractions[label])
        quantities[key] = _fit(key, float(whole.values[key][0]), point_var,
                               [lv for lv in fit_levels if key in lv.values], levels, area,
                               labels.ndim, z, target_error, confidence, phasemap.voxel_size_um)
    verdict = overall_verdict(quantities, target_error, confidence, notes, area,
                               labels.ndim, phasemap.voxel_size_um)
    return WindowStudy(tuple(labels.shape), phasemap.voxel_size_um, edges, target_error,
                       confidence, diameter, min_side, fit_min, tuple(levels), quantities,
                       properties, tuple(notes), verdict)


def _measure_level(labels, side, phasemap, evaluate, edges, max_solves) -> WindowLevel:
    wins = windows_of(labels, side)
    values = {}
    stacked = np.stack(wins) if len(wins) > 1 else labels[None]
    axes = tuple(range(1, stacked.ndim))
    for p in phasemap.phases:
        values[fraction_column(p.name)] = (stacked == p.label).mean(axis=axes)
    chosen = []
    if evaluate is not None:
        n = len(wins)
        chosen = (list(range(n)) if n <= max_solves
                  else sorted(set(np.linspace(0, n - 1, max_solves).round().astype(int))))
        rows = [evaluate(mirrored(wins[i]) if edges == "mirror" else np.ascontiguousarray(wins[i]))
                for i in chosen]
        for key in rows[0]:
            values[key] = np.array([r[key] for r in rows], dtype=float)
    return WindowLevel(tuple(side), len(wins), len(chosen), values)


def _fit(key, value, point_var, fit_levels, levels, area, ndim, z, target, confidence,
         pixel_um) -> QuantityFit:
    gitman_side = _gitman_side(key, levels)
    pairs = [(lv.values[key].var(ddof=1), lv.area_px, lv.values[key].size - 1)
             for lv in fit_levels]
    if not pairs:
        return QuantityFit(key, value, None, point_var, None, None, (), None, None, None, None,
                           None, gitman_side, f"{quantity_words(key)}: no window study possible")
    weights = np.array([dof for _, _, dof in pairs], dtype=float)
    k_est = float(np.sum([v * a * dof for v, a, dof in pairs]) / weights.sum())
    exponent = None
    positive = [(v, a, dof) for v, a, dof in pairs if v > 0]
    if len(positive) >= 2:
        x = np.log([a for _, a, _ in positive])
        y = np.log([v for v, _, _ in positive])
        slope = np.polyfit(x, y, 1, w=np.sqrt([dof for _, _, dof in positive]))[0]
        exponent = float(-slope)
    a3 = k_est / point_var if point_var else None
    whole_var = k_est / area
    sides = tuple(min(lv.side_px) for lv in fit_levels)
    if value == 0:
        return QuantityFit(key, value, k_est, point_var, a3, exponent, sides, whole_var,
                           None, None, None, None, gitman_side,
                           f"{quantity_words(key)} is zero in this image: no relative error")
    supported = z * math.sqrt(whole_var) / abs(value)
    required = k_est * (z / (target * abs(value))) ** 2
    images = max(1, math.ceil(required / area - 1e-12))
    side = required ** (1.0 / ndim)
    fit = QuantityFit(key, value, k_est, point_var, a3, exponent, sides, whole_var,
                      supported * 100.0, required, side, images, gitman_side, "",
                      side * pixel_um if pixel_um else None)
    head = f"{quantity_words(key)}: {percent_words(supported)} at {confidence * 100:g} %"
    need = need_words(fit, area, ndim, pixel_um)
    verdict = (f"{head}; this image is large enough for {percent_words(target)}" if images <= 1
               else f"{head}; for {percent_words(target)} it takes {need}")
    return dataclasses.replace(fit, verdict=verdict)


def _gitman_side(key, levels) -> int | None:
    passing = None
    for lv in levels:
        v = lv.values.get(key)
        if v is None or v.size < 2:
            continue
        if not gitman_chi2(v).passed:
            break
        passing = min(lv.side_px)
    return passing
