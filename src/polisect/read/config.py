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
import math
import difflib
import os
import re
from dataclasses import dataclass, field

from ..core.choices import (DENOISERS, IMAGE_KINDS, MEASURED_PROPERTIES, PLANES,
                            SEGMENT_CORRECTIONS, SEGMENT_METHODS, SOLVE_METHODS,
                            SEGMENTATION_TERMS, SOLVE_PROPERTIES, WINDOW_EDGES)
from ..core.errors import InputError
from ..core.materials import PROPERTIES, UNITS, Material, get_material, load_library_file

try:  # Python >= 3.11
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib


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
    porosity: float = 0.0
    pore_shape: str = "spherical"
    pore_aspect_ratio: float | None = None
    fit: str | None = None


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
    temperatures_C: tuple[float, ...] | None = None
    verify: bool = False


@dataclass(frozen=True)
class MaterialsConfig:
    """``[materials]``: a lab's own grades in the library's format, merged over the built-in
    library (a path relative to the configuration file)."""

    file: str | None = None


@dataclass(frozen=True)
class UncertaintyConfig:
    """``[uncertainty]``: the error budget beside every headline number."""

    budget: bool = True
    discretization: bool = True
    material: bool = True
    segmentation: str = "conductivity"


@dataclass(frozen=True)
class WindowsConfig:
    """``[windows]``: the window-size study (is the image big enough?)."""

    study: bool = False
    edges: str = "periodic"
    target_error: float = 0.05


@dataclass(frozen=True)
class MeasuredValue:
    """One ``[[measured]]`` entry: a value the lab measured on the same material."""

    property: str
    value: float
    uncertainty: float | None = None
    temperature_C: float = 20.0
    method: str = ""


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
    windows: WindowsConfig = field(default_factory=WindowsConfig)
    materials: MaterialsConfig = field(default_factory=MaterialsConfig)
    uncertainty: UncertaintyConfig = field(default_factory=UncertaintyConfig)
    measured: tuple[MeasuredValue, ...] = ()
    source: str = "defaults"
    raw: str = ""

    def phase(self, label: int) -> PhaseConfig | None:
        for p in self.phases:
            if p.label == label:
                return p
        return None

_SECTIONS = {"image": ImageConfig, "segment": SegmentConfig, "solve": SolveConfig,
             "service": ServiceConfig, "windows": WindowsConfig, "materials": MaterialsConfig,
             "uncertainty": UncertaintyConfig}
_PHASE_KEYS = {"label", "name", "material", "color", "particles", "split_touching",
               "source", "porosity", "pore_shape", "pore_aspect_ratio"} | set(PROPERTIES)
PORE_SHAPES = ("spherical", "oblate")


def load_config(path: str | os.PathLike) -> Config:
    """Read a TOML run configuration.

    Raises
    ------
    InputError
        When the file is missing, is not valid TOML, or holds an unknown key or a bad value.
    """
    path = os.fspath(path)
    data, text = _read_toml(path, "config file", "check the path given to --config")
    try:
        return config_from_dict(data, source=path, raw=text)
    except InputError as exc:
        raise InputError(f"{path}: {exc}") from None


MEASURED_FILE = "measured.toml"
"""The batch-wide table of measured values: a file of this name in an image folder holds
``[[measured]]`` tables (the configuration's format) for the images of that folder and its
subfolders (the nearest file up to the batch folder wins); `read_measured_file`."""


def read_measured_file(path: str | os.PathLike) -> tuple[MeasuredValue, ...]:
    """The ``[[measured]]`` tables of a batch's `MEASURED_FILE`, each checked as in a run
    configuration.

    Raises
    ------
    InputError
        Naming the file (and the entry) when it is not UTF-8 TOML, holds anything but
        ``[[measured]]`` tables, or an entry is malformed.
    """
    path = os.fspath(path)
    data, _ = _read_toml(path, "measured-values file", "")
    unknown = set(data) - {"measured"}
    if unknown:
        raise InputError(f"{path}: only [[measured]] tables belong in a measured-values file; "
                         f"found {', '.join(sorted(unknown))}")
    try:
        return measured_values(data.get("measured", []))
    except InputError as exc:
        raise InputError(f"{path}: {exc}") from None


