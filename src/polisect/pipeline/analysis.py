"""`analyze`: one section (a file or an array) to a `Result`, and `write_outputs`.

The pipeline is the only place that knows about every stage; each stage is a plain
function over plain data (see DESIGN.md):

    file → Micrograph → PhaseMap → fractions, particles, schemes, effective → Result
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import os
import time
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .. import __version__
from ..read.config import Config
from ..core.errors import InputError
from ..read.image import Micrograph, check_slice_spacing, read_image, read_stack, to_grayscale
from ..core.materials import Material
from ..measure.morphology import enclosed_fractions, field_fractions, particle_phases, phase_particles
from ..core.phasemap import Phase, PhaseMap
from .results import PhaseFraction, Result, Source

Progress = Callable[[str], None]


@dataclass(frozen=True, eq=False)
class Analysis:
    """A `Result` together with the arrays the report draws (never serialized)."""

    result: Result
    phasemap: PhaseMap
    image: np.ndarray | None
    thresholds: tuple[float, ...] = ()
    particle_rows: list = field(default_factory=list)
    particles: tuple = ()
    correlations: dict = field(default_factory=dict)
    field_maps: dict = field(default_factory=dict)


def analyze(source, config: Config | None = None, *, pixel_size_um: float | None = None,
            progress: Progress | None = None) -> Analysis:
    """Analyse one section.

    Parameters
    ----------
    source : path or ndarray
        An image file (TIFF, PNG, JPEG, BMP) or an array: a grey/RGB image, or a label
        image when ``config.image.kind == "labels"``.
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
    """
    cfg = config or Config()
    say = progress or (lambda msg: None)
    timings: dict[str, float] = {}
    warnings: list[str] = []
    tick = time.perf_counter()

    say("reading image")
    micro = _micrograph(source, cfg, pixel_size_um)
    timings["read"] = time.perf_counter() - tick

    tick = time.perf_counter()
    say("building the phase map")
    labels, thresholds, seg_notes = _labels(micro, cfg)
    phases = _phase_table(labels, cfg)
    phasemap = PhaseMap(labels.astype(np.int32, copy=False), phases, micro.pixel_size_um)
    timings["segment"] = time.perf_counter() - tick
    if micro.pixel_size_um is None:
        warnings.append("pixel size unknown: sizes are in pixels; give [image] pixel_size_um "
                        "or --pixel-size, or use a TIFF with resolution tags")
    notes = [n for n in micro.notes if not n.startswith("pixel size unknown")] + seg_notes

    tick = time.perf_counter()
    say("measuring phase fractions")
    fractions = _fractions(phasemap, cfg)
    timings["fractions"] = time.perf_counter() - tick

    tick = time.perf_counter()
    measured, correlations = (_particles(phasemap, cfg, say) if phasemap.ndim == 2
                              else (_volume_particles(phasemap, cfg, say), {}))
    timings["particles"] = time.perf_counter() - tick

    tick = time.perf_counter()
    schemes = _schemes(phasemap, fractions, measured, notes)
    timings["schemes"] = time.perf_counter() - tick

    tick = time.perf_counter()
    effective = _effective(phasemap, cfg, say, warnings, notes)
    timings["solve"] = time.perf_counter() - tick
    if effective is not None and schemes.get("bounds"):
        warnings.extend(bounds_warnings(effective.block, schemes["bounds"]))
    shock = _shock(effective.block if effective else None, cfg, notes)

    tick = time.perf_counter()
    effective_3d = _effective_3d(phasemap, cfg, effective, say, warnings, notes)
    if effective_3d is not None:
        timings["estimate_3d"] = time.perf_counter() - tick

    src = Source(path=micro.path, sha256=micro.sha256, shape=tuple(phasemap.shape),
                 pixel_size_um=micro.pixel_size_um, pixel_size_from=micro.pixel_size_from,
                 cropped_bottom_px=micro.cropped_bottom_px)
    result = Result(source=src, phases=fractions, version=__version__,
                    particles={pp.name: pp.to_dict() for pp in measured} or None,
                    effective=effective.block if effective else None, shock=shock,
                    effective_3d=effective_3d,
                    schemes=schemes.get("schemes"), bounds=schemes.get("bounds"),
                    schemes_3d=schemes.get("schemes_3d"), bounds_3d=schemes.get("bounds_3d"),
                    correlation={name: {"correlation_length": c.correlation_length,
                                        "units": c.units, "fraction": c.fraction}
                                 for name, c in correlations.items()} or None,
                    config_toml=cfg.raw, warnings=tuple(warnings), notes=tuple(notes),
                    timings_s=timings,
                    created=_dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"))
    rows = [{"phase": pp.name, **row} for pp in measured
            for row in (pp.table.rows() if phasemap.ndim == 2 else pp.rows())]
    return Analysis(result=result, phasemap=phasemap, image=micro.data,
                    thresholds=tuple(thresholds), particle_rows=rows, particles=measured,
                    correlations=correlations,
                    field_maps=effective.maps if effective else {})


def _effective_3d(phasemap: PhaseMap, cfg: Config, effective, say: Progress, warnings: list,
                  notes: list) -> dict | None:
    """The 3D estimate from the section's statistics (``[solve] estimate_3d``), or None."""
    if not cfg.solve.estimate_3d:
        return None
    if phasemap.ndim == 3:
        notes.append("estimate_3d: the input is a volume, solved in 3D as it is (effective)")
        return None
    if not cfg.phases or not cfg.solve.properties:
        notes.append("estimate_3d: no materials or no properties asked for; not built")
        return None
    from ..model3d.reconstruct import estimate_3d

    try:
        est = estimate_3d(phasemap, cfg.solve.properties, voxels=cfg.solve.voxels,
                          realizations=cfg.solve.realizations, tol=cfg.solve.tolerance,
                          method=cfg.solve.method,
                          effective_2d=effective.block if effective else None, progress=say)
    except InputError as exc:
        warnings.append(f"3D estimate not built: {exc}")
        return None
    warnings.extend(f"3D estimate: {w}" for w in est.warnings)
    return est.to_dict()


