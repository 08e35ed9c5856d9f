"""Materials: the properties of one phase, and the built-in library.

Units throughout polisect: conductivity W/(m·K), Young's modulus and stiffness GPa,
Poisson's ratio dimensionless, linear thermal expansion 1/K.

Examples
--------
>>> from polisect import Material, get_material
>>> m = Material(conductivity=30.0, youngs_modulus=380.0, poisson_ratio=0.22, name="my-alumina")
>>> round(m.bulk_modulus, 1)
226.2
>>> get_material("silicon-carbide").conductivity
114.0
"""

from __future__ import annotations

import dataclasses
import difflib
import math
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from typing import Mapping

import numpy as np

from .errors import InputError

try:  # Python >= 3.11
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib

PROPERTIES = ("conductivity", "youngs_modulus", "poisson_ratio", "expansion")
UNITS = {
    "conductivity": "W/(m·K)",
    "youngs_modulus": "GPa",
    "poisson_ratio": "–",
    "expansion": "1/K",
}


@dataclass(frozen=True, eq=False)
class Material:
    """Properties of one phase.

    Any property may be ``None`` when it is not needed for the properties asked for.

    Parameters
    ----------
    conductivity : float or (d, d) array_like, optional
        Thermal conductivity, W/(m·K); a d×d tensor for an anisotropic phase.
    youngs_modulus : float, optional
        Young's modulus E, GPa. Zero for a pore.
    poisson_ratio : float, optional
        Poisson's ratio ν, −1 < ν < 0.5.
    expansion : float or (d, d) array_like, optional
        Linear thermal expansion coefficient α, 1/K; a d×d tensor when anisotropic.
    stiffness : array_like, optional
        Full anisotropic stiffness in Voigt form (engineering shear strains), GPa:
        6×6 for 3D. Overrides ``youngs_modulus`` / ``poisson_ratio`` in the solvers.
    name : str
        Name shown in results.
    source : str
        Where the values come from (free text).
    sources : mapping, optional
        Per-property sources, ``{"conductivity": "...", ...}``.
    """

    conductivity: float | np.ndarray | None = None
    youngs_modulus: float | None = None
    poisson_ratio: float | None = None
    expansion: float | np.ndarray | None = None
    stiffness: np.ndarray | None = None
    name: str = "unnamed"
    source: str = "given by the user"
    sources: Mapping[str, str] = field(default_factory=dict)

    def __post_init__(self):
        for prop in ("conductivity", "expansion", "stiffness"):
            value = getattr(self, prop)
            if value is not None and not np.isscalar(value):
                object.__setattr__(self, prop, np.asarray(value, dtype=float))
        for prop in ("youngs_modulus", "poisson_ratio"):
            value = getattr(self, prop)
            if value is not None:
                object.__setattr__(self, prop, float(value))
        for prop in ("conductivity", "expansion"):
            value = getattr(self, prop)
            if value is not None and np.isscalar(value):
                object.__setattr__(self, prop, float(value))
        self.validate()

    def validate(self) -> None:
        """Raise `InputError` naming the property when a value is not physical."""
        where = f"material {self.name!r}"
        for prop in ("conductivity", "youngs_modulus", "poisson_ratio", "expansion", "stiffness"):
            value = getattr(self, prop)
            if value is not None and not np.all(np.isfinite(value)):
                raise InputError(f"{where}: {prop} is not a finite number; give a real value")
        k = self.conductivity
        if k is not None:
            if np.ndim(k) == 0 and k < 0:
                raise InputError(f"{where}: conductivity {k} W/(m·K) is negative; "
                                 "use 0 for a pore or a positive value")
            if np.ndim(k) == 2 and (not np.allclose(k, k.T) or np.linalg.eigvalsh(k).min() < 0):
                raise InputError(f"{where}: conductivity tensor must be symmetric "
                                 "positive semi-definite")
        if self.youngs_modulus is not None and self.youngs_modulus < 0:
            raise InputError(f"{where}: Young's modulus {self.youngs_modulus} GPa is negative; "
                             "use 0 for a pore or a positive value")
        nu = self.poisson_ratio
        if nu is not None and not (-1.0 < nu < 0.5):
            raise InputError(f"{where}: Poisson's ratio {nu} is outside (-1, 0.5); an "
                             "isotropic solid needs -1 < nu < 0.5 (0.5 is incompressible)")
        if self.stiffness is not None:
            c = self.stiffness
            if c.shape not in ((3, 3), (6, 6)) or not np.allclose(c, c.T):
                raise InputError(f"{where}: stiffness must be a symmetric 3x3 (2D) or 6x6 (3D) "
                                 "Voigt matrix in GPa")
            if np.linalg.eigvalsh(c).min() < -1e-9 * max(1.0, np.abs(c).max()):
                raise InputError(f"{where}: stiffness matrix is not positive semi-definite")

    @property
    def is_pore(self) -> bool:
        """True when the phase carries no mechanical load."""
        return self.youngs_modulus == 0.0 and self.stiffness is None

    @property
    def bulk_modulus(self) -> float:
        """Bulk modulus K = E / (3(1 − 2ν)), GPa."""
        self.require("youngs_modulus", "poisson_ratio")
        return self.youngs_modulus / (3.0 * (1.0 - 2.0 * self.poisson_ratio))

    @property
    def shear_modulus(self) -> float:
        """Shear modulus G = E / (2(1 + ν)), GPa."""
        self.require("youngs_modulus", "poisson_ratio")
        return self.youngs_modulus / (2.0 * (1.0 + self.poisson_ratio))

    def require(self, *props: str) -> None:
        """Raise `InputError` when one of *props* is missing."""
        missing = [p for p in props if getattr(self, p) is None
                   and not (p in ("youngs_modulus", "poisson_ratio") and self.stiffness is not None)]
        if missing:
            raise InputError(f"material {self.name!r} has no {', '.join(missing)}; give "
                             f"{' and '.join(missing)} in its [[phase]] entry or pick a library "
                             "material that has it")

    def replace(self, **changes) -> "Material":
        """A copy with some properties changed (validated again)."""
        return dataclasses.replace(self, **changes)

    def to_dict(self) -> dict:
        """Plain JSON-ready form."""
        out = {"name": self.name, "source": self.source}
        for prop in PROPERTIES + ("stiffness",):
            value = getattr(self, prop)
            if value is not None:
                out[prop] = value.tolist() if isinstance(value, np.ndarray) else value
        if self.sources:
            out["sources"] = dict(self.sources)
        return out


