"""The result's JSON and CSV forms, and back: the only home of the result's key strings.

``to_dict(result)`` gives the JSON form (``schema = "polisect.result/1"``, every key in
``docs/results.md``; keys may be added, never renamed or dropped) and ``from_dict`` reads it
back to the same `Result` (``to_dict(from_dict(d)) == d``). ``headline`` flattens the
headline numbers into one row (the CSV and batch-summary columns, units in the names).

Examples
--------
>>> from polisect.pipeline.result import Result, Source
>>> r = Result(Source(None, None, (8, 8), None, "unknown"), (), "0.1.0")
>>> from_dict(to_dict(r)).source.shape
(8, 8)
"""

from __future__ import annotations

import csv
import io
import json
import math
from typing import Any, Callable

import numpy as np

from ..core.atomic import atomic_write_text
from ..core.errors import InputError
from ..core.materials import Material
from ..core.quantities import ESTIMATE_3D_COLUMNS, fraction_column
from ..measure.summary import (Correlation, ParticleSummary, SizeQuantiles, SphereSizes,
                               VolumeParticleSummary)
from ..model3d.summary import (Estimate3DRecord, FamilyRecord, PackingRecord, Versus2D,
                               VolumeRecord)
from ..pipeline.result import (AtTemperature, PhaseFraction, Result, SchemeTable, Source,
                               Verification)
from ..properties.fit import FitResult
from ..properties.records import (AxialModuli, ComparableModuli, Conductivity, Effective,
                                  Elasticity, Expansion, Solver, Spread, value_of)
from ..properties.schemes import Bound, Estimate
from ..properties.shock import INDEX_WORDS, ShockIndices
from ..segment.segmentation import SegmentationSummary
from ..trust.budget import Budget
from ..trust.measured import MeasuredComparison
from ..trust.records import (LevelStats, QuantityFit, WindowLevelRecord,
                             WindowRecord)
from ..trust.sectionstats import Gitman

SCHEMA = "polisect.result/1"

ESTIMATE_KEYS = {"conductivity": "conductivity_W_mK", "bulk_modulus": "bulk_modulus_GPa",
                 "shear_modulus": "shear_modulus_GPa", "youngs_modulus": "youngs_modulus_GPa",
                 "poisson_ratio": "poisson_ratio", "expansion": "expansion_per_K"}
"""`Estimate` field → JSON key of the scheme and bound tables."""

VERSUS_KEYS = {"conductivity": "mean_W_mK", "youngs_modulus": "youngs_modulus_GPa",
               "shear_modulus": "shear_modulus_GPa", "poisson_ratio": "poisson_ratio",
               "expansion": "mean_per_K"}
"""Scalar compared by the 3D estimate → its ``versus_2d[].quantity`` in the JSON form."""
_VERSUS_NAMES = {v: k for k, v in VERSUS_KEYS.items()}

SHOCK_KEYS = {"R": "R_K", "R_prime": "R_prime_W_m", "R_4prime": "R_4prime_m"}


# ---------------------------------------------------------------- Result → JSON form

