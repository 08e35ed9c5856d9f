"""`Result`: everything one analysis found, and its JSON and CSV forms.

The JSON form is a contract (``schema = "polisect.result/1"``): keys are documented in
``docs/results.md``; keys may be added, never renamed. Stiffness is in Voigt order with
engineering shear strains, GPa; conductivity W/(m·K); expansion 1/K.
"""

from __future__ import annotations

import csv
import io
import json
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..core.atomic import atomic_write_text

SCHEMA = "polisect.result/1"


@dataclass(frozen=True)
class Source:
    """Where the section came from."""

    path: str | None
    sha256: str | None
    shape: tuple[int, ...]
    pixel_size_um: float | None
    pixel_size_from: str
    cropped_bottom_px: int = 0


@dataclass(frozen=True)
class PhaseFraction:
    """One phase of the section with its measured fraction and 95 % interval."""

    label: int
    name: str
    material: dict
    fraction: float
    fraction_ci95: tuple[float, float]
    relative_accuracy_pct: float | None = None
    fields: int = 0
    inside_particles: float | None = None


@dataclass(frozen=True)
class Result:
    """One analysed section (or volume).

    The blocks filled by the later stages (``effective``, ``effective_3d``, ``particles``,
    ``schemes``, ``bounds``, ``shock``, ``windows``) hold the plain JSON forms of the library's result objects.
    """

    source: Source
    phases: tuple[PhaseFraction, ...]
    version: str
    config_toml: str = ""
    effective: dict | None = None
    effective_3d: dict | None = None
    particles: dict | None = None
    schemes: dict | None = None
    bounds: dict | None = None
    schemes_3d: dict | None = None
    bounds_3d: dict | None = None
    shock: dict | None = None
    windows: dict | None = None
    correlation: dict | None = None
    warnings: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    timings_s: dict = field(default_factory=dict)
    created: str = ""

    def to_dict(self) -> dict:
        """The JSON form (schema ``polisect.result/1``)."""
        src = self.source
        out: dict[str, Any] = {
            "schema": SCHEMA,
            "polisect_version": self.version,
            "created": self.created,
            "source": {"path": src.path, "sha256": src.sha256, "shape": list(src.shape),
                       "pixel_size_um": src.pixel_size_um, "pixel_size_from": src.pixel_size_from,
                       "cropped_bottom_px": src.cropped_bottom_px},
            "phases": [{"label": p.label, "name": p.name, "material": p.material,
                        "fraction": p.fraction, "fraction_ci95": list(p.fraction_ci95),
                        "relative_accuracy_pct": p.relative_accuracy_pct, "fields": p.fields,
                        "inside_particles": p.inside_particles}
                       for p in self.phases],
            "effective": self.effective,
            "effective_3d": self.effective_3d,
            "particles": self.particles,
            "schemes": self.schemes,
            "bounds": self.bounds,
            "schemes_3d": self.schemes_3d,
            "bounds_3d": self.bounds_3d,
            "shock": self.shock,
            "windows": self.windows,
            "correlation": self.correlation,
            "warnings": list(self.warnings),
            "notes": list(self.notes),
            "timings_s": self.timings_s,
            "config": self.config_toml,
        }
        return _plain(out)

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, allow_nan=False)

    def headline(self) -> dict[str, Any]:
        """The headline numbers as one flat row (the CSV and batch summary columns)."""
        return headline(self.to_dict())


