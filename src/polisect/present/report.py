"""The HTML report: one self-contained file (figures embedded as PNG) an engineer can file.

Each section is a small function ``section(analysis) -> str`` (empty when it has nothing
to show); `html_report` joins them in order.
"""

from __future__ import annotations

import html
import json

import numpy as np
from matplotlib.colors import ListedColormap

from ..core.atomic import atomic_write_text
from ..core.quantities import quantity_label
from ..properties.records import Spread, value_of
from ..properties.shock import INDEX_WORDS
from ..trust.sectionstats import sig
from . import figures, record
from .htmlkit import CAUTION_SECTION, CSS, PALETTE, figure_png, grid, kv_table, new_axes

EDGE_NOTES = {
    "periodic": "periodic — each window solved as a periodic cell; a window cut from a "
                "section is not periodic, so small windows are biased (cut particles meet "
                "unrelated material across the seams).",
    "mirror": "mirror — each window reflected across its edges before a periodic solve: no "
              "seams, equivalent to mixed uniform boundary conditions; the mirror symmetry "
              "removes shear coupling (off-diagonal terms) and costs 2^d times the pixels.",
}
"""One line per edge treatment of the window study."""


def phase_colors(phases, given: dict[int, str | None] | None = None) -> dict[int, str]:
    """label → colour: the colour given for a phase (``[[phase]] color``), else the palette."""
    given = given or {}
    return {p.label: given.get(p.label) or PALETTE[i % len(PALETTE)]
            for i, p in enumerate(phases)}