def to_dict(result: Result) -> dict:
    """The JSON form of *result* (schema ``polisect.result/1``)."""
    src = result.source
    out: dict[str, Any] = {
        "schema": SCHEMA,
        "polisect_version": result.version,
        "created": result.created,
        "source": {"path": src.path, "sha256": src.sha256, "shape": list(src.shape),
                   "pixel_size_um": src.pixel_size_um, "pixel_size_from": src.pixel_size_from,
                   "cropped_bottom_px": src.cropped_bottom_px},
        "phases": [{"label": p.label, "name": p.name, "material": p.material.to_dict(),
                    "fraction": p.fraction, "fraction_ci95": list(p.fraction_ci95),
                    "relative_accuracy_pct": p.relative_accuracy_pct, "fields": p.fields,
                    "inside_particles": p.inside_particles,
                    **({"fitted": {f: getattr(p.fitted, f) for f in _FITTED_FIELDS}}
                       if p.fitted else {})} for p in result.phases],
        "effective": _effective(result.effective) if result.effective else None,
        "effective_3d": _estimate_3d(result.effective_3d) if result.effective_3d else None,
        "effective_by_temperature": [
            {"temperature_C": t.temperature_C, **_effective(t.effective),
             **({"shock": _shock(t.shock)} if t.shock else {})}
            for t in result.effective_by_temperature],
        "effective_3d_by_temperature": [
            {"temperature_C": t.temperature_C, **_effective(t.effective)}
            for t in result.effective_3d_by_temperature],
        "particles": ({n: _particles(s) for n, s in result.particles.items()}
                      if result.particles else None),
        "schemes": _schemes(result.schemes),
        "bounds": _bounds(result.schemes),
        "schemes_3d": _schemes(result.schemes_3d),
        "bounds_3d": _bounds(result.schemes_3d),
        "shock": _shock(result.shock) if result.shock else None,
        "windows": _windows(result.windows) if result.windows else None,
        "correlation": ({n: {"correlation_length": c.correlation_length, "units": c.units,
                             "fraction": c.fraction} for n, c in result.correlation.items()}
                        if result.correlation else None),
        "measured": [{f: getattr(m, f) for f in _MEASURED_FIELDS} for m in result.measured],
        "segmentation": None if result.segmentation is None else {
            **{f: getattr(result.segmentation, f) for f in _SEGMENTATION_FIELDS},
            "corrections": [{"name": n, "applied": a, "amount": m, "what": w}
                            for n, a, m, w in result.segmentation.corrections],
            "fraction_ranges": {str(k): list(v) for k, v in
                                result.segmentation.fraction_ranges.items()}},
        "uncertainty": {key: {"value": b.value, "unit": b.unit,
                              "components": dict(b.components), "combined": b.combined,
                              "largest": b.largest, "advice": b.advice,
                              "notes": list(b.notes)}
                        for key, b in result.uncertainty.items()},
        "warnings": list(result.warnings),
        "notes": list(result.notes),
        "timings_s": dict(result.timings_s),
        "config": result.config_toml,
        "verification": _verification(result.verification) if result.verification else None,
    }
    return plain(out)


def _verification(v: Verification) -> dict:
    return {"method": v.method, "second_method": v.second_method,
            "relative_differences": dict(v.differences),
            "max_relative_difference": v.max_relative_difference,
            "tolerance": v.tolerance, "seconds": v.seconds,
            "crop": list(v.crop) if v.crop is not None else None}


def _read_verification(v: dict) -> Verification:
    return Verification(v["method"], v["second_method"], dict(v["relative_differences"]),
                        v["max_relative_difference"], v["tolerance"], v["seconds"],
                        tuple(v["crop"]) if v.get("crop") is not None else None)


def to_json(result: Result) -> str:
    """The JSON text of *result* (NaN and infinities are written as null)."""
    return json.dumps(to_dict(result), indent=2, allow_nan=False)


def _scalar(key: str, x) -> dict:
    if isinstance(x, Spread):
        return {key: x.mean, key + "_ci95": list(x.ci95) if x.ci95 else None,
                key + "_realizations": list(x.values)}
    return {key: x}


def _solver(s: Solver) -> dict:
    out = {"method": s.method, "iterations": s.iterations, "seconds": s.seconds,
           "tolerance": s.tolerance, "converged": s.converged}
    if s.residuals is not None:
        out["residuals"] = [list(r) for r in s.residuals]
    if s.realizations is not None:
        out["realizations"] = s.realizations
    return out


