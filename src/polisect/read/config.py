"""Run configuration: TOML sections ``[image]``, ``[segment]``, ``[[phase]]``, ``[solve]``,
``[service]``, read into frozen dataclasses with every key checked.

Every key, its unit and its default are listed in ``docs/configuration.md``.

Examples
--------
>>> cfg = config_from_dict({"segment": {"classes": 2},
...                         "phase": [{"label": 0, "material": "air", "name": "pore"},
...                                   {"label": 1, "material": "alumina"}]})
>>> [p.name for p in cfg.phases]
['pore', 'alumina']
>>> cfg.solve.properties
('conductivity', 'elasticity', 'expansion')
"""

from __future__ import annotations

import dataclasses
import difflib
import os
import re
from dataclasses import dataclass, field

from ..core.errors import InputError
from ..core.materials import PROPERTIES, Material, get_material

try:  # Python >= 3.11
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib

KINDS = ("grayscale", "labels", "palette")
SEGMENT_METHODS = ("multi-otsu", "thresholds", "trained")
DENOISERS = ("median", "nl-means", "none")
SOLVE_PROPERTIES = ("conductivity", "elasticity", "expansion")
SOLVE_METHODS = ("auto", "fft", "fe", "ms")
PLANES = ("generalized-plane-strain", "plane-strain", "plane-stress")


@dataclass(frozen=True)
class ImageConfig:
    """``[image]``: how to read the file."""

    kind: str = "grayscale"
    pixel_size_um: float | None = None
    crop_bottom_px: int | str = "auto"
    volume: bool = False
    slice_spacing_um: float | None = None


@dataclass(frozen=True)
class SegmentConfig:
    """``[segment]``: grey levels to phases."""

    method: str = "multi-otsu"
    classes: int | None = None
    thresholds: tuple[float, ...] | None = None
    denoise: str = "median"
    denoise_px: float | str = "auto"
    min_feature_px: int | str = "auto"
    color_tolerance: float = 12.0
    fields: int = 16
    # corrections before classification, and the trained route (polisect.segment)
    shading: str = "auto"
    stripes: str = "auto"
    speckle: str = "auto"
    scratches: str = "auto"
    annotations: str | None = None
    model: str | None = None


@dataclass(frozen=True)
class PhaseConfig:
    """One ``[[phase]]`` entry: a label, its name, its material and what to measure."""

    label: int
    name: str
    material: Material
    color: str | None = None
    particles: bool | None = None
    split_touching: bool = False


@dataclass(frozen=True)
class SolveConfig:
    """``[solve]``: which effective properties to compute and how."""

    properties: tuple[str, ...] = SOLVE_PROPERTIES
    method: str = "auto"
    tolerance: float = 1e-6
    plane: str = "generalized-plane-strain"
    estimate_3d: bool = False
    fields: bool = True
    voxels: int = 160
    realizations: int = 3


@dataclass(frozen=True)
class ServiceConfig:
    """``[service]``: optional service data for the thermal-shock indices."""

    strength_MPa: float | None = None
    fracture_energy_J_m2: float | None = None


@dataclass(frozen=True)
class Config:
    """A whole run configuration."""

    image: ImageConfig = field(default_factory=ImageConfig)
    segment: SegmentConfig = field(default_factory=SegmentConfig)
    phases: tuple[PhaseConfig, ...] = ()
    solve: SolveConfig = field(default_factory=SolveConfig)
    service: ServiceConfig = field(default_factory=ServiceConfig)
    source: str = "defaults"
    raw: str = ""

    def phase(self, label: int) -> PhaseConfig | None:
        for p in self.phases:
            if p.label == label:
                return p
        return None


_SECTIONS = {"image": ImageConfig, "segment": SegmentConfig, "solve": SolveConfig,
             "service": ServiceConfig}
_PHASE_KEYS = {"label", "name", "material", "color", "particles", "split_touching",
               "source"} | set(PROPERTIES)


def load_config(path: str | os.PathLike) -> Config:
    """Read a TOML run configuration.

    Raises
    ------
    InputError
        When the file is missing, is not valid TOML, or holds an unknown key or a bad value.
    """
    path = os.fspath(path)
    try:
        with open(path, "rb") as f:
            text = f.read().decode("utf-8")
    except FileNotFoundError:
        raise InputError(f"{path}: config file not found; check the path given to --config")
    except UnicodeDecodeError:
        raise InputError(f"{path}: config file is not UTF-8 text")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: not valid TOML ({exc}); fix the syntax at that line")
    try:
        return config_from_dict(data, source=path, raw=text)
    except InputError as exc:
        raise InputError(f"{path}: {exc}") from None


