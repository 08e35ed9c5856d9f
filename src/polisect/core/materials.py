"""Materials: the properties of one phase over temperature, and the built-in library.

Units throughout polisect: conductivity W/(m·K), Young's modulus and stiffness GPa,
Poisson's ratio dimensionless, linear thermal expansion 1/K, temperature °C.

A library material holds a table over temperature for each property (`PropertyTable`:
values, their source and, where the source states one, their uncertainty). The plain
values of a `Material` are the values at one temperature: 20 °C for `get_material`,
any tabulated temperature through `Material.at`.

Thermal expansion comes in two forms. ``expansion`` is the instantaneous coefficient
α(T) = (1/L) dL/dT; ``mean_expansion`` is the mean (secant) coefficient from 20 °C,
ᾱ(T) = (1/(T − 20)) ∫₂₀ᵀ α dT, the one to multiply by a temperature change from room
temperature. A table stores one of the two (its ``basis``); the other is derived from it.

Examples
--------
>>> from polisect import Material, get_material
>>> m = Material(conductivity=30.0, youngs_modulus=380.0, poisson_ratio=0.22, name="my-alumina")
>>> round(m.bulk_modulus, 1)
226.2
>>> get_material("silicon-carbide").conductivity
114.0
>>> get_material("alumina").at(1000).youngs_modulus
364.0
"""

from __future__ import annotations

import dataclasses
import difflib
import math
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from pathlib import Path
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
    "mean_expansion": "1/K",
}
REFERENCE_C = 20.0
"""The reference temperature of the library (°C): room-temperature values and the lower
end of the mean expansion coefficient."""
BASES = ("instantaneous", "mean")
_ENTRY_KEYS = {"description", "sources", "uncertainty"} | set(PROPERTIES)
_TABLE_KEYS = {"temperature_C", "value", "source", "uncertainty", "relative_uncertainty",
               "uncertainty_source", "basis"}


@dataclass(frozen=True)
class PropertyTable:
    """One property of one material over temperature, with its source.

    Linear interpolation between the tabulated temperatures; a temperature outside the
    table is an `InputError` that names the range.

    Parameters
    ----------
    temperatures_C : sequence of float
        Strictly increasing temperatures, °C (one entry: a value at that temperature only).
    values : sequence of float
        The property at those temperatures, in the library's unit.
    source : str
        Where the values come from, precisely enough to find them.
    uncertainty : sequence of float, optional
        Standard uncertainty at each temperature, same unit (None: not stated).
    uncertainty_source : str
        Where the uncertainty comes from.
    basis : str
        Expansion only: ``"instantaneous"`` (α(T)) or ``"mean"`` (secant from 20 °C).
    """

    temperatures_C: tuple[float, ...]
    values: tuple[float, ...]
    source: str
    uncertainty: tuple[float, ...] | None = None
    uncertainty_source: str = ""
    basis: str = ""

    def __post_init__(self):
        t = tuple(float(x) for x in np.atleast_1d(self.temperatures_C))
        v = tuple(float(x) for x in np.atleast_1d(self.values))
        object.__setattr__(self, "temperatures_C", t)
        object.__setattr__(self, "values", v)
        if not t or len(t) != len(v):
            raise InputError(f"a property table needs as many values as temperatures "
                             f"(got {len(t)} temperatures and {len(v)} values)")
        if not (np.all(np.isfinite(t)) and np.all(np.isfinite(v))):
            raise InputError("a property table holds a value or temperature that is not a "
                             "finite number")
        if np.any(np.diff(t) <= 0):
            raise InputError(f"the temperatures of a property table must increase strictly; "
                             f"got {list(t)}")
        if min(t) < -273.15:
            raise InputError(f"a property table starts at {min(t)} °C, below absolute zero")
        if self.uncertainty is not None:
            u = np.broadcast_to(np.asarray(self.uncertainty, dtype=float), (len(t),))
            if not np.all(np.isfinite(u)) or np.any(u < 0):
                raise InputError("an uncertainty must be a finite number ≥ 0")
            object.__setattr__(self, "uncertainty", tuple(float(x) for x in u))
        if self.basis and self.basis not in BASES:
            raise InputError(f"expansion basis {self.basis!r} is not one of {', '.join(BASES)}")

    @property
    def range_C(self) -> tuple[float, float]:
        """Lowest and highest tabulated temperature, °C."""
        return self.temperatures_C[0], self.temperatures_C[-1]

    def covers(self, temperature_C: float) -> bool:
        """True when *temperature_C* lies inside the table (ends included)."""
        lo, hi = self.range_C
        return lo - 1e-9 <= temperature_C <= hi + 1e-9

    def value_at(self, temperature_C: float, what: str = "property") -> float:
        """The linearly interpolated value at *temperature_C* (°C)."""
        self._check(temperature_C, what)
        return float(np.interp(temperature_C, self.temperatures_C, self.values))

    def uncertainty_at(self, temperature_C: float, what: str = "property") -> float | None:
        """The linearly interpolated standard uncertainty, or None when not stated."""
        if self.uncertainty is None:
            return None
        self._check(temperature_C, what)
        return float(np.interp(temperature_C, self.temperatures_C, self.uncertainty))

    def _check(self, temperature_C: float, what: str) -> None:
        if not math.isfinite(temperature_C):
            raise InputError(f"{what}: temperature {temperature_C} is not a finite number")
        if not self.covers(temperature_C):
            lo, hi = self.range_C
            span = f"only at {lo:g} °C" if lo == hi else f"from {lo:g} to {hi:g} °C"
            raise InputError(f"{what} is tabulated {span}; {temperature_C:g} °C is outside "
                             "the table: choose a temperature inside it or give the material "
                             "a table that reaches it (library format in "
                             "docs/configuration.md)")

    def to_dict(self) -> dict:
        """Plain JSON-ready form, keys as in the library file."""
        out = {"temperature_C": list(self.temperatures_C), "value": list(self.values),
               "source": self.source}
        if self.uncertainty is not None:
            out["uncertainty"] = list(self.uncertainty)
            out["uncertainty_source"] = self.uncertainty_source
        if self.basis:
            out["basis"] = self.basis
        return out