def _effective(e: Effective) -> dict:
    out = {"dimension": e.dimension, "plane": e.plane, "model": e.model, "note": e.note,
           "axes": e.axes, "conductivity": None, "elasticity": None, "expansion": None}
    if e.conductivity:
        c = e.conductivity
        out["conductivity"] = {"tensor_W_mK": c.tensor, **_scalar("mean_W_mK", c.mean),
                               "anisotropy": c.anisotropy, "solver": _solver(c.solver)}
    if e.elasticity:
        el = e.elasticity
        block = {"stiffness_GPa": el.stiffness, **_scalar("youngs_modulus_GPa", el.youngs_modulus),
                 **_scalar("poisson_ratio", el.poisson_ratio),
                 **_scalar("bulk_modulus_GPa", el.bulk_modulus),
                 **_scalar("shear_modulus_GPa", el.shear_modulus),
                 "anisotropy": el.anisotropy, "plane": el.plane, "solver": _solver(el.solver)}
        if el.bulk_modulus_meaning is not None:
            block["bulk_modulus_meaning"] = el.bulk_modulus_meaning
        if el.prismatic_stiffness is not None:
            block["prismatic_stiffness_GPa"] = el.prismatic_stiffness
        if el.axial is not None:
            block["axial"] = {"youngs_modulus_GPa": el.axial.youngs_modulus,
                              "poisson_ratio": el.axial.poisson_ratio,
                              "shear_modulus_GPa": el.axial.shear_modulus}
        if el.scheme_comparable is not None:
            sc = el.scheme_comparable
            block["scheme_comparable"] = {
                k: v for k, v in (("bulk_modulus_GPa", sc.bulk_modulus),
                                  ("shear_modulus_GPa", sc.shear_modulus),
                                  ("youngs_modulus_GPa", sc.youngs_modulus),
                                  ("poisson_ratio", sc.poisson_ratio), ("meaning", sc.meaning))
                if v is not None}
        out["elasticity"] = block
    if e.expansion:
        x = e.expansion
        block = {"tensor_per_K": x.tensor, **_scalar("mean_per_K", x.mean),
                 "axial_per_K": x.axial, "anisotropy": x.anisotropy,
                 "solver": _solver(x.solver)}
        if x.has_comparable:
            block["scheme_comparable"] = {"mean_per_K": x.comparable_mean}
        out["expansion"] = block
    return out


def _estimate_3d(e: Estimate3DRecord) -> dict:
    out = _effective(e.effective)
    v = e.volume
    out.update({
        "realizations": e.realizations, "seed": e.seed, "confidence": e.confidence,
        "volume": {"voxels": list(v.voxels), "voxel_size": v.voxel_size, "box": v.box,
                   "units": v.units, "d10": v.d10, "d90": v.d90, "d10_voxels": v.d10_voxels,
                   "box_over_d90": v.box_over_d90, "compromise": v.compromise},
        "section": {"units": e.units, "matrix_label": e.matrix_label,
                    "families": [{"label": f.label, "fraction": f.fraction,
                                  "sections": f.sections,
                                  "sphere_diameter": {"mean": f.sphere_mean,
                                                      "volume_d10": f.sphere_volume_d10,
                                                      "volume_d50": f.sphere_volume_d50,
                                                      "volume_d90": f.sphere_volume_d90},
                                  "hollow_share": f.hollow_share,
                                  "hollow_ratio": f.hollow_ratio, "core_label": f.core_label,
                                  "aspect_ratio_mean": f.aspect_ratio_mean,
                                  "solidity_mean": f.solidity_mean} for f in e.families]},
        "packings": [{"seed": p.seed, "spheres": p.spheres, "method": p.method,
                      "fractions": dict(p.fractions), "seconds": p.seconds} for p in e.packings],
        "versus_2d": [{"quantity": VERSUS_KEYS[c.quantity], "section_2d": c.section_2d,
                       "estimate_3d": c.estimate_3d, "difference_pct": c.difference_pct,
                       "sentence": c.sentence} for c in e.versus_2d],
        "warnings": list(e.warnings)})
    return out


def _sizes(q: SizeQuantiles, weighted: str) -> dict:
    out = {"mean": q.mean, "std": q.std, "d10": q.d10, "d50": q.d50, "d90": q.d90,
           weighted: {"d10": q.weighted_d10, "d50": q.weighted_d50, "d90": q.weighted_d90}}
    if q.ci95:
        out["ci95"] = {k: (list(v) if v is not None else None) for k, v in q.ci95.items()}
    return out


