"""Per-pixel fields of the unit load cases, and their superposition.

Every field is the element mean (``fft``, ``fe``) or the pixel-centre value (``ms``).
In zero-property pixels the gradient/strain is not determined by the problem and is NaN;
their flux/stress is zero.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ...core.errors import InputError

VOIGT_NAMES = {2: ("xx", "yy", "xy"), 3: ("xx", "yy", "zz", "yz", "xz", "xy")}
AXIS_NAMES = ("x", "y", "z")


def _weights(loads: tuple[str, ...], amplitudes: dict[str, float]) -> list[tuple[int, float]]:
    missing = [k for k, v in amplitudes.items() if v != 0.0 and k not in loads]
    if missing:
        raise InputError(f"fields of load cases {missing} were not kept; ask for them with "
                         f"fields=True (kept: {list(loads)})")
    return [(loads.index(k), v) for k, v in amplitudes.items() if v != 0.0]


@dataclass(frozen=True, eq=False)
class ConductivityFields:
    """Fields under unit mean temperature gradients.

    Attributes
    ----------
    loads : tuple of str
        Axis of the unit mean gradient of each kept load case ('x', 'y', 'z').
    gradient, flux : (n_loads, d, *grid) ndarray
        Temperature gradient and heat flux (``q = k ∇T`` with the sign convention of the
        effective tensor: the flux along the gradient is positive).
    """

    loads: tuple[str, ...]
    gradient: np.ndarray
    flux: np.ndarray

    def flux_magnitude(self, axis: str = "x") -> np.ndarray:
        """``|q|`` per pixel under a unit mean gradient along *axis*."""
        (index, _), = _weights(self.loads, {axis: 1.0})
        return np.sqrt(np.sum(self.flux[index] ** 2, axis=0))

    def under(self, mean_gradient) -> tuple[np.ndarray, np.ndarray]:
        """Gradient and flux fields under any mean gradient (superposition)."""
        g = np.asarray(mean_gradient, dtype=float)
        pairs = _weights(self.loads, dict(zip(AXIS_NAMES, g)))
        grad = sum(w * self.gradient[i] for i, w in pairs)
        flux = sum(w * self.flux[i] for i, w in pairs)
        return grad, flux


@dataclass(frozen=True, eq=False)
class ElasticFields:
    """Fields under unit mean strains (Voigt, engineering shear).

    Attributes
    ----------
    loads : tuple of str
        Unit strain component of each kept load case ('xx', 'yy', 'xy', …; 'zz' is the
        uniform axial strain of generalized plane strain).
    strain, stress : (n_loads, nv, *grid) ndarray
        In-plane (2D) or full (3D) Voigt strain and stress.
    stress_zz : (n_loads, *grid) ndarray or None
        2D only: the out-of-plane normal stress (zero in plane stress).
    load_stiffness : (n_all, n_all) ndarray
        Mean stress of every unit load case (columns) in the order of `all_loads`; used to
        find the strains that give a prescribed mean stress.
    all_loads : tuple of str
    """

    loads: tuple[str, ...]
    strain: np.ndarray
    stress: np.ndarray
    stress_zz: np.ndarray | None
    load_stiffness: np.ndarray
    all_loads: tuple[str, ...]

    def under_stress(self, mean_stress: dict[str, float]):
        """Strain, stress (and σ_zz in 2D) fields under a prescribed mean stress.

        Parameters
        ----------
        mean_stress : dict
            Mean stress components by name, e.g. ``{"xx": 1.0}``; unnamed components are
            zero (in generalized plane strain that includes the mean axial stress).
        """
        unknown = set(mean_stress) - set(self.all_loads)
        if unknown:
            raise InputError(f"stress components {sorted(unknown)} are not part of this "
                             f"problem; use {list(self.all_loads)}")
        target = np.array([mean_stress.get(k, 0.0) for k in self.all_loads])
        amplitudes = np.linalg.lstsq(self.load_stiffness, target, rcond=None)[0]
        pairs = _weights(self.loads, dict(zip(self.all_loads, amplitudes)))
        strain = sum(w * self.strain[i] for i, w in pairs)
        stress = sum(w * self.stress[i] for i, w in pairs)
        zz = None if self.stress_zz is None else sum(w * self.stress_zz[i] for i, w in pairs)
        return strain, stress, zz

    def von_mises(self, mean_stress: dict[str, float]) -> np.ndarray:
        """Equivalent (von Mises) stress per pixel under a prescribed mean stress."""
        _, s, zz = self.under_stress(mean_stress)
        if s.shape[0] == 6:
            xx, yy, zz, yz, xz, xy = s
        else:
            xx, yy, xy = s
            zz = np.zeros_like(xx) if zz is None else zz
            yz = xz = np.zeros_like(xx)
        return np.sqrt(0.5 * ((xx - yy) ** 2 + (yy - zz) ** 2 + (zz - xx) ** 2)
                       + 3.0 * (yz ** 2 + xz ** 2 + xy ** 2))

    def von_mises_uniaxial(self, axis: str = "x") -> np.ndarray:
        """von Mises stress under a unit uniaxial mean stress along *axis*."""
        return self.von_mises({axis * 2: 1.0})