def _read_toml(path: str, what: str, hint: str) -> tuple[dict, str]:
    """The parsed TOML file at *path* and its text; `InputError` naming the file."""
    try:
        with open(path, "rb") as f:
            text = f.read().decode("utf-8")
    except FileNotFoundError:
        raise InputError(f"{path}: {what} not found" + (f"; {hint}" if hint else "")) from None
    except UnicodeDecodeError:
        raise InputError(f"{path}: {what} is not UTF-8 text") from None
    try:
        return tomllib.loads(text), text
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: not valid TOML ({exc}); fix the syntax at that line") from None


def config_from_dict(data: dict, *, source: str = "dict", raw: str = "") -> Config:
    """Build and check a `Config` from parsed TOML (or an equivalent dict)."""
    unknown = set(data) - set(_SECTIONS) - {"phase", "measured"}
    for key in unknown:
        _unknown(key, list(_SECTIONS) + ["phase", "measured"], "top level")
    sections = {name: _section(cls, data.get(name, {}), name) for name, cls in _SECTIONS.items()}
    entries = data.get("phase", [])
    if not isinstance(entries, list):
        raise InputError("phases are given as [[phase]] tables (double brackets), one per phase")
    library = _library(sections["materials"], source)
    phases = tuple(_phase(entry, i, library) for i, entry in enumerate(entries))
    labels = [p.label for p in phases]
    if len(set(labels)) != len(labels):
        raise InputError(f"two [[phase]] entries share a label ({labels}); give each its own")
    cfg = Config(phases=phases, measured=measured_values(data.get("measured", [])),
                 source=source, raw=raw, **sections)
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
    for key in ("thresholds", "properties", "temperatures_C"):
        if key in kwargs and kwargs[key] is not None:
            if not isinstance(kwargs[key], list):
                raise InputError(f"[{name}] {key} must be a list, e.g. {key} = [...]")
            kwargs[key] = tuple(kwargs[key])
    return cls(**kwargs)


def measured_values(entries) -> tuple[MeasuredValue, ...]:
    """The ``[[measured]]`` tables, each checked (property known, value and uncertainty
    finite numbers in the property's unit)."""
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise InputError("measured values are given as [[measured]] tables (double brackets), "
                         "one per measurement")
    out = []
    keys = [f.name for f in dataclasses.fields(MeasuredValue)]
    for i, entry in enumerate(entries):
        where = f"[[measured]] number {i + 1}"
        for key in entry:
            if key not in keys:
                _unknown(key, keys, where)
        prop = entry.get("property")
        if prop not in MEASURED_PROPERTIES:
            raise InputError(f"{where}: property = {prop!r}; choose one of "
                             f"{', '.join(MEASURED_PROPERTIES)}")
        unit = MEASURED_PROPERTIES[prop]
        for key in ("value", "uncertainty", "temperature_C"):
            v = entry.get(key)
            if v is None and key != "value":
                continue
            if not isinstance(v, (int, float)) or isinstance(v, bool) or not math.isfinite(v):
                raise InputError(f"{where}: {key} = {v!r} must be a finite number"
                                 + (f" in {unit}" if key != "temperature_C" else " in °C"))
        if entry.get("uncertainty") is not None and entry["uncertainty"] < 0:
            raise InputError(f"{where}: uncertainty must be zero or positive (a standard "
                             f"uncertainty in {unit})")
        if prop in ("expansion", "mean_expansion") and abs(entry["value"]) > 1e-3:
            raise InputError(f"{where}: expansion {entry['value']:g} 1/K is implausibly large; "
                             "give it in 1/K (e.g. 7.5e-6), not in 10⁻⁶/K")
        t = entry.get("temperature_C", 20.0)
        if t < -273.15:
            raise InputError(f"{where}: temperature_C = {t} is below absolute zero")
        out.append(MeasuredValue(prop, float(entry["value"]),
                                 None if entry.get("uncertainty") is None
                                 else float(entry["uncertainty"]), float(t),
                                 str(entry.get("method", ""))))
    return tuple(out)