def _particles(s) -> dict:
    if isinstance(s, VolumeParticleSummary):
        return {"label": s.label, "dimension": 3, "units": s.units, "count": s.count,
                "count_measured": s.count_measured, "number_per_mm3": s.number_per_mm3,
                "sphere_diameter_um": _sizes(s.sphere, "volume_weighted"),
                "hollow_fraction": s.hollow_fraction,
                "inner_outer_ratio_mean": s.inner_outer_ratio_mean}
    sph = s.spheres
    return {"label": s.label, "split_touching": s.split_touching, "units": s.units,
            "count": s.count, "count_measured": s.count_measured,
            "count_per_mm2": s.count_per_mm2, "ecd_um": _sizes(s.ecd, "area_weighted"),
            "aspect_ratio_mean": s.aspect_ratio_mean, "circularity_mean": s.circularity_mean,
            "solidity_mean": s.solidity_mean, "hollow_fraction": s.hollow_fraction,
            "inner_outer_ratio_mean": s.inner_outer_ratio_mean,
            "ci95": {k: (list(v) if v is not None else None) for k, v in s.shape_ci95.items()},
            "sphere_diameter_um": None if sph is None else {
                "mean": sph.mean, "d50": sph.d50, "volume_fraction": sph.volume_fraction,
                "classes": {"edges": list(sph.class_edges),
                            "number_per_volume": list(sph.number_per_volume)}},
            "number_per_mm3": s.number_per_mm3, "mean_free_path_um": s.mean_free_path,
            "mean_intercept_um": s.mean_intercept, "surface_density_per_um": s.surface_density,
            "contiguity": s.contiguity,
            "nearest_neighbour_um": {"mean": s.nearest_neighbour_mean,
                                     "clark_evans": s.clark_evans,
                                     "n_used": s.nearest_neighbour_n}}


def _schemes(t: SchemeTable | None) -> dict | None:
    if t is None:
        return None
    return {name: {ESTIMATE_KEYS[f]: getattr(e, f) for f in ESTIMATE_KEYS}
            for name, e in t.estimates.items()}


def estimate_to_dict(result) -> dict:
    """The JSON form of ``polisect estimate`` (a `SchemesResult`): ``dim``, ``matrix``,
    ``schemes``, ``bounds`` (keys as in a result's scheme tables) and ``notes``."""
    table = SchemeTable(dict(result.schemes), dict(result.bounds))
    return plain({"dim": result.dim, "matrix": result.matrix, "schemes": _schemes(table),
                  "bounds": _bounds(table), "notes": list(result.notes)})


def _bounds(t: SchemeTable | None) -> dict | None:
    if t is None:
        return None
    return {ESTIMATE_KEYS[p]: {"lower": b.lower, "upper": b.upper} for p, b in t.bounds.items()}


def _shock(s: ShockIndices) -> dict:
    return {"R_K": s.R, "R_prime_W_m": s.R_prime, "R_4prime_m": s.R_4prime,
            "labels": {SHOCK_KEYS[k]: words for k, words in INDEX_WORDS.items()},
            "caution": s.caution, "model": s.model}


def _windows(w: WindowRecord) -> dict:
    def level(lv: WindowLevelRecord) -> dict:
        qs = {}
        for key, s in lv.quantities.items():
            entry = {"n": s.n, "mean": s.mean, "sd": s.sd}
            if s.gitman is not None:
                g = s.gitman
                entry["gitman_chi2"] = {"n": g.n, "chi2": g.chi2, "critical": g.critical,
                                        "passed": g.passed}
            qs[key] = entry
        return {"side_px": list(lv.side_px), "area_px": lv.area_px,
                "n_windows": lv.n_windows, "n_solved": lv.n_solved, "quantities": qs}

    def fit(q: QuantityFit) -> dict:
        return {f: (list(getattr(q, f)) if f == "fit_sides_px" else getattr(q, f))
                for f in _FIT_FIELDS}

    return {"edges": w.edges, "target_error_pct": w.target_error_pct,
            "confidence": w.confidence, "shape": list(w.shape),
            "pixel_size_um": w.pixel_size_um, "particle_diameter_px": w.particle_diameter_px,
            "min_side_px": w.min_side_px, "fit_min_side_px": w.fit_min_side_px,
            "properties": list(w.properties), "levels": [level(lv) for lv in w.levels],
            "quantities": {k: fit(q) for k, q in w.quantities.items()},
            "notes": list(w.notes), "verdict": w.verdict}


_SEGMENTATION_FIELDS = ("method", "thresholds", "confidence_mean", "uncertain_share",
                        "confidence_level", "perturbation", "min_feature_px", "model")