@lru_cache(maxsize=1)
def _library_table() -> dict:
    text = resources.files("polisect.core.data").joinpath("materials.toml").read_text("utf-8")
    return tomllib.loads(text)


def library() -> dict[str, Material]:
    """The built-in material library, name → `Material`."""
    out = {}
    for key, entry in _library_table().items():
        values = {p: entry[p] for p in PROPERTIES if p in entry}
        out[key] = Material(name=key, source=entry.get("description", key),
                            sources=dict(entry.get("sources", {})), **values)
    return out


def get_material(name: str) -> Material:
    """Look a material up in the built-in library by name.

    Raises
    ------
    InputError
        When *name* is not in the library; the message lists close matches.
    """
    lib = library()
    key = name.strip().lower().replace("_", "-").replace(" ", "-")
    if key in lib:
        return lib[key]
    close = difflib.get_close_matches(key, lib.keys(), n=3, cutoff=0.5)
    hint = f"did you mean {', '.join(close)}?" if close else "run 'polisect materials' for the list"
    raise InputError(f"unknown material {name!r}: {hint}")


def describe_library() -> str:
    """The library as a plain-text table (what `polisect materials` prints)."""
    rows = [("name", "k W/(m·K)", "E GPa", "nu", "alpha 1e-6/K", "description")]
    for key, m in library().items():
        rows.append((key, _fmt(m.conductivity), _fmt(m.youngs_modulus), _fmt(m.poisson_ratio),
                     _fmt(None if m.expansion is None else m.expansion * 1e6), m.source))
    widths = [max(len(r[i]) for r in rows) for i in range(5)]
    lines = ["  ".join(c.ljust(w) for c, w in zip(r[:5], widths)) + "  " + r[5] for r in rows]
    lines.insert(1, "-" * len(lines[0]))
    lines.append("")
    lines.append("Values are typical room-temperature figures with their sources in the "
                 "library file; check your grade.")
    return "\n".join(lines)


def _fmt(value) -> str:
    if value is None:
        return "-"
    return f"{value:.4g}" if not math.isnan(value) else "nan"