def headline(d: dict) -> dict[str, Any]:
    """Flatten the headline numbers of a result's JSON form into one row."""
    row: dict[str, Any] = {"path": d["source"]["path"], "sha256": d["source"]["sha256"],
                           "pixel_size_um": d["source"]["pixel_size_um"]}
    for p in d["phases"]:
        row[f"fraction_{p['name']}"] = p["fraction"]
        row[f"fraction_{p['name']}_ci95_low"] = p["fraction_ci95"][0]
        row[f"fraction_{p['name']}_ci95_high"] = p["fraction_ci95"][1]
    for name, stats in (d.get("particles") or {}).items():
        row[f"particles_{name}_count"] = stats.get("count")
        row[f"particles_{name}_ecd_d50"] = (stats.get("ecd_um") or {}).get("d50")
    eff = d.get("effective") or {}
    if eff:
        row["model"] = eff.get("model")
    if eff.get("conductivity"):
        row["conductivity_W_mK"] = eff["conductivity"].get("mean_W_mK")
    if eff.get("elasticity"):
        el = eff["elasticity"]
        row["youngs_modulus_GPa"] = el.get("youngs_modulus_GPa")
        row["poisson_ratio"] = el.get("poisson_ratio")
        row["bulk_modulus_GPa"] = el.get("bulk_modulus_GPa")
        row["shear_modulus_GPa"] = el.get("shear_modulus_GPa")
    if eff.get("expansion"):
        row["expansion_per_K"] = eff["expansion"].get("mean_per_K")
    e3 = d.get("effective_3d") or {}
    for block, key, column in (("conductivity", "mean_W_mK", "conductivity_3d_W_mK"),
                               ("elasticity", "youngs_modulus_GPa", "youngs_modulus_3d_GPa"),
                               ("expansion", "mean_per_K", "expansion_3d_per_K")):
        if e3.get(block):
            row[column] = e3[block].get(key)
    row["warnings"] = len(d.get("warnings") or [])
    return row


QUANTITY_LABELS = {"conductivity_W_mK": ("conductivity", "W/(m·K)"),
                   "youngs_modulus_GPa": ("Young's modulus", "GPa"),
                   "poisson_ratio": ("Poisson's ratio", ""),
                   "bulk_modulus_GPa": ("bulk modulus", "GPa"),
                   "shear_modulus_GPa": ("shear modulus", "GPa"),
                   "expansion_per_K": ("thermal expansion", "1/K"),
                   "conductivity_3d_W_mK": ("3D-estimate conductivity", "W/(m·K)"),
                   "youngs_modulus_3d_GPa": ("3D-estimate Young's modulus", "GPa"),
                   "expansion_3d_per_K": ("3D-estimate thermal expansion", "1/K")}
"""Words and unit of the effective-property columns of `headline`."""


def quantity_label(key: str) -> tuple[str, str]:
    """Words and unit of a headline column, e.g. ``"fraction_SiC"`` → ``("SiC fraction", "")``."""
    if key in QUANTITY_LABELS:
        return QUANTITY_LABELS[key]
    if key.startswith("fraction_"):
        return f"{key[len('fraction_'):]} fraction", ""
    if key.startswith("particles_") and key.endswith("_ecd_d50"):
        return f"{key[len('particles_'):-len('_ecd_d50')]} particle D50", "µm"
    return key, ""


def quantity_keys(row: dict) -> list[str]:
    """The headline columns that are compared: fractions, particle D50, effective properties."""
    keys = []
    for k, v in row.items():
        if not isinstance(v, (int, float)) or isinstance(v, bool):
            continue
        if (k.startswith("fraction_") and not k.endswith(("_ci95_low", "_ci95_high"))) \
                or (k.startswith("particles_") and k.endswith("_ecd_d50")) \
                or k in QUANTITY_LABELS:
            keys.append(k)
    return keys


def csv_text(rows: list[dict[str, Any]]) -> str:
    """Rows (dicts) as CSV text; the columns are the union of the keys, in first-seen order."""
    columns: list[str] = []
    for r in rows:
        columns += [k for k in r if k not in columns]
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=columns, lineterminator="\n")
    writer.writeheader()
    for r in rows:
        writer.writerow({k: _cell(v) for k, v in r.items()})
    return buf.getvalue()


def write_json(result: Result, path) -> None:
    """Write the JSON form atomically."""
    atomic_write_text(path, result.to_json() + "\n")


def write_csv(rows: list[dict[str, Any]], path) -> None:
    """Write rows as CSV atomically."""
    atomic_write_text(path, csv_text(rows))


def read_json(path) -> dict:
    """Read a result JSON written by `write_json`; check its schema."""
    with open(path, encoding="utf-8") as f:
        d = json.load(f)
    if d.get("schema") != SCHEMA:
        raise ValueError(f"{path}: not a {SCHEMA} file (schema = {d.get('schema')!r})")
    return d


def _cell(v):
    if isinstance(v, float):
        return f"{v:.6g}"
    return v


def _plain(obj):
    """Turn numpy scalars/arrays and tuples into JSON-ready values; NaN/inf become None."""
    if isinstance(obj, dict):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _plain(obj.tolist())
    if isinstance(obj, (np.floating, float)):
        v = float(obj)
        return v if math.isfinite(v) else None
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    return obj