_FITTED_FIELDS = ("label", "property", "value", "interval", "target", "measured", "uncertainty",
                  "model", "steps", "derivative")

_MEASURED_FIELDS = ("property", "value", "uncertainty", "temperature_C", "method", "section",
                   "estimate_3d", "lower", "upper", "z_section", "z_3d", "verdict")

_FIT_FIELDS = ("key", "value", "variance_area", "point_variance", "integral_range_px",
               "exponent", "fit_sides_px", "whole_image_variance", "supported_error_pct",
               "required_area_px", "required_side_px", "images_needed",
               "gitman_smallest_side_px", "verdict", "required_side_um", "enough")


# ---------------------------------------------------------------- JSON form → Result

def from_dict(d: dict) -> Result:
    """The `Result` of a JSON form written by `to_dict` (schema checked)."""
    if d.get("schema") != SCHEMA:
        raise InputError(f"not a {SCHEMA} record (schema = {d.get('schema')!r})")
    s = d["source"]
    return Result(
        source=Source(s["path"], s["sha256"], tuple(s["shape"]), s["pixel_size_um"],
                      s["pixel_size_from"], s.get("cropped_bottom_px", 0)),
        phases=tuple(PhaseFraction(p["label"], p["name"], _material(p["material"]),
                                   p["fraction"], tuple(p["fraction_ci95"]),
                                   p.get("relative_accuracy_pct"), p.get("fields", 0),
                                   p.get("inside_particles"),
                                   _read_fitted(p["fitted"]) if p.get("fitted") else None)
                     for p in d["phases"]),
        version=d["polisect_version"], config_toml=d.get("config", ""),
        effective=_read_effective(d["effective"]) if d.get("effective") else None,
        effective_3d=_read_3d(d["effective_3d"]) if d.get("effective_3d") else None,
        effective_by_temperature=tuple(
            AtTemperature(b["temperature_C"], _read_effective(b),
                          _read_shock(b["shock"]) if b.get("shock") else None)
            for b in d.get("effective_by_temperature") or ()),
        effective_3d_by_temperature=tuple(
            AtTemperature(b["temperature_C"], _read_effective(b))
            for b in d.get("effective_3d_by_temperature") or ()),
        particles=({n: _read_particles(b) for n, b in d["particles"].items()}
                   if d.get("particles") else None),
        schemes=_read_schemes(d.get("schemes"), d.get("bounds")),
        schemes_3d=_read_schemes(d.get("schemes_3d"), d.get("bounds_3d")),
        shock=_read_shock(d["shock"]) if d.get("shock") else None,
        windows=_read_windows(d["windows"]) if d.get("windows") else None,
        correlation=({n: Correlation(c["correlation_length"], c["units"], c["fraction"])
                      for n, c in d["correlation"].items()} if d.get("correlation") else None),
        measured=tuple(MeasuredComparison(**{f: m[f] for f in _MEASURED_FIELDS})
                       for m in d.get("measured") or ()),
        segmentation=_read_segmentation(d["segmentation"]) if d.get("segmentation") else None,
        uncertainty={key: Budget(key, b["value"], b["unit"], dict(b["components"]),
                                 b["combined"], b["largest"], b["advice"], tuple(b["notes"]))
                     for key, b in (d.get("uncertainty") or {}).items()},
        warnings=tuple(d.get("warnings") or ()), notes=tuple(d.get("notes") or ()),
        timings_s=dict(d.get("timings_s") or {}), created=d.get("created", ""),
        verification=(_read_verification(d["verification"]) if d.get("verification")
                      else None))


def _read_fitted(f: dict) -> FitResult:
    return FitResult(**{k: (tuple(f[k]) if k == "interval" else f[k]) for k in _FITTED_FIELDS})


def _read_segmentation(s: dict) -> SegmentationSummary:
    return SegmentationSummary(
        **{f: (tuple(s[f]) if f == "thresholds" else s[f]) for f in _SEGMENTATION_FIELDS},
        corrections=tuple((c["name"], c["applied"], c["amount"], c["what"])
                          for c in s["corrections"]),
        fraction_ranges={int(k): tuple(v) for k, v in s["fraction_ranges"].items()})


def _read_shock(s: dict) -> ShockIndices:
    return ShockIndices(s["R_K"], s["R_prime_W_m"], s["R_4prime_m"], s["caution"], s["model"])