def config_from_dict(data: dict, *, source: str = "dict", raw: str = "") -> Config:
    """Build and check a `Config` from parsed TOML (or an equivalent dict)."""
    unknown = set(data) - set(_SECTIONS) - {"phase"}
    for key in unknown:
        _unknown(key, list(_SECTIONS) + ["phase"], "top level")
    sections = {name: _section(cls, data.get(name, {}), name) for name, cls in _SECTIONS.items()}
    entries = data.get("phase", [])
    if not isinstance(entries, list):
        raise InputError("phases are given as [[phase]] tables (double brackets), one per phase")
    phases = tuple(_phase(entry, i) for i, entry in enumerate(entries))
    labels = [p.label for p in phases]
    if len(set(labels)) != len(labels):
        raise InputError(f"two [[phase]] entries share a label ({labels}); give each its own")
    cfg = Config(phases=phases, source=source, raw=raw, **sections)
    _check(cfg)
    return cfg


def quick_config(*, classes: int | None = None, assign: str | None = None,
                 pixel_size_um: float | None = None, kind: str | None = None,
                 base: Config | None = None) -> Config:
    """A config from the command-line shortcuts ``--classes``, ``--assign``, ``--pixel-size``.

    ``assign`` reads ``"0=air,1=alumina,2=zirconia"``: label = library material name.
    """
    cfg = base or Config()
    if assign:
        phases = []
        for item in assign.split(","):
            m = re.fullmatch(r"\s*(\d+)\s*=\s*([\w\- ]+?)\s*", item)
            if not m:
                raise InputError(f"--assign item {item!r} is not LABEL=MATERIAL "
                                 "(e.g. --assign 0=air,1=alumina)")
            phases.append(_phase({"label": int(m.group(1)), "material": m.group(2)}, len(phases)))
        cfg = dataclasses.replace(cfg, phases=tuple(phases))
    if classes is not None:
        cfg = dataclasses.replace(cfg, segment=dataclasses.replace(cfg.segment, classes=classes,
                                                                   method="multi-otsu"))
    if pixel_size_um is not None:
        cfg = dataclasses.replace(cfg, image=dataclasses.replace(cfg.image,
                                                                 pixel_size_um=pixel_size_um))
    if kind is not None:
        cfg = dataclasses.replace(cfg, image=dataclasses.replace(cfg.image, kind=kind))
    _check(cfg)
    return cfg


def _section(cls, values, name):
    if not isinstance(values, dict):
        raise InputError(f"[{name}] must be a table of keys")
    names = [f.name for f in dataclasses.fields(cls)]
    for key in values:
        if key not in names:
            _unknown(key, names, f"[{name}]")
    kwargs = dict(values)
    for key in ("thresholds", "properties"):
        if key in kwargs and kwargs[key] is not None:
            if not isinstance(kwargs[key], list):
                raise InputError(f"[{name}] {key} must be a list, e.g. {key} = [...]")
            kwargs[key] = tuple(kwargs[key])
    return cls(**kwargs)


def _phase(entry, index):
    if not isinstance(entry, dict):
        raise InputError(f"[[phase]] number {index + 1} is not a table")
    for key in entry:
        if key not in _PHASE_KEYS:
            _unknown(key, sorted(_PHASE_KEYS), f"[[phase]] number {index + 1}")
    if "label" not in entry or not isinstance(entry["label"], int) or entry["label"] < 0:
        raise InputError(f"[[phase]] number {index + 1} needs label = <integer ≥ 0>, the class "
                         "number (0 = darkest) or the value in the label image")
    overrides = {k: entry[k] for k in PROPERTIES if k in entry}
    for key, value in overrides.items():
        if not isinstance(value, (int, float)) or isinstance(value, bool):
            raise InputError(f"[[phase]] label {entry['label']}: {key} must be a number")
    name = entry.get("name")
    if "material" in entry:
        base = get_material(str(entry["material"]))
        name = name or base.name
        material = base
        if overrides:
            material = base.replace(source=f"{base.source}; overridden: "
                                    + ", ".join(sorted(overrides)), **overrides)
    else:
        name = name or f"phase-{entry['label']}"
        material = Material(name=name, source=entry.get("source", "given in the config"),
                            **overrides)
    color = entry.get("color")
    if color is not None and not re.fullmatch(r"#[0-9a-fA-F]{6}", str(color)):
        raise InputError(f"[[phase]] {name}: color {color!r} is not '#rrggbb'")
    return PhaseConfig(label=entry["label"], name=str(name), material=material, color=color,
                       particles=entry.get("particles"),
                       split_touching=bool(entry.get("split_touching", False)))