def html_report(analysis, colors: dict[int, str] | None = None) -> str:
    """The report of one analysis as a self-contained HTML string."""
    r = analysis.result
    colors = colors or phase_colors(analysis.phasemap.phases)
    body = "".join(s(analysis, r, colors) for s in SECTIONS)
    title = html.escape(_title(r))
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{title}</title>
<meta name="viewport" content="width=device-width, initial-scale=1">
<style>{CSS}</style></head>
<body><header><h1>{title}</h1>
<p class="meta">polisect {html.escape(r.version)} · {html.escape(r.created)}</p>
</header><main>{body}</main></body></html>
"""


def write_report(analysis, path, colors: dict[int, str] | None = None) -> None:
    """Write the report atomically."""
    atomic_write_text(path, html_report(analysis, colors))


def _title(r) -> str:
    path = r.source.path
    name = path.replace("\\", "/").rsplit("/", 1)[-1] if path else "array input"
    return f"Section report — {name}"


def _caution(analysis, r, colors) -> str:
    return CAUTION_SECTION


def _source(analysis, r, colors) -> str:
    s = r.source
    px = (f"{s.pixel_size_um:.4g} µm (from {s.pixel_size_from})"
          if s.pixel_size_um else "unknown — sizes in pixels")
    rows = [("File", s.path or "array input"), ("SHA-256", s.sha256 or "–"),
            ("Shape (pixels)", " × ".join(str(n) for n in s.shape)), ("Pixel size", px)]
    if s.cropped_bottom_px:
        rows.append(("Cropped at the bottom", f"{s.cropped_bottom_px} rows (information band)"))
    for note in r.notes:
        if not note.startswith("schemes"):
            rows.append(("Note", note))
    if analysis.thresholds:
        rows.append(("Thresholds", ", ".join(f"{t:.4g}" for t in analysis.thresholds)))
    return "<section><h2>Section</h2>" + kv_table(rows) + "</section>"


def _images(analysis, r, colors) -> str:
    pm = analysis.phasemap
    img = analysis.image
    figs = []
    if pm.ndim == 3:
        vol = img if img is not None and img.shape == pm.shape else None
        nz, ny, nx = pm.shape
        for title, index in ((f"slice z = {nz // 2} (x–y plane)", (nz // 2, slice(None), slice(None))),
                             (f"y = {ny // 2} (x–z plane)", (slice(None), ny // 2, slice(None))),
                             (f"x = {nx // 2} (y–z plane)", (slice(None), slice(None), nx // 2))):
            figs.append((f"Orthogonal section, {title}", _overlay_png(
                None if vol is None else vol[index], pm.labels[index], pm.phases, colors)))
    else:
        if img is not None:
            figs.append(("Micrograph", _png_image(img)))
        figs.append(("Phase map overlay", _overlay_png(img, pm.labels, pm.phases, colors)))
    cells = "".join(f'<figure><img alt="{html.escape(t)}" src="{u}"><figcaption>{html.escape(t)}'
                    "</figcaption></figure>" for t, u in figs)
    legend = "".join(f'<span class="swatch" style="background:{colors[p.label]}"></span>'
                     f"{html.escape(p.name)} &nbsp; " for p in pm.phases)
    title = "Phase map (orthogonal sections of the volume)" if pm.ndim == 3 else "Phase map"
    return f'<section><h2>{title}</h2><div class="figs">{cells}</div><p>{legend}</p></section>'


def _fractions(analysis, r, colors) -> str:
    rows = []
    for p in r.phases:
        lo, hi = p.fraction_ci95
        ra = p.relative_accuracy_pct
        rows.append((f'<span class="swatch" style="background:{colors[p.label]}"></span>'
                     f'{html.escape(p.name)}', str(p.label), html.escape(p.material.name),
                     f"{p.fraction:.4f}", f"{lo:.4f} – {hi:.4f}",
                     "–" if ra is None else f"{ra:.1f} %"))
    n = r.phases[0].fields if r.phases else 0
    head = ("Phase", "Label", "Material", "Fraction", "95 % interval", "Relative accuracy")
    return ("<section><h2>Phase fractions</h2>" + grid(head, rows, raw=True)
            + f"<p class=\"note\">Area fraction estimates volume fraction (Delesse, 1847). "
            f"Interval from the field-to-field variation over {n} fields with Student t and n − 1 "
            "degrees of freedom, as ASTM E562 does for point counts.</p></section>")


def _warnings(analysis, r, colors) -> str:
    if not r.warnings:
        return ""
    items = "".join(f"<li>{html.escape(w)}</li>" for w in r.warnings)
    return f'<section class="warn"><h2>Warnings</h2><ul>{items}</ul></section>'


def _config(analysis, r, colors) -> str:
    text = r.config_toml or "# no config file: defaults and command-line options"
    return f"<section><h2>Configuration used</h2><pre>{html.escape(text)}</pre></section>"


def _raw_json(analysis, r, colors) -> str:
    blob = html.escape(json.dumps(record.to_dict(r), indent=1, allow_nan=False))
    return ("<section><details><summary>Result record (JSON)</summary>"
            f"<pre>{blob}</pre></details></section>")


def _windows(analysis, r, colors) -> str:
    w = r.windows
    if not w:
        return ""
    um = w.pixel_size_um
    ndim = len(w.shape)
    area_unit = ("µm²" if ndim == 2 else "µm³") if um else ("px²" if ndim == 2 else "voxels")
    scale = um ** ndim if um else 1.0
    length = "µm" if um else "px"
    rows = []
    for key, q in w.quantities.items():
        label, unit = quantity_label(key)
        side = q.required_side_um if um else q.required_side_px
        a3 = q.integral_range_px
        err = q.supported_error_pct
        gitman = q.gitman_smallest_side_px
        rows.append((label + (f" ({unit})" if unit else ""), sig(q.value, 4),
                     "–" if a3 is None else sig(a3 * scale, 3),
                     "–" if q.exponent is None else f"{q.exponent:.2f}",
                     "–" if err is None else f"±{sig(err)} %",
                     "–" if side is None else f"{sig(side, 3)} {length}",
                     "–" if q.images_needed is None else str(q.images_needed),
                     "–" if gitman is None else f"{sig(gitman * (um or 1), 3)} {length}"))
    head = ("Quantity", "Whole image", f"Integral range ({area_unit})", "Exponent α",
            f"Error supported ({w.confidence * 100:g} %)",
            f"Side for ±{sig(w.target_error_pct)} %", "Images of this size",
            "χ² criterion met from side")
    notes = "".join(f"<li>{html.escape(n)}</li>" for n in w.notes)
    return ("<section><h2>Is the image big enough? (window-size study)</h2>"
            f"<p><strong>{html.escape(w.verdict)}</strong></p>" + grid(head, rows)
            + f'<figure><img alt="window study" src="{figure_png(figures.window_figure(w))}">'
            "</figure>"
            + (f"<ul>{notes}</ul>" if notes else "")
            + f'<p class="note">The image was tiled into windows of side 1, 1/2, 1/4, … down to '
            f"{w.min_side_px} px (about {w.min_side_px / w.particle_diameter_px:.1f} "
            f"feature diameters of {w.particle_diameter_px:.1f} px). The variance over "
            "windows was fitted to D²(A) = D²·A₃/A (Kanit et al., Int. J. Solids Struct. 40, "
            f"2003) on windows of at least {w.fit_min_side_px:.0f} px; the exponent α of a "
            "free fit D² ∝ A^−α is shown as a check (1 for the law). The error supported is "
            "the relative half-width of the interval of the whole-image value; the side and "
            "the number of images are those the fit asks for the target error. χ² criterion: "
            "Gitman, Askes &amp; Sluys (Eng. Fract. Mech. 74, 2007), values in percent of the "
            f"mean. Edges: {html.escape(EDGE_NOTES[w.edges])}</p></section>")


def _particles(analysis, r, colors) -> str:
    parts = r.particles
    if not parts:
        return ""
    if analysis.phasemap.ndim == 3:
        return _particles_3d(parts)
    rows = []
    for name, q in parts.items():
        unit = "µm" if q.units == "um" else "px"
        ecd = q.ecd
        rows.append((name, q.count, _n(q.count_per_mm2), _n(ecd.mean), _n(ecd.std),
                     f"{_n(ecd.d10)}/{_n(ecd.d50)}/{_n(ecd.d90)}",
                     _n(q.aspect_ratio_mean), _n(q.hollow_fraction),
                     _n(q.inner_outer_ratio_mean), _n(q.spheres.mean if q.spheres else None),
                     _n(q.number_per_mm3), _n(q.mean_free_path), _n(q.contiguity), unit))
    head = ("Phase", "Count", "per mm²", "ECD mean", "ECD sd", "D10/D50/D90",
            "Aspect", "Hollow", "Inner/outer", "Sphere D mean", "per mm³", "Free path",
            "Contiguity", "Length unit")
    names = ", ".join(f"{pp.name} ({c})" for pp, c in zip(
        analysis.particles, ("yellow", "cyan", "magenta", "green") * 4))
    figs = [(f"Particle outlines: {names}", figure_png(figures.outlines(
        analysis.image, analysis.phasemap, analysis.particles)))]
    by_name = {p.name: colors[p.label] for p in analysis.phasemap.phases}
    if analysis.correlations:
        figs.append(("Two-point correlation", figure_png(figures.correlations(
            analysis.correlations, by_name))))
    cells = "".join(f'<figure><img alt="{t}" src="{u}"><figcaption>{t}</figcaption></figure>'
                    for t, u in figs)
    dists = "".join(f'<figure class="wide"><img alt="sizes of {html.escape(pp.name)}" '
                    f'src="{figure_png(figures.size_distributions(pp))}"></figure>'
                    for pp in analysis.particles)
    return ("<section><h2>Particles and stereology</h2>" + grid(head, rows)
            + '<p class="note">ECD: equivalent circle diameter of the sections; D10/D50/D90 by '
            "number, particles cut by the image edge weighted by the Miles–Lantuéjoul rule. "
            "Sphere diameters and number per mm³ come from the Saltykov area method (sections "
            "of spheres assumed); free path and contiguity after Fullman (1953) and Gurland "
            "(1958). Bootstrap 95 % intervals are in the JSON record.</p>"
            f'<div class="figs">{dists}</div><div class="figs">{cells}</div></section>')


def _particles_3d(parts) -> str:
    rows = []
    for name, q in parts.items():
        esd = q.sphere
        rows.append((name, q.count, q.count_measured, _n(q.number_per_mm3),
                     _n(esd.mean), _n(esd.std), f"{_n(esd.d10)}/{_n(esd.d50)}/{_n(esd.d90)}",
                     _n(q.hollow_fraction), _n(q.inner_outer_ratio_mean),
                     "µm" if q.units == "um" else "voxels"))
    head = ("Phase", "Count", "Measured", "per mm³", "ESD mean", "ESD sd", "D10/D50/D90",
            "Hollow", "Inner/outer", "Length unit")
    return ("<section><h2>Particles (3D, measured in the volume)</h2>" + grid(head, rows)
            + '<p class="note">ESD: equivalent sphere diameter of each particle\'s filled '
            "volume, counted voxel by voxel (no unfolding). Particles cut by a face of the "
            "volume are left out of the sizes, the others weighted by the 3D Miles–Lantuéjoul "
            "rule. A particle enclosing another phase is hollow; inner/outer = (hole volume / "
            "filled volume)^⅓.</p></section>")


def _n(value) -> str:
    if value is None:
        return "–"
    if isinstance(value, (int, np.integer)):
        return str(value)
    return f"{value:.4g}"


SCHEME_COLUMNS = (("conductivity", "k W/(m·K)", 1.0),
                  ("bulk_modulus", "K GPa", 1.0),
                  ("shear_modulus", "G GPa", 1.0),
                  ("youngs_modulus", "E GPa", 1.0),
                  ("poisson_ratio", "ν", 1.0),
                  ("expansion", "α 10⁻⁶/K", 1e6))


def computed_values(effective) -> dict:
    """The solver's isotropic values under the scheme columns (`Estimate` field names; empty
    when not solved). For a 2D section the moduli are those the 2D schemes give."""
    out = {}
    if effective is None:
        return out
    if effective.conductivity:
        out["conductivity"] = value_of(effective.conductivity.mean)
    el = effective.elasticity
    if el is not None:
        comp = el.scheme_comparable
        for attr in ("bulk_modulus", "shear_modulus", "youngs_modulus", "poisson_ratio"):
            out[attr] = getattr(comp, attr) if comp is not None else value_of(getattr(el, attr))
    ex = effective.expansion
    if ex is not None:
        out["expansion"] = ex.comparable_mean if ex.has_comparable else value_of(ex.mean)
    return {k: v for k, v in out.items() if v is not None}


def _schemes_table(table, computed, title, note):
    head = ("",) + tuple(c[1] for c in SCHEME_COLUMNS)
    rows = []

    def cell(value, scale):
        return "–" if value is None else f"{value * scale:.4g}"

    if computed:
        rows.append(("<strong>computed (solver)</strong>",) + tuple(
            f"<strong>{cell(computed.get(k), sc)}</strong>" for k, _, sc in SCHEME_COLUMNS))
    for side in ("lower", "upper"):
        rows.append((f"bound, {side}",) + tuple(
            "–" if k == "poisson_ratio" or k not in table.bounds
            else cell(getattr(table.bounds[k], side), sc) for k, _, sc in SCHEME_COLUMNS))
    for name, est in table.estimates.items():
        rows.append((html.escape(name),) + tuple(cell(getattr(est, k), sc)
                                                 for k, _, sc in SCHEME_COLUMNS))
    return (f"<h3>{html.escape(title)}</h3>" + grid(head, rows, raw=True)
            + f'<p class="note">{html.escape(note)}</p>')


def _schemes(analysis, r, colors) -> str:
    if not r.schemes:
        return ""
    two_d = analysis.phasemap.ndim == 2
    parts = [_schemes_table(
        r.schemes, computed_values(r.effective),
        "Circular cylinders, transverse plane (the model a solved 2D section describes)"
        if two_d else "Spherical particles",
        "Bounds: Hashin–Shtrikman (conductivity, moduli), Schapery / Rosen–Hashin "
        "(two-phase expansion). For 2D, K is the plane-strain transverse bulk modulus.")]
    if r.schemes_3d:
        parts.append(_schemes_table(
            r.schemes_3d, {},
            "Spherical particles (the 3D particle composite; no 3D solve of a 2D section)",
            "These estimates treat the section's phases as spheres in 3D. They are the "
            "analytical counterpart of the 3D composite, not of the 2D solve above."))
    notes = "".join(f"<li>{html.escape(n)}</li>" for n in r.notes if n.startswith("schemes"))
    return ("<section><h2>Bounds and mean-field estimates</h2>" + "".join(parts)
            + (f'<ul class="note">{notes}</ul>' if notes else "") + "</section>")


def _effective(analysis, r, colors) -> str:
    eff = r.effective
    if not eff:
        return ""
    rows, facts = [], []
    c, e, x = eff.conductivity, eff.elasticity, eff.expansion
    two_d = eff.dimension == 2
    if c:
        rows.append(("Thermal conductivity (mean of the tensor)", f"{value_of(c.mean):.4g} W/(m·K)"))
        facts.append(("conductivity", c.solver))
    if e:
        rows += [("Young's modulus (in-plane, isotropic part)" if two_d
                  else "Young's modulus (isotropic part)", f"{value_of(e.youngs_modulus):.4g} GPa"),
                 ("Poisson's ratio", f"{value_of(e.poisson_ratio):.4g}"),
                 ("Bulk modulus" + (" (in-plane, areal)" if two_d else ""),
                  f"{value_of(e.bulk_modulus):.4g} GPa"),
                 ("Shear modulus", f"{value_of(e.shear_modulus):.4g} GPa")]
        if e.axial:
            rows += [("Axial Young's modulus (along the prism)",
                      f"{e.axial.youngs_modulus:.4g} GPa"),
                     ("Axial shear modulus", f"{e.axial.shear_modulus:.4g} GPa")]
        facts.append(("elasticity", e.solver))
    if x:
        rows.append(("Thermal expansion (mean" + (", in-plane)" if two_d else ")"),
                     f"{value_of(x.mean) * 1e6:.4g} ×10⁻⁶/K"))
        if x.axial is not None:
            rows.append(("Axial thermal expansion", f"{x.axial * 1e6:.4g} ×10⁻⁶/K"))
        facts.append(("expansion", x.solver))
    tens = []
    if c:
        tens.append(("Conductivity tensor, W/(m·K)", c.tensor, 1.0))
    if e:
        tens.append(("Stiffness, Voigt (" + ("xx, yy, xy" if two_d else
                                             "xx, yy, zz, yz, xz, xy") + "), GPa",
                     e.stiffness, 1.0))
    if x:
        tens.append(("Thermal expansion tensor, 10⁻⁶/K", x.tensor, 1e6))
    tensor_html = "".join(f"<h3>{html.escape(t)}</h3>" + _matrix(m, sc) for t, m, sc in tens)
    fact_rows = [(what, f.method, str(f.iterations), f"{f.seconds:.2f} s",
                  f"{f.tolerance:g}", "yes" if f.converged else "NO")
                 for what, f in facts]
    maps = []
    if "heat_flux" in analysis.field_maps:
        maps.append(("Heat-flux magnitude under a unit mean gradient along x",
                     figure_png(figures.field_map(analysis.field_maps["heat_flux"],
                                                  "|q|, W/m² per K/m", "inferno"))))
    if "von_mises" in analysis.field_maps:
        maps.append(("von Mises stress under a unit uniaxial mean stress along x",
                     figure_png(figures.field_map(analysis.field_maps["von_mises"],
                                                  "σ_vM / σ̄", "viridis"))))
    cells = "".join(f'<figure><img alt="{html.escape(t)}" src="{u}"><figcaption>'
                    f"{html.escape(t)}</figcaption></figure>" for t, u in maps)
    note = (f'<p class="prism"><strong>Model:</strong> {html.escape(eff.model)}. '
            f'{html.escape(eff.note or "")}</p>')
    return ("<section><h2>Effective properties (computed on the phase map)</h2>" + note
            + kv_table(rows) + tensor_html
            + "<h3>Solvers</h3>" + grid(("property", "method", "iterations", "time",
                                         "tolerance", "converged"), fact_rows)
            + f'<p class="note">Axes: {html.escape(eff.axes)}. Periodic pixel-element '
            "solution; the image is treated as one periodic cell.</p>"
            + (f'<div class="figs">{cells}</div>' if cells else "") + "</section>")


def _matrix(m, scale) -> str:
    body = "".join("<tr>" + "".join(f"<td>{v * scale:.4g}</td>" for v in row) + "</tr>"
                   for row in m)
    return f'<table class="grid matrix"><tbody>{body}</tbody></table>'


def _shock(analysis, r, colors) -> str:
    sh = r.shock
    if not sh:
        return ""
    rows = [(f"{sym}: {INDEX_WORDS[attr]}",
             "–" if getattr(sh, attr) is None else f"{getattr(sh, attr):.4g} {unit}")
            for attr, sym, unit in (("R", "R", "K"), ("R_prime", "R′", "W/m"),
                                    ("R_4prime", "R′′′′", "m"))]
    return ("<section><h2>Thermal-shock indices (Hasselman, 1969)</h2>" + kv_table(rows)
            + f'<p class="note">From the computed properties ({html.escape(sh.model)}). '
            f"{html.escape(sh.caution)}</p></section>")


def _estimate_3d(analysis, r, colors) -> str:
    e3 = r.effective_3d
    if not e3:
        return ""
    eff = e3.effective
    labels = {"mean_W_mK": ("Thermal conductivity", "W/(m·K)", 1.0, eff.conductivity, "mean"),
              "youngs_modulus_GPa": ("Young's modulus", "GPa", 1.0, eff.elasticity,
                                     "youngs_modulus"),
              "shear_modulus_GPa": ("Shear modulus", "GPa", 1.0, eff.elasticity,
                                    "shear_modulus"),
              "poisson_ratio": ("Poisson's ratio", "", 1.0, eff.elasticity, "poisson_ratio"),
              "mean_per_K": ("Thermal expansion", "10⁻⁶/K", 1e6, eff.expansion, "mean")}
    rows, sentences = [], []
    for v in e3.versus_2d:
        name, unit, sc, block, attr = labels.get(v.quantity, (v.quantity, "", 1.0, None, ""))
        spread = getattr(block, attr) if block is not None else None
        ci = spread.ci95 if isinstance(spread, Spread) else None
        ci_txt = "–" if not ci or ci[0] is None else f"{ci[0] * sc:.4g} – {ci[1] * sc:.4g}"
        rows.append((name + (f" ({unit})" if unit else ""), f"{v.section_2d * sc:.4g}",
                     f"{v.estimate_3d * sc:.4g}", ci_txt, f"{v.difference_pct:+.1f} %"))
        if v.sentence:
            sentences.append(v.sentence)
    vol = e3.volume
    facts = [("Reconstructions", str(e3.realizations)),
             ("Voxels", " × ".join(str(n) for n in vol.voxels)),
             ("Box / D90", f"{vol.box_over_d90:.3g}" if vol.box_over_d90 else "–"),
             ("D10 in voxels", f"{vol.d10_voxels:.3g}" if vol.d10_voxels else "–")]
    if vol.compromise:
        facts.append(("Compromise", vol.compromise))
    items = "".join(f"<li>{html.escape(s)}</li>" for s in sentences)
    return ("<section><h2>3D estimate from this section</h2>"
            + grid(("Quantity", "2D section (prismatic)", "3D estimate", "95 % interval",
                    "3D vs 2D"), rows)
            + (f"<ul>{items}</ul>" if items else "") + kv_table(facts)
            + f'<p class="note">{html.escape(e3.confidence or "")} Periodic packings of '
            "(hollow) spheres with the section's fractions and unfolded size distributions, "
            "solved in 3D; valid for sphere-like particles — elongated or interconnected "
            "phases need a real volume (docs/methods.md).</p></section>")


SECTIONS = [_caution, _warnings, _source, _images, _fractions, _effective, _estimate_3d,
            _schemes, _shock, _particles, _windows, _config, _raw_json]


def _png_image(img) -> str:
    fig, ax = new_axes((4.6, 4.6))
    ax.imshow(img, cmap="gray", interpolation="nearest")
    ax.set_axis_off()
    return figure_png(fig)


def _overlay_png(img, labels, phases, colors) -> str:
    order = [p.label for p in phases]
    lut = np.zeros(max(order) + 1, dtype=int)
    lut[order] = np.arange(len(order))
    cmap = ListedColormap([colors[v] for v in order])
    fig, ax = new_axes((4.6, 4.6))
    if img is not None and img.ndim == 2 and img.shape == labels.shape:
        ax.imshow(img, cmap="gray", interpolation="nearest")
        ax.imshow(lut[labels], cmap=cmap, vmin=-0.5, vmax=len(order) - 0.5, alpha=0.55,
                  interpolation="nearest")
    else:
        ax.imshow(lut[labels], cmap=cmap, vmin=-0.5, vmax=len(order) - 0.5,
                  interpolation="nearest")
    ax.set_axis_off()
    return figure_png(fig)