def _material(m: dict) -> Material:
    props = {k: m[k] for k in ("conductivity", "youngs_modulus", "poisson_ratio", "expansion",
                               "stiffness", "mean_expansion", "temperature_C") if k in m}
    return Material(name=m["name"], source=m["source"], sources=m.get("sources") or {},
                    uncertainty=m.get("uncertainty") or {}, **props)


def _read_scalar(block: dict, key: str):
    if key + "_realizations" in block:
        ci = block.get(key + "_ci95")
        return Spread(block[key], tuple(ci) if ci else None,
                      tuple(block[key + "_realizations"]))
    return block[key]


def _read_solver(s: dict) -> Solver:
    res = s.get("residuals")
    return Solver(s["method"], s["iterations"], s["seconds"], s["tolerance"], s["converged"],
                  None if res is None else tuple(tuple(r) for r in res), s.get("realizations"))


def _array(x):
    return None if x is None else np.asarray(x, dtype=float)


def _read_effective(e: dict) -> Effective:
    c = el = x = None
    if e.get("conductivity"):
        b = e["conductivity"]
        c = Conductivity(_array(b["tensor_W_mK"]), _read_scalar(b, "mean_W_mK"),
                         b["anisotropy"], _read_solver(b["solver"]))
    if e.get("elasticity"):
        b = e["elasticity"]
        ax = b.get("axial")
        sc = b.get("scheme_comparable")
        el = Elasticity(
            _array(b["stiffness_GPa"]), _read_scalar(b, "youngs_modulus_GPa"),
            _read_scalar(b, "poisson_ratio"), _read_scalar(b, "bulk_modulus_GPa"),
            _read_scalar(b, "shear_modulus_GPa"), b["anisotropy"], b["plane"],
            _read_solver(b["solver"]), b.get("bulk_modulus_meaning"),
            _array(b.get("prismatic_stiffness_GPa")),
            None if ax is None else AxialModuli(ax["youngs_modulus_GPa"], ax["poisson_ratio"],
                                                ax["shear_modulus_GPa"]),
            None if sc is None else ComparableModuli(
                sc.get("bulk_modulus_GPa"), sc.get("shear_modulus_GPa"),
                sc.get("youngs_modulus_GPa"), sc.get("poisson_ratio"), sc.get("meaning")))
    if e.get("expansion"):
        b = e["expansion"]
        sc = b.get("scheme_comparable")
        x = Expansion(_array(b["tensor_per_K"]), _read_scalar(b, "mean_per_K"),
                      b.get("axial_per_K"), b["anisotropy"], _read_solver(b["solver"]),
                      sc is not None, None if sc is None else sc.get("mean_per_K"))
    return Effective(e["dimension"], e["plane"], e["model"], e["note"], e["axes"], c, el, x)


def _read_3d(e: dict) -> Estimate3DRecord:
    v, s = e["volume"], e["section"]
    return Estimate3DRecord(
        effective=_read_effective(e), realizations=e["realizations"], seed=e["seed"],
        confidence=e["confidence"],
        volume=VolumeRecord(tuple(v["voxels"]), v["voxel_size"], v["box"], v["units"],
                            v["d10"], v["d90"], v["d10_voxels"], v["box_over_d90"],
                            v.get("compromise")),
        units=s["units"], matrix_label=s["matrix_label"],
        families=tuple(FamilyRecord(
            f["label"], f["fraction"], f["sections"], f["sphere_diameter"]["mean"],
            f["sphere_diameter"]["volume_d10"], f["sphere_diameter"]["volume_d50"],
            f["sphere_diameter"]["volume_d90"], f["hollow_share"], f["hollow_ratio"],
            f["core_label"], f["aspect_ratio_mean"], f["solidity_mean"])
            for f in s["families"]),
        packings=tuple(PackingRecord(p["seed"], p["spheres"], p["method"], dict(p["fractions"]),
                                     p["seconds"]) for p in e["packings"]),
        versus_2d=tuple(Versus2D(_VERSUS_NAMES[c["quantity"]], c["section_2d"], c["estimate_3d"],
                                 c["difference_pct"], c["sentence"]) for c in e["versus_2d"]),
        warnings=tuple(e.get("warnings") or ()))


