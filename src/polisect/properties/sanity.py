"""Physical sanity of solver results: signs, Poisson's ratio range, the Voigt/Reuss-type
bounds whatever the anisotropy, and a conducting or load-bearing network where one is
needed.

Each check takes one result of `polisect.properties.solve` and the phases it was solved
for (``{label: Material}`` and ``{label: area or volume fraction}``) and returns
`Finding` objects, plain data: ``refuse`` when the number is physically meaningless and
must not be reported as a result, ``warn`` when it is physical but needs a caution.

Bounds used (any structure, any anisotropy of the result or of the phases): in the
Loewner order of symmetric matrices

    (Σ f_r K_r⁻¹)⁻¹ ≤ K* ≤ Σ f_r K_r

for the conductivity tensor K* and likewise for the stiffness in Mandel form, the
uniform-stress (Reuss) and uniform-gradient (Voigt) trial fields of the variational
principles [1]_, [2]_; a pixel/voxel solution obeys them for the discrete problem too
(both trial fields lie in its spaces). A phase with zero conductivity or stiffness makes
the lower bound zero.

References
----------
.. [1] Wiener, O. (1912). Die Theorie des Mischkörpers für das Feld der stationären
   Strömung. Abh. Sächs. Ges. Wiss., Math.-Phys. Kl. 32, 509–604.
.. [2] Hill, R. (1952). The elastic behaviour of a crystalline aggregate. Proc. Phys. Soc.
   A 65, 349–354.

Examples
--------
Between the harmonic (1.22) and arithmetic (2.8) means of its phases a conductivity may lie;
above, it cannot:

>>> import numpy as np
>>> from polisect import Material
>>> from polisect.properties.solve import ConductivityResult, SolverFacts
>>> phases = {0: Material(conductivity=1.0), 1: Material(conductivity=10.0)}
>>> facts = SolverFacts("fft", 10, 0.1, (), 1e-6, True)
>>> check_conductivity(ConductivityResult(np.eye(2) * 2.0, facts), phases, {0: 0.8, 1: 0.2})
()
>>> [f.level for f in check_conductivity(ConductivityResult(np.eye(2) * 3.0, facts),
...                                      phases, {0: 0.8, 1: 0.2})]
['refuse']
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ..core import tensors
from ..core.errors import InputError
from .solve import ConductivityResult, ElasticityResult, ExpansionResult
from .solve.phases import PhaseImage, conductivity_tensors, elastic_phases

REFUSE, WARN = "refuse", "warn"


@dataclass(frozen=True)
class Finding:
    """One thing physically wrong with (``refuse``) or worth a caution about (``warn``) a
    result; *message* is one line that names the phases and what to change."""

    level: str
    prop: str
    message: str

    def to_dict(self) -> dict:
        return {"level": self.level, "property": self.prop, "message": self.message}


def check_result(result, materials: Mapping, fractions: Mapping) -> tuple[Finding, ...]:
    """Dispatch to `check_conductivity`, `check_elasticity` or `check_expansion`."""
    for kind, check in ((ConductivityResult, check_conductivity),
                        (ElasticityResult, check_elasticity),
                        (ExpansionResult, check_expansion)):
        if isinstance(result, kind):
            return check(result, materials, fractions)
    raise TypeError(f"no sanity check for {type(result).__name__}")


def fractions_of(labels) -> dict:
    """Exact area (voxel) fraction of every label of the map that was solved, the
    *fractions* the checks need (the bounds are sharp: pass these, not estimates)."""
    values, counts = np.unique(np.asarray(labels), return_counts=True)
    return {int(v): c / counts.sum() for v, c in zip(values, counts)}


def refusals(findings) -> list[str]:
    """The messages of the findings that must stop a result from being reported."""
    return [f.message for f in findings if f.level == REFUSE]


def check_conductivity(result: ConductivityResult, materials: Mapping,
                       fractions: Mapping) -> tuple[Finding, ...]:
    """Findings on an effective conductivity tensor.

    Refused: a non-finite or negative tensor, one outside the Wiener (Voigt/Reuss) bounds,
    and a zero eigenvalue although every phase conducts (a contrast beyond the solver's
    resolution). Warned: no conducting path across the section in some direction, when a
    phase of zero conductivity makes that the true answer.
    """
    keys, f = _phases(materials, fractions)
    image = PhaseImage(np.zeros((1,) * result.tensor.shape[0], int), keys,
                       tuple(materials[k] for k in keys))
    phase_k = conductivity_tensors(image)
    return _bounded("conductivity", result.tensor, phase_k, f, keys, materials,
                    result.facts.tolerance, "conducting", "conductivity")


def check_elasticity(result: ElasticityResult, materials: Mapping,
                     fractions: Mapping) -> tuple[Finding, ...]:
    """Findings on an effective stiffness.

    Refused: non-finite, not positive semi-definite, outside the Voigt/Reuss bounds (in
    generalized plane strain those of the prismatic 3D stiffness), Poisson's ratio of the
    isotropic projection outside (−1, 0.5) (3D, plane strain) or (−1, 1) (the in-plane
    ratio of plane stress and generalized plane strain), and no load-bearing network at all.
    Warned: no load-bearing path in some directions (a phase of zero stiffness between).
    """
    keys, f = _phases(materials, fractions)
    gps = result.prismatic_stiffness is not None
    C = result.prismatic_stiffness if gps else result.stiffness
    plane = None if gps else result.plane
    dim = 3 if C.shape[0] == 6 else 2
    image = PhaseImage(np.zeros((1,) * dim, int), keys, tuple(materials[k] for k in keys))
    phase_C = elastic_phases(image, plane, thermal=False).stiffness
    phase_M = np.array([tensors.voigt_to_mandel(c) for c in phase_C])
    found = _bounded("elasticity", tensors.voigt_to_mandel(C), phase_M, f, keys, materials,
                     result.facts.tolerance, "load-bearing", "youngs_modulus")
    if refusals(found):
        return found
    if gps:
        scale = np.linalg.eigvalsh((np.asarray(f)[:, None, None] * phase_M).sum(0)).max()
        in_plane = np.linalg.eigvalsh(tensors.voigt_to_mandel(result.stiffness)).max()
        if in_plane <= max(10.0 * result.facts.tolerance, 1e-9) * scale:
            zero = ", ".join(_name(materials[k]) for k in keys if materials[k].is_pore)
            return (Finding(REFUSE, "elasticity", "no load-bearing network in the section "
                            f"plane: the stiff phases sit apart in {zero or 'a soft phase'} "
                            "and carry load only along the prism axis; give it its real "
                            "modulus or check which label is which phase"),)
    nu = result.isotropic().poisson_ratio
    high = 1.0 if result.plane in ("plane-stress", "generalized-plane-strain") else 0.5
    if not -1.0 < nu < high:
        found += (Finding(REFUSE, "elasticity", f"effective Poisson's ratio {nu:.3g} is outside "
                          f"(-1, {high:g}), which no stable solid has; check the phase "
                          "moduli and Poisson's ratios given"),)
    return found


def check_expansion(result: ExpansionResult, materials: Mapping,
                    fractions: Mapping) -> tuple[Finding, ...]:
    """Findings on an effective thermal expansion.

    Refused: non-finite values; with one solid phase and pores, any departure from the
    solid's own expansion (a stress-free uniform expansion of the skeleton is the exact
    solution, so pores do not change α [3]_); with two solid phases, any departure from
    Levin's exact relation α* = ᾱ + (S* − S̄)(S₁ − S₂)⁻¹(α₁ − α₂) with the result's own
    stiffness [3]_, which holds for any geometry and anisotropy (in 3D, generalized plane
    strain, plane strain and plane stress alike, each with its phase compliances).

    References
    ----------
    .. [3] Levin, V. M. (1967). Thermal expansion coefficients of heterogeneous materials.
       Mech. Solids 2, 58–61.
    """
    keys, f = _phases(materials, fractions)
    if not np.all(np.isfinite(result.tensor)) or (result.axial is not None
                                                  and not np.isfinite(result.axial)):
        return (Finding(REFUSE, "expansion", "the effective expansion is not a finite "
                        "number; the solve failed — check the phase properties"),)
    solids = [k for k in keys if not materials[k].is_pore]
    strain, compliance, own = _thermal_phases(result, solids, materials)
    if len(solids) == 1:
        expected, what = own[0], f"the only solid phase's ({_name(materials[solids[0]])}), " \
                                 "which pores cannot change"
    elif len(solids) == len(keys) == 2:
        expected = _levin(result, f, compliance, own)
        what = "Levin's exact two-phase relation with the solver's own stiffness"
    else:
        return ()
    if expected is None:
        return ()
    scale = max(np.abs(own[0]).max(), np.abs(own[-1]).max(), 1e-30)
    if len(solids) == 2:
        scale = max(np.abs(own[0] - own[1]).max(), 1e-3 * scale)
    if np.abs(strain - expected).max() > max(1e3 * result.facts.tolerance, 1e-3) * scale:
        return (Finding(REFUSE, "expansion", f"the effective expansion {_fmt(strain)} differs "
                        f"from {_fmt(expected)}, {what}; the solve did not reach the right "
                        "answer — tighten [solve] tolerance or try another [solve] method"),)
    return ()


def _thermal_phases(result: ExpansionResult, solids, materials):
    """The result's thermal strain as a Voigt vector in the order of its stiffness, and
    each solid phase's compliance and stress-free thermal strain in that order."""
    strain = tensors.strain_to_voigt(np.asarray(result.tensor, float))
    gps = result.plane == "generalized-plane-strain"
    dim = 3 if result.plane is None or gps else 2
    image = PhaseImage(np.zeros((1,) * dim, int), tuple(solids),
                       tuple(materials[k] for k in solids))
    phase = elastic_phases(image, None if gps else result.plane, thermal=True)
    C, beta = phase.stiffness, phase.thermal_stress
    if gps:
        order = [0, 1, 5, 2]                       # xx, yy, xy, zz
        C, beta = C[:, order][:, :, order], beta[:, order]
        strain = np.append(strain, result.axial)
    compliance = np.linalg.inv(C)
    own = np.einsum("pij,pj->pi", compliance, beta)
    return strain, compliance, own


