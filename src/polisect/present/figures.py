"""Matplotlib figures of the report (each returns a Figure; the report embeds it)."""

from __future__ import annotations

import math

import matplotlib.colors
import numpy as np
from skimage.segmentation import find_boundaries

from ..core.quantities import quantity_label
from ..trust.sectionstats import sig
from .htmlkit import new_axes


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
    the micrograph."""
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


def field_map(values, label, cmap):
    """A per-pixel field (image-indexed) with a colour bar clipped at the 99.5th percentile."""
    fig, ax = new_axes(figsize=(4.8, 4.2))
    top = float(np.percentile(values, 99.5)) or float(values.max()) or 1.0
    im = ax.imshow(values, cmap=cmap, vmin=0.0, vmax=top, interpolation="nearest")
    ax.set_axis_off()
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
    fig, axes = new_axes((3.4 * ncol, 2.7 * nrow), nrow, ncol, squeeze=False)
    for ax, key in zip(axes.ravel(), keys):
        q = windows.quantities[key]
        pts = [(min(lv.side_px), lv.area_px, lv.quantities[key])
               for lv in windows.levels if key in lv.quantities]
        side = np.array([p[0] for p in pts], dtype=float) * (um or 1.0)
        mean = np.array([p[2].mean for p in pts])
        spread = np.array([z * (p[2].sd or 0.0) for p in pts])
        ax.errorbar(side, mean, yerr=spread, fmt="o", color="#20304f", capsize=3, markersize=4,
                    label="windows: mean, 95 % range")
        if q.variance_area is not None:
            fine = np.geomspace(side.min(), side.max(), 60)
            area = (fine / (um or 1.0)) ** len(windows.shape)
            half = z * np.sqrt(q.variance_area / area)
            ax.fill_between(fine, q.value - half, q.value + half, color="#e0a030",
                            alpha=0.25, label="integral-range fit, 95 %")
        ax.axhline(q.value, color="#e0a030", lw=1)
        ax.set_xscale("log", base=2)
        ax.set_xticks(side, [sig(v, 3) for v in side])
        ax.minorticks_off()
        label, unit = quantity_label(key)
        ax.set_title(label + (f" ({unit})" if unit else ""), fontsize=9)
        ax.set_xlabel(f"window side ({'µm' if um else 'px'})", fontsize=8)
        ax.tick_params(labelsize=7)
        ax.grid(alpha=0.3)
    for ax in axes.ravel()[len(keys):]:
        ax.set_axis_off()
    axes.ravel()[0].legend(fontsize=7, loc="best")
    fig.tight_layout()
    return fig
