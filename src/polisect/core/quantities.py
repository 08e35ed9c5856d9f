"""Names, words and units of the headline quantities (the CSV columns of a result).

A quantity is named by its headline column: ``fraction_<phase>``,
``particles_<phase>_ecd_d50``, ``conductivity_W_mK``, ``youngs_modulus_GPa`` … The window
study, the comparison of sections and every table use these names.

Examples
--------
>>> quantity_label("fraction_SiC"), quantity_label("youngs_modulus_GPa")
(('SiC fraction', ''), ("Young's modulus", 'GPa'))
"""

from __future__ import annotations

PROPERTY_WORDS = {"conductivity_W_mK": ("conductivity", "W/(m·K)"),
                  "youngs_modulus_GPa": ("Young's modulus", "GPa"),
                  "poisson_ratio": ("Poisson's ratio", ""),
                  "bulk_modulus_GPa": ("bulk modulus", "GPa"),
                  "shear_modulus_GPa": ("shear modulus", "GPa"),
                  "expansion_per_K": ("thermal expansion", "1/K"),
                  "conductivity_3d_W_mK": ("3D-estimate conductivity", "W/(m·K)"),
                  "youngs_modulus_3d_GPa": ("3D-estimate Young's modulus", "GPa"),
                  "expansion_3d_per_K": ("3D-estimate thermal expansion", "1/K")}
"""Effective-property column → (words, unit)."""

SCALAR_COLUMNS = {"conductivity_W_mK": "conductivity", "youngs_modulus_GPa": "youngs_modulus",
                  "poisson_ratio": "poisson_ratio", "shear_modulus_GPa": "shear_modulus",
                  "bulk_modulus_GPa": "bulk_modulus", "expansion_per_K": "expansion"}
"""Headline column of an effective property → the name of its isotropic scalar
(`polisect.properties.records.SCALARS`)."""

ESTIMATE_3D_COLUMNS = {"conductivity": "conductivity_3d_W_mK",
                       "youngs_modulus": "youngs_modulus_3d_GPa",
                       "expansion": "expansion_3d_per_K"}
"""Isotropic scalar of the 3D estimate → its headline column."""

SOLVED_COLUMNS = {"conductivity": "conductivity_W_mK", "elasticity": "youngs_modulus_GPa",
                  "expansion": "expansion_per_K"}
"""Solved property → the headline column of its isotropic value."""


def fraction_column(phase: str) -> str:
    """The headline column of a phase's fraction."""
    return f"fraction_{phase}"


def quantity_label(key: str) -> tuple[str, str]:
    """Words and unit of a headline column."""
    if key in PROPERTY_WORDS:
        return PROPERTY_WORDS[key]
    if key.startswith("fraction_"):
        return f"{key[len('fraction_'):]} fraction", ""
    if key.startswith("particles_") and key.endswith("_ecd_d50"):
        return f"{key[len('particles_'):-len('_ecd_d50')]} particle D50", "µm"
    return key, ""


def quantity_keys(row: dict) -> list[str]:
    """The columns of a headline row that are compared: fractions, particle D50, effective
    properties."""
    keys = []
    for k, v in row.items():
        if not isinstance(v, (int, float)) or isinstance(v, bool):
            continue
        if k.endswith("_u95"):
            continue
        if (k.startswith("fraction_") and not k.endswith(("_ci95_low", "_ci95_high"))) \
                or (k.startswith("particles_") and k.endswith("_ecd_d50")) \
                or k in PROPERTY_WORDS:
            keys.append(k)
    return keys
