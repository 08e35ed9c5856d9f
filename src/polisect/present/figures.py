"""Matplotlib figures of the report (each returns a Figure; the report embeds it)."""

from __future__ import annotations

import math

import matplotlib.colors
import numpy as np
from skimage.segmentation import find_boundaries

from ..trust.sectionstats import sig
from .htmlkit import new_axes
from .units import column_words, number

SCALE_STEPS = (1, 2, 5)
"""Scale-bar lengths are 1, 2 or 5 times a power of ten."""


def bar_length(field: float) -> float:
    """A round scale-bar length near a fifth of the field width (1, 2 or 5 × 10ⁿ).

    Examples
    --------
    >>> bar_length(512.0), bar_length(64.0), bar_length(0.9)
    (100.0, 10.0, 0.1)
    """
    target = field / 5.0
    power = 10.0 ** math.floor(math.log10(target))
    return max(s * power for s in SCALE_STEPS if s * power <= target)


def scale_bar(ax, width_px: int, pixel_size_um: float | None) -> None:
    """Draw a scale bar in the lower left of an image axes (pixels when the size is unknown).

    The bar is white on a dark box so it reads on any micrograph.
    """
    unit, size = ("µm", pixel_size_um) if pixel_size_um else ("px", 1.0)
    length = bar_length(width_px * size)
    px = length / size
    x0, y0 = 0.04, 0.05
    from matplotlib.patches import Rectangle

    ax.add_patch(Rectangle((x0 - 0.015, y0 - 0.025), px / width_px + 0.03, 0.1,
                           transform=ax.transAxes, color="black", alpha=0.55, lw=0))
    ax.plot([x0, x0 + px / width_px], [y0, y0], transform=ax.transAxes, color="white", lw=3,
            solid_capstyle="butt")
    ax.text(x0 + px / width_px / 2, y0 + 0.015, f"{number(length)} {unit}",
            transform=ax.transAxes, color="white", ha="center", va="bottom", fontsize=8)


def field_size(shape, pixel_size_um: float | None) -> str:
    """The field of view in words: ``field 512 × 384 µm (1024 × 768 px)``.

    Examples
    --------
    >>> field_size((384, 512), 0.5)
    'field 256 × 192 µm (512 × 384 px)'
    """
    ny, nx = shape[-2], shape[-1]
    px = f"{nx} × {ny} px"
    if not pixel_size_um:
        return f"field {px} (pixel size unknown)"
    return f"field {number(nx * pixel_size_um)} × {number(ny * pixel_size_um)} µm ({px})"


def grey_histogram(image, thresholds, names, colors):
    """The grey-level histogram of a micrograph with the class boundaries (thresholds)
    marked and each class named between its boundaries.

    Parameters
    ----------
    image : ndarray
        Grey image (2D).
    thresholds : sequence of float
        Class boundaries in grey levels, ascending.
    names : sequence of str
        Class names, darkest first (one more than the thresholds).
    colors : sequence of str
        Colours of the classes, darkest first.
    """
    fig, ax = new_axes(figsize=(6.4, 2.6))
    values = np.asarray(image, dtype=float).ravel()
    lo, hi = float(values.min()), float(values.max())
    ax.hist(values, bins=128 if hi > lo else 1, color="#59606a", edgecolor="none")
    edges = [lo] + sorted(float(t) for t in thresholds) + [hi]
    for t in thresholds:
        ax.axvline(float(t), color="#c8553d", lw=1.2)
    top = ax.get_ylim()[1]
    for i, name in enumerate(names[:len(edges) - 1]):
        ax.axvspan(edges[i], edges[i + 1], color=colors[i % len(colors)], alpha=0.12, lw=0)
        ax.text((edges[i] + edges[i + 1]) / 2, top * 0.92, name, ha="center", va="top",
                fontsize=8)
    ax.set_xlabel("grey level")
    ax.set_ylabel("pixels")
    ax.set_title("Grey levels with the class boundaries (red)", fontsize=10)
    fig.tight_layout()
    return fig