def _effective(phasemap: PhaseMap, cfg: Config, say: Progress, warnings: list, notes: list):
    """The solvers' block, or None (with a note) when the materials do not allow it."""
    from ..properties.effective import solve_effective

    props = cfg.solve.properties
    if not props:
        return None
    if not cfg.phases:
        notes.append("no materials assigned to the phases: effective properties not computed "
                     "(give [[phase]] entries or --assign)")
        return None
    eff = solve_effective(phasemap, props, method=cfg.solve.method, tol=cfg.solve.tolerance,
                          plane=cfg.solve.plane, maps=cfg.solve.fields, progress=say)
    warnings.extend(eff.warnings)
    return eff


def _shock(block: dict | None, cfg: Config, notes: list) -> dict | None:
    """Hasselman's thermal-shock indices from the computed effective properties."""
    from ..properties.shock import thermal_shock_indices

    svc = cfg.service
    if svc.strength_MPa is None:
        return None
    el = (block or {}).get("elasticity")
    ex = (block or {}).get("expansion")
    if not el or not ex:
        notes.append("[service] strength given, but thermal-shock indices need the computed "
                     "elasticity and expansion: add both to [solve] properties")
        return None
    k = ((block.get("conductivity") or {}).get("mean_W_mK"))
    ind = thermal_shock_indices(el["youngs_modulus_GPa"], el["poisson_ratio"], ex["mean_per_K"],
                                k, svc.strength_MPa, svc.fracture_energy_J_m2)
    return {**ind.to_dict(), "model": block["model"]}


ISOTROPIC_LOOKING = 0.05


def bounds_warnings(block: dict, bounds: dict, tol: float = 0.01) -> list[str]:
    """Warnings for computed values of an isotropic-looking structure outside the bounds.

    A value outside the Hashin–Shtrikman bounds by more than *tol* (relative) means the
    structure is not isotropic, the image is too small, or the phase map is wrong.
    """
    from ..properties.schemes import place

    out = []
    checks = [("conductivity", "conductivity_W_mK", "mean_W_mK", "conductivity"),
              ("elasticity", "bulk_modulus_GPa", "bulk_modulus_GPa", "bulk modulus"),
              ("elasticity", "shear_modulus_GPa", "shear_modulus_GPa", "shear modulus")]
    for prop, bkey, vkey, label in checks:
        res = block.get(prop)
        if not res or (res.get("anisotropy") or 0) > ISOTROPIC_LOOKING:
            continue
        src = res.get("scheme_comparable", res)
        value, b = src.get(vkey), bounds.get(bkey) or {}
        if value is None or b.get("lower") is None or b.get("upper") is None:
            continue
        warning = place(value, b["lower"], b["upper"], tol).warning(label)
        if warning:
            out.append(warning)
    return out