def _levin(result, f, compliance, own):
    """α* = ᾱ + (S* − S̄)(S₁ − S₂)⁻¹(α₁ − α₂) when α₁ − α₂ lies in the range of S₁ − S₂
    (Levin 1967), else None."""
    difference = compliance[0] - compliance[1]
    P = np.linalg.lstsq(difference, own[0] - own[1], rcond=1e-10)[0]
    if np.abs(difference @ P - (own[0] - own[1])).max() > 1e-8 * np.abs(own).max():
        return None
    f = np.asarray(f)
    mean_S = np.einsum("p,pij->ij", f, compliance)
    return f @ own + (np.linalg.inv(result.stiffness) - mean_S) @ P


def _phases(materials, fractions):
    keys = tuple(k for k in materials if fractions.get(k, 0.0) > 0)
    f = [float(fractions[k]) for k in keys]
    if not keys or not all(np.isfinite(f)) or abs(sum(f) - 1.0) > 1e-6:
        raise InputError(f"phase fractions {dict(fractions)} of the phases solved do not sum "
                         "to 1; pass the fractions of the label image that was solved")
    return keys, f


def _bounded(prop, K, phase_K, f, keys, materials, tol, network, modulus):
    """Sign, Voigt/Reuss bounds (Loewner order) and network of a symmetric tensor *K*;
    *modulus* is the `Material` attribute named in messages."""
    if not np.all(np.isfinite(K)):
        return (Finding(REFUSE, prop, f"the effective {prop} is not a finite number; the solve "
                        "failed — check the phase properties"),)
    K = 0.5 * (K + K.T)
    f = np.asarray(f)[:, None, None]
    upper = (f * phase_K).sum(0)
    scale = max(np.linalg.eigvalsh(upper).max(), 1e-300)
    slack = max(10.0 * tol, 1e-9) * scale
    zero = [k for k, p in zip(keys, phase_K) if np.linalg.eigvalsh(p).min() <= 0]
    lower = np.zeros_like(upper) if zero else \
        np.linalg.inv((f * np.linalg.inv(phase_K)).sum(0))
    eig = np.linalg.eigvalsh(K)
    solid = [k for k in keys if k not in zero] or list(keys)
    weakest = min(solid, key=lambda k: _size(phase_K[keys.index(k)]))
    ratio = _size(phase_K[keys.index(weakest)]) / scale
    weak_phase = (f"{_name(materials[weakest])} ({modulus} "
                  f"{getattr(materials[weakest], modulus)}) is {ratio:.1e} of the largest")
    if eig.min() < -slack:
        return (Finding(REFUSE, prop, f"the effective {prop} is negative ({eig.min():.3g}), "
                        f"which is not physical; phase {weak_phase} — use 0 for a pore or its "
                        "real value"),)
    if np.linalg.eigvalsh(upper - K).min() < -slack or \
            np.linalg.eigvalsh(K - lower).min() < -slack:
        return (Finding(REFUSE, prop, f"the effective {prop} lies outside the Voigt/Reuss "
                        "bounds of its phases, so the solve is wrong; tighten [solve] "
                        "tolerance or try another [solve] method"),)
    if not zero and eig.min() <= slack:
        return (Finding(REFUSE, prop, f"the effective {prop} is below what the solver "
                        f"resolves, though every phase has {modulus} > 0: phase "
                        f"{weak_phase}; use 0 for a pore or its real value"),)
    names = ", ".join(_name(materials[k]) for k in zero)
    if eig.max() <= slack:
        return (Finding(REFUSE, prop, f"no {network} network: the phases with {modulus} > 0 "
                        f"do not connect across the section, they sit in {names} of zero "
                        f"{modulus}; the effective {prop} is zero — give {names} its real "
                        "value or check which label is which phase"),)
    if eig.min() <= slack:
        return (Finding(WARN, prop, f"no {network} path across the section in some "
                        f"direction: {names} (zero {modulus}) separates the other phases; the "
                        f"effective {prop} is zero that way"),)
    return ()


def _size(tensor) -> float:
    return float(np.abs(np.linalg.eigvalsh(tensor)).max()) if np.size(tensor) else 0.0


def _name(material) -> str:
    return repr(material.name)


def _fmt(strain) -> str:
    return "[" + ", ".join(f"{v:.3g}" for v in strain) + "] /K (Voigt order)"
