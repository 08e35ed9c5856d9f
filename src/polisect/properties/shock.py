"""Hasselman's thermal-shock resistance indices, for ranking materials.

R = σ_f(1 − ν)/(Eα) is the temperature difference a body survives under the severest
(infinite heat transfer) quench before a crack starts; R′ = Rk is the heat flux it
survives under mild heat transfer; R′′′′ = Eγ/(σ_f²(1 − ν)) measures the resistance
to extensive crack growth once cracks have started. All three are comparative indices.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..core.errors import InputError

CAUTION = ("Thermal-shock indices (Hasselman 1969) are comparative figures for ranking "
           "materials, not design values: thermal-shock behaviour must be confirmed by test, and "
           "service design follows the applicable standards and licensed engineering practice.")


@dataclass(frozen=True)
class ThermalShockIndices:
    """Hasselman's indices from effective properties.

    Attributes
    ----------
    R : float
        Crack-initiation index under severe shock, K.
    R_prime : float or None
        Crack-initiation index under mild shock, R·k, W/m; None without a conductivity.
    R_4prime : float or None
        Crack-propagation index Eγ/(σ_f²(1 − ν)), m; None without a fracture energy.
    caution : str
        `CAUTION`, to be printed with the numbers.
    """

    R: float
    R_prime: float | None
    R_4prime: float | None
    caution: str = CAUTION

    def format(self) -> str:
        """Plain-text lines for the terminal or a report."""
        def show(value, unit):
            return "-" if value is None else f"{value:.4g} {unit}"
        return "\n".join([
            "Thermal-shock indices (comparative, for ranking materials; Hasselman 1969)",
            f"  R     = sigma_f(1-nu)/(E alpha)      {show(self.R, 'K')}",
            f"  R'    = R k                          {show(self.R_prime, 'W/m')}",
            f"  R''''  = E gamma/(sigma_f^2 (1-nu))   {show(self.R_4prime, 'm')}",
            self.caution])


def _positive(value, what: str, unit: str) -> float:
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{what} {value!r} is not a number; give it in {unit}") from None
    if not math.isfinite(value) or value <= 0.0:
        raise InputError(f"{what} must be a positive number in {unit}, not {value:g}")
    return value


def thermal_shock_indices(E_GPa: float, nu: float, alpha: float, k: float | None,
                          strength_MPa: float,
                          fracture_energy_J_m2: float | None = None) -> ThermalShockIndices:
    """Hasselman's thermal-shock indices R, R′ and R′′′′.

    Parameters
    ----------
    E_GPa : float
        Young's modulus, GPa (> 0).
    nu : float
        Poisson's ratio, −1 < ν < 0.5.
    alpha : float
        Linear thermal expansion, 1/K (its magnitude is used).
    k : float or None
        Thermal conductivity, W/(m·K); None leaves R′ out.
    strength_MPa : float
        Tensile (or flexural) fracture strength σ_f, MPa — the ``[service] strength_MPa``.
    fracture_energy_J_m2 : float, optional
        Effective fracture surface energy γ, J/m²; None leaves R′′′′ out.

    Returns
    -------
    ThermalShockIndices
        R in K, R′ in W/m, R′′′′ in m, with the caution text.

    Raises
    ------
    InputError
        A modulus, strength or fracture energy that is not positive, ν outside
        (−1, 0.5), a zero or missing expansion, a negative conductivity.

    References
    ----------
    .. [1] Hasselman, D. P. H. (1969). Unified theory of thermal shock fracture
       initiation and crack propagation in brittle ceramics. J. Am. Ceram. Soc. 52,
       600–604.

    Examples
    --------
    >>> s = thermal_shock_indices(380.0, 0.22, 8e-6, 30.0, 300.0, 20.0)
    >>> round(s.R, 1), round(s.R_prime), round(s.R_4prime * 1e6, 1)   # K, W/m, µm
    (77.0, 2309, 108.3)
    """
    E = _positive(E_GPa, "Young's modulus", "GPa") * 1e9
    sigma = _positive(strength_MPa, "strength", "MPa") * 1e6
    try:
        nu = float(nu)
        a = abs(float(alpha))
    except (TypeError, ValueError):
        raise InputError("Poisson's ratio and expansion must be numbers") from None
    if not (-1.0 < nu < 0.5):
        raise InputError(f"Poisson's ratio {nu:g} is outside (-1, 0.5)")
    if not math.isfinite(a) or a == 0.0:
        raise InputError("thermal-shock indices need a nonzero thermal expansion (1/K); with "
                         "zero expansion there is no thermal stress to rank")
    R = sigma * (1.0 - nu) / (E * a)
    R_prime = None
    if k is not None:
        k = float(k)
        if not math.isfinite(k) or k < 0.0:
            raise InputError(f"conductivity {k:g} W/(m·K) must be zero or positive")
        R_prime = R * k
    R4 = None
    if fracture_energy_J_m2 is not None:
        gamma = _positive(fracture_energy_J_m2, "fracture energy", "J/m²")
        R4 = E * gamma / (sigma ** 2 * (1.0 - nu))
    return ThermalShockIndices(R, R_prime, R4)


INDEX_WORDS = {"R": "crack initiation, severe shock (comparative index)",
               "R_prime": "crack initiation, mild shock (comparative index)",
               "R_4prime": "resistance to crack propagation (comparative index)"}
"""What each index ranks."""


@dataclass(frozen=True)
class ShockIndices:
    """Hasselman's thermal-shock indices from the computed effective properties."""

    R: float
    R_prime: float | None
    R_4prime: float | None
    caution: str
    model: str