def expansion_pair(table: PropertyTable, temperature_C: float,
                   what: str = "expansion") -> tuple[float, float | None]:
    """Instantaneous and mean (from 20 °C) expansion coefficients at *temperature_C*.

    For an ``"instantaneous"`` table α(T) is interpolated linearly and the mean is its
    exact integral from 20 °C divided by (T − 20) (None when the table does not reach
    down to 20 °C). For a ``"mean"`` table ᾱ(T) is interpolated linearly and α follows
    from the strain ε(T) = ᾱ(T)(T − 20) as α = dε/dT = ᾱ + (T − 20) dᾱ/dT; at a
    tabulated temperature inside the table, where the slope of ᾱ changes, α is the mean
    of the two one-sided values. Either way ∫₂₀ᵀ α dT = ᾱ(T)(T − 20).

    Returns
    -------
    (alpha, mean_alpha) : tuple
        1/K.
    """
    t = np.asarray(table.temperatures_C)
    v = np.asarray(table.values)
    value = table.value_at(temperature_C, what)
    ref = REFERENCE_C
    if table.basis == "mean":
        if len(t) == 1:
            return value, value
        slopes = np.diff(v) / np.diff(t)
        i = int(np.clip(np.searchsorted(t, temperature_C, side="right") - 1, 0, len(t) - 2))
        slope = slopes[i]
        on_node = np.abs(t[1:-1] - temperature_C) <= 1e-9
        if on_node.any():
            j = int(np.flatnonzero(on_node)[0]) + 1
            slope = 0.5 * (slopes[j - 1] + slopes[j])
        return value + (temperature_C - ref) * slope, value
    if not table.covers(ref):
        return value, None
    if abs(temperature_C - ref) < 1e-9:
        return value, value
    lo, hi = sorted((ref, temperature_C))
    inside = t[(t > lo) & (t < hi)]
    grid = np.concatenate(([lo], inside, [hi]))
    strain = np.trapezoid(np.interp(grid, t, v), grid)
    return value, float(strain / (hi - lo))


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
        Instantaneous linear thermal expansion coefficient α, 1/K (at room temperature
        the mean and the instantaneous coefficient coincide); a d×d tensor when
        anisotropic.
    stiffness : array_like, optional
        Full anisotropic stiffness in Voigt form (engineering shear strains), GPa:
        6×6 for 3D. Overrides ``youngs_modulus`` / ``poisson_ratio`` in the solvers.
    name : str
        Name shown in results.
    source : str
        Where the values come from (free text).
    sources : mapping, optional
        Per-property sources, ``{"conductivity": "...", ...}``.
    mean_expansion : float, optional
        Mean (secant) expansion coefficient from 20 °C to ``temperature_C``, 1/K.
    temperature_C : float, optional
        The temperature the plain values hold at, °C (None: not stated).
    uncertainty : mapping, optional
        Standard uncertainty of a property at ``temperature_C``, same unit,
        ``{"youngs_modulus": 30.0, ...}``; a property not named has none stated.
    tables : mapping, optional
        Property name → `PropertyTable` over temperature; `at` evaluates them.
    """

    conductivity: float | np.ndarray | None = None
    youngs_modulus: float | None = None
    poisson_ratio: float | None = None
    expansion: float | np.ndarray | None = None
    stiffness: np.ndarray | None = None
    name: str = "unnamed"
    source: str = "given by the user"
    sources: Mapping[str, str] = field(default_factory=dict)
    mean_expansion: float | None = None
    temperature_C: float | None = None
    uncertainty: Mapping[str, float] = field(default_factory=dict)
    tables: Mapping[str, PropertyTable] = field(default_factory=dict)

    def __post_init__(self):
        for prop in ("conductivity", "expansion", "stiffness"):
            value = getattr(self, prop)
            if value is not None and not np.isscalar(value):
                object.__setattr__(self, prop, np.asarray(value, dtype=float))
        for prop in ("youngs_modulus", "poisson_ratio", "mean_expansion", "temperature_C"):
            value = getattr(self, prop)
            if value is not None:
                object.__setattr__(self, prop, float(value))
        for prop in ("conductivity", "expansion"):
            value = getattr(self, prop)
            if value is not None and np.isscalar(value):
                object.__setattr__(self, prop, float(value))
        object.__setattr__(self, "sources", dict(self.sources))
        object.__setattr__(self, "uncertainty",
                           {k: float(v) for k, v in dict(self.uncertainty).items()})
        object.__setattr__(self, "tables", dict(self.tables))
        self.validate()

    def validate(self) -> None:
        """Raise `InputError` naming the property when a value is not physical."""
        where = f"material {self.name!r}"
        for prop in ("conductivity", "youngs_modulus", "poisson_ratio", "expansion", "stiffness",
                     "mean_expansion", "temperature_C"):
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
        for prop, u in self.uncertainty.items():
            if prop not in PROPERTIES + ("mean_expansion",):
                raise InputError(f"{where}: uncertainty given for {prop!r}, which is not one of "
                                 f"{', '.join(PROPERTIES + ('mean_expansion',))}")
            if not (math.isfinite(u) and u >= 0):
                raise InputError(f"{where}: uncertainty of {prop} must be a finite number ≥ 0")
        for prop, table in self.tables.items():
            if prop not in PROPERTIES:
                raise InputError(f"{where}: a table for {prop!r}; tables are for "
                                 f"{', '.join(PROPERTIES)}")
            if not isinstance(table, PropertyTable):
                raise InputError(f"{where}: the {prop} table must be a PropertyTable")
            if prop == "expansion" and len(table.values) > 1 and not table.basis:
                raise InputError(f"{where}: the expansion table must say its basis, "
                                 "\"instantaneous\" or \"mean\" (from 20 °C)")

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

    def temperature_range(self, properties=None) -> tuple[float, float] | None:
        """The temperatures (°C) at which every tabulated property in *properties*
        (default: all tabulated) can be evaluated, or None when nothing is tabulated."""
        props = [p for p in (properties or PROPERTIES) if p in self.tables]
        if not props:
            return None
        lo = max(self.tables[p].range_C[0] for p in props)
        hi = min(self.tables[p].range_C[1] for p in props)
        return lo, hi

    def at(self, temperature_C: float, properties=None) -> "Material":
        """This material with its plain values at *temperature_C* (°C).

        Each tabulated property is interpolated linearly in its table; ``expansion``
        becomes the instantaneous and ``mean_expansion`` the mean coefficient from
        20 °C (see `expansion_pair`); ``uncertainty`` holds the stated uncertainties at
        that temperature. The tables are kept, so ``m.at(500).at(1000)`` works.

        Parameters
        ----------
        temperature_C : float
            °C.
        properties : iterable of str, optional
            Evaluate only these (the others become None); default: every property of
            the material.

        Raises
        ------
        InputError
            When a property asked for has no table (values given without a temperature)
            or *temperature_C* lies outside its table; the message names the range.
        """
        temperature_C = float(temperature_C)
        wanted = tuple(properties) if properties is not None else PROPERTIES
        for prop in wanted:
            if prop not in PROPERTIES:
                raise InputError(f"unknown property {prop!r}; choose from {', '.join(PROPERTIES)}")
        values: dict = {}
        uncertainty: dict = {}
        for prop in PROPERTIES:
            if prop not in wanted:
                values[prop] = None
                continue
            table = self.tables.get(prop)
            if table is None:
                if getattr(self, prop) is None:
                    values[prop] = None
                    continue
                if self.temperature_C is not None and abs(self.temperature_C
                                                          - temperature_C) < 1e-9:
                    values[prop] = getattr(self, prop)
                    if prop in self.uncertainty:
                        uncertainty[prop] = self.uncertainty[prop]
                    continue
                held = ("at no stated temperature" if self.temperature_C is None
                        else f"only at {self.temperature_C:g} °C")
                raise InputError(f"material {self.name!r}: {prop} is given {held}, with no "
                                 f"table over temperature; give a table reaching "
                                 f"{temperature_C:g} °C (docs/configuration.md) or evaluate "
                                 "only the properties that have one")
            what = f"material {self.name!r}: {prop}"
            if prop == "expansion":
                alpha, mean = expansion_pair(table, temperature_C, what)
                values["expansion"], values["mean_expansion"] = alpha, mean
                u = table.uncertainty_at(temperature_C, what)
                if u is not None:
                    uncertainty["mean_expansion" if table.basis == "mean" else "expansion"] = u
                continue
            values[prop] = table.value_at(temperature_C, what)
            u = table.uncertainty_at(temperature_C, what)
            if u is not None:
                uncertainty[prop] = u
        values.setdefault("mean_expansion", None)
        return dataclasses.replace(self, temperature_C=temperature_C, uncertainty=uncertainty,
                                   **values)

    def replace(self, **changes) -> "Material":
        """A copy with some properties changed (validated again).

        A property given here replaces its table too: the new value holds at this
        material's temperature only, with no stated uncertainty.
        """
        changed = [p for p in PROPERTIES if p in changes]
        if changed:
            if "tables" not in changes:
                changes["tables"] = {k: v for k, v in self.tables.items() if k not in changed}
            if "uncertainty" not in changes:
                gone = set(changed) | ({"mean_expansion"} if "expansion" in changed else set())
                changes["uncertainty"] = {k: v for k, v in self.uncertainty.items()
                                          if k not in gone}
            if "expansion" in changed and "mean_expansion" not in changes:
                changes["mean_expansion"] = None
        return dataclasses.replace(self, **changes)

    def to_dict(self) -> dict:
        """Plain JSON-ready form (tables left out; see `tables_dict`)."""
        out = {"name": self.name, "source": self.source}
        for prop in PROPERTIES + ("stiffness", "mean_expansion", "temperature_C"):
            value = getattr(self, prop)
            if value is not None:
                out[prop] = value.tolist() if isinstance(value, np.ndarray) else value
        if self.sources:
            out["sources"] = dict(self.sources)
        if self.uncertainty:
            out["uncertainty"] = dict(self.uncertainty)
        return out

    def tables_dict(self) -> dict:
        """The tables over temperature in the library file's form."""
        return {p: t.to_dict() for p, t in self.tables.items()}