def _read_sizes(b: dict, weighted: str) -> SizeQuantiles:
    w = b.get(weighted) or {}
    ci = b.get("ci95")
    return SizeQuantiles(b["mean"], b["std"], b["d10"], b["d50"], b["d90"], w.get("d10"),
                         w.get("d50"), w.get("d90"),
                         {} if ci is None else {k: (tuple(v) if v is not None else None)
                                                for k, v in ci.items()})


def _read_particles(b: dict):
    if b.get("dimension") == 3:
        return VolumeParticleSummary(b["label"], b["units"], b["count"], b["count_measured"],
                                     b["number_per_mm3"],
                                     _read_sizes(b["sphere_diameter_um"], "volume_weighted"),
                                     b["hollow_fraction"], b["inner_outer_ratio_mean"])
    sph = b.get("sphere_diameter_um")
    nn = b.get("nearest_neighbour_um") or {}
    return ParticleSummary(
        b["label"], b["split_touching"], b["units"], b["count"], b["count_measured"],
        b["count_per_mm2"], _read_sizes(b["ecd_um"], "area_weighted"), b["aspect_ratio_mean"],
        b["circularity_mean"], b["solidity_mean"], b["hollow_fraction"],
        b["inner_outer_ratio_mean"],
        {k: (tuple(v) if v is not None else None) for k, v in (b.get("ci95") or {}).items()},
        None if sph is None else SphereSizes(sph["mean"], sph["d50"], sph["volume_fraction"],
                                             tuple(sph["classes"]["edges"]),
                                             tuple(sph["classes"]["number_per_volume"])),
        b["number_per_mm3"], b["mean_free_path_um"], b["mean_intercept_um"],
        b["surface_density_per_um"], b["contiguity"], nn.get("mean"), nn.get("clark_evans"),
        nn.get("n_used"))


def _read_schemes(schemes: dict | None, bounds: dict | None) -> SchemeTable | None:
    if schemes is None:
        return None
    field_of = {v: k for k, v in ESTIMATE_KEYS.items()}
    return SchemeTable(
        {name: Estimate(**{field_of[k]: v for k, v in e.items()}) for name, e in schemes.items()},
        {field_of[k]: Bound(b["lower"], b["upper"]) for k, b in (bounds or {}).items()})


def _read_windows(w: dict) -> WindowRecord:
    def level(lv: dict) -> WindowLevelRecord:
        qs = {}
        for key, s in lv["quantities"].items():
            g = s.get("gitman_chi2")
            qs[key] = LevelStats(s["n"], s["mean"], s["sd"], None if g is None else
                                 Gitman(g["n"], g["chi2"], g["critical"], g["passed"]))
        return WindowLevelRecord(tuple(lv["side_px"]), lv["area_px"], lv["n_windows"],
                                 lv["n_solved"], qs)

    def fit(q: dict) -> QuantityFit:
        return QuantityFit(**{f: (tuple(q[f]) if f == "fit_sides_px" else q.get(f))
                              for f in _FIT_FIELDS if f != "enough"})

    return WindowRecord(w["edges"], w["target_error_pct"], w["confidence"], tuple(w["shape"]),
                        w["pixel_size_um"], w["particle_diameter_px"], w["min_side_px"],
                        w["fit_min_side_px"], tuple(w["properties"]),
                        tuple(level(lv) for lv in w["levels"]),
                        {k: fit(q) for k, q in w["quantities"].items()},
                        tuple(w["notes"]), w["verdict"])


# ---------------------------------------------------------------- files

def write_json(result: Result, path) -> None:
    """Write the JSON form atomically."""
    atomic_write_text(path, to_json(result) + "\n")


def read_result(path) -> Result:
    """Read a result JSON written by `write_json`."""
    try:
        with open(path, encoding="utf-8") as f:
            d = json.load(f)
    except ValueError as exc:
        raise InputError(f"{path}: not a JSON file ({exc})") from None
    try:
        return from_dict(d)
    except InputError as exc:
        raise InputError(f"{path}: {exc}") from None


# ---------------------------------------------------------------- headline row and CSV

