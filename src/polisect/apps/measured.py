"""Measured values beside a batch's computed ones, for `compare` and `batch`.

A batch's measured values come from its sections' run configurations (``[[measured]]``) and
from its measured-values file (`polisect.read.config.MEASURED_FILE`, next to the images);
`polisect.trust.measured.merge_measured` merges them (the configuration wins for the same
property and temperature) and `polisect.trust.measured.compare_batch` sets each beside the
batch mean of the computed values at its temperature.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ..present.htmlkit import grid
from ..present.units import (MEASURED_KINDS, number, scale_of, unit_text, with_uncertainty,
                             with_unit)
from ..trust.measured import ROOM_C, compare_batch, merge_measured


@dataclass(frozen=True)
class Computed:
    """What the measured values of one section are compared with: temperature (°C) →
    `Effective` of its model and of its 3D estimate, and the measured values that concern
    it."""

    solved: dict = field(default_factory=dict)
    solved_3d: dict = field(default_factory=dict)
    measured: tuple = ()


def computed_of(result, batch_wide=()) -> Computed:
    """The `Computed` of a result, with its batch's measured-values file's entries."""
    solved, solved_3d = solved_by_temperature(result)
    return Computed(solved, solved_3d, merge_measured(result.measured, batch_wide))


def solved_by_temperature(result) -> tuple[dict, dict]:
    """Temperature (°C) → `Effective` of a result's section model and of its 3D estimate
    (the analysis's own solve at 20 °C unless a temperature block replaces it)."""
    solved = {ROOM_C: result.effective} if result.effective else {}
    solved.update({t.temperature_C: t.effective for t in result.effective_by_temperature})
    solved_3d = {ROOM_C: result.effective_3d.effective} if result.effective_3d else {}
    solved_3d.update({t.temperature_C: t.effective
                      for t in result.effective_3d_by_temperature})
    return solved, solved_3d


def batch_measured(batches: dict) -> dict:
    """Batch → its measured values beside the batch means of the computed ones
    (`polisect.trust.measured.compare_batch`), from batch → its sections (each with
    ``solved``, ``solved_3d`` and ``measured``, e.g. `Computed`); batches without measured
    values are left out."""
    out = {}
    for b, members in batches.items():
        entries = merge_measured((), [m for s in members for m in s.measured])
        if entries:
            out[b] = compare_batch(entries, [s.solved for s in members],
                                   [s.solved_3d for s in members if s.solved_3d])
    return out


def measured_dict(m) -> dict:
    """JSON form of a `BatchMeasured`."""
    return {"property": m.property, "value": m.value, "uncertainty": m.uncertainty,
            "temperature_C": m.temperature_C, "method": m.method,
            "section": {"n": m.n, "mean": m.section_mean,
                        "ci95": list(m.section_ci95) if m.section_ci95 else None,
                        "z": m.z_section},
            "estimate_3d": {"n": m.n_3d, "mean": m.estimate_3d_mean,
                            "ci95": list(m.estimate_3d_ci95) if m.estimate_3d_ci95 else None,
                            "z": m.z_3d},
            "verdict": m.verdict}


def measured_lines(measured: dict) -> list[str]:
    """Console lines of the measured values: per batch and value, the measured value, the
    batch means (section model; 3D estimate) with their 95 % intervals, and z."""
    lines = []
    for b, ms in measured.items():
        for m in ms:
            kind = MEASURED_KINDS[m.property]
            sc, unit = scale_of(kind), unit_text(kind)
            parts = [f"{b}: {m.property.replace('_', ' ')} at {m.temperature_C:g} °C measured "
                     f"{with_unit(with_uncertainty(m.value, m.uncertainty, sc), unit)}"
                     + (f" ({m.method})" if m.method else "")]
            if m.section_mean is not None:
                parts.append(f"section model {_mean_interval(m.section_mean, m.section_ci95, sc)}"
                             f" (n = {m.n}){_z_text(m.z_section)}")
            if m.estimate_3d_mean is not None:
                parts.append(f"3D estimate {_mean_interval(m.estimate_3d_mean, m.estimate_3d_ci95, sc)}"
                             f"{_z_text(m.z_3d)}")
            lines.append("; ".join(parts))
    return lines


def _mean_interval(mean: float, ci, scale: float) -> str:
    return number(mean * scale) + (f" [{number(ci[0] * scale)} – {number(ci[1] * scale)}]"
                                   if ci else "")


def _z_text(z) -> str:
    return "" if z is None else f", z = {z:+.1f}"


def html_measured(measured: dict) -> str:
    """The measured values beside every batch's means (section model, 3D estimate)."""
    if not measured:
        return ""
    rows = []
    for b, ms in measured.items():
        for m in ms:
            kind = MEASURED_KINDS[m.property]
            sc = scale_of(kind)
            rows.append((b, m.property.replace("_", " ") + f" ({unit_text(kind)})",
                         number(m.temperature_C),
                         with_uncertainty(m.value, m.uncertainty, sc), m.method or "–",
                         "–" if m.section_mean is None else
                         f"{_mean_interval(m.section_mean, m.section_ci95, sc)} (n = {m.n})",
                         "–" if m.z_section is None else f"{m.z_section:+.1f}",
                         "–" if m.estimate_3d_mean is None else
                         _mean_interval(m.estimate_3d_mean, m.estimate_3d_ci95, sc),
                         "–" if m.z_3d is None else f"{m.z_3d:+.1f}", m.verdict))
    head = ("Batch", "Property", "T (°C)", "Measured (± u)", "Method",
            "Section model: batch mean [95 %]", "z", "3D estimate: mean [95 %]", "z (3D)",
            "Verdict")
    return ("<section><h2>Measured beside computed</h2>" + grid(head, rows)
            + '<p class="note">Measured values from the sections\' run configurations and the '
            "batch's measured-values file (measured.toml). Batch mean of the computed values "
            "at the measurement's temperature with its 95 % interval over the sections "
            "(Student t; with one section the 3D estimate's interval is over its "
            "realizations). z = (batch mean − measured) / u_c with the combined standard "
            "uncertainty u_c = √(u² + SE²) of the measurement and the batch mean (JCGM "
            "100:2008); |z| ≤ 2 agrees at about 95 %. The 2D section model is a prismatic "
            "structure; the 3D estimate models sphere-like particles.</p></section>")


