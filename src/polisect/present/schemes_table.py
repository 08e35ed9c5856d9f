"""The terminal table of `polisect estimate`: bounds and mean-field estimates of a
`SchemesResult`, every number formatted by `present.units` (one precision rule for all)."""

from __future__ import annotations

from ..properties.schemes.result import PROPERTY_NAMES, SchemesResult
from . import units

COLUMNS = {"conductivity": ("k", "conductivity"), "bulk_modulus": ("K", "modulus"),
           "shear_modulus": ("G", "modulus"), "youngs_modulus": ("E", "modulus"),
           "poisson_ratio": ("ν", "poisson"), "expansion": ("α", "expansion")}
"""`Estimate` field → column symbol and kind of quantity (`units.UNITS`)."""


def cell(prop: str, value) -> str:
    """One table entry: `units.DIGITS` significant digits, trailing zeros kept (so a column
    reads at one precision), in the unit of the column heading; '–' when not available.

    Examples
    --------
    >>> cell("conductivity", 174.0), cell("conductivity", 0.321), cell("expansion", 1.667e-5)
    ('174.0', '0.3210', '16.67')
    """
    kind = COLUMNS[prop][1]
    return units.number(None if value is None else value * units.scale_of(kind), trim=False)


def schemes_table(result: SchemesResult) -> str:
    """Plain-text table of the bounds and estimates of *result*, with its heading lines
    and notes."""
    rows = [["scheme"] + [units.heading(*COLUMNS[p]) for p in PROPERTY_NAMES]]
    for p_name, side in (("lower bound", "lower"), ("upper bound", "upper")):
        rows.append([p_name] + [cell(p, getattr(result.bound(p), side))
                                for p in PROPERTY_NAMES])
    for name, est in result.schemes:
        rows.append([name] + [cell(p, getattr(est, p)) for p in PROPERTY_NAMES])
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    lines = ["  ".join(c.ljust(w) if i == 0 else c.rjust(w) for i, (c, w) in
                       enumerate(zip(r, widths))).rstrip() for r in rows]
    lines.insert(1, "-" * len(lines[0]))
    lines.insert(4, "-" * len(lines[0]))
    shape = ("3D, spherical particles" if result.dim == 3 else
             "2D, circular cylinders in their transverse plane (prismatic structure)")
    mix = ", ".join(f"{n} {units.number(f)}" for n, f in result.phases)
    head = [f"Bounds and mean-field estimates — {shape}",
            f"phases: {mix}; matrix: {result.matrix}"]
    if result.hollow:
        head.append("hollow: " + ", ".join(f"{n} (inner/outer diameter {units.number(r)})"
                                           for n, r in result.hollow))
    return "\n".join(head + [""] + lines + [""] + [f"- {n}" for n in result.notes])