def size_distributions(pp):
    """Section ECD histogram (number-weighted, edge-corrected) beside the unfolded 3D
    sphere-diameter distribution (Saltykov) of one particle phase."""
    t, sph = pp.table, pp.spheres
    unit = "µm" if t.units == "um" else "px"
    fig, axes = new_axes(ncols=2, nrows=1, figsize=(9.0, 3.2))
    keep = t.weight > 0
    ecd = t.ecd[keep]
    if ecd.size:
        axes[0].hist(ecd, bins=15, weights=t.weight[keep], color="#3f7f8c", edgecolor="white")
    axes[0].set_xlabel(f"section ECD ({unit})")
    axes[0].set_ylabel("particles (edge-corrected)")
    axes[0].set_title("2D sections", fontsize=10)
    nv = np.asarray(sph.number_density, dtype=float)
    if nv.size and nv.sum() > 0:
        widths = np.diff(sph.edges)
        axes[1].bar(sph.edges[:-1], nv / nv.sum() * 100, width=widths, align="edge",
                    color="#c0793a", edgecolor="white")
    axes[1].set_xlabel(f"sphere diameter ({unit})")
    axes[1].set_ylabel("% of spheres by number")
    axes[1].set_title("3D spheres (Saltykov unfolding)", fontsize=10)
    fig.suptitle(pp.name, fontsize=11)
    fig.tight_layout()
    return fig


OUTLINE_COLORS = ("#ffd23f", "#3fd0ff", "#ff5fa2", "#9cff57")


def outlines(image, phasemap, measured):
    """Particle outlines of every measured phase (colours `OUTLINE_COLORS` in order) over
    the micrograph, with a scale bar."""
    labels = phasemap.labels
    fig, ax = new_axes(figsize=(4.6, 4.6))
    if image is not None and image.ndim == 2 and image.shape == labels.shape:
        ax.imshow(image, cmap="gray", interpolation="nearest")
    else:
        ax.imshow(labels, cmap="gray", interpolation="nearest")
    rgba = np.zeros(labels.shape + (4,), dtype=float)
    for pp, color in zip(measured, OUTLINE_COLORS * 4):
        edge = find_boundaries(pp.particle_labels, mode="inner")
        rgba[edge] = matplotlib.colors.to_rgba(color)
    ax.imshow(rgba, interpolation="nearest")
    ax.set_axis_off()
    scale_bar(ax, labels.shape[-1], phasemap.voxel_size_um)
    return fig


def correlations(curves, colors_by_name):
    """Normalised two-point correlation (S2 − φ²)/(φ − φ²) of every phase against r."""
    fig, ax = new_axes(figsize=(5.2, 3.2))
    unit = "µm"
    for name, c in curves.items():
        phi = c.fraction
        if not 0 < phi < 1:
            continue
        unit = "µm" if c.units == "um" else "px"
        ax.plot(c.r, (c.s2 - phi ** 2) / (phi - phi ** 2), color=colors_by_name.get(name),
                label=f"{name} (ℓ = {c.correlation_length:.3g} {unit})")
    ax.axhline(np.exp(-1), color="#888", lw=0.8, ls="--")
    ax.set_xlabel(f"r ({unit})")
    ax.set_ylabel("(S₂ − φ²)/(φ − φ²)")
    ax.set_ylim(-0.2, 1.02)
    ax.legend(fontsize=8)
    fig.tight_layout()
    return fig


def field_map(values, label, cmap, pixel_size_um: float | None = None):
    """A per-pixel field (image-indexed) with a colour bar clipped at the 99.5th percentile
    and a scale bar."""
    fig, ax = new_axes(figsize=(4.8, 4.2))
    top = float(np.percentile(values, 99.5)) or float(values.max()) or 1.0
    im = ax.imshow(values, cmap=cmap, vmin=0.0, vmax=top, interpolation="nearest")
    ax.set_axis_off()
    scale_bar(ax, values.shape[-1], pixel_size_um)
    fig.colorbar(im, ax=ax, fraction=0.046, pad=0.03, label=label)
    return fig