def _library(materials: MaterialsConfig, source: str):
    """The built-in library with the lab's file merged over it, or None (built-in only)."""
    if materials.file is None:
        return None
    if not isinstance(materials.file, str) or not materials.file.strip():
        raise InputError("[materials] file must be the path of a library file in quotes")
    path = materials.file
    if not os.path.isabs(path) and os.path.isfile(source):
        path = os.path.join(os.path.dirname(os.path.abspath(source)), path)
    return load_library_file(path)


def _phase(entry, index, library=None):
    if not isinstance(entry, dict):
        raise InputError(f"[[phase]] number {index + 1} is not a table")
    for key in entry:
        if key not in _PHASE_KEYS:
            _unknown(key, sorted(_PHASE_KEYS), f"[[phase]] number {index + 1}")
    label = entry.get("label")
    if isinstance(label, bool) or not isinstance(label, int) or not 0 <= label <= 65535:
        raise InputError(f"[[phase]] number {index + 1} needs label = <integer 0 to 65535>, the "
                         "class number (0 = darkest) or the value in the label image")
    for key, kind in (("name", str), ("material", str), ("source", str),
                      ("particles", bool), ("split_touching", bool)):
        if key in entry and not isinstance(entry[key], kind):
            raise InputError(f"[[phase]] label {label}: {key} = {entry[key]!r} must be "
                             + ("text in quotes" if kind is str else "true or false"))
    if len(entry.get("name", "")) > 80:
        raise InputError(f"[[phase]] label {label}: name is longer than 80 characters; shorten it")
    fits = [k for k in PROPERTIES if entry.get(k) == "fit"]
    if len(fits) > 1:
        raise InputError(f"[[phase]] label {label}: only one property can be \"fit\" (one "
                         f"measured value fits one unknown); got {', '.join(fits)}")
    overrides = {k: entry[k] for k in PROPERTIES if k in entry and entry[k] != "fit"}
    for key, value in overrides.items():
        if not isinstance(value, (int, float)) or isinstance(value, bool) \
                or not abs(value) <= _PROPERTY_LIMITS[key]:
            raise InputError(f"[[phase]] label {label}: {key} = {value!r} must be a finite "
                             f"number of size at most {_PROPERTY_LIMITS[key]:g} "
                             f"{UNITS[key]}")
    name = entry.get("name")
    if "material" in entry:
        base = get_material(str(entry["material"]), library)
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
    porosity = entry.get("porosity", 0.0)
    if isinstance(porosity, bool) or not isinstance(porosity, (int, float)) \
            or not 0.0 <= porosity <= 0.9:
        raise InputError(f"[[phase]] {name}: porosity = {porosity!r} must be a pore volume "
                         "fraction from 0 to 0.9 inside the phase (e.g. 0.25)")
    shape = entry.get("pore_shape", "spherical")
    _choice(shape, PORE_SHAPES, f"[[phase]] {name}: pore_shape")
    aspect = entry.get("pore_aspect_ratio")
    if aspect is not None and not (isinstance(aspect, (int, float))
                                   and not isinstance(aspect, bool) and 0.0 < aspect < 1.0):
        raise InputError(f"[[phase]] {name}: pore_aspect_ratio = {aspect!r} must be a number "
                         "between 0 and 1 (the short over the long axis of the pores)")
    if shape == "oblate" and aspect is None:
        raise InputError(f"[[phase]] {name}: pore_shape = \"oblate\" needs pore_aspect_ratio, "
                         "the short over the long axis of the pores, between 0 and 1 (e.g. 0.1)")
    return PhaseConfig(label=entry["label"], name=str(name), material=material, color=color,
                       particles=entry.get("particles"),
                       split_touching=bool(entry.get("split_touching", False)),
                       porosity=float(porosity), pore_shape=shape,
                       pore_aspect_ratio=None if aspect is None else float(aspect),
                       fit=fits[0] if fits else None)