HEADLINE_VALUES: dict[str, Callable[[Result], float | None]] = {
    "conductivity_W_mK": lambda r: _prop(r.effective, "conductivity", "mean"),
    "youngs_modulus_GPa": lambda r: _prop(r.effective, "elasticity", "youngs_modulus"),
    "poisson_ratio": lambda r: _prop(r.effective, "elasticity", "poisson_ratio"),
    "bulk_modulus_GPa": lambda r: _prop(r.effective, "elasticity", "bulk_modulus"),
    "shear_modulus_GPa": lambda r: _prop(r.effective, "elasticity", "shear_modulus"),
    "expansion_per_K": lambda r: _prop(r.effective, "expansion", "mean"),
    "conductivity_3d_W_mK": lambda r: _prop(_e3(r), "conductivity", "mean"),
    "youngs_modulus_3d_GPa": lambda r: _prop(_e3(r), "elasticity", "youngs_modulus"),
    "expansion_3d_per_K": lambda r: _prop(_e3(r), "expansion", "mean"),
}
"""Headline column of an effective property → how to read it from a `Result` (words and
units: `polisect.core.quantities`)."""

_MODEL_COLUMNS = ("conductivity_W_mK", "youngs_modulus_GPa", "poisson_ratio",
                  "bulk_modulus_GPa", "shear_modulus_GPa", "expansion_per_K")
_COLUMNS_3D = tuple(ESTIMATE_3D_COLUMNS.values())


def _e3(r: Result) -> Effective | None:
    return r.effective_3d.effective if r.effective_3d else None


def _prop(eff: Effective | None, block: str, attr: str) -> float | None:
    b = getattr(eff, block) if eff else None
    return None if b is None else value_of(getattr(b, attr))


def headline(result: Result) -> dict[str, Any]:
    """The headline numbers of *result* as one flat row (the CSV and batch columns)."""
    row: dict[str, Any] = {"path": result.source.path, "sha256": result.source.sha256,
                           "pixel_size_um": result.source.pixel_size_um}
    for p in result.phases:
        row[fraction_column(p.name)] = p.fraction
        row[f"fraction_{p.name}_ci95_low"] = p.fraction_ci95[0]
        row[f"fraction_{p.name}_ci95_high"] = p.fraction_ci95[1]
    for name, stats in (result.particles or {}).items():
        row[f"particles_{name}_count"] = stats.count
        row[f"particles_{name}_ecd_d50"] = (stats.ecd.d50 if isinstance(stats, ParticleSummary)
                                            else None)
    eff = result.effective
    if eff:
        row["model"] = eff.model
        blocks = {"conductivity": eff.conductivity, "elasticity": eff.elasticity,
                  "expansion": eff.expansion}
        for column in _MODEL_COLUMNS:
            block = ("conductivity" if column.startswith("conductivity") else
                     "expansion" if column.startswith("expansion") else "elasticity")
            if blocks[block] is not None:
                row[column] = HEADLINE_VALUES[column](result)
    for column in _COLUMNS_3D:
        value = HEADLINE_VALUES[column](result)
        if value is not None:
            row[column] = value
    for key, b in result.uncertainty.items():
        if key in row and b.combined is not None:
            row[f"{key}_u95"] = b.combined
    row["warnings"] = len(result.warnings)
    return plain(row)


def whole_image_variances(result: Result) -> dict[str, float]:
    """Headline column → the variance between whole images of this size, from the window
    study (empty without one)."""
    if result.windows is None:
        return {}
    return {k: float(q.whole_image_variance) for k, q in result.windows.quantities.items()
            if q.whole_image_variance is not None}


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


def write_csv(rows: list[dict[str, Any]], path) -> None:
    """Write rows as CSV atomically."""
    atomic_write_text(path, csv_text(rows))


def _cell(v):
    if isinstance(v, float):
        return f"{v:.6g}"
    return v


def plain(obj):
    """Numpy scalars/arrays and tuples as JSON-ready values; NaN and infinities as None."""
    if isinstance(obj, dict):
        return {str(k): plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return plain(obj.tolist())
    if isinstance(obj, (np.floating, float)):
        v = float(obj)
        return v if math.isfinite(v) else None
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    return obj
