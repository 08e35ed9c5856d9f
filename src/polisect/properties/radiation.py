"""Heat carried across pores at high temperature: gas conduction plus radiation.

A pore conducts through its gas, and above a few hundred °C also by radiation from one
wall to the other. Loeb (1954) gave the radiative part as an effective conductivity of
the pore,

    k_r = 4 γ σ ε d T³,

σ the Stefan–Boltzmann constant, ε the emissivity of the pore walls, d the pore size
along the heat flow, T the absolute temperature and γ a shape factor. It grows as T³
and with the pore size, so coarse pores in a refractory at 1200 °C conduct several times
what their air alone would.

The gas is dry air at atmospheric pressure from the correlation of Kadoya, Matsunaga &
Nagashima (1985), which also fills the library's ``air`` table.

These are estimates (ε of a pore wall and the pore size along the flow are rarely known
better than ±20 %): verify by measurement where results feed design.

References
----------
Loeb, A. L. (1954). Thermal conductivity: VIII, a theory of thermal conductivity of
porous materials. J. Am. Ceram. Soc. 37, 96.
Kadoya, K., Matsunaga, N. & Nagashima, A. (1985). Viscosity and thermal conductivity of
dry air in the gaseous phase. J. Phys. Chem. Ref. Data 14, 947.

Examples
--------
>>> from polisect.properties.radiation import pore_conductivity
>>> r = pore_conductivity(1200.0, pore_size_um=200.0)
>>> r.radiation_included, round(r.gas, 4), round(r.radiation, 4)
(True, 0.0916, 0.0773)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..core.errors import InputError
from ..core.materials import get_material

STEFAN_BOLTZMANN = 5.670374419e-8
"""σ, W/(m²·K⁴) (CODATA 2018, exact in the SI since 2019)."""
RADIATION_ON_ABOVE_C = 400.0
"""Radiation across pores is included by default at and above this temperature (°C).

At 400 °C a 100 µm pore with ε = 0.8 and γ = 2/3 radiates about 7 % of what its air
conducts (k_r ≈ 0.0037 against 0.050 W/(m·K)); below it, under the few per cent that the
phase data are uncertain anyway. Choice of polisect (no source); pass ``radiation=True``
or ``False`` to decide yourself."""
DEFAULT_EMISSIVITY = 0.8
"""Wall emissivity used when none is given: a typical value for oxide refractories at
high temperature (common practice, no source); give your material's."""
SHAPE_FACTORS = {"spherical": 2.0 / 3.0, "cylindrical": math.pi / 4.0, "laminar": 1.0}
"""Loeb's geometric factor γ: 2/3 for spherical pores, π/4 for cylindrical pores with
their axes across the heat flow, 1 for flat (laminar) pores across the flow (Loeb 1954,
as quoted in later reviews; from memory)."""

_KADOYA_SCALE = 25.9778e-3
_KADOYA_T = 132.5
_KADOYA_RHO = 314.3
_KADOYA_DILUTE = ((1.0, 0.239503), (0.5, 0.00649768), (0.0, 1.0), (-1.0, -1.92615),
                  (-2.0, 2.00383), (-3.0, -1.07553), (-4.0, 0.229414))
_KADOYA_EXCESS = (0.402287, 0.356603, -0.163159, 0.138059, -0.0201725)
_AIR_MOLAR_MASS = 28.9586e-3
_GAS_CONSTANT = 8.314462618


def air_conductivity(temperature_C: float, pressure_Pa: float = 101325.0) -> float:
    """Thermal conductivity of dry air, W/(m·K), from Kadoya et al. (1985).

    λ = Λ [Σ Cᵢ Tᵣⁱ + Σ Bᵢ ρᵣⁱ], Tᵣ = T/132.5 K, ρᵣ = ρ/314.3 kg/m³, Λ = 25.9778 mW/(m·K);
    the density from the ideal-gas law (enough at the pressures of a pore). The critical
    enhancement near the critical point is left out: it does not matter above 200 K at
    atmospheric pressure.

    Parameters
    ----------
    temperature_C : float
        °C, inside the correlation's range 85-2000 K (−188 to 1727 °C).
    pressure_Pa : float
        Pa, default one atmosphere.

    References
    ----------
    Kadoya, K., Matsunaga, N. & Nagashima, A. (1985). J. Phys. Chem. Ref. Data 14, 947.
    """
    T = float(temperature_C) + 273.15
    if not (85.0 <= T <= 2000.0):
        raise InputError(f"air conductivity: {temperature_C:g} °C is outside the range of "
                         "the Kadoya et al. (1985) correlation, -188 to 1727 °C (85-2000 K)")
    if not (pressure_Pa > 0 and math.isfinite(pressure_Pa)):
        raise InputError(f"air conductivity: pressure {pressure_Pa!r} Pa must be positive")
    tr = T / _KADOYA_T
    rho_r = pressure_Pa * _AIR_MOLAR_MASS / (_GAS_CONSTANT * T) / _KADOYA_RHO
    dilute = sum(c * tr ** e for e, c in _KADOYA_DILUTE)
    excess = sum(b * rho_r ** (i + 1) for i, b in enumerate(_KADOYA_EXCESS))
    return _KADOYA_SCALE * (dilute + excess)