# (section, key): ("num" | "int", lowest, highest, what the number is) or ("bool",); the
# ranges are wide enough for any real section and narrow enough that no step runs out of memory.
_VALUES = {
    ("image", "pixel_size_um"): ("num", 1e-6, 1e5, "micrometres per pixel"),
    ("image", "slice_spacing_um"): ("num", 1e-6, 1e5, "micrometres between slices"),
    ("image", "volume"): ("bool",),
    ("segment", "classes"): ("int", 2, 8, "phases told apart by grey level"),
    ("segment", "denoise_px"): ("num", 1, 25, "pixels of smoothing radius"),
    ("segment", "min_feature_px"): ("int", 0, 10 ** 8, "pixels of the smallest feature kept"),
    ("segment", "color_tolerance"): ("num", 0, 442, "RGB distance"),
    ("segment", "fields"): ("int", 4, 4096, "fields of the point-count confidence"),
    ("solve", "tolerance"): ("num", 1e-12, 0.1, "relative solver tolerance"),
    ("solve", "estimate_3d"): ("bool",),
    ("solve", "fields"): ("bool",),
    ("solve", "voxels"): ("int", 16, 1024, "voxels per edge of the 3D estimate's cubes"),
    ("solve", "realizations"): ("int", 1, 100, "3D reconstructions"),
    ("service", "strength_MPa"): ("num", 1e-3, 1e5, "MPa of fracture strength"),
    ("service", "fracture_energy_J_m2"): ("num", 1e-3, 1e6, "J/m² of fracture energy"),
    ("windows", "study"): ("bool",),
    ("uncertainty", "budget"): ("bool",),
    ("uncertainty", "discretization"): ("bool",),
    ("uncertainty", "material"): ("bool",),
    ("windows", "target_error"): ("num", 1e-4, 0.99, "relative error at 95 %, e.g. 0.02"),
}
# keys that also take "auto" (chosen from the image by polisect.segment)
_AUTO_KEYS = {"denoise_px", "min_feature_px"}
# highest sane magnitude of a [[phase]] property override (diamond: ~2000 W/(m·K), ~1100 GPa)
_PROPERTY_LIMITS = {"conductivity": 1e5, "youngs_modulus": 1e4, "poisson_ratio": 1.0,
                    "expansion": 1e-2}


def _value(value, rule, what, default):
    """Refuse *value* unless it has the type and range *rule* gives."""
    if rule[0] == "bool":
        if not isinstance(value, bool):
            raise InputError(f"{what} = {value!r}: give true or false (without quotes)")
        return
    kind, low, high, unit = rule
    whole = isinstance(value, int) and not isinstance(value, bool)
    ok = whole if kind == "int" else (whole or isinstance(value, float))
    if not ok or not (low <= value <= high):
        number = "a whole number" if kind == "int" else "a number"
        usual = "" if default is None else f"; default {default}"
        raise InputError(f"{what} = {value!r}: give {number} from {low:g} to {high:g} "
                         f"({unit}{usual})")


def validate(cfg: Config) -> None:
    """Check every key of *cfg* for type, range, finiteness and sane size, raising one
    `InputError` per problem that names the key and what to give (the run calls it before
    any work)."""
    _check(cfg)


