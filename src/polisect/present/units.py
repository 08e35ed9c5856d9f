"""Numbers and units as people read them: the one place every output formats a value.

The report, the comparison (page and console), the batch index, the window study and the
CSV headers take their units and their digits from here, so a quantity reads the same
everywhere: expansion in 10⁻⁶/K wherever a person reads it (the JSON and CSV keep SI, 1/K,
with the unit in the column name), moduli in GPa, conductivity in W/(m·K), lengths in µm.

Rules
-----
* A value is shown to `DIGITS` significant digits, or — when its uncertainty is known —
  to the decimal place of the uncertainty's second significant digit (common practice,
  no source; cf. the GUM's advice to quote an uncertainty to at most two significant
  digits).
* Plain decimal notation between 10⁻³ and 10⁶; outside that a × 10ⁿ form, never
  ``1.134e+05``.
* Tensor entries smaller than `TENSOR_ZERO` times the largest entry are solver noise and
  are shown as 0.

Examples
--------
>>> number(113400.0), number(0.0058217), number(2.5e-7)
('113 400', '0.005822', '2.5 × 10⁻⁷')
>>> with_uncertainty(0.20137, 0.0123)
'0.201 ± 0.012'
>>> show(7.2e-6, "expansion")
'7.200 × 10⁻⁶/K'
>>> tensor_cells([[100.0, 0.005822], [0.005822, 80.0]], digits=4)
[['100.0', '0'], ['0', '80.0']]
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

DIGITS = 4
"""Significant digits of a value whose uncertainty is not known."""

TENSOR_ZERO = 1e-6
"""Tensor entries below this share of the largest entry are shown as 0."""

_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


@dataclass(frozen=True)
class Unit:
    """How a kind of quantity is shown: the unit text and the factor from SI storage."""

    text: str
    scale: float = 1.0


UNITS = {
    "conductivity": Unit("W/(m·K)"),
    "modulus": Unit("GPa"),
    "poisson": Unit(""),
    "expansion": Unit("10⁻⁶/K", 1e6),
    "fraction": Unit(""),
    "length_um": Unit("µm"),
    "length_px": Unit("px"),
    "per_mm2": Unit("1/mm²"),
    "per_mm3": Unit("1/mm³"),
    "temperature": Unit("°C"),
    "percent": Unit("%"),
    "seconds": Unit("s"),
    "R": Unit("K"),
    "R_prime": Unit("W/m"),
    "R_4prime": Unit("m"),
}
"""Kind of quantity → how people read it."""

MEASURED_KINDS = {"conductivity": "conductivity", "youngs_modulus": "modulus",
                  "shear_modulus": "modulus", "expansion": "expansion",
                  "mean_expansion": "expansion"}
"""A ``[[measured]]`` property → its kind of quantity."""

_HEADLINE_KINDS = {"conductivity": "conductivity", "youngs_modulus": "modulus",
                   "bulk_modulus": "modulus", "shear_modulus": "modulus",
                   "poisson_ratio": "poisson", "expansion": "expansion",
                   "fraction_": "fraction", "particles_": "length_um"}


def kind_of(column: str) -> str:
    """The kind of quantity of a headline column (``conductivity_W_mK`` → ``conductivity``).

    Examples
    --------
    >>> kind_of("expansion_3d_per_K"), kind_of("fraction_SiC"), kind_of("bulk_modulus_GPa")
    ('expansion', 'fraction', 'modulus')
    """
    for prefix, kind in _HEADLINE_KINDS.items():
        if column.startswith(prefix):
            return kind
    return "plain"


def column_words(column: str) -> tuple[str, str, float]:
    """Words, the unit people read and the scale from stored values, of a headline column.

    Examples
    --------
    >>> column_words("expansion_per_K")
    ('thermal expansion', '10⁻⁶/K', 1000000.0)
    """
    from ..core.quantities import quantity_label

    words, stored_unit = quantity_label(column)
    kind = kind_of(column)
    if kind == "plain" or (kind == "length_um" and not stored_unit):
        return words, stored_unit, 1.0
    return words, unit_text(kind), scale_of(kind)


def unit_text(kind: str) -> str:
    """The unit people read for *kind* ('' when dimensionless or unknown)."""
    return UNITS[kind].text if kind in UNITS else ""


def scale_of(kind: str) -> float:
    """Factor from the stored (SI) value to the shown one."""
    return UNITS[kind].scale if kind in UNITS else 1.0


def _power(exponent: int) -> str:
    return "10" + str(exponent).translate(_SUPERSCRIPT)


def _group(text: str) -> str:
    """Thousands grouped with a space (ISO 80000-1): 113400 → '113 400'."""
    sign = "-" if text.startswith("-") else ""
    body = text.lstrip("-")
    whole, _, frac = body.partition(".")
    if len(whole) > 4:
        parts = []
        while len(whole) > 3:
            parts.insert(0, whole[-3:])
            whole = whole[:-3]
        whole = " ".join([whole] + parts)
    return sign + whole + ("." + frac if frac else "")


def _decimals_for(value: float, digits: int) -> int:
    """Decimal places that show *digits* significant digits of *value*."""
    return max(0, digits - 1 - int(math.floor(math.log10(abs(value)))))


def number(value, digits: int = DIGITS, trim: bool = True) -> str:
    """*value* to *digits* significant digits, plain decimals between 10⁻³ and 10⁶.

    None and non-finite values show as an en dash. *trim* drops trailing zeros (values as
    given, e.g. a material's 33 W/(m·K)); ``trim=False`` keeps them, so a computed value
    shows all its digits (192.0, not 192).

    Examples
    --------
    >>> number(1.0), number(75.3149), number(-0.00012345), number(None)
    ('1', '75.31', '-1.234 × 10⁻⁴', '–')
    >>> number(191.97, trim=False), number(191.97)
    ('192.0', '192')
    """
    if value is None or isinstance(value, bool):
        return "–"
    if isinstance(value, (int, np.integer)):
        return _group(str(int(value)))
    v = float(value)
    if not math.isfinite(v):
        return "–"
    if v == 0.0:
        return "0"
    rounded = float(f"{v:.{digits}g}")
    magnitude = abs(rounded)
    if 1e-3 <= magnitude < 1e6:
        text = f"{rounded:.{_decimals_for(rounded, digits)}f}"
        if "." in text and trim:
            text = text.rstrip("0").rstrip(".")
        return _group(text)
    mantissa, _, power = f"{v:.{digits - 1}e}".partition("e")
    exponent = int(power)
    if trim:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return f"{mantissa} × {_power(exponent)}"


def with_uncertainty(value, half_width, scale: float = 1.0) -> str:
    """``value ± half_width`` with the digits the uncertainty supports (two significant
    digits of the uncertainty, the value rounded to the same decimal place).

    Examples
    --------
    >>> with_uncertainty(75.3149, 2.04), with_uncertainty(0.5, None)
    ('75.3 ± 2.0', '0.5')
    """
    if value is None:
        return "–"
    if half_width is None or not math.isfinite(half_width) or half_width <= 0:
        return number(value * scale)
    v, u = value * scale, half_width * scale
    if u <= 1e-9 * abs(v):
        return number(v)
    place = 1 - int(math.floor(math.log10(u)))
    if place <= 0:
        return f"{number(round(v, place))} ± {number(round(u, place))}"
    return f"{_group(f'{v:.{place}f}')} ± {u:.{place}f}"


def show(value, kind: str, digits: int = DIGITS, trim: bool = False) -> str:
    """A stored (SI) value with the unit people read (expansion 7.2e-6 1/K →
    ``7.200 × 10⁻⁶/K``); all *digits* shown unless *trim* (a computed value).

    Examples
    --------
    >>> show(18.04, "conductivity"), show(0.21, "poisson"), show(None, "modulus")
    ('18.04 W/(m·K)', '0.2100', '–')
    """
    if value is None:
        return "–"
    return with_unit(number(value * scale_of(kind), digits, trim), unit_text(kind))


def with_unit(text: str, unit: str) -> str:
    """A formatted number and its unit: ``7.2 × 10⁻⁶/K`` for a power-of-ten unit, else
    ``7.2 GPa`` (the number alone when the unit is empty).

    Examples
    --------
    >>> with_unit("5.6", "10⁻⁶/K"), with_unit("12", "GPa"), with_unit("0.2", "")
    ('5.6 × 10⁻⁶/K', '12 GPa', '0.2')
    """
    if not unit:
        return text
    return f"{text} × {unit}" if unit.startswith("10") else f"{text} {unit}"


def heading(words: str, kind: str) -> str:
    """A column heading with its unit: ``Expansion (10⁻⁶/K)``."""
    unit = unit_text(kind)
    return f"{words} ({unit})" if unit else words


def tensor_cells(matrix, scale: float = 1.0, digits: int = DIGITS) -> list[list[str]]:
    """The entries of a tensor as text: all to the decimal place of the largest entry's
    last significant digit (one resolution for the whole tensor), entries below
    `TENSOR_ZERO` of the largest — and those that round to nothing — as 0."""
    m = np.asarray(matrix, dtype=float) * scale
    top = float(np.abs(m).max()) if m.size else 0.0
    if top == 0.0 or not math.isfinite(top):
        return [[number(v, digits) for v in row] for row in m]
    places = _decimals_for(float(f"{top:.{digits}g}"), digits)

    def cell(v: float) -> str:
        if abs(v) < TENSOR_ZERO * top or round(v, places) == 0.0:
            return "0"
        return _group(f"{v:.{places}f}")

    return [[cell(v) for v in row] for row in m]


def points(difference: float, digits: int = 2) -> str:
    """A difference of fractions in percentage points (0.031 → ``+3.1 pp``)."""
    return f"{difference * 100:+.{digits}g} pp" if abs(difference) >= 1e-12 else "0 pp"