def window_figure(windows):
    """Each quantity against window side: window mean with the 95 % range of single windows,
    and the whole-image value with the interval of the integral-range fit.

    Parameters
    ----------
    windows : WindowRecord
        The window study of a result.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from scipy import stats

    keys = list(windows.quantities)
    z = float(stats.norm.ppf(0.5 + windows.confidence / 2.0))
    um = windows.pixel_size_um
    ncol = min(3, len(keys))
    nrow = math.ceil(len(keys) / ncol)
    fig, axes = new_axes((4.0 * ncol, 3.1 * nrow), nrow, ncol, squeeze=False)
    for ax, key in zip(axes.ravel(), keys):
        q = windows.quantities[key]
        label, unit, sc = column_words(key)
        pts = [(min(lv.side_px), lv.area_px, lv.quantities[key])
               for lv in windows.levels if key in lv.quantities]
        side = np.array([p[0] for p in pts], dtype=float) * (um or 1.0)
        mean = np.array([p[2].mean for p in pts]) * sc
        spread = np.array([z * (p[2].sd or 0.0) for p in pts]) * sc
        ax.errorbar(side, mean, yerr=spread, fmt="o", color="#20304f", capsize=3, markersize=4,
                    label="windows: mean, 95 % range")
        if q.variance_area is not None:
            fine = np.geomspace(side.min(), side.max(), 60)
            area = (fine / (um or 1.0)) ** len(windows.shape)
            half = z * np.sqrt(q.variance_area / area) * sc
            ax.fill_between(fine, q.value * sc - half, q.value * sc + half, color="#e0a030",
                            alpha=0.25, label="integral-range fit, 95 %")
        ax.axhline(q.value * sc, color="#e0a030", lw=1)
        ax.set_xscale("log", base=2)
        ax.set_xticks(side, [sig(v, 3) for v in side])
        ax.minorticks_off()
        ax.set_title(label + (f" ({unit})" if unit else ""), fontsize=10)
        ax.set_xlabel(f"window side ({'µm' if um else 'px'})", fontsize=9)
        ax.tick_params(labelsize=8)
        ax.grid(alpha=0.3)
    for ax in axes.ravel()[len(keys):]:
        ax.set_axis_off()
    axes.ravel()[0].legend(fontsize=8, loc="best")
    fig.tight_layout()
    return fig


def over_temperature(curves: dict, curves_3d: dict | None = None):
    """Each effective property against temperature (one panel per property): the section's
    values, and the 3D estimate's means with their intervals as bars when given.

    Parameters
    ----------
    curves, curves_3d : dict
        (symbol, kind) → list of (temperature °C, value in the unit people read), a 3D
        point optionally with its interval: (temperature, mean, low, high).
    """
    from .units import heading

    curves_3d = curves_3d or {}
    keys = list(dict.fromkeys(list(curves) + list(curves_3d)))
    n = len(keys)
    fig, axes = new_axes((2.6 * n, 2.4), 1, n, squeeze=False)
    for ax, key in zip(axes[0], keys):
        sym, kind = key
        if key in curves:
            t, v = zip(*curves[key])
            ax.plot(t, v, "o-", color="#20304f", markersize=4, label="2D section")
        if key in curves_3d:
            pts = curves_3d[key]
            t = [p[0] for p in pts]
            v = [p[1] for p in pts]
            low = [p[1] - p[2] if len(p) > 2 else 0.0 for p in pts]
            high = [p[3] - p[1] if len(p) > 2 else 0.0 for p in pts]
            ax.errorbar(t, v, yerr=[low, high], fmt="s--", color="#c8553d", markersize=4,
                        capsize=2, label="3D estimate")
        ax.set_xlabel("temperature (°C)", fontsize=8)
        ax.set_title(heading(sym, kind), fontsize=9)
        ax.tick_params(labelsize=7)
        ax.grid(alpha=0.3)
    if curves_3d:
        axes[0][0].legend(fontsize=7, loc="best")
    fig.tight_layout()
    return fig


BUDGET_COLORS = {"sampling": "#20304f", "window": "#4fb0c6", "segmentation": "#e0a030",
                 "discretization": "#3f9e74", "material": "#c8553d", "model_2d_3d": "#7b68b5"}


def budget_bars(rows):
    """One horizontal bar per quantity: its assessed uncertainty components, relative to the
    value (%), stacked as squares so that the bar's length is the root-sum-square.

    Parameters
    ----------
    rows : list of (words, {component: relative half-width})
    """
    import numpy as np

    fig, ax = new_axes((6.5, 0.3 * len(rows) + 1.0))
    y = np.arange(len(rows))[::-1]
    for yi, (words, comps) in zip(y, rows):
        total = math.sqrt(sum(v * v for v in comps.values()))
        left = 0.0
        for name, v in comps.items():
            if v <= 0 or total == 0:
                continue
            width = 100.0 * total * (v * v) / (total * total)   # share of the variance
            ax.barh(yi, width, left=left, color=BUDGET_COLORS[name], height=0.6,
                    label=name.replace("_", " ").replace("model 2d 3d", "2D vs 3D"))
            left += width
    ax.set_yticks(y, [w for w, _ in rows], fontsize=7)
    ax.set_xlabel("combined half-width at 95 % (% of the value), split by share of variance",
                  fontsize=8)
    handles, labels = ax.get_legend_handles_labels()
    unique = dict(zip(labels, handles))
    ax.legend(unique.values(), unique.keys(), fontsize=7, loc="lower right")
    ax.tick_params(labelsize=7)
    ax.grid(axis="x", alpha=0.3)
    fig.tight_layout()
    return fig