def check_grey_range(cfg: Config, low: float, high: float) -> list[str]:
    """Check ``[segment] thresholds`` against the image's grey range [*low*, *high*].

    Raises `InputError` when no threshold falls inside the range (every pixel would land
    in one class); returns a warning per threshold outside it (a class with no pixels).
    """
    t = cfg.segment.thresholds
    if cfg.segment.method != "thresholds" or not t:
        return []
    outside = [x for x in t if not low < x <= high]
    if len(outside) == len(t):
        raise InputError(f"[segment] thresholds = {list(t)} all lie outside the image's grey "
                         f"range {low:g} to {high:g}, so every pixel would be one phase; give "
                         "thresholds inside that range")
    return [f"[segment] threshold {x:g} lies outside the image's grey range {low:g} to "
            f"{high:g}; the class beyond it receives no pixels" for x in outside]


def _check(cfg: Config) -> None:
    im, seg, sol = cfg.image, cfg.segment, cfg.solve
    for (section, key), rule in _VALUES.items():
        value = getattr(getattr(cfg, section), key)
        if value is not None and not (value == "auto" and key in _AUTO_KEYS):
            default = dataclasses.fields(type(getattr(cfg, section)))
            _value(value, rule, f"[{section}] {key}",
                   next(f.default for f in default if f.name == key))
    if seg.thresholds is not None:
        if not 1 <= len(seg.thresholds) <= 7 or not all(
                isinstance(t, (int, float)) and not isinstance(t, bool) and math.isfinite(t)
                for t in seg.thresholds) or any(b <= a for a, b in zip(seg.thresholds,
                                                                       seg.thresholds[1:])):
            raise InputError(f"[segment] thresholds = {list(seg.thresholds)!r}: give 1 to 7 "
                             "finite grey levels in increasing order, e.g. [60, 150]")
    names = [p.name for p in cfg.phases]
    if len(set(names)) != len(names):
        twice = sorted({n for n in names if names.count(n) > 1})
        raise InputError(f"two [[phase]] entries share the name {', '.join(twice)}; give each "
                         "phase its own name (e.g. name = \"alumina-fine\")")
    _choice(im.kind, IMAGE_KINDS, "[image] kind")
    if not (im.crop_bottom_px == "auto" or (isinstance(im.crop_bottom_px, int) and not
                                            isinstance(im.crop_bottom_px, bool)
                                            and 0 <= im.crop_bottom_px <= 10 ** 6)):
        raise InputError(f"[image] crop_bottom_px = {im.crop_bottom_px!r}: give a number of "
                         "rows from 0 to 1000000 or \"auto\"")
    _choice(seg.method, SEGMENT_METHODS, "[segment] method")
    _choice(seg.denoise, DENOISERS, "[segment] denoise")
    if seg.method == "thresholds" and not seg.thresholds:
        raise InputError("[segment] method = \"thresholds\" needs thresholds = [t1, t2, ...]")
    _check_segment_route(seg)
    for prop in sol.properties:
        _choice(prop, SOLVE_PROPERTIES, "[solve] properties entry")
    _choice(sol.method, SOLVE_METHODS, "[solve] method")
    if not isinstance(sol.verify, bool):
        raise InputError(f"[solve] verify = {sol.verify!r}: give true or false")
    _choice(sol.plane, PLANES, "[solve] plane")
    _choice(cfg.windows.edges, WINDOW_EDGES, "[windows] edges")
    _choice(cfg.uncertainty.segmentation, SEGMENTATION_TERMS, "[uncertainty] segmentation")
    temps = sol.temperatures_C
    if temps is not None:
        if not 1 <= len(temps) <= 32 or not all(
                isinstance(t, (int, float)) and not isinstance(t, bool) and math.isfinite(t)
                and -273.15 < t <= 3000.0 for t in temps) \
                or any(b <= a for a, b in zip(temps, temps[1:])):
            raise InputError(f"[solve] temperatures_C = {list(temps)!r}: give 1 to 32 "
                             "temperatures in °C in increasing order, e.g. [20, 400, 800, 1200]")
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
            p.material.require(*(n for n in needs[prop] if n != p.fit))


def _check_segment_route(seg: SegmentConfig) -> None:
    """The [segment] keys of the corrections, the defaults and the trained route."""
    for key, options in SEGMENT_CORRECTIONS.items():
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