def material_from_entry(name: str, entry: Mapping, origin: str = "the library") -> Material:
    """Build a `Material` at 20 °C from one library-format table.

    The format (docs/configuration.md): ``description``; each property either a number
    (its value at 20 °C, with ``sources`` and ``uncertainty`` sub-tables) or a table with
    ``temperature_C``, ``value``, ``source`` and optionally ``uncertainty`` (absolute, one
    number or one per temperature) or ``relative_uncertainty`` (a fraction), with
    ``uncertainty_source``, and for expansion ``basis = "instantaneous" | "mean"``.
    """
    where = f"material {name!r} in {origin}"
    if not isinstance(entry, Mapping):
        raise InputError(f"{where} is not a table")
    for key in entry:
        if key not in _ENTRY_KEYS:
            close = difflib.get_close_matches(key, sorted(_ENTRY_KEYS), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise InputError(f"{where}: unknown key {key!r}{hint}; allowed: "
                             f"{', '.join(sorted(_ENTRY_KEYS))}")
    sources = dict(entry.get("sources", {}))
    scalar_unc = dict(entry.get("uncertainty", {}))
    tables = {}
    for prop in PROPERTIES:
        if prop not in entry:
            continue
        raw = entry[prop]
        if isinstance(raw, Mapping):
            tables[prop] = _table_from_entry(raw, f"{where}, {prop}", prop)
        elif isinstance(raw, (int, float)) and not isinstance(raw, bool):
            if prop not in sources:
                raise InputError(f"{where}: {prop} = {raw} names no source; add "
                                 f"[{name}.sources] {prop} = \"...\" (\"from memory\" is an "
                                 "honest source)")
            u = scalar_unc.get(prop)
            tables[prop] = PropertyTable((REFERENCE_C,), (float(raw),), str(sources[prop]),
                                         None if u is None else (float(u),),
                                         "given in the entry's [uncertainty] table" if u is not None
                                         else "")
        else:
            raise InputError(f"{where}: {prop} must be a number (value at 20 °C) or a table "
                             "with temperature_C, value and source")
    description = str(entry.get("description", name))
    base = Material(name=name, source=description,
                    sources={p: t.source for p, t in tables.items()}, tables=tables)
    reachable = [p for p, t in tables.items() if t.covers(REFERENCE_C)]
    return base.at(REFERENCE_C, properties=reachable)


def _table_from_entry(raw: Mapping, where: str, prop: str) -> PropertyTable:
    for key in raw:
        if key not in _TABLE_KEYS:
            raise InputError(f"{where}: unknown key {key!r}; allowed: "
                             f"{', '.join(sorted(_TABLE_KEYS))}")
    for key in ("temperature_C", "value", "source"):
        if key not in raw:
            raise InputError(f"{where}: the table needs {key!r}")
    temps = np.atleast_1d(np.asarray(raw["temperature_C"], dtype=float))
    values = np.atleast_1d(np.asarray(raw["value"], dtype=float))
    unc = None
    if "uncertainty" in raw and "relative_uncertainty" in raw:
        raise InputError(f"{where}: give uncertainty or relative_uncertainty, not both")
    if "uncertainty" in raw:
        unc = np.broadcast_to(np.asarray(raw["uncertainty"], dtype=float), values.shape)
    elif "relative_uncertainty" in raw:
        unc = float(raw["relative_uncertainty"]) * np.abs(values)
    basis = str(raw.get("basis", ""))
    if basis and prop != "expansion":
        raise InputError(f"{where}: basis is for the expansion table only")
    if prop == "expansion" and len(values) > 1 and not basis:
        raise InputError(f"{where}: say basis = \"instantaneous\" or \"mean\" (from 20 °C)")
    try:
        return PropertyTable(tuple(temps), tuple(values), str(raw["source"]),
                             None if unc is None else tuple(unc),
                             str(raw.get("uncertainty_source", "")), basis)
    except InputError as exc:
        raise InputError(f"{where}: {exc}") from None


def parse_library(text: str, origin: str = "the library") -> dict[str, Material]:
    """Materials from library-format TOML text, name → `Material` at 20 °C."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{origin} is not valid TOML: {exc}") from None
    out = {}
    for key, entry in data.items():
        name = _key(key)
        out[name] = material_from_entry(name, entry, origin)
    return out


@lru_cache(maxsize=1)
def _builtin() -> tuple[tuple[str, Material], ...]:
    text = resources.files("polisect.core.data").joinpath("materials.toml").read_text("utf-8")
    return tuple(parse_library(text, "the built-in library").items())


def library() -> dict[str, Material]:
    """The built-in material library, name → `Material` (values at 20 °C, with tables)."""
    return {k: dataclasses.replace(m) for k, m in _builtin()}


def load_library_file(path) -> dict[str, Material]:
    """The built-in library with a lab's own file merged over it.

    The file uses the library's own format (docs/configuration.md); an entry with the
    name of a built-in material replaces it whole.

    Parameters
    ----------
    path : str or Path
        A TOML file.

    Returns
    -------
    dict
        name → `Material`.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"materials file {str(path)!r} not found; give the path of a TOML "
                         "file in the library's format")
    merged = library()
    merged.update(parse_library(path.read_text("utf-8"), f"{path.name}"))
    return merged


