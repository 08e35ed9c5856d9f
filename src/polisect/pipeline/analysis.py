"""`analyze`: one section (a file or an array) to an `Analysis` holding its typed `Result`.

The pipeline is the only place that knows about every stage; each stage is a plain
function over plain data (see DEVELOPERS.md):

    file → Micrograph → PhaseMap → fractions, particles, schemes, effective,
           shock, 3D estimate, window study → Result

The optional steps run when the configuration asks for them (``[solve] estimate_3d``,
``[windows] study``); a new step is one function here and one line in `analyze`. Writing
the outputs is `polisect.apps.run.run_section`'s job: nothing here knows about files
other than the one it reads.
"""

from __future__ import annotations

import datetime as _dt
import os
import time
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .. import __version__
from ..core.errors import InputError
from ..core.materials import Material
from ..core.phasemap import Phase, PhaseMap
from ..core.quantities import SCALAR_COLUMNS, SOLVED_COLUMNS, fraction_column
from ..measure.morphology import (cores_of_others, enclosed_fractions, field_fractions,
                                  particle_cores, particle_phases, phase_particle_labels,
                                  phase_particles)
from ..measure.summary import (summarize_correlation, summarize_particles,
                               summarize_volume_particles)
from ..properties.records import Effective, scalar, value_of
from ..properties.shock import ShockIndices
from ..read.config import Config, check_grey_range, validate
from ..read.image import Micrograph, check_slice_spacing, read_image, read_stack, to_grayscale
from .guard import check_analysis
from .result import (AtTemperature, PhaseFraction, Result, SchemeTable, Source,
                     Verification)

Progress = Callable[[str], None]


@dataclass(frozen=True, eq=False)
class Analysis:
    """A `Result` together with the arrays the report draws (never serialized), and the
    segmenter trained from this image's strokes (saved beside the outputs)."""

    result: Result
    phasemap: PhaseMap
    image: np.ndarray | None
    thresholds: tuple[float, ...] = ()
    particles: tuple = ()
    correlations: dict = field(default_factory=dict)
    field_maps: dict = field(default_factory=dict)
    segmenter: object = None

    @property
    def particle_rows(self) -> list[dict]:
        """One row per particle of every measured phase (the particles CSV)."""
        return [{"phase": pp.name, **row} for pp in self.particles
                for row in (pp.table.rows() if self.phasemap.ndim == 2 else pp.rows())]


class _Clock:
    """Wall time of each stage, for the result's ``timings_s``."""

    def __init__(self):
        self.timings: dict[str, float] = {}

    def __call__(self, stage: str, work: Callable, *args, **kwargs):
        tick = time.perf_counter()
        out = work(*args, **kwargs)
        self.timings[stage] = time.perf_counter() - tick
        return out


