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
from ..core.materials import library
from ..properties.records import SCALARS, Spread, value_of
from ..properties.shock import INDEX_WORDS
from . import figures, record
from .htmlkit import (CAUTION_SECTION, CSS, PALETTE, csp_meta, figure_png, grid, kv_table,
                      new_axes)
from .units import (MEASURED_KINDS, column_words, heading, number, scale_of, show,
                    tensor_cells, unit_text, with_uncertainty, with_unit)

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
{csp_meta()}
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
            ("Shape (pixels)", " × ".join(str(n) for n in s.shape)), ("Pixel size", px),
            ("Field of view", figures.field_size(s.shape, s.pixel_size_um)[len("field "):])]
    if s.cropped_bottom_px:
        rows.append(("Cropped at the bottom", f"{s.cropped_bottom_px} rows (the microscope's "
                     "information band, cut before the analysis)"))
    for note in r.notes:
        if not note.startswith("schemes"):
            rows.append(("Note", note))
    if analysis.thresholds:
        rows.append(("Thresholds (grey levels)",
                     ", ".join(number(t) for t in analysis.thresholds)))
    return "<section><h2>Section</h2>" + kv_table(rows) + "</section>"


def _images(analysis, r, colors) -> str:
    pm = analysis.phasemap
    img = analysis.image
    um = pm.voxel_size_um
    field = figures.field_size(pm.shape, um)
    figs = []
    if pm.ndim == 3:
        vol = img if img is not None and img.shape == pm.shape else None
        nz, ny, nx = pm.shape
        for title, index in ((f"slice z = {nz // 2} (x–y plane)", (nz // 2, slice(None), slice(None))),
                             (f"y = {ny // 2} (x–z plane)", (slice(None), ny // 2, slice(None))),
                             (f"x = {nx // 2} (y–z plane)", (slice(None), slice(None), nx // 2))):
            plane = pm.labels[index]
            figs.append((f"Orthogonal section, {title}; {figures.field_size(plane.shape, um)}",
                         _overlay_png(None if vol is None else vol[index], plane, pm.phases,
                                      colors, um)))
    else:
        if img is not None:
            figs.append((f"Micrograph; {field}", _png_image(img, um)))
        figs.append((f"Phase map overlay; {field}",
                     _overlay_png(img, pm.labels, pm.phases, colors, um)))
    cells = "".join(f'<figure><img alt="{html.escape(t)}" src="{u}"><figcaption>{html.escape(t)}'
                    "</figcaption></figure>" for t, u in figs)
    legend = "".join(f'<span class="swatch" style="background:{colors[p.label]}"></span>'
                     f"{html.escape(p.name)} &nbsp; " for p in pm.phases)
    title = "Phase map (orthogonal sections of the volume)" if pm.ndim == 3 else "Phase map"
    hist = ""
    if (pm.ndim == 2 and img is not None and img.ndim == 2 and analysis.thresholds
            and len(analysis.thresholds) == len(pm.phases) - 1):
        hist = ('<figure class="wide"><img alt="grey-level histogram" src="'
                + figure_png(figures.grey_histogram(img, analysis.thresholds,
                                                    [p.name for p in pm.phases],
                                                    [colors[p.label] for p in pm.phases]))
                + '"><figcaption>Grey-level histogram of the micrograph; the red lines are '
                "the class boundaries used for the phase map.</figcaption></figure>")
    return (f'<section><h2>{title}</h2><div class="figs">{cells}</div><p>{legend}</p>'
            f"{hist}</section>")


def _fractions(analysis, r, colors) -> str:
    rows, split = [], []
    for p in r.phases:
        lo, hi = p.fraction_ci95
        ra = p.relative_accuracy_pct
        rows.append((f'<span class="swatch" style="background:{colors[p.label]}"></span>'
                     f'{html.escape(p.name)}', str(p.label), html.escape(p.material.name),
                     f"{p.fraction:.4f}", f"{lo:.4f} – {hi:.4f}",
                     "–" if ra is None else f"{ra:.1f} %"))
        inside = p.inside_particles or 0.0
        if inside > 0.0:
            rows.append((f"&nbsp;&nbsp;↳ {html.escape(p.name)} outside particles (open)", "",
                         "", f"{max(0.0, p.fraction - inside):.4f}", "", ""))
            rows.append((f"&nbsp;&nbsp;↳ {html.escape(p.name)} inside particles (cores of "
                         "hollow particles)", "", "", f"{inside:.4f}", "", ""))
            split.append(p.name)
    n = r.phases[0].fields if r.phases else 0
    head = ("Phase", "Label", "Material", "Fraction", "95 % interval", "Relative accuracy")
    split_note = ""
    if split:
        split_note = (f" The {html.escape(', '.join(split))} fraction is split into the part "
                      "outside particles (open pores between particles) and the part enclosed "
                      "by particles of another phase (the cores of hollow particles); the "
                      "bounds and estimates below count the cores as part of the hollow "
                      "particles.")
    return ("<section><h2>Phase fractions</h2>" + grid(head, rows, raw=True)
            + f"<p class=\"note\">Area fraction estimates volume fraction (Delesse, 1847). "
            f"Interval from the field-to-field variation over {n} fields with Student t and "
            f"n − 1 degrees of freedom, as ASTM E562 does for point counts.{split_note}</p>"
            "</section>")


def _value_origin(material) -> str:
    """'library', 'library, changed: …' or 'given' for the values of one phase."""
    lib = library().get(material.name)
    if lib is None:
        return "given"
    if material.source == lib.source:
        return "library"
    _, _, changed = material.source.partition("; overridden: ")
    return f"library, changed: {changed}" if changed else "given"


def _material_value(value, kind):
    if value is None:
        return "–"
    if np.ndim(value) == 2:
        diag = np.diag(np.asarray(value, dtype=float))
        return "tensor, diagonal " + ", ".join(number(v * scale_of(kind)) for v in diag)
    return number(float(value) * scale_of(kind))


def _materials(analysis, r, colors) -> str:
    if not any(p.material.conductivity is not None or p.material.youngs_modulus is not None
               or p.material.stiffness is not None for p in r.phases):
        return ""
    rows, sources = [], []
    for p in r.phases:
        m = p.material
        origin = _value_origin(m)
        rows.append((p.name, m.name, _material_value(m.conductivity, "conductivity"),
                     _material_value(m.youngs_modulus, "modulus")
                     + (" (full stiffness given)" if m.stiffness is not None else ""),
                     _material_value(m.poisson_ratio, "poisson"),
                     _material_value(m.expansion, "expansion"), origin))
        by_text: dict[str, list[str]] = {}
        for prop, text in (m.sources or {}).items():
            by_text.setdefault(text, []).append(prop.replace("_", " "))
        if len(by_text) == 1 and len(next(iter(by_text.values()))) > 1:
            sources.append((f"{p.name}: all values", next(iter(by_text))))
        else:
            sources += [(f"{p.name}: {', '.join(props)}", text)
                        for text, props in by_text.items()]
        if not by_text:
            sources.append((p.name, m.source))
    head = ("Phase", "Material", heading("k", "conductivity"), heading("E", "modulus"), "ν",
            heading("α", "expansion"), "Values from")
    return ("<section><h2>Materials used</h2>" + grid(head, rows)
            + "<h3>Sources of the values</h3>" + kv_table(sources)
            + '<p class="note">The values each phase was given in the solve. Library values '
            "are typical room-temperature figures (<code>polisect materials</code>); a grade, a "
            "porosity below the pixel size or a temperature may change them by tens of per "
            "cent: check them against data for your material.</p></section>")


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
        label, unit, sc = column_words(key)
        side = q.required_side_um if um else q.required_side_px
        a3 = q.integral_range_px
        err = q.supported_error_pct
        gitman = q.gitman_smallest_side_px
        rows.append((label + (f" ({unit})" if unit else ""), number(q.value * sc),
                     "–" if a3 is None else number(a3 * scale, 3),
                     "–" if q.exponent is None else f"{q.exponent:.2f}",
                     "–" if err is None else f"±{number(err, 2)} %",
                     "–" if side is None else f"{number(side, 3)} {length}",
                     "–" if q.images_needed is None else str(q.images_needed),
                     "–" if gitman is None else f"{number(gitman * (um or 1), 3)} {length}"))
    head = ("Quantity", "Whole image", f"Integral range ({area_unit})", "Exponent α",
            f"Error supported ({w.confidence * 100:g} %)",
            f"Side for ±{number(w.target_error_pct, 2)} %", "Images of this size",
            "χ² criterion met from side")
    notes = "".join(f"<li>{html.escape(n)}</li>" for n in w.notes)
    return ("<section><h2>Is the image big enough? (window-size study)</h2>"
            f"<p><strong>{html.escape(w.verdict)}</strong></p>" + grid(head, rows)
            + '<figure class="wide"><img alt="window study" '
            f'src="{figure_png(figures.window_figure(w))}"></figure>'
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
    rows, stereo = [], []
    units = {"um" if q.units == "um" else "px" for q in parts.values()}
    unit = "µm" if units == {"um"} else "px"
    for name, q in parts.items():
        ecd = q.ecd
        rows.append((name, q.count, _n(q.count_per_mm2), _n(ecd.mean), _n(ecd.std),
                     f"{_n(ecd.d10)} / {_n(ecd.d50)} / {_n(ecd.d90)}",
                     _n(q.aspect_ratio_mean), _pct(q.hollow_fraction),
                     _n(q.inner_outer_ratio_mean)))
        stereo.append((name, _n(q.spheres.mean if q.spheres else None),
                       _n(q.number_per_mm3), _n(q.mean_free_path), _n(q.contiguity)))
    head = ("Phase", "Count", "Number per mm²", f"ECD mean ({unit})", f"ECD sd ({unit})",
            f"ECD D10 / D50 / D90 ({unit})", "Aspect ratio", "Hollow particles",
            "Inner / outer diameter")
    head_3d = ("Phase", f"Sphere diameter, mean ({unit})", "Number per mm³",
               f"Mean free path ({unit})", "Contiguity")
    names = ", ".join(f"{pp.name} ({c})" for pp, c in zip(
        analysis.particles, ("yellow", "cyan", "magenta", "green") * 4))
    figs = [(f"Particle outlines: {names}", figure_png(figures.outlines(
        analysis.image, analysis.phasemap, analysis.particles)))]
    by_name = {p.name: colors[p.label] for p in analysis.phasemap.phases}
    if analysis.correlations:
        figs.append(("Two-point correlation", figure_png(figures.correlations(
            analysis.correlations, by_name))))
    cells = "".join(f'<figure><img alt="{html.escape(t)}" src="{u}"><figcaption>{html.escape(t)}'
                    "</figcaption></figure>"
                    for t, u in figs)
    dists = "".join(f'<figure class="wide"><img alt="sizes of {html.escape(pp.name)}" '
                    f'src="{figure_png(figures.size_distributions(pp))}"></figure>'
                    for pp in analysis.particles)
    return ("<section><h2>Particles and stereology</h2><h3>Sections (2D)</h3>"
            + grid(head, rows) + "<h3>Stereology (3D from the sections)</h3>"
            + grid(head_3d, stereo)
            + '<p class="note">ECD: equivalent circle diameter of the sections; D10/D50/D90 by '
            "number, particles cut by the image edge weighted by the Miles–Lantuéjoul rule. "
            "Sphere diameters and number per mm³ come from the Saltykov area method (sections "
            "of spheres assumed); free path and contiguity after Fullman (1953) and Gurland "
            "(1958). Hollow particles: the share of particles that enclose another phase; "
            "inner / outer: the mean ratio of hole to particle diameter of those. Bootstrap "
            "95 % intervals are in the JSON record.</p>"
            f'<div class="figs">{dists}</div><div class="figs">{cells}</div></section>')


def _particles_3d(parts) -> str:
    rows = []
    unit = "µm" if all(q.units == "um" for q in parts.values()) else "voxels"
    for name, q in parts.items():
        esd = q.sphere
        rows.append((name, q.count, q.count_measured, _n(q.number_per_mm3),
                     _n(esd.mean), _n(esd.std),
                     f"{_n(esd.d10)} / {_n(esd.d50)} / {_n(esd.d90)}",
                     _pct(q.hollow_fraction), _n(q.inner_outer_ratio_mean)))
    head = ("Phase", "Count", "Measured", "Number per mm³", f"ESD mean ({unit})",
            f"ESD sd ({unit})", f"ESD D10 / D50 / D90 ({unit})", "Hollow particles",
            "Inner / outer diameter")
    return ("<section><h2>Particles (3D, measured in the volume)</h2>" + grid(head, rows)
            + '<p class="note">ESD: equivalent sphere diameter of each particle\'s filled '
            "volume, counted voxel by voxel (no unfolding). Particles cut by a face of the "
            "volume are left out of the sizes, the others weighted by the 3D Miles–Lantuéjoul "
            "rule. A particle enclosing another phase is hollow; inner/outer = (hole volume / "
            "filled volume)^⅓.</p></section>")


def _n(value) -> str:
    return number(value)


def _pct(share) -> str:
    """A share 0–1 as a percentage (the share of particles that are hollow)."""
    return "–" if share is None else f"{number(share * 100, 3)} %"


SCHEME_COLUMNS = (("conductivity", "k", "conductivity"),
                  ("bulk_modulus", "K", "modulus"),
                  ("shear_modulus", "G", "modulus"),
                  ("youngs_modulus", "E", "modulus"),
                  ("poisson_ratio", "ν", "poisson"),
                  ("expansion", "α", "expansion"))
"""`Estimate` field, symbol and kind of quantity of the scheme table's columns."""

SCHEME_NAMES = {
    "voigt": "Voigt (arithmetic mean; Wiener upper bound)",
    "reuss": "Reuss (harmonic mean; Wiener lower bound)",
    "mori-tanaka": "Mori–Tanaka",
    "self-consistent": "Self-consistent (Bruggeman)",
    "differential": "Differential effective medium",
    "generalized-self-consistent": "Generalized self-consistent (Christensen–Lo)",
    "composite-spheres": "Composite spheres assemblage (Hashin)",
    "composite-cylinders": "Composite cylinders assemblage (Hashin–Rosen)",
    "turner": "Turner (expansion)",
    "kerner": "Kerner (expansion)",
}
"""Scheme key of the result → the name people know it by."""

BOUNDED = {"conductivity", "bulk_modulus", "shear_modulus", "youngs_modulus", "expansion"}
"""Columns whose bounds mean something (Poisson's ratio has no bounds of its own)."""


def scheme_name(key: str) -> str:
    """The proper name of a scheme key (the key itself when unknown)."""
    return SCHEME_NAMES.get(key, key)


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


def _bound_cell(bound, side: str, key: str, kind: str) -> str:
    if key not in BOUNDED or bound is None:
        return "–"
    value = getattr(bound, side)
    if value is None:
        return "–"
    return number(value * scale_of(kind), trim=False)


def _schemes_table(table, computed, title, computed_label):
    head = ("",) + tuple(heading(sym, kind) for _, sym, kind in SCHEME_COLUMNS)
    rows = []

    def cell(value, kind):
        return "–" if value is None else number(value * scale_of(kind), trim=False)

    if computed:
        rows.append((f"<strong>{html.escape(computed_label)}</strong>",) + tuple(
            f"<strong>{cell(computed.get(k), kind)}</strong>" for k, _, kind in SCHEME_COLUMNS))
    for side, words in (("lower", "Hashin–Shtrikman lower bound"),
                        ("upper", "Hashin–Shtrikman upper bound")):
        rows.append((words,) + tuple(_bound_cell(table.bounds.get(k), side, k, kind)
                                     for k, _, kind in SCHEME_COLUMNS))
    for name, est in table.estimates.items():
        rows.append((html.escape(scheme_name(name)),) + tuple(
            cell(getattr(est, k), kind) for k, _, kind in SCHEME_COLUMNS))
    return f"<h3>{html.escape(title)}</h3>" + grid(head, rows, raw=True)


def _scheme_notes(r, two_d: bool) -> list[str]:
    """Plain-words notes on the bounds and estimates of this result."""
    notes = ["The bounds are those of Hashin and Shtrikman (1962, 1963) on conductivity and on "
             "the bulk and shear moduli; the Young's modulus bounds follow from those. Every "
             "isotropic arrangement of these phases lies between them. Poisson's ratio has no "
             "bounds of its own and none is shown."]
    has_alpha = r.schemes is not None and any(
        b is not None and b.lower is not None
        for k, b in r.schemes.bounds.items() if k == "expansion")
    notes.append("Expansion bounds (Rosen and Hashin 1970; Schapery 1968) exist for two phases "
                 "only and are shown only then." if not has_alpha else
                 "Expansion bounds: Rosen and Hashin (1970) for cylinders, Schapery (1968) for "
                 "spheres, two phases.")
    notes.append("The estimates assume a matrix with particles in it (Mori–Tanaka, "
                 "differential, generalized self-consistent, composite assemblage) or no "
                 "matrix at all (self-consistent). Their expansion follows from each scheme's "
                 "bulk modulus by Levin's relation (exact for two phases).")
    if two_d:
        notes.append("For the 2D section, the table is the model of long parallel cylinders seen "
                     "across: K here is the transverse bulk modulus in plane strain (k_T, with "
                     "the axial strain held at zero), and E, ν and α are the transverse values "
                     "of a prism free to stretch along its axis.")
    if any("hollow particles" in n for n in r.notes):
        notes.append("Hollow particles are modelled as hollow spheres (cylinders): the pores "
                     "inside them count as their cores, not as free porosity.")
    matrix = [n for n in r.notes if "as the matrix" in n]
    if matrix:
        name = matrix[0].split(" use ")[-1].replace(" as the matrix", "").strip("'")
        notes.append(f"The matrix of the matrix-based schemes is {name} (the largest phase, or "
                     "the one given).")
    return notes


def _schemes(analysis, r, colors) -> str:
    if not r.schemes:
        return ""
    two_d = analysis.phasemap.ndim == 2
    parts = [_schemes_table(
        r.schemes, computed_values(r.effective),
        "Long parallel cylinders, across (the model a solved 2D section describes)"
        if two_d else "Spherical particles",
        "This section, solved (transverse k_T for K)" if two_d else "This volume, solved")]
    if r.schemes_3d:
        parts.append(_schemes_table(
            r.schemes_3d, {},
            "Spherical particles in 3D (the particle composite; no 3D solve of a 2D section)",
            ""))
        parts.append('<p class="note">The spheres table treats the section\'s phases as '
                     "spheres in 3D: it is the analytical counterpart of the 3D composite, "
                     "not of the 2D solve above.</p>")
    items = "".join(f"<li>{html.escape(n)}</li>" for n in _scheme_notes(r, two_d))
    raw = "".join(f"<li>{html.escape(n)}</li>" for n in r.notes if n.startswith("schemes"))
    return ("<section><h2>Bounds and mean-field estimates</h2>" + "".join(parts)
            + f'<ul class="note">{items}</ul>'
            + (f"<details><summary>Scheme notes as recorded</summary><ul class=\"note\">{raw}"
               "</ul></details>" if raw else "") + "</section>")


def _property_rows(eff) -> list[tuple[str, str, str]]:
    """(quantity, value, what it is) rows of the solved properties."""
    c, e, x = eff.conductivity, eff.elasticity, eff.expansion
    two_d = eff.dimension == 2
    plane = "in-plane " if two_d else ""
    rows = []
    if c:
        rows.append(("Thermal conductivity", show(value_of(c.mean), "conductivity"),
                     f"mean of the {plane}conductivity tensor below"))
    if e:
        rows += [("Young's modulus", show(value_of(e.youngs_modulus), "modulus"),
                  f"isotropic part of the {plane}stiffness below"),
                 ("Poisson's ratio", number(value_of(e.poisson_ratio), 3, trim=False),
                  f"isotropic part of the {plane}stiffness below")]
        if two_d:
            rows.append(("Bulk modulus, areal K_A", show(value_of(e.bulk_modulus), "modulus"),
                         "equal stretch in the plane, the prism free to stretch along its "
                         "axis (the stiffness below)"))
            comp = e.scheme_comparable
            if comp is not None and comp.bulk_modulus is not None:
                rows.append(("Bulk modulus, transverse plane-strain k_T",
                             show(comp.bulk_modulus, "modulus"),
                             "the same solve with the axial strain held at zero: the quantity "
                             "the cylinder bounds and estimates give"))
        else:
            rows.append(("Bulk modulus", show(value_of(e.bulk_modulus), "modulus"),
                         "isotropic part of the stiffness below"))
        rows.append(("Shear modulus", show(value_of(e.shear_modulus), "modulus"),
                     f"isotropic part of the {plane}stiffness below"))
        if e.axial:
            rows += [("Axial Young's modulus", show(e.axial.youngs_modulus, "modulus"),
                      "along the prism (the viewing direction)"),
                     ("Axial shear modulus", show(e.axial.shear_modulus, "modulus"),
                      "shear along the prism")]
    if x:
        rows.append(("Thermal expansion", show(value_of(x.mean), "expansion"),
                     f"mean of the {plane}expansion tensor below"))
        if x.axial is not None:
            rows.append(("Axial thermal expansion", show(x.axial, "expansion"),
                         "along the prism"))
    return rows


def _verification_html(v, facts) -> str:
    """What the second solver found (or that it did not run)."""
    if v is None:
        return ('<p class="note"><strong>Second solver: not run.</strong> The two solvers '
                "(FFT-preconditioned and assembled finite elements) solve the same equations; "
                "run with <code>--verify</code> (or <code>[solve] verify = true</code>) to "
                "solve again with the other one and state their largest difference.</p>")
    where = ("on the whole map" if v.crop is None else
             f"on a centred crop of {' × '.join(map(str, v.crop))} px (the whole map "
             "would need too much memory or time for the assembled solver)")
    rows = [(prop, f"{number(d, 2)}") for prop, d in v.differences.items()]
    verdict = ("agree" if v.max_relative_difference <= 10 * v.tolerance
               else "DIFFER by more than ten times the solver tolerance")
    return (f"<h3>Second solver (verification)</h3><p>Solved again with <strong>"
            f"{html.escape(v.second_method)}</strong> {html.escape(where)} "
            f"({number(v.seconds, 2)} s). Largest relative difference from "
            f"{html.escape(v.method)}: <strong>{number(v.max_relative_difference, 2)}</strong>"
            f" — the solvers {verdict} (tolerance {number(v.tolerance, 2)}).</p>"
            + grid(("property", "largest relative difference of the tensor"), rows)
            + '<p class="note">Difference: the largest entry of |A − B| over the largest '
            "entry of |A|, for each effective tensor.</p>")


def _effective(analysis, r, colors) -> str:
    eff = r.effective
    if not eff:
        return ""
    facts = []
    c, e, x = eff.conductivity, eff.elasticity, eff.expansion
    two_d = eff.dimension == 2
    if c:
        facts.append(("conductivity", c.solver))
    if e:
        facts.append(("elasticity", e.solver))
    if x:
        facts.append(("expansion", x.solver))
    tens = []
    if c:
        tens.append(("Conductivity tensor, W/(m·K)", c.tensor, 1.0))
    if e:
        tens.append(("Stiffness, Voigt (" + ("xx, yy, xy" if two_d else
                                             "xx, yy, zz, yz, xz, xy") + "), GPa",
                     e.stiffness, 1.0))
    if x:
        tens.append((f"Thermal expansion tensor, {unit_text('expansion')}", x.tensor,
                     scale_of("expansion")))
    tensor_html = "".join(f"<h3>{html.escape(t)}</h3>" + _matrix(m, sc) for t, m, sc in tens)
    fact_rows = [(what, f.method, str(f.iterations), f"{number(f.seconds, 3)} s",
                  number(f.tolerance, 2), "yes" if f.converged else "NO")
                 for what, f in facts]
    maps = []
    um = analysis.phasemap.voxel_size_um
    if "heat_flux" in analysis.field_maps:
        maps.append(("Heat-flux magnitude under a unit mean gradient along x",
                     figure_png(figures.field_map(analysis.field_maps["heat_flux"],
                                                  "|q|, W/m² per K/m", "inferno", um))))
    if "von_mises" in analysis.field_maps:
        maps.append(("von Mises stress under a unit uniaxial mean stress along x",
                     figure_png(figures.field_map(analysis.field_maps["von_mises"],
                                                  "σ_vM / σ̄", "viridis", um))))
    cells = "".join(f'<figure><img alt="{html.escape(t)}" src="{u}"><figcaption>'
                    f"{html.escape(t)}</figcaption></figure>" for t, u in maps)
    note = (f'<p class="prism"><strong>Model:</strong> {html.escape(eff.model)}. '
            f'{html.escape(eff.note or "")}</p>')
    bulk_note = ""
    if two_d and e is not None:
        bulk_note = ('<p class="note">Two bulk moduli, one solve: K_A is read from the '
                     "in-plane stiffness with the prism free to stretch along its axis; k_T "
                     "holds the axial strain at zero (for an isotropic solid k_T = K + G/3). "
                     "The bounds and estimates table compares k_T.</p>")
    return ("<section><h2>Effective properties (computed on the phase map)</h2>" + note
            + grid(("Quantity", "Value", "What it is"), _property_rows(eff)) + bulk_note
            + tensor_html
            + "<h3>Solvers</h3>" + grid(("property", "method", "iterations", "time",
                                         "tolerance", "converged"), fact_rows)
            + _verification_html(r.verification, facts)
            + f'<p class="note">Axes: {html.escape(eff.axes)}. Periodic pixel-element '
            "solution; the image is treated as one periodic cell. Tensor entries below "
            "10⁻⁶ of the largest are solver noise and shown as 0; all entries to the "
            "resolution of the largest.</p>"
            + (f'<div class="figs">{cells}</div>' if cells else "") + "</section>")


def _matrix(m, scale) -> str:
    body = "".join("<tr>" + "".join(f"<td>{v}</td>" for v in row) + "</tr>"
                   for row in tensor_cells(m, scale))
    return f'<table class="grid matrix"><tbody>{body}</tbody></table>'


def _shock(analysis, r, colors) -> str:
    sh = r.shock
    if not sh:
        return ""
    rows = [(f"{sym}: {INDEX_WORDS[attr]}", show(getattr(sh, attr), attr))
            for attr, sym in (("R", "R"), ("R_prime", "R′"), ("R_4prime", "R′′′′"))]
    return ("<section><h2>Thermal-shock indices (Hasselman, 1969)</h2>" + kv_table(rows)
            + f'<p class="note">From the computed properties ({html.escape(sh.model)}). '
            f"{html.escape(sh.caution)}</p></section>")


def _estimate_3d(analysis, r, colors) -> str:
    e3 = r.effective_3d
    if not e3:
        return ""
    eff = e3.effective
    labels = {"conductivity": ("Thermal conductivity", "W/(m·K)", 1.0),
              "youngs_modulus": ("Young's modulus", "GPa", 1.0),
              "shear_modulus": ("Shear modulus", "GPa", 1.0),
              "poisson_ratio": ("Poisson's ratio", "", 1.0),
              "expansion": ("Thermal expansion", "10⁻⁶/K", 1e6)}
    rows, sentences = [], []
    for v in e3.versus_2d:
        name, unit, sc = labels[v.quantity]
        block, attr = SCALARS[v.quantity]
        spread = getattr(getattr(eff, block), attr, None) if getattr(eff, block) else None
        ci = spread.ci95 if isinstance(spread, Spread) else None
        ci_txt = ("–" if not ci or ci[0] is None
                  else f"{number(ci[0] * sc)} – {number(ci[1] * sc)}")
        rows.append((name + (f" ({unit})" if unit else ""), number(v.section_2d * sc),
                     number(v.estimate_3d * sc), ci_txt, f"{v.difference_pct:+.1f} %"))
        if v.sentence:
            sentences.append(v.sentence)
    vol = e3.volume
    facts = [("Reconstructions", str(e3.realizations)),
             ("Voxels", " × ".join(str(n) for n in vol.voxels)),
             ("Box / D90", number(vol.box_over_d90, 3) if vol.box_over_d90 else "–"),
             ("D10 in voxels", number(vol.d10_voxels, 3) if vol.d10_voxels else "–")]
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


_TEMPERATURE_COLUMNS = (("conductivity", "mean", "conductivity", "k"),
                        ("elasticity", "youngs_modulus", "modulus", "E"),
                        ("elasticity", "poisson_ratio", "poisson", "ν"),
                        ("expansion", "mean", "expansion", "α"))


def _temperatures(analysis, r, colors) -> str:
    if not r.effective_by_temperature and not r.effective_3d_by_temperature:
        return ""
    curves, curves_3d = {}, {}
    table = _over_temperature(r.effective_by_temperature, curves, shock=True)
    table_3d = _over_temperature(r.effective_3d_by_temperature, curves_3d, shock=False)
    fig = figure_png(figures.over_temperature(curves, curves_3d)) if curves or curves_3d else ""
    notes = "".join(f"<li>{html.escape(n[len('temperatures: '):])}</li>" for n in r.notes
                    if n.startswith("temperatures:"))
    return ("<section><h2>Effective properties over temperature</h2>" + table
            + (f'<figure class="wide"><img alt="properties over temperature" src="{fig}"></figure>'
               if fig else "")
            + f'<p class="note">The section solved again with every phase at each '
            "temperature (the library's tables, interpolated linearly), each solve started "
            "from the previous temperature's solution; expansion is the "
            "instantaneous coefficient α(T) of the composite; R is Hasselman's comparative "
            "crack-initiation index from these values. Same model as above ("
            f"{html.escape(r.effective.model if r.effective else '')}).</p>"
            + ("<h3>3D estimate over temperature</h3>" + table_3d
               + '<p class="note">The 3D estimate\'s reconstructed volumes (built once) solved '
               "with the phase properties at each temperature: mean over the realizations "
               "with its 95 % interval (shown as bars in the curves, beside the 2D section's "
               "values).</p>" if table_3d else "")
            + (f'<ul class="note">{notes}</ul>' if notes else "") + "</section>")


def _over_temperature(blocks, curves: dict, shock: bool) -> str:
    """The table of effective properties over temperature (2D values, or 3D means with
    their intervals) and their curve points in *curves* ((symbol, kind) → points; a point is
    (T, value) or (T, mean, low, high))."""
    if not blocks:
        return ""
    present = [c for c in _TEMPERATURE_COLUMNS if any(getattr(t.effective, c[0]) is not None
                                                      for t in blocks)]
    with_shock = shock and any(t.shock is not None for t in blocks)
    rows = []
    for t in blocks:
        row = [number(t.temperature_C)]
        for block, attr, kind, sym in present:
            b = getattr(t.effective, block)
            x = None if b is None else getattr(b, attr)
            v, sc = value_of(x), scale_of(kind)
            ci = x.ci95 if isinstance(x, Spread) else None
            row.append("–" if v is None else number(v * sc, trim=True) + (
                f" [{number(ci[0] * sc)} – {number(ci[1] * sc)}]" if ci else ""))
            if v is not None:
                curves.setdefault((sym, kind), []).append(
                    (t.temperature_C, v * sc) + ((ci[0] * sc, ci[1] * sc) if ci else ()))
        if with_shock:
            row.append(number(t.shock.R, trim=True) if t.shock is not None else "–")
        rows.append(tuple(row))
    head = ("Temperature (°C)",) + tuple(heading(sym, kind) for _, _, kind, sym in present)
    return grid(head + (("R (K)",) if with_shock else ()), rows)


_PROPERTY_WORDS = {"conductivity": "conductivity", "youngs_modulus": "Young's modulus",
                   "shear_modulus": "shear modulus", "poisson_ratio": "Poisson's ratio",
                   "expansion": "expansion (instantaneous)",
                   "mean_expansion": "expansion (mean from 20 °C)"}


def _measured(analysis, r, colors) -> str:
    if not r.measured:
        return ""
    rows = []
    for m in r.measured:
        kind = MEASURED_KINDS[m.property]
        sc = scale_of(kind)
        rows.append((html.escape(_PROPERTY_WORDS[m.property]), number(m.temperature_C),
                     with_uncertainty(m.value, m.uncertainty, sc), html.escape(m.method or "–"),
                     "–" if m.section is None else number(m.section * sc, trim=True),
                     "–" if m.estimate_3d is None else number(m.estimate_3d * sc, trim=True),
                     "–" if m.lower is None else
                     f"{number(m.lower * sc, trim=True)} – {number(m.upper * sc, trim=True)}",
                     "–" if m.z_section is None else f"{m.z_section:+.1f}",
                     html.escape(m.verdict)))
    head = ("Property", "T (°C)", "Measured (±u)", "Method", "Section model", "3D estimate",
            "3D bounds", "z (section)", "Verdict")
    return ("<section><h2>Measured beside computed</h2>" + grid(head, rows, raw=True)
            + '<p class="note">Values in the units of the tables above (expansion in 10⁻⁶/K). '
            "z = (computed − measured) / u with the measurement's standard uncertainty u; "
            "|z| ≤ 2 agrees at about 95 % (JCGM 100:2008). The bounds are Hashin–Shtrikman's "
            "for any isotropic 3D arrangement of these phases at these fractions: a measured "
            "value outside them points to the phase map or the phase properties.</p></section>")


def _fitted(analysis, r, colors) -> str:
    fits = [(p, p.fitted) for p in r.phases if p.fitted is not None]
    if not fits:
        return ""
    rows = []
    for p, f in fits:
        kind = {"conductivity": "conductivity", "youngs_modulus": "modulus",
                "poisson_ratio": "poisson", "expansion": "expansion"}[f.property]
        sc = scale_of(kind)
        rows.append((html.escape(p.name), html.escape(_PROPERTY_WORDS[f.property]),
                     with_unit(number(f.value * sc), unit_text(kind)),
                     f"{number(f.interval[0] * sc)} – {number(f.interval[1] * sc)}",
                     html.escape(_PROPERTY_WORDS[f.target]),
                     with_uncertainty(f.measured, f.uncertainty,
                                      scale_of(MEASURED_KINDS[f.target])), str(f.steps)))
    head = ("Phase", "Property", "Fitted value", "95 % interval", "Fitted to", "Measured (±u)",
            "Solves")
    return ("<section><h2>Phase properties back-calculated from measurements</h2>"
            + grid(head, rows) + '<p class="note">Each value makes the computed effective '
            f"property equal the measured one through the {html.escape(fits[0][1].model)} "
            "(Newton's method with the derivative from the phase's share of the stored energy). "
            "The interval covers the measurement's uncertainty only (first order).</p></section>")


def _uncertainty(analysis, r, colors) -> str:
    if not r.uncertainty:
        return ""
    from ..trust.budget import COMPONENTS

    rows, bars, advice = [], [], {}
    shown = [c for c in COMPONENTS
             if any(b.components.get(c) is not None for b in r.uncertainty.values())]
    for key, b in r.uncertainty.items():
        words, unit, sc = column_words(key)
        comps = ["–" if b.components.get(c) is None else number(b.components[c] * sc, 2)
                 for c in shown]
        rows.append((html.escape(words) + (f" ({unit})" if unit else ""),
                     with_uncertainty(b.value, b.combined, sc), *comps,
                     html.escape(_COMPONENT_WORDS.get(b.largest, "–"))))
        if b.largest:
            advice.setdefault(b.advice, []).append(words)
        if b.combined and b.value:
            bars.append((words, {c: (b.components.get(c) or 0.0) / abs(b.value)
                                 for c in COMPONENTS}))
    head = (("Quantity", "Value ± combined (95 %)")
            + tuple(_COMPONENT_WORDS[c] for c in shown) + ("Largest",))
    fig = figure_png(figures.budget_bars(bars)) if bars else ""
    items = "".join(f"<li><strong>{html.escape(', '.join(qs))}:</strong> {html.escape(text)}"
                    "</li>" for text, qs in advice.items())
    return ("<section><h2>How sure are we? The error budget</h2>" + grid(head, rows, raw=True)
            + (f"<h3>What would tighten them most</h3><ul>{items}</ul>" if items else "")
            + (f'<figure class="wide"><img alt="error budget" src="{fig}"></figure>'
               if fig else "")
            + '<p class="note">Each component is a ± half-width at about 95 % in the quantity\'s '
            "unit; – means not assessed (a component assessed for no quantity is left out: "
            f"here {', '.join(_COMPONENT_WORDS[c] for c in COMPONENTS if c not in shown) or 'none'}"
            "). The independent components are combined as a "
            "root-sum-square. Sampling: the field-to-field interval (fractions) or the bootstrap "
            "interval (D50); window: the window-size study; discretization: the map re-solved "
            "coarsened by 2 and 4 (Richardson extrapolation); material: the stated "
            "uncertainties of the phase properties propagated to first order; segmentation: "
            "the range under the stated movement of the class boundaries (the fractions "
            "counted, the effective properties re-solved on the two extreme maps), a bound or "
            "estimate of that movement rather than a 95 % figure; 2D vs 3D: the "
            "difference from the 3D estimate. Discretization and 2D-vs-3D are biases carried "
            "as their size.</p></section>")


_COMPONENT_WORDS = {"sampling": "sampling", "window": "window", "segmentation": "segmentation",
                    "discretization": "pixel size", "material": "material data",
                    "model_2d_3d": "2D vs 3D"}


def _segmentation(analysis, r, colors) -> str:
    sg = r.segmentation
    if sg is None:
        return ""
    rows = [("Method", sg.method),
            ("Smallest feature kept", f"{sg.min_feature_px} px")]
    if sg.model:
        rows.append(("Classifier", sg.model))
    for name, applied, amount, what in sg.corrections:
        rows.append((f"Correction: {name}", what if applied else f"not needed ({what})"))
    if sg.confidence_mean is not None:
        rows.append(("Confidence", f"mean probability of the class chosen "
                     f"{number(sg.confidence_mean, 3)}; {number(100 * sg.uncertain_share, 2)} % "
                     f"of the pixels below {number(sg.confidence_level, 2)}"))
    names = {p.label: p.name for p in r.phases}
    ranges = [(html.escape(names.get(k, str(k))), number(v[0], 4),
               f"{number(v[1], 4)} – {number(v[2], 4)}") for k, v in sg.fraction_ranges.items()]
    table = (grid(("Phase", "Fraction", "If the boundaries move"), ranges) if ranges else "")
    return ("<section><h2>How the phase map was made</h2>"
            + kv_table(rows)
            + (f"<h3>Segmentation uncertainty</h3><p class=\"note\">"
               f"{html.escape(sg.perturbation or '')}</p>" + table if ranges else "")
            + "</section>")


SECTIONS = [_caution, _warnings, _source, _images, _segmentation, _fractions, _materials, _fitted,
            _effective, _uncertainty, _measured, _temperatures, _estimate_3d, _schemes, _shock,
            _particles, _windows, _config, _raw_json]


def _png_image(img, pixel_size_um=None) -> str:
    fig, ax = new_axes((4.6, 4.6))
    ax.imshow(img, cmap="gray", interpolation="nearest")
    ax.set_axis_off()
    figures.scale_bar(ax, img.shape[1], pixel_size_um)
    return figure_png(fig)


def _overlay_png(img, labels, phases, colors, pixel_size_um=None) -> str:
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
    figures.scale_bar(ax, labels.shape[1], pixel_size_um)
    return figure_png(fig)