def _fractions(phasemap: PhaseMap, cfg: Config) -> tuple[PhaseFraction, ...]:
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
            label=p.label, name=p.name, material=p.material.to_dict(), fraction=est.mean,
            fraction_ci95=(max(0.0, est.mean - est.ci95), min(1.0, est.mean + est.ci95)),
            relative_accuracy_pct=est.to_dict()["relative_accuracy_pct"], fields=est.n_fields,
            inside_particles=inside.get(p.label) if hosts else None))
    return tuple(out)


def _schemes(phasemap: PhaseMap, fractions, measured, notes: list) -> dict:
    """Bounds and mean-field estimates for the measured fractions.

    ``schemes``/``bounds`` match the model the solvers use (2D: circular cylinders in the
    transverse plane, the prismatic structure of a solved section; 3D: spheres); for a 2D
    section ``schemes_3d``/``bounds_3d`` add the spherical-particle composite. A particle
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
    for pp in measured:
        d = pp.to_dict()
        ratio = d.get("inner_outer_ratio_mean")
        if (d.get("hollow_fraction") or 0) >= 0.5 and ratio:
            core = _enclosed_by(phasemap, pp.label)
            if core is not None:
                name, f_core = core
                frac[pp.name] += f_core
                frac[name] = max(0.0, frac[name] - f_core)
                core_share[pp.name] = f_core / frac[pp.name]
                notes.append(f"schemes: {pp.name} treated as hollow particles; the {name} "
                             f"inside them is their core, {core_share[pp.name]:.3g} of the "
                             f"envelope (measured; particles' mean inner/outer diameter "
                             f"{ratio:.3g})")
    phases = [(n, mats[n], f) for n, f in frac.items() if f > 0]
    out = {}
    dims = (2, 3) if phasemap.ndim == 2 else (3,)
    for dim in dims:
        hollow = {n: share ** (1.0 / dim) for n, share in core_share.items()}
        res = evaluate(phases, dim=dim, hollow=hollow).to_dict()
        suffix = "_3d" if (dim == 3 and phasemap.ndim == 2) else ""
        out["schemes" + suffix] = res["schemes"]
        out["bounds" + suffix] = res["bounds"]
        notes.extend(f"schemes ({dim}D): {n}" for n in res["notes"])
    return out


def _enclosed_by(phasemap: PhaseMap, host: int):
    """(name, fraction) of the phase enclosed most inside particles of *host*, or None."""
    best = None
    for e in enclosed_fractions(phasemap.labels, [host]):
        if e.phase != host and e.fraction.mean > 0 and (best is None
                                                         or e.fraction.mean > best[1]):
            best = (phasemap.phase(e.phase).name, e.fraction.mean)
    return best


def _volume_particles(phasemap: PhaseMap, cfg: Config, say: Progress) -> tuple:
    """True 3D particle statistics of every particle phase of a volume."""
    from ..measure.particles3d import volume_particles

    out = []
    for p in particle_phases(phasemap):
        say(f"measuring particles of {p.name} in 3D")
        pc = cfg.phase(p.label)
        out.append(volume_particles(phasemap, p.label,
                                    split_touching=bool(pc and pc.split_touching)))
    return tuple(out)


def _particles(phasemap: PhaseMap, cfg: Config, say: Progress):
    """Particle statistics of every particle phase, and S2 of every phase."""
    from ..measure.stereology import two_point_correlation

    measured = []
    for p in particle_phases(phasemap):
        say(f"measuring particles of {p.name}")
        pc = cfg.phase(p.label)
        measured.append(phase_particles(phasemap, p.label,
                                        split_touching=bool(pc and pc.split_touching)))
    say("two-point correlation")
    r_max = max(4, min(phasemap.shape) // 4)
    correlations = {p.name: two_point_correlation(phasemap.labels == p.label, r_max=r_max,
                                                  voxel_size_um=phasemap.voxel_size_um)
                    for p in phasemap.phases}
    return tuple(measured), correlations


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
        return data, (), ["labels used as given"]
    if kind == "palette":
        res = segment.segment_palette(data, {p.label: p.color for p in cfg.phases},
                                      tolerance=cfg.segment.color_tolerance)
        return res.labels, (), list(res.notes)
    grey = to_grayscale(data) if micro.is_rgb else data
    seg = cfg.segment
    classes = seg.classes
    notes = []
    if seg.method == "multi-otsu" and classes is None:
        if cfg.phases:
            classes = len(cfg.phases)
            notes.append(f"classes = {classes}, one per [[phase]]")
        else:
            classes = segment.suggest_classes(grey)
            notes.append(f"classes = {classes} suggested from the histogram; set [segment] "
                         "classes or --classes to choose")
    res = segment.segment_grayscale(grey, method=seg.method, classes=classes,
                                    thresholds=seg.thresholds, denoise=seg.denoise,
                                    denoise_px=seg.denoise_px, min_feature_px=seg.min_feature_px)
    return res.labels, tuple(res.thresholds), notes + list(res.notes)


def _phase_table(labels: np.ndarray, cfg: Config) -> tuple[Phase, ...]:
    present = np.unique(labels).tolist()
    if cfg.phases:
        known = {p.label for p in cfg.phases}
        missing = [v for v in present if v not in known]
        if missing:
            raise InputError(f"the phase map holds labels {missing} that no [[phase]] entry "
                             f"describes (configured labels: {sorted(known)}); add a "
                             "[[phase]] for each, or change [segment] classes")
        return tuple(Phase(p.label, p.name, p.material, p.particles) for p in cfg.phases)
    return tuple(Phase(v, f"phase-{v}", Material(name=f"phase-{v}", source="no material given"))
                 for v in present)


@dataclass(frozen=True)
class Outputs:
    """Paths of the files `write_outputs` wrote."""

    json: str
    csv: str
    report: str
    phasemap: str
    overlay: str
    particles_csv: str | None = None


def write_outputs(analysis: Analysis, out_dir: str | os.PathLike, *, stem: str | None = None,
                  config: Config | None = None) -> Outputs:
    """Write the JSON, the headline CSV, the label TIFF, the overlay PNG and the HTML report.

    Every file is written atomically: an interrupted run leaves no half-written output.
    """
    from ..present import report
    from ..core.atomic import atomic_write
    from .results import write_csv, write_json

    out_dir = os.fspath(out_dir)
    os.makedirs(out_dir, exist_ok=True)
    res = analysis.result
    stem = stem or _stem(res.source.path)
    base = os.path.join(out_dir, stem)
    given = {p.label: p.color for p in config.phases} if config else {}
    colors = report.phase_colors(analysis.phasemap.phases, given)
    paths = Outputs(json=base + ".json", csv=base + ".csv", report=base + "_report.html",
                    phasemap=base + "_phases.tif", overlay=base + "_overlay.png",
                    particles_csv=base + "_particles.csv" if analysis.particle_rows else None)
    analysis.phasemap.save(paths.phasemap)
    atomic_write(paths.overlay, lambda tmp: _save_overlay(tmp, analysis, colors))
    if paths.particles_csv:
        write_csv(analysis.particle_rows, paths.particles_csv)
    write_csv([res.headline()], paths.csv)
    report.write_report(analysis, paths.report, colors)
    write_json(res, paths.json)
    return paths


def _stem(path: str | None) -> str:
    if not path:
        return "section"
    return os.path.splitext(os.path.basename(path))[0]


def _save_overlay(tmp: str, analysis: Analysis, colors: dict[int, str]) -> None:
    import imageio.v3 as iio
    from matplotlib.colors import to_rgb

    pm = analysis.phasemap
    labels = pm.labels if pm.ndim == 2 else pm.labels[pm.shape[0] // 2]
    rgb = np.zeros(labels.shape + (3,), dtype=np.float32)
    for label, color in colors.items():
        rgb[labels == label] = to_rgb(color)
    img = analysis.image
    if img is not None and img.ndim == 2 and img.shape == labels.shape:
        g = (img - img.min()) / max(float(np.ptp(img)), 1e-12)
        rgb = 0.45 * g[..., None] + 0.55 * rgb
    iio.imwrite(tmp, (np.clip(rgb, 0, 1) * 255).astype(np.uint8), extension=".png")