def radiation_conductivity(temperature_C: float, pore_size_um: float,
                           emissivity: float = DEFAULT_EMISSIVITY,
                           shape_factor: float = SHAPE_FACTORS["spherical"]) -> float:
    """Loeb's radiative conductivity of a pore, k_r = 4 γ σ ε d T³, W/(m·K).

    Parameters
    ----------
    temperature_C : float
        °C.
    pore_size_um : float
        Pore size d along the heat flow, µm (e.g. the mean pore diameter measured on the
        image, or a stated size for pores below the pixel).
    emissivity : float
        Emissivity of the pore walls, 0 < ε ≤ 1.
    shape_factor : float
        Loeb's γ (`SHAPE_FACTORS`).

    References
    ----------
    Loeb, A. L. (1954). J. Am. Ceram. Soc. 37, 96.
    """
    T = float(temperature_C) + 273.15
    if not (T > 0 and math.isfinite(T)):
        raise InputError(f"pore radiation: temperature {temperature_C!r} °C is not above "
                         "absolute zero")
    if not (pore_size_um >= 0 and math.isfinite(pore_size_um)):
        raise InputError(f"pore radiation: pore size {pore_size_um!r} µm must be ≥ 0")
    if not (0.0 < emissivity <= 1.0):
        raise InputError(f"pore radiation: emissivity {emissivity!r} must lie in (0, 1]")
    if not (0.0 < shape_factor <= 1.0):
        raise InputError(f"pore radiation: shape factor {shape_factor!r} must lie in (0, 1] "
                         f"(Loeb's γ: {', '.join(f'{k} {v:.3g}' for k, v in SHAPE_FACTORS.items())})")
    return 4.0 * shape_factor * STEFAN_BOLTZMANN * emissivity * pore_size_um * 1e-6 * T ** 3


@dataclass(frozen=True)
class PoreConductivity:
    """What a pore conducts at one temperature, W/(m·K).

    Attributes
    ----------
    temperature_C : float
    gas : float
        The gas's conductivity (library ``air`` table).
    radiation : float
        Loeb's radiative term (0 when not included).
    total : float
        gas + radiation: the conductivity to give the pore phase.
    radiation_included : bool
    pore_size_um, emissivity, shape_factor : float
        The inputs of the radiative term.
    source : str
        What was done, with the sources, for the report.
    """

    temperature_C: float
    gas: float
    radiation: float
    total: float
    radiation_included: bool
    pore_size_um: float
    emissivity: float
    shape_factor: float
    source: str


def pore_conductivity(temperature_C: float, pore_size_um: float,
                      emissivity: float = DEFAULT_EMISSIVITY,
                      shape_factor: float = SHAPE_FACTORS["spherical"],
                      radiation: bool | None = None, gas=None) -> PoreConductivity:
    """Effective conductivity of a gas-filled pore at *temperature_C*: gas plus radiation.

    Parameters
    ----------
    temperature_C : float
        °C.
    pore_size_um : float
        Pore size along the heat flow, µm.
    emissivity, shape_factor : float
        See `radiation_conductivity`.
    radiation : bool, optional
        Include Loeb's term; default: at and above `RADIATION_ON_ABOVE_C`.
    gas : Material, optional
        The gas (a material with a conductivity table); default the library's ``air``.

    Returns
    -------
    PoreConductivity
    """
    temperature_C = float(temperature_C)
    gas = get_material("air") if gas is None else gas
    k_gas = gas.at(temperature_C, properties=("conductivity",)).conductivity
    if k_gas is None:
        raise InputError(f"gas {gas.name!r} has no conductivity")
    on = temperature_C >= RADIATION_ON_ABOVE_C if radiation is None else bool(radiation)
    k_r = radiation_conductivity(temperature_C, pore_size_um, emissivity, shape_factor)
    k_r = k_r if on else 0.0
    gas_source = gas.tables["conductivity"].source if "conductivity" in gas.tables else (
        gas.sources.get("conductivity", gas.source))
    if on:
        why = ("default at and above " if radiation is None else "asked for; default from ")
        text = (f"pore at {temperature_C:g} °C: {gas.name} {k_gas:.4g} W/(m·K) ({gas_source}) "
                f"plus radiation across the pore {k_r:.4g} W/(m·K) = 4 γ σ ε d T³ with "
                f"γ = {shape_factor:.3g}, ε = {emissivity:g}, d = {pore_size_um:g} µm "
                f"(Loeb, J. Am. Ceram. Soc. 37 (1954) 96; {why}{RADIATION_ON_ABOVE_C:g} °C)")
    else:
        text = (f"pore at {temperature_C:g} °C: {gas.name} {k_gas:.4g} W/(m·K) ({gas_source}); "
                f"radiation across pores not included (on by default from "
                f"{RADIATION_ON_ABOVE_C:g} °C)")
    return PoreConductivity(temperature_C, k_gas, k_r, k_gas + k_r, on, float(pore_size_um),
                            float(emissivity), float(shape_factor), text)


def pore_phase(temperature_C: float, pore_size_um: float,
               emissivity: float = DEFAULT_EMISSIVITY,
               shape_factor: float = SHAPE_FACTORS["spherical"],
               radiation: bool | None = None, gas=None):
    """The pore phase of an image at *temperature_C*: the gas at that temperature with
    its conductivity raised by radiation across pores of *pore_size_um* (see
    `pore_conductivity`; the source line says what was done).

    Returns
    -------
    Material
        Plain values at *temperature_C*, no tables.
    """
    gas = get_material("air") if gas is None else gas
    r = pore_conductivity(temperature_C, pore_size_um, emissivity, shape_factor, radiation, gas)
    hot = gas.at(temperature_C)
    sources = {**hot.sources, "conductivity": r.source}
    return hot.replace(conductivity=r.total, sources=sources, tables={}, uncertainty={})