def _key(name: str) -> str:
    return name.strip().lower().replace("_", "-").replace(" ", "-")


def get_material(name: str, materials: Mapping[str, Material] | None = None) -> Material:
    """Look a material up by name, in the built-in library or in *materials*.

    Parameters
    ----------
    name : str
        Case, spaces and underscores do not matter.
    materials : mapping, optional
        Where to look (e.g. from `load_library_file`); default the built-in library.

    Raises
    ------
    InputError
        When *name* is not there; the message lists close matches.
    """
    lib = library() if materials is None else materials
    key = _key(name)
    if key in lib:
        return lib[key]
    close = difflib.get_close_matches(key, lib.keys(), n=3, cutoff=0.5)
    hint = f"did you mean {', '.join(close)}?" if close else "run 'polisect materials' for the list"
    raise InputError(f"unknown material {name!r}: {hint}")


def describe_library(materials: Mapping[str, Material] | None = None) -> str:
    """The library as a plain-text table (what `polisect materials` prints)."""
    lib = library() if materials is None else materials
    rows = [("name", "k W/(m·K)", "E GPa", "nu", "alpha 1e-6/K", "tables °C", "description")]
    for key, m in lib.items():
        rows.append((key, _fmt(m.conductivity), _fmt(m.youngs_modulus), _fmt(m.poisson_ratio),
                     _fmt(None if m.expansion is None else m.expansion * 1e6),
                     _span(m), m.source))
    widths = [max(len(r[i]) for r in rows) for i in range(6)]
    lines = ["  ".join(c.ljust(w) for c, w in zip(r[:6], widths)) + "  " + r[6] for r in rows]
    lines.insert(1, "-" * len(lines[0]))
    lines.append("")
    lines.append("Values at 20 °C; 'tables' gives the widest temperature range of any property. "
                 "'polisect materials --show NAME' prints the tables with their sources. "
                 "Estimates from published data: check your grade, verify by measurement.")
    return "\n".join(lines)