def _check(cfg: Config) -> None:
    im, seg, sol = cfg.image, cfg.segment, cfg.solve
    names = [p.name for p in cfg.phases]
    if len(set(names)) != len(names):
        twice = sorted({n for n in names if names.count(n) > 1})
        raise InputError(f"two [[phase]] entries share the name {', '.join(twice)}; give each "
                         "phase its own name (e.g. name = \"alumina-fine\")")
    _choice(im.kind, KINDS, "[image] kind")
    if im.pixel_size_um is not None and not (im.pixel_size_um > 0):
        raise InputError(f"[image] pixel_size_um = {im.pixel_size_um} must be a positive number "
                         "of micrometres")
    if not (im.crop_bottom_px == "auto" or (isinstance(im.crop_bottom_px, int)
                                            and im.crop_bottom_px >= 0)):
        raise InputError("[image] crop_bottom_px must be a number of rows ≥ 0 or \"auto\"")
    _choice(seg.method, SEGMENT_METHODS, "[segment] method")
    _choice(seg.denoise, DENOISERS, "[segment] denoise")
    if seg.classes is not None and not (isinstance(seg.classes, int) and 2 <= seg.classes <= 8):
        raise InputError(f"[segment] classes = {seg.classes}: give an integer from 2 to 8")
    if seg.method == "thresholds" and not seg.thresholds:
        raise InputError("[segment] method = \"thresholds\" needs thresholds = [t1, t2, ...]")
    _check_segment_route(seg)
    if seg.fields < 4:
        raise InputError("[segment] fields must be at least 4 (16 or more recommended)")
    for prop in sol.properties:
        _choice(prop, SOLVE_PROPERTIES, "[solve] properties entry")
    _choice(sol.method, SOLVE_METHODS, "[solve] method")
    _choice(sol.plane, PLANES, "[solve] plane")
    if not (0 < sol.tolerance < 1e-1):
        raise InputError(f"[solve] tolerance = {sol.tolerance}: give a relative tolerance "
                         "between 0 and 0.1 (default 1e-6)")
    if isinstance(sol.voxels, bool) or not isinstance(sol.voxels, int) or sol.voxels < 16:
        raise InputError(f"[solve] voxels = {sol.voxels!r}: give the voxels per edge of the 3D "
                         "estimate's cubes, a whole number of at least 16 (default 160)")
    if isinstance(sol.realizations, bool) or not isinstance(sol.realizations, int) \
            or sol.realizations < 1:
        raise InputError(f"[solve] realizations = {sol.realizations!r}: give a whole number of "
                         "3D reconstructions of at least 1 (default 3)")
    if im.kind == "palette":
        missing = [p.name for p in cfg.phases if p.color is None]
        if missing:
            raise InputError(f"[image] kind = \"palette\" needs color = \"#rrggbb\" in every "
                             f"[[phase]]; missing for {', '.join(missing)}")
    needs = {"conductivity": ("conductivity",),
             "elasticity": ("youngs_modulus", "poisson_ratio"),
             "expansion": ("youngs_modulus", "poisson_ratio", "expansion")}
    for p in cfg.phases:
        for prop in sol.properties:
            p.material.require(*needs[prop])


CORRECTIONS = {"shading": ("auto", "none"), "stripes": ("auto", "columns", "rows", "none"),
               "speckle": ("auto", "none"), "scratches": ("auto", "none")}


def _check_segment_route(seg: SegmentConfig) -> None:
    """The [segment] keys of the corrections, the defaults and the trained route."""
    for key, options in CORRECTIONS.items():
        _choice(getattr(seg, key), options, f"[segment] {key}")
    if seg.denoise_px != "auto" and (isinstance(seg.denoise_px, bool) or not isinstance(
            seg.denoise_px, (int, float)) or seg.denoise_px < 1):
        raise InputError(f"[segment] denoise_px = {seg.denoise_px!r}: give a radius of at "
                         "least 1 pixel, or \"auto\" (chosen from the noise)")
    if seg.min_feature_px != "auto" and (isinstance(seg.min_feature_px, bool) or not isinstance(
            seg.min_feature_px, int) or seg.min_feature_px < 0):
        raise InputError(f"[segment] min_feature_px = {seg.min_feature_px!r}: give a whole "
                         "number of pixels ≥ 0, or \"auto\" (from the noise filter)")
    for key in ("annotations", "model"):
        if getattr(seg, key) is not None and not isinstance(getattr(seg, key), str):
            raise InputError(f"[segment] {key} must be a file name in quotes")
    if seg.method == "trained" and (seg.annotations is None) == (seg.model is None):
        raise InputError("[segment] method = \"trained\" needs either annotations = "
                         "\"strokes.png\" (0 = not annotated, v = phase label v − 1) or "
                         "model = \"segmenter.npz\", not both")
    if seg.method != "trained" and (seg.annotations or seg.model):
        raise InputError("[segment] annotations and model are used by method = "
                         "\"trained\" only; set it, or remove them")


def _choice(value, options, what):
    if value not in options:
        close = difflib.get_close_matches(str(value), options, n=1)
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        raise InputError(f"{what} = {value!r} is not one of {', '.join(options)}{hint}")


def _unknown(key, known, where):
    close = difflib.get_close_matches(key, known, n=1)
    hint = f"; did you mean {close[0]!r}?" if close else f"; known keys: {', '.join(known)}"
    raise InputError(f"unknown key {key!r} in {where}{hint}")