def analyze(source, config: Config | None = None, *, pixel_size_um: float | None = None,
            progress: Progress | None = None) -> Analysis:
    """Analyse one section.

    Parameters
    ----------
    source : path or ndarray
        An image file (TIFF, PNG, JPEG, BMP), a folder of slices, or an array: a grey/RGB
        image, or a label image when ``config.image.kind == "labels"``.
    config : Config, optional
        The run configuration (defaults: grayscale, multi-Otsu, no materials).
    pixel_size_um : float, optional
        Pixel size from the command line; overrides the config.
    progress : callable, optional
        Called with a short stage description as the analysis advances.

    Returns
    -------
    Analysis
        ``.result`` is the `Result`; the rest is for the report.

    Examples
    --------
    >>> import numpy as np
    >>> from polisect import analyze, config_from_dict
    >>> labels = np.zeros((64, 64), dtype=np.int32); labels[16:48, 16:48] = 1
    >>> cfg = config_from_dict({"image": {"kind": "labels"}, "solve": {"properties": []}})
    >>> round(analyze(labels, cfg).result.phases[1].fraction, 4)
    0.25
    """
    cfg = config or Config()
    validate(cfg)
    say = progress or (lambda msg: None)
    clock = _Clock()
    warnings: list[str] = []

    say("reading image")
    micro = clock("read", _micrograph, source, cfg, pixel_size_um)
    check_analysis(micro.data.shape[:2] if micro.is_rgb else micro.data.shape,
                   cfg.solve.properties if cfg.phases else (), cfg.solve.method,
                   cfg.solve.fields,
                   cfg.solve.voxels if cfg.solve.estimate_3d and cfg.phases else None,
                   keep_starts=_kept_starts(cfg))
    say("building the phase map")
    phasemap, thresholds, seg_notes, seg_warnings, segmentation, model = clock(
        "segment", _phasemap, micro, cfg)
    warnings.extend(seg_warnings)
    if micro.pixel_size_um is None:
        warnings.append("pixel size unknown: sizes are in pixels; give [image] pixel_size_um "
                        "or --pixel-size, or use a TIFF with resolution tags")
    read_warnings = [n for n in micro.notes if "using the first" in n]
    warnings.extend(read_warnings)
    notes = [n for n in micro.notes if not n.startswith("pixel size unknown")
             and n not in read_warnings] + seg_notes

    fits = {}
    if any(p.fit for p in cfg.phases) and cfg.solve.properties:
        phasemap, fits = clock("fit", _fit, phasemap, cfg, say)

    say("measuring phase fractions")
    fractions = clock("fractions", _fractions, phasemap, cfg, fits)
    particles, summaries, correlations = clock("particles", _particles, phasemap, cfg, say,
                                                    notes)
    schemes = clock("schemes", _schemes, phasemap, fractions, summaries, notes)
    solved = clock("solve", _effective, phasemap, cfg, say, warnings, notes)
    effective = solved.effective if solved else None
    if effective is not None:
        warnings.extend(clock("resolution", _resolution, phasemap, cfg, notes))
    if effective is not None and schemes.get(phasemap.ndim) is not None:
        warnings.extend(bounds_warnings(effective, schemes[phasemap.ndim]))
    shock = _shock(effective, cfg, notes)
    effective_3d, by_temperature_3d = None, ()
    if cfg.solve.estimate_3d:
        effective_3d, by_temperature_3d = clock("estimate_3d", _effective_3d, phasemap, cfg,
                                                effective, say, warnings, notes)
    by_temperature = ()
    if cfg.solve.temperatures_C and effective is not None:
        by_temperature = clock("temperatures", _temperatures, phasemap, cfg, solved, say,
                               warnings, notes)
    measured = (_measured(cfg, effective, by_temperature, effective_3d, schemes.get(3),
                          by_temperature_3d) if cfg.measured else ())
    verification = None
    if cfg.solve.verify and effective is not None:
        verification = clock("verify", _verify, phasemap, cfg, effective, say)
    windows = None
    if cfg.windows.study:
        windows = clock("windows", _window_study, phasemap, cfg, effective, say)

    uncertainty = {}
    if cfg.uncertainty.budget:
        uncertainty = clock("uncertainty", _uncertainty, phasemap, cfg, fractions, summaries,
                            effective, effective_3d, windows, segmentation, say, warnings,
                            solved)

    src = Source(path=micro.path, sha256=micro.sha256, shape=tuple(phasemap.shape),
                 pixel_size_um=micro.pixel_size_um, pixel_size_from=micro.pixel_size_from,
                 cropped_bottom_px=micro.cropped_bottom_px)
    two_d_section = phasemap.ndim == 2
    result = Result(source=src, phases=fractions, version=__version__,
                    particles=summaries or None, effective=effective, shock=shock,
                    effective_3d=effective_3d, effective_by_temperature=by_temperature,
                    effective_3d_by_temperature=by_temperature_3d,
                    schemes=schemes.get(phasemap.ndim),
                    schemes_3d=schemes.get(3) if two_d_section else None,
                    windows=windows,
                    correlation={name: summarize_correlation(c)
                                 for name, c in correlations.items()} or None,
                    measured=measured, uncertainty=uncertainty,
                    segmentation=segmentation.summary(model) if segmentation else None,
                    config_toml=cfg.raw, warnings=tuple(warnings), notes=tuple(notes),
                    timings_s=clock.timings, verification=verification,
                    created=_dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"))
    return Analysis(result=result, phasemap=phasemap, image=micro.data,
                    thresholds=tuple(thresholds), particles=particles,
                    correlations=correlations, field_maps=solved.maps if solved else {},
                    segmenter=(segmentation.segmenter if segmentation is not None
                               and cfg.segment.method == "trained" and not cfg.segment.model
                               else None))


def _effective_3d(phasemap: PhaseMap, cfg: Config, effective: Effective | None, say: Progress,
                  warnings: list, notes: list):
    """The 3D estimate from the section's statistics (``[solve] estimate_3d``), or None, and
    its effective properties at each of ``[solve] temperatures_C`` (the same volumes solved
    again with the phase properties of `_phasemap_at`; empty without temperatures)."""
    if phasemap.ndim == 3:
        notes.append("estimate_3d: the input is a volume, solved in 3D as it is (effective)")
        return None, ()
    if not cfg.phases or not cfg.solve.properties:
        notes.append("estimate_3d: no materials or no properties asked for; not built")
        return None, ()
    from ..model3d.reconstruct import estimate_3d
    from ..trust.measured import ROOM_C

    temperatures = cfg.solve.temperatures_C or ()
    pore_size = _pore_sizes(phasemap) if temperatures else {}
    hot = []
    for t in temperatures:
        if abs(t - ROOM_C) < 1e-9:
            continue
        try:
            hot.append((t, _phasemap_at(phasemap, cfg, t, pore_size).materials))
        except InputError as exc:
            warnings.append(f"3D estimate not solved at {t:g} °C: {exc}")
    try:
        est = estimate_3d(phasemap, cfg.solve.properties, voxels=cfg.solve.voxels,
                          realizations=cfg.solve.realizations, tol=cfg.solve.tolerance,
                          method=cfg.solve.method, effective_2d=effective, progress=say,
                          temperatures=hot)
    except InputError as exc:
        warnings.append(f"3D estimate not built: {exc}")
        return None, ()
    warnings.extend(f"3D estimate: {w}" for w in est.warnings)
    record = est.summary()
    solved = dict((t, e.summary().effective) for t, e in est.at_temperatures)
    by_temperature = tuple(
        AtTemperature(t, record.effective if abs(t - ROOM_C) < 1e-9 else solved[t])
        for t in temperatures if abs(t - ROOM_C) < 1e-9 or t in solved)
    return record, by_temperature




def _effective_values(effective: Effective | None) -> dict[str, float]:
    """Headline column → the value of every effective property *effective* holds."""
    values = {key: scalar(effective, name) for key, name in SCALAR_COLUMNS.items()}
    return {key: v for key, v in values.items() if v is not None}


def _uncertainty(phasemap: PhaseMap, cfg: Config, fractions, summaries, effective,
                 effective_3d, windows, segmentation, say: Progress, warnings: list,
                 nominal=None) -> dict:
    """The error budget of every headline number: sampling (field-to-field interval of the
    fractions, bootstrap interval of the particle D50), window size (the window study, when
    it ran), discretization (the map re-solved coarsened by 2 and 4, Richardson), material
    data (first order, from each phase's share of the stored energy and the stated
    uncertainties of the phase properties) and 2D versus 3D (when the 3D estimate ran),
    combined as a root-sum-square (`polisect.trust.budget`). Segmentation is assessed where
    the phase map reports its uncertainty; its solves start from the fluctuations of the
    *nominal* solve (a `Solved` kept with them) when given."""
    from ..core.quantities import quantity_label
    from ..trust.budget import error_budget, model_2d_3d_term

    def window(key, value):
        q = windows.quantities.get(key) if windows is not None else None
        if q is None or q.supported_error_pct is None:
            return None
        return abs(value) * q.supported_error_pct / 100.0

    names = {p.label: p.name for p in phasemap.phases}
    ranges = segmentation.uncertainty.fractions if (segmentation is not None and
                                                    segmentation.uncertainty) else {}
    out = {}
    for f in fractions:
        key = fraction_column(f.name)
        r = ranges.get(f.label)
        out[key] = error_budget(key, f.fraction,
                                sampling=(f.fraction_ci95[1] - f.fraction_ci95[0]) / 2.0,
                                window=window(key, f.fraction),
                                segmentation=None if r is None else max(r[2] - r[0], r[0] - r[1]),
                                phase_names=names)
    for name, s in summaries.items():
        d50 = getattr(getattr(s, "ecd", None), "d50", None)
        ci = (getattr(s, "ecd", None) and s.ecd.ci95.get("d50")) or None
        if d50 is not None:
            key = f"particles_{name}_ecd_d50"
            out[key] = error_budget(key, d50, unit=quantity_label(key)[1],
                                    sampling=(ci[1] - ci[0]) / 2.0 if ci and None not in ci
                                    else None, phase_names=names)
    values = _effective_values(effective)
    if not values:
        return out
    terms = _EffectiveTerms(phasemap, cfg, values, warnings, nominal)
    material = {}
    if cfg.uncertainty.material:
        say("material data: sensitivity of each property to each phase property")
        material = terms.material()
    discretization = {}
    if cfg.uncertainty.discretization:
        say("discretization error: the map re-solved coarsened by 2 and 4")
        discretization = terms.discretization()
    boundary = {}
    uncertain = segmentation.uncertainty if segmentation is not None else None
    if cfg.uncertainty.segmentation != "none" and uncertain is not None:
        say("segmentation: the properties on the two extreme phase maps")
        boundary = terms.segmentation(uncertain)
    three_d = _effective_values(effective_3d.effective) if effective_3d else {}
    for key, value in values.items():
        out[key] = error_budget(
            key, value, unit=quantity_label(key)[1], window=window(key, value),
            segmentation=boundary.get(SCALAR_COLUMNS[key]),
            discretization=discretization.get(key), material=material.get(
                SCALAR_COLUMNS[key]),
            model_2d_3d=(model_2d_3d_term(value, three_d[key]) if key in three_d else None),
            phase_names=names)
    return out


COARSE_TOL = 1e-4
"""Energy tolerance of the budget's solves of coarsened maps. Richardson extrapolation uses
differences between the levels of about 10⁻² relative (docs/methods.md); the energy
stopping rule bounds the relative error of each effective value by about the tolerance
(`polisect.properties.solve.cg`), so 10⁻⁴ moves an estimated error by about 1 % of itself
(measured on the bench section of case l: 8·10⁻⁶ relative against a solve to 10⁻⁶)."""

SENSITIVITY_TOL = 1e-4
"""Residual tolerance of the sensitivity solves: the energy shares are then exact to about
10⁻⁴ relative (measured: 10⁻³ changes them by 10⁻⁴), and their effective tensors serve as
the coarse level of the discretization study (error about 10⁻⁶, far below its
differences)."""

SEGMENTATION_TOL = 1e-3
"""Energy tolerance of the extreme maps' solves. The boundary movement changes the
effective values by about 10⁻² relative (0.04–1 % on the bench section); the energy rule
bounds each value's error by about the tolerance and errs on the same side for the nominal
and the extreme maps (the energy of a truncated CG lies above the minimum), so 10⁻³ keeps
the range to a few per cent of itself — enough for an uncertainty term (measured on the
fine bench section: the nominal conductivity at 10⁻³ is 1.3·10⁻⁴ relative above the
solve to 10⁻⁶, 1.6 % of the range)."""


class _EffectiveTerms:
    """The effective-property terms of the budget, sharing their solves.

    Material (run first): the sensitivities (`polisect.properties.sensitivity`) are solved
    on the map coarsened by 2 (`polisect.trust.discretization.coarsen`, which keeps the
    fractions): on the bench section of case l and the two demo sections the material
    terms came out 0.90–1.10 times those of the map itself (within 1 % for k; the largest
    departures on terms ruled by a minor phase), at a quarter of the cost. Their effective
    values are the coarse level q₂ of the discretization study, so that map is solved once.
    Discretization: the map coarsened by 4 is solved to `COARSE_TOL`. Segmentation: the
    two extreme maps of `polisect.trust.boundaries`, solved on the map itself to
    `SEGMENTATION_TOL`, started from the fluctuations of the analysis's solve when it kept
    them (−21 % CPU on bench case l with "all"; on the map coarsened by 2 the ranges came
    out 0.41–1.39 times those of the map itself on the bench and demo sections: not
    faithful, so not used);
    by default only the conductivity (``[uncertainty] segmentation = "conductivity"``:
    two conductivity solves, about 12 % of the solve of all three properties on the
    bench section), with ``"all"`` the stiffness and expansion too (about one more solve
    of the section)."""

    def __init__(self, phasemap: PhaseMap, cfg: Config, values: dict, warnings: list,
                 nominal=None):
        from ..trust.discretization import MIN_COARSE_SIDE, coarsen

        self.phasemap, self.cfg, self.values, self.warnings = phasemap, cfg, values, warnings
        self.nominal = nominal if nominal is not None and nominal.starts else None
        self.coarse = None
        if min(phasemap.labels.shape) / 2 >= MIN_COARSE_SIDE:
            self.coarse = coarsen(phasemap.labels, 2)
        self._coarse_values = None
        self._sensitivities = None

    def solve(self, labels, tol: float, properties=None, start=None) -> dict:
        """Headline column → value of every property asked for (or of *properties*), on
        *labels*, from the fluctuations of the `Solved` *start* when given (same grid)."""
        from ..properties.effective import solve_effective

        pm = PhaseMap(np.ascontiguousarray(labels), self.phasemap.phases,
                      self.phasemap.voxel_size_um)
        return _effective_values(solve_effective(
            pm, properties or self.cfg.solve.properties, method=self.cfg.solve.method, tol=tol,
            plane=self.cfg.solve.plane, maps=False, start=start).effective)

    def coarse_values(self) -> dict:
        """The headline values of the map coarsened by 2: from the sensitivity solves when
        they ran and hold every value (they discretize as the ``fft`` and ``fe`` methods;
        not for ``ms``, whose values would not be comparable), else solved to
        `COARSE_TOL`."""
        if self._coarse_values is None:
            same = self.cfg.solve.method != "ms"
            quantities = {name: q for s in (self._sensitivities if same else None) or ()
                          for name, q in s.quantities.items()}
            got = {key: quantities[SCALAR_COLUMNS[key]].value for key in self.values
                   if SCALAR_COLUMNS[key] in quantities}
            self._coarse_values = (got if len(got) == len(self.values)
                                   else self.solve(self.coarse, COARSE_TOL))
        return self._coarse_values

    def discretization(self) -> dict:
        """Headline column → `DiscretizationEstimate` of every effective property."""
        from ..trust.discretization import discretization_study

        known = {2: self.coarse_values()} if self.coarse is not None else None
        try:
            return dict(discretization_study(
                self.phasemap.labels, lambda labels: self.solve(labels, COARSE_TOL),
                fine=self.values, known=known).estimates)
        except InputError as exc:
            self.warnings.append(f"discretization error not assessed: {exc}")
            return {}

    def material(self) -> dict:
        """Sensitivity name → `MaterialTerm` from the stated uncertainties of the phases."""
        from ..properties.effective import solver_labels
        from ..properties.sensitivity import conductivity_sensitivity, \
            elasticity_sensitivity
        from ..trust.budget import material_terms

        phasemap, cfg = self.phasemap, self.cfg
        uncertainties = {p.label: dict(p.material.uncertainty) for p in phasemap.phases
                         if p.material.uncertainty}
        if not uncertainties:
            return {}
        labels = solver_labels(phasemap.labels if self.coarse is None else self.coarse)
        mats = phasemap.materials
        results = []
        props = cfg.solve.properties
        try:
            if "conductivity" in props:
                results.append(conductivity_sensitivity(labels, mats, tol=SENSITIVITY_TOL))
            if "elasticity" in props or "expansion" in props:
                plane = cfg.solve.plane if phasemap.ndim == 2 else "generalized-plane-strain"
                results.append(elasticity_sensitivity(labels, mats, plane=plane,
                                                      tol=SENSITIVITY_TOL,
                                                      expansion="expansion" in props))
        except InputError as exc:
            self.warnings.append(f"material-data uncertainty not assessed: {exc}")
            return {}
        if self.coarse is not None:
            self._sensitivities = results
        return material_terms(results, uncertainties)

    def segmentation(self, uncertain) -> dict:
        """Sensitivity name → `BoundaryRange` over the two extreme maps of the boundary
        pixels of *uncertain* (a `BoundaryUncertainty` of this phase map)."""
        from ..trust.boundaries import boundary_ranges, extreme_maps

        phasemap = self.phasemap
        if uncertain.labels.shape != phasemap.labels.shape or not np.array_equal(
                uncertain.labels, phasemap.labels) or not np.any(uncertain.alternative >= 0):
            return {}
        groups: dict = {}
        which = self.cfg.uncertainty.segmentation
        for physics in _BOUNDARY_PHYSICS if which == "all" else (which,):
            order = _phase_order(phasemap, physics)
            props = [p for p in self.cfg.solve.properties if p in _PHYSICS_PROPERTIES[physics]]
            if order is None or not props:
                continue
            try:
                maps = extreme_maps(uncertain.labels, uncertain.alternative, order)
            except InputError as exc:
                self.warnings.append(f"segmentation term of the {physics} not assessed: {exc}")
                continue
            entry = groups.setdefault(tuple(m.tobytes() for m in maps), (maps, [], []))
            entry[1].append(physics)
            entry[2].extend(props)
        out = {}
        for maps, physics, props in groups.values():
            low, high = (self.solve(m, SEGMENTATION_TOL, props, self.nominal) for m in maps)
            ordered = "stiffness" not in physics or _stiffness_ordered(phasemap, uncertain)
            names = {key: SCALAR_COLUMNS[key] for key in low
                     if key in high and key in self.values}
            for rigorous in {True, ordered}:
                part = {k: n for k, n in names.items()
                        if (n == "conductivity" or ordered) == rigorous}
                out.update(boundary_ranges(
                    {n: self.values[k] for k, n in part.items()},
                    {n: low[k] for k, n in part.items()},
                    {n: high[k] for k, n in part.items()}, rigorous=rigorous))
        return out


_BOUNDARY_PHYSICS = {"conductivity": "conductivity", "stiffness": "youngs_modulus"}
"""Physics → the phase property its extreme maps are ordered by."""

_PHYSICS_PROPERTIES = {"conductivity": ("conductivity",),
                       "stiffness": ("elasticity", "expansion")}
"""Physics → the properties (`[solve] properties`) its extreme maps are solved for."""


def _phase_order(phasemap: PhaseMap, physics: str) -> dict | None:
    """Label → the phase property the extreme maps of *physics* are ordered by (the mean
    diagonal of a tensor conductivity; Young's modulus, 0 for a pore), or None when a phase
    lacks it."""
    out = {}
    for p in phasemap.phases:
        value = getattr(p.material, _BOUNDARY_PHYSICS[physics])
        if value is None:
            return None
        out[p.label] = float(np.trace(value) / len(value)) if np.ndim(value) == 2 \
            else float(value)
    return out


def _stiffness_ordered(phasemap: PhaseMap, uncertain) -> bool:
    """Whether every swapped pair of phases has ordered stiffness tensors: one is a pore,
    or both are isotropic with equal Poisson's ratios (then E orders them)."""
    mats = {p.label: p.material for p in phasemap.phases}
    swing = uncertain.alternative >= 0
    pairs = set(zip(uncertain.labels[swing].tolist(), uncertain.alternative[swing].tolist()))
    for a, b in pairs:
        ma, mb = mats.get(a), mats.get(b)
        if ma is None or mb is None:
            return False
        if ma.is_pore or mb.is_pore:
            continue
        if ma.stiffness is not None or mb.stiffness is not None or \
                ma.poisson_ratio != mb.poisson_ratio:
            return False
    return True


RESOLUTION_WARN_SHARE = 0.10
"""Small particles holding at least this share of their phase's area are a warning (fewer
are a note: the discretization estimate of the budget carries their effect)."""


def _resolution(phasemap: PhaseMap, cfg: Config, notes: list) -> list[str]:
    """Warnings for particles resolved by too few pixels and for gaps narrower than two
    pixels between particles that contrast strongly with the matrix (the property that
    matters: conductivity, else Young's modulus), each with what to do."""
    from ..trust.resolution import resolution_check

    prop = "conductivity" if "conductivity" in cfg.solve.properties else "youngs_modulus"
    values = {p.label: getattr(p.material, prop) for p in phasemap.phases}
    if any(v is None or np.ndim(v) for v in values.values()):
        values = None
    check = resolution_check(phasemap.labels, values,
                             names={p.label: p.name for p in phasemap.phases},
                             pixel_size_um=phasemap.voxel_size_um)
    out = []
    for w in check.warnings:
        if w.kind == "small-particles" and w.share < RESOLUTION_WARN_SHARE:
            notes.append(f"resolution: {w.message}")
        else:
            out.append(f"{w.message} {w.advice}")
    return out


def _measured(cfg: Config, effective: Effective | None, by_temperature, effective_3d,
              bounds_3d, by_temperature_3d=()):
    """The ``[[measured]]`` values beside the computed ones (at the solved temperatures, the
    3D estimate's too) and the bounds of the isotropic 3D composite."""
    from ..trust.measured import ROOM_C, compare_measured

    solved = {ROOM_C: effective} if effective else {}
    solved.update({t.temperature_C: t.effective for t in by_temperature})
    return compare_measured(cfg.measured, solved,
                            effective_3d.effective if effective_3d else None,
                            dict(bounds_3d.bounds) if bounds_3d else None,
                            {t.temperature_C: t.effective for t in by_temperature_3d})


def _temperatures(phasemap: PhaseMap, cfg: Config, start, say: Progress,
                  warnings: list, notes: list) -> tuple[AtTemperature, ...]:
    """The section solved with the phase properties at each of ``[solve] temperatures_C``.

    Every phase is evaluated at the temperature from its tables (`Material.at`); a pore
    phase conducts the gas at that temperature plus radiation across pores of the pore
    phase's mean intercept length measured on the image (Loeb 1954, on from
    `radiation.RADIATION_ON_ABOVE_C`); porosity below the pixel is applied after. A
    temperature a material has no data for is left out with a warning. At the library's
    own temperature (20 °C) the analysis's solve (*start*) is the answer and is not
    repeated. Each solve starts from the fluctuations of the one before (the analysis's
    own solve first; warm start, `polisect.properties.solve.cg`): the same answer to the
    tolerance in fewer iterations.
    """
    from ..properties.effective import solve_effective
    from ..properties.radiation import RADIATION_ON_ABOVE_C
    from ..trust.measured import ROOM_C

    pore_size = _pore_sizes(phasemap)
    effective = start.effective
    out = []
    for t in cfg.solve.temperatures_C:
        if abs(t - ROOM_C) < 1e-9:
            out.append(AtTemperature(t, effective, _shock(effective, cfg, [])
                                     if cfg.service.strength_MPa else None))
            continue
        say(f"solving at {t:g} °C")
        try:
            pm = _phasemap_at(phasemap, cfg, t, pore_size)
        except InputError as exc:
            warnings.append(f"not solved at {t:g} °C: {exc}")
            continue
        solved = solve_effective(pm, cfg.solve.properties, method=cfg.solve.method,
                                 tol=cfg.solve.tolerance, plane=cfg.solve.plane, maps=False,
                                 start=start, keep_fluctuations=True)
        start = solved
        warnings.extend(f"at {t:g} °C: {w}" for w in solved.warnings)
        warnings.extend(f"at {t:g} °C: effective properties refused: {why}"
                        for why in solved.refused)
        out.append(AtTemperature(t, solved.effective,
                                 _shock(solved.effective, cfg, []) if cfg.service.strength_MPa
                                 else None))
    if any(t >= RADIATION_ON_ABOVE_C for t in cfg.solve.temperatures_C) and pore_size:
        sizes = ", ".join(f"{phasemap.phase(k).name} {v:.3g} µm" for k, v in pore_size.items())
        notes.append(f"temperatures: radiation across pores from {RADIATION_ON_ABOVE_C:g} °C "
                     f"(Loeb 1954), pore size = mean intercept length on the image ({sizes})")
    return tuple(out)


def _phasemap_at(phasemap: PhaseMap, cfg: Config, t: float, pore_size: dict) -> PhaseMap:
    """The phase map with every phase's properties at *t* °C (see `_temperatures`); raises
    `InputError` when a material has no data at *t*."""
    from ..properties.radiation import pore_phase

    phases = []
    for p in phasemap.phases:
        pc = cfg.phase(p.label)
        base = pc.material if pc is not None else p.material
        if base.is_pore and base.name == "air":
            hot = pore_phase(t, pore_size.get(p.label, 0.0),
                             radiation=None if pore_size.get(p.label) else False)
        else:
            hot = base.at(t, _needed(cfg.solve.properties))
        phases.append(Phase(p.label, p.name, hot if pc is None else _with_porosity(pc, hot),
                            p.particles))
    return PhaseMap(phasemap.labels, tuple(phases), phasemap.voxel_size_um)


def _needed(properties) -> tuple[str, ...]:
    """The material properties the solves of *properties* need."""
    need = {"conductivity": ("conductivity",),
            "elasticity": ("youngs_modulus", "poisson_ratio"),
            "expansion": ("youngs_modulus", "poisson_ratio", "expansion")}
    return tuple(dict.fromkeys(p for prop in properties for p in need[prop]))


def _pore_sizes(phasemap: PhaseMap) -> dict[int, float]:
    """Label → mean intercept length (µm) of every gas-filled pore phase, for radiation; empty
    when the pixel size is unknown (no radiation then)."""
    from ..measure.stereology import boundary_densities, spacing

    if not phasemap.voxel_size_um:
        return {}
    out = {}
    for p in phasemap.phases:
        mask = phasemap.labels == p.label
        if p.material.is_pore and mask.any():
            length = spacing(boundary_densities(mask, None, phasemap.voxel_size_um)).mean_intercept
            if np.isfinite(length):
                out[p.label] = float(length)
    return out
VERIFY_MAX_CELLS = {2: 1024 * 1024, 3: 96 ** 3}
"""Largest map the second solver takes whole; a larger one is compared on a centred crop."""


def _verify(phasemap: PhaseMap, cfg: Config, effective: Effective, say: Progress
            ) -> Verification:
    """Solve again with the second method (fe for fft, fft for fe and ms) and state the
    largest relative difference of each effective tensor (``[solve] verify``). A map larger
    than `VERIFY_MAX_CELLS` is solved by both methods on a centred crop."""
    from ..properties.effective import solve_effective

    props = tuple(p for p in cfg.solve.properties if getattr(effective, p) is not None)
    first = getattr(effective, props[0]).solver.method
    second = "fft" if first == "fe" else "fe"
    kw = {"tol": cfg.solve.tolerance, "plane": cfg.solve.plane, "maps": False}
    tick = time.perf_counter()
    crop = None
    if phasemap.labels.size > VERIFY_MAX_CELLS[phasemap.ndim]:
        side = int(round(VERIFY_MAX_CELLS[phasemap.ndim] ** (1.0 / phasemap.ndim)))
        cut = tuple(slice(max(0, (n - side) // 2), max(0, (n - side) // 2) + min(n, side))
                    for n in phasemap.shape)
        phasemap = PhaseMap(np.ascontiguousarray(phasemap.labels[cut]), phasemap.phases,
                            phasemap.voxel_size_um)
        crop = tuple(phasemap.shape)
        say(f"verify: solving a {' × '.join(map(str, crop))} crop with {first}")
        effective = solve_effective(phasemap, props, method=first, **kw).effective
    say(f"verify: solving again with the second method, {second}")
    other = solve_effective(phasemap, props, method=second, **kw).effective
    tensors = {"conductivity": lambda e: e.conductivity.tensor,
               "elasticity": lambda e: e.elasticity.stiffness,
               "expansion": lambda e: e.expansion.tensor}
    diffs = {}
    for p in props:
        a, b = np.asarray(tensors[p](effective)), np.asarray(tensors[p](other))
        diffs[p] = float(np.abs(a - b).max() / max(np.abs(a).max(), 1e-300))
    return Verification(method=first, second_method=second, differences=diffs,
                        max_relative_difference=max(diffs.values(), default=0.0),
                        tolerance=cfg.solve.tolerance, seconds=time.perf_counter() - tick,
                        crop=crop)


def _window_study(phasemap: PhaseMap, cfg: Config, effective: Effective | None, say: Progress):
    """The window-size study (``[windows] study``): the effective properties the analysis
    computed are studied per window with its solver settings; with periodic edges the
    analysis's own whole-image values stand for the largest window."""
    from ..trust.windows import window_study

    props = tuple(p for p in cfg.solve.properties
                  if effective is not None and getattr(effective, p) is not None)
    attrs = {"conductivity": "mean", "elasticity": "youngs_modulus", "expansion": "mean"}
    whole = {SOLVED_COLUMNS[p]: value_of(getattr(getattr(effective, p), attrs[p]))
             for p in props}
    study = window_study(phasemap, props, method=cfg.solve.method, tol=cfg.solve.tolerance,
                         plane=cfg.solve.plane, edges=cfg.windows.edges,
                         target_error=cfg.windows.target_error, progress=say,
                         whole=whole if len(whole) == len(props) else None)
    return study.summary()


def _effective(phasemap: PhaseMap, cfg: Config, say: Progress, warnings: list, notes: list):
    """The solved effective properties, or None (with a note) when the materials do not
    allow them."""
    from ..properties.effective import solve_effective

    props = cfg.solve.properties
    if not props:
        return None
    if not cfg.phases:
        notes.append("no materials assigned to the phases: effective properties not computed "
                     "(give [[phase]] entries or --assign)")
        return None
    solved = solve_effective(phasemap, props, method=cfg.solve.method, tol=cfg.solve.tolerance,
                             plane=cfg.solve.plane, maps=cfg.solve.fields, progress=say,
                             keep_fluctuations=_kept_starts(cfg))
    warnings.extend(solved.warnings)
    warnings.extend(f"effective properties refused: {why}" for why in solved.refused)
    return solved


def _kept_starts(cfg: Config):
    """Which solves keep their fluctuations as warm starts: every one for the temperatures
    or the segmentation term of every property, the conductivity's for the default
    segmentation term, none otherwise."""
    if cfg.solve.temperatures_C or (_segmentation_term(cfg)
                                    and cfg.uncertainty.segmentation == "all"):
        return True
    return ("conductivity",) if _segmentation_term(cfg) else ()


def _segmentation_term(cfg: Config) -> bool:
    """Whether the budget solves the extreme phase maps of the segmentation (they start
    from the fluctuations of the analysis's solve: boundary pixels changed, so a few
    iterations instead of a solve from zero)."""
    return (cfg.uncertainty.budget and cfg.uncertainty.segmentation != "none"
            and cfg.image.kind != "labels")


def _shock(effective: Effective | None, cfg: Config, notes: list) -> ShockIndices | None:
    """Hasselman's thermal-shock indices from the computed effective properties."""
    from ..properties.shock import thermal_shock_indices

    svc = cfg.service
    if svc.strength_MPa is None:
        return None
    el = effective.elasticity if effective else None
    ex = effective.expansion if effective else None
    if el is None or ex is None:
        notes.append("[service] strength given, but thermal-shock indices need the computed "
                     "elasticity and expansion: add both to [solve] properties")
        return None
    k = value_of(effective.conductivity.mean) if effective.conductivity else None
    ind = thermal_shock_indices(value_of(el.youngs_modulus), value_of(el.poisson_ratio),
                                value_of(ex.mean), k, svc.strength_MPa,
                                svc.fracture_energy_J_m2)
    return ShockIndices(ind.R, ind.R_prime, ind.R_4prime, ind.caution, effective.model)


ISOTROPIC_LOOKING = 0.05


def bounds_warnings(effective: Effective, table: SchemeTable, tol: float = 0.01) -> list[str]:
    """Warnings for computed values of an isotropic-looking structure outside the bounds.

    A value outside the Hashin–Shtrikman bounds by more than *tol* (relative) means the
    structure is not isotropic, the image is too small, or the phase map is wrong. For a 2D
    section the moduli compared are those the 2D schemes give (``scheme_comparable``).
    """
    from ..properties.schemes import place

    out = []
    c, el = effective.conductivity, effective.elasticity
    checks = []
    if c is not None:
        checks.append((c.anisotropy, "conductivity", value_of(c.mean), "conductivity"))
    if el is not None:
        comp = el.scheme_comparable
        bulk = comp.bulk_modulus if comp is not None else value_of(el.bulk_modulus)
        shear = comp.shear_modulus if comp is not None else value_of(el.shear_modulus)
        checks += [(el.anisotropy, "bulk_modulus", bulk, "bulk modulus"),
                   (el.anisotropy, "shear_modulus", shear, "shear modulus")]
    for anisotropy, prop, value, label in checks:
        b = table.bounds.get(prop)
        if (anisotropy or 0) > ISOTROPIC_LOOKING or value is None or b is None \
                or b.lower is None or b.upper is None:
            continue
        warning = place(value, b.lower, b.upper, tol).warning(label)
        if warning:
            out.append(warning)
    return out


def _fit(phasemap: PhaseMap, cfg: Config, say: Progress):
    """The phase map with each property given as "fit" back-calculated from the matching
    ``[[measured]]`` value at room temperature (`polisect.properties.fit`), and the fits by
    label."""
    from ..properties.effective import model_words, solver_labels
    from ..properties.fit import FITTABLE, fit_phase_property
    from ..trust.measured import MATCH_K, ROOM_C

    phases, fits = list(phasemap.phases), {}
    for i, p in enumerate(phases):
        pc = cfg.phase(p.label)
        if pc is None or pc.fit is None:
            continue
        m = next((m for m in cfg.measured if m.property in FITTABLE[pc.fit]
                  and abs(m.temperature_C - ROOM_C) <= MATCH_K), None)
        if m is None:
            raise InputError(f"[[phase]] {p.name}: {pc.fit} = \"fit\" needs a [[measured]] "
                             f"{' or '.join(FITTABLE[pc.fit])} at {ROOM_C:g} °C to fit it to")
        say(f"fitting the {pc.fit.replace('_', ' ')} of {p.name} to the measured "
            f"{m.property.replace('_', ' ')}")
        materials = {q.label: q.material for q in phases}
        fit = fit_phase_property(solver_labels(phasemap.labels), materials, p.label, pc.fit,
                                 m.property, m.value, m.uncertainty, plane=cfg.solve.plane,
                                 model=model_words(phasemap.ndim, cfg.solve.plane),
                                 tol=min(cfg.solve.tolerance, 1e-6))
        source = (f"fitted to the measured {m.property.replace('_', ' ')} {m.value:g} "
                  f"({m.method or 'no method given'}) through the {fit.model}")
        material = p.material.replace(**{pc.fit: fit.value},
                                      sources={**p.material.sources, pc.fit: source})
        phases[i] = Phase(p.label, p.name, material, p.particles)
        fits[p.label] = fit
    return PhaseMap(phasemap.labels, tuple(phases), phasemap.voxel_size_um), fits


def _fractions(phasemap: PhaseMap, cfg: Config, fits: dict) -> tuple[PhaseFraction, ...]:
    """Fractions with their field-based intervals, and the part of each phase that lies
    inside particles of another phase (internal porosity of hollow particles)."""
    phases = phasemap.phases
    estimates = field_fractions(phasemap.labels, [p.label for p in phases],
                                n_fields=cfg.segment.fields)
    hosts = [p.label for p in particle_phases(phasemap)]
    inside: dict[int, float] = {}
    for e in enclosed_fractions(phasemap.labels, hosts, n_fields=cfg.segment.fields):
        inside[e.phase] = inside.get(e.phase, 0.0) + e.fraction.mean
    out = []
    for p in phases:
        est = estimates[p.label]
        out.append(PhaseFraction(
            label=p.label, name=p.name, material=p.material, fraction=est.mean,
            fraction_ci95=(max(0.0, est.mean - est.ci95), min(1.0, est.mean + est.ci95)),
            relative_accuracy_pct=(est.relative_accuracy_pct
                                   if np.isfinite(est.relative_accuracy_pct) else None),
            fields=est.n_fields,
            inside_particles=inside.get(p.label) if hosts else None,
            fitted=fits.get(p.label)))
    return tuple(out)


def _schemes(phasemap: PhaseMap, fractions, summaries: dict, notes: list) -> dict:
    """Bounds and mean-field estimates for the measured fractions.

    Returns ``{dimension: SchemeTable}``: the table of the model the solvers use (2D:
    circular cylinders in the transverse plane, the prismatic structure of a solved section;
    3D: spheres) and, for a 2D section, the spherical-particle composite (3). A particle
    phase whose particles are mostly hollow is treated as hollow spheres (cylinders), the
    pores inside it counted in its envelope. The core's share of the envelope is the
    measured one (area fractions, equal to volume fractions by Delesse's principle), so the
    diameter ratio of the model is ρ = (f_core / f_envelope)^(1/d): the bounds then hold the
    measured phase fractions exactly (a number mean of the particles' own ratios, which
    weights small particles as much as large ones, gave other fractions and bounds that the
    solved value could cross).
    """
    from ..properties.schemes import evaluate

    mats = {p.name: p.material for p in phasemap.phases}
    if not any(m.conductivity is not None or m.youngs_modulus is not None for m in mats.values()):
        return {}
    frac = {f.name: f.fraction for f in fractions}
    core_share = {}
    for host, summary in summaries.items():
        ratio = summary.inner_outer_ratio_mean
        if (summary.hollow_fraction or 0) >= 0.5 and ratio:
            core = _enclosed_by(phasemap, summary.label)
            if core is not None:
                name, f_core = core
                frac[host] += f_core
                frac[name] = max(0.0, frac[name] - f_core)
                core_share[host] = f_core / frac[host]
                notes.append(f"schemes: {host} treated as hollow particles; the {name} "
                             f"inside them is their core, {core_share[host]:.3g} of the "
                             f"envelope (measured; particles' mean inner/outer diameter "
                             f"{ratio:.3g})")
    phases = [(n, mats[n], f) for n, f in frac.items() if f > 0]
    out = {}
    dims = (2, 3) if phasemap.ndim == 2 else (3,)
    for dim in dims:
        hollow = {n: share ** (1.0 / dim) for n, share in core_share.items()}
        res = evaluate(phases, dim=dim, hollow=hollow)
        out[dim] = SchemeTable(dict(res.schemes), dict(res.bounds))
        notes.extend(f"schemes ({dim}D): {n}" for n in res.notes)
    return out


def _enclosed_by(phasemap: PhaseMap, host: int):
    """(name, fraction) of the phase enclosed most inside particles of *host*, or None."""
    best = None
    for e in enclosed_fractions(phasemap.labels, [host]):
        if e.phase != host and e.fraction.mean > 0 and (best is None
                                                         or e.fraction.mean > best[1]):
            best = (phasemap.phase(e.phase).name, e.fraction.mean)
    return best


def _particles(phasemap: PhaseMap, cfg: Config, say: Progress, notes: list):
    """Particle statistics of every particle phase (true 3D statistics for a volume), their
    summaries by phase name, and the two-point correlation of every phase (sections)."""
    from ..measure.particles3d import volume_particles
    from ..measure.stereology import two_point_correlation

    phases = particle_phases(phasemap)
    split = {p.label: bool(cfg.phase(p.label) and cfg.phase(p.label).split_touching)
             for p in phases}
    if phasemap.ndim == 2:
        measured = _section_particles(phasemap, phases, split, say, notes)
    else:
        measured = []
        for p in phases:
            say(f"measuring particles of {p.name} in 3D")
            measured.append(volume_particles(phasemap, p.label, split_touching=split[p.label]))
    summaries = {pp.name: (summarize_particles(pp) if phasemap.ndim == 2
                           else summarize_volume_particles(pp)) for pp in measured}
    if phasemap.ndim != 2:
        return tuple(measured), summaries, {}
    say("two-point correlation")
    r_max = max(4, min(phasemap.shape) // 4)
    correlations = {p.name: two_point_correlation(phasemap.labels == p.label, r_max=r_max,
                                                  voxel_size_um=phasemap.voxel_size_um)
                    for p in phasemap.phases}
    return tuple(measured), summaries, correlations


def _section_particles(phasemap: PhaseMap, phases, split: dict, say: Progress,
                       notes: list) -> list:
    """The particles of every particle phase of a section, each measured without the cores
    of other phases' particles (the pores inside hollow spheres are part of those
    particles, as in the schemes and the 3D estimate, not pores of their own)."""
    labels = phasemap.labels
    particles = {p.label: phase_particle_labels(labels == p.label, split[p.label])
                 for p in phases}
    cores = particle_cores(labels, particles)
    out = []
    for p in phases:
        foreign = cores_of_others(cores, p.label, labels.shape) & (labels == p.label)
        say(f"measuring particles of {p.name}")
        if foreign.any():
            notes.append(f"particles: {p.name} measured outside the cores of other phases' "
                         f"particles ({foreign.mean():.3g} of the section left out: they "
                         "belong to the hollow particles, as in the schemes and the 3D "
                         "estimate)")
        out.append(phase_particles(phasemap, p.label, split_touching=split[p.label],
                                   exclude=foreign if foreign.any() else None,
                                   labelled=None if foreign.any() else particles[p.label]))
    return out


def _micrograph(source, cfg: Config, pixel_size_um: float | None) -> Micrograph:
    given_from = "command line" if pixel_size_um is not None else "config"
    size = pixel_size_um if pixel_size_um is not None else cfg.image.pixel_size_um
    if isinstance(source, np.ndarray):
        if source.ndim not in (2, 3):
            raise InputError(f"an image array must be 2D (or 3D: RGB or a volume), got shape "
                             f"{source.shape}")
        is_rgb = source.ndim == 3 and source.shape[-1] in (3, 4) and not cfg.image.volume
        data = source[..., :3] if is_rgb else source
        return Micrograph(data=data, path=None, sha256=None, pixel_size_um=size,
                          pixel_size_from=given_from if size is not None else "unknown",
                          cropped_bottom_px=0, dtype=str(source.dtype),
                          bit_depth=source.dtype.itemsize * 8, is_rgb=is_rgb, n_pages=1)
    if os.path.isdir(source):
        return read_stack(source, crop_bottom_px=cfg.image.crop_bottom_px, pixel_size_um=size,
                          pixel_size_from=given_from, slice_spacing_um=cfg.image.slice_spacing_um)
    micro = read_image(source, crop_bottom_px=cfg.image.crop_bottom_px, pixel_size_um=size,
                       pixel_size_from=given_from, volume=cfg.image.volume)
    return check_slice_spacing(micro, cfg.image.slice_spacing_um) if micro.is_volume else micro


def _phasemap(micro: Micrograph, cfg: Config):
    """The phase map of a micrograph, the thresholds used, the segmentation's notes and
    warnings (what a user must know before trusting the phase map), and the segmentation
    itself with the model it used (None for label and palette images)."""
    labels, thresholds, notes, warnings, segmentation, model = _labels(micro, cfg)
    phasemap = PhaseMap(labels.astype(np.int32, copy=False), _phase_table(labels, cfg),
                        micro.pixel_size_um)
    return phasemap, thresholds, notes, warnings, segmentation, model


def _labels(micro: Micrograph, cfg: Config):
    from ..segment import thresholds as segment

    kind = cfg.image.kind
    data = micro.data
    if kind == "labels":
        if micro.is_rgb:
            raise InputError(f"{micro.path or 'image'}: [image] kind = \"labels\" needs a "
                             "single-channel integer label image, got RGB; use kind = "
                             "\"palette\" for colour-coded maps")
        if not np.issubdtype(data.dtype, np.integer):
            if not np.all(np.equal(np.mod(data, 1), 0)):
                raise InputError(f"{micro.path or 'image'}: [image] kind = \"labels\" needs "
                                 "integer labels; this image has fractional values")
            data = data.astype(np.int64)
        return data, (), ["labels used as given"], [], None, None
    if kind == "palette":
        res = segment.segment_palette(data, {p.label: p.color for p in cfg.phases},
                                      tolerance=cfg.segment.color_tolerance)
        return res.labels, (), list(res.notes), [], None, None
    from ..read.image import read_annotations
    from ..segment import Segmenter, make_phasemap_labels

    grey = to_grayscale(data) if micro.is_rgb else data
    seg = cfg.segment
    warnings = check_grey_range(cfg, float(np.min(grey)), float(np.max(grey)))
    annotations = segmenter = model = None
    if seg.method == "trained":
        if seg.model:
            model = _beside_config(seg.model, cfg)
            segmenter = Segmenter.load(model)
        elif seg.annotations:
            path = _beside_config(seg.annotations, cfg)
            annotations = read_annotations(path, micro)
            model = f"trained here from the strokes of {os.path.basename(path)}"
    s = make_phasemap_labels(data, micro.pixel_size_um, seg, [p.label for p in cfg.phases],
                             annotations=annotations, segmenter=segmenter)
    notes = list(s.notes)      # the corrections are in the result's segmentation block
    return s.labels, tuple(s.thresholds), notes, warnings + list(s.warnings), s, model


def _beside_config(path: str, cfg: Config) -> str:
    """*path* as given, or relative to the configuration file's folder."""
    if not os.path.isabs(path) and os.path.isfile(cfg.source) and not os.path.exists(path):
        return os.path.join(os.path.dirname(os.path.abspath(cfg.source)), path)
    return path


def _with_porosity(pc, material: Material, pore_conductivity: float | None = None) -> Material:
    """A phase's material with its ``porosity`` below the pixel size (`porous`), or as it is."""
    if not pc.porosity:
        return material
    from ..properties.porous import porous

    return porous(material, pc.porosity, pore_shape=pc.pore_shape,
                  aspect_ratio=pc.pore_aspect_ratio, pore_conductivity=pore_conductivity)


def _phase_table(labels: np.ndarray, cfg: Config) -> tuple[Phase, ...]:
    present = np.unique(labels).tolist()
    if cfg.phases:
        known = {p.label for p in cfg.phases}
        missing = [v for v in present if v not in known]
        if missing:
            raise InputError(f"the phase map holds labels {missing} that no [[phase]] entry "
                             f"describes (configured labels: {sorted(known)}); add a "
                             "[[phase]] for each, or change [segment] classes")
        return tuple(Phase(p.label, p.name, _with_porosity(p, p.material), p.particles)
                     for p in cfg.phases)
    return tuple(Phase(v, f"phase-{v}", Material(name=f"phase-{v}", source="no material given"))
                 for v in present)