def describe_material(material: Material) -> str:
    """One material's tables over temperature with their sources, as plain text."""
    m = material
    lines = [f"{m.name}: {m.source}", ""]
    for prop in PROPERTIES:
        table = m.tables.get(prop)
        if table is None:
            value = getattr(m, prop)
            if value is not None:
                lines.append(f"{prop} [{UNITS[prop]}]: {_fmt(value)} "
                             f"({m.sources.get(prop, m.source)})")
                lines.append("")
            continue
        scale = 1e6 if prop == "expansion" else 1.0
        unit = "1e-6/K" if prop == "expansion" else UNITS[prop]
        basis = f", {table.basis} coefficient" if table.basis == "mean" else (
            ", instantaneous coefficient" if table.basis else "")
        if table.basis == "mean":
            basis += " from 20 °C"
        lines.append(f"{prop} [{unit}]{basis}")
        header = "  T °C      value" + ("      ± u" if table.uncertainty else "")
        if prop == "expansion" and table.covers(REFERENCE_C):
            header += "   instantaneous      mean"
        lines.append(header)
        for i, t in enumerate(table.temperatures_C):
            row = f"  {t:7.1f}  {table.values[i] * scale:9.4g}"
            if table.uncertainty:
                row += f"  {table.uncertainty[i] * scale:7.3g}"
            if prop == "expansion" and table.covers(REFERENCE_C):
                alpha, mean = expansion_pair(table, t)
                row += f"   {alpha * 1e6:13.4g}  {_fmt(None if mean is None else mean * 1e6):>8}"
            lines.append(row)
        lines.append(f"  source: {table.source}")
        if table.uncertainty_source:
            lines.append(f"  uncertainty: {table.uncertainty_source}")
        lines.append("")
    lines.append("Linear interpolation inside a table; a temperature outside it is an error. "
                 "Published values for the grade the source describes: check yours.")
    return "\n".join(lines)


def _span(m: Material) -> str:
    if not m.tables:
        return "-"
    lo = min(t.range_C[0] for t in m.tables.values())
    hi = max(t.range_C[1] for t in m.tables.values())
    return f"{lo:g}" if lo == hi else f"{lo:g}-{hi:g}"


def _fmt(value) -> str:
    if value is None:
        return "-"
    return f"{value:.4g}" if not math.isnan(value) else "nan"
