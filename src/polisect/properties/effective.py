"""The ``effective`` block of a result: the solvers run on a `PhaseMap`.

The solvers take arrays indexed (x, y[, z]); an image is indexed (row = y, column = x),
so the labels are transposed on the way in and the field maps on the way out. Every
number is labelled with the model it belongs to: a 2D section solved in 2D describes a
prismatic structure (the section extruded along the viewing direction).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from ..core import tensors
from ..core.phasemap import PhaseMap
from .solve import conductivity, elasticity, expansion
from .solve.expansion import stiffness_tolerance

PLANE_WORDS = {
    "generalized-plane-strain": "generalized plane strain (free uniform axial strain, zero "
                                "mean axial stress)",
    "plane-strain": "plane strain (no axial strain)",
    "plane-stress": "plane stress (a thin sheet)",
}

PRISMATIC_NOTE = (
    "A 2D section solved as a 2D problem describes a prismatic (columnar) structure — the "
    "section extruded along the viewing direction — not the 3D particle composite. Expect "
    "its stiffness to differ most from a 3D computation and its thermal expansion least."
)


@dataclass(frozen=True, eq=False)
class Effective:
    """The JSON block, the warnings it raised, and per-pixel maps for the report."""

    block: dict
    warnings: tuple[str, ...] = ()
    maps: dict = field(default_factory=dict)


def solve_effective(phasemap: PhaseMap, properties, *, method: str = "auto",
                    tol: float = 1e-6, plane: str = "generalized-plane-strain",
                    maps: bool = True, progress: Callable[[str], None] | None = None,
                    criterion: str = "energy") -> Effective:
    """Run the solvers asked for and build the ``effective`` block.

    Parameters
    ----------
    phasemap : PhaseMap
        2D section or 3D volume; every phase's material must carry the properties needed.
    properties : iterable of {'conductivity', 'elasticity', 'expansion'}
    method, tol, plane
        Passed to `polisect.properties.solve` (plane only for 2D). *tol* is the accuracy
        of the effective values (energy stopping rule, `polisect.properties.solve.cg`);
        when the expansion is asked for, the stiffness is solved to ``tol/100`` because
        the expansion is computed from its strain localisation without another solve
        (`polisect.properties.solve.expansion`).
    maps : bool
        Keep the heat-flux magnitude under a unit x gradient and the von Mises stress
        under a unit uniaxial x stress, as image-indexed arrays.
    progress : callable, optional
        Called with a stage description.
    criterion : {'energy', 'residual'}
        Stopping rule of the solvers (see `polisect.properties.solve.conductivity`).

    Returns
    -------
    Effective
    """
    say = progress or (lambda msg: None)
    props = tuple(properties)
    two_d = phasemap.ndim == 2
    labels = np.ascontiguousarray(phasemap.labels.T)
    mats = phasemap.materials
    warnings: list[str] = []
    out_maps: dict[str, np.ndarray] = {}
    block: dict = {"dimension": phasemap.ndim, "plane": plane if two_d else None,
                   "model": (f"2D section as a prismatic structure, {PLANE_WORDS[plane]}"
                             if two_d else "3D volume"),
                   "note": PRISMATIC_NOTE if two_d else None,
                   "axes": "x = image columns (left to right), y = image rows (top to "
                           "bottom)" + ("" if two_d else ", z = slices"),
                   "conductivity": None, "elasticity": None, "expansion": None}
    if "conductivity" in props:
        say("solving for the effective conductivity")
        c = conductivity(labels, mats, method=method, tol=tol, fields=["x"] if maps else False,
                         criterion=criterion)
        block["conductivity"] = {"tensor_W_mK": c.tensor, "mean_W_mK": c.mean(),
                                 "anisotropy": c.anisotropy(), "solver": c.facts.to_dict()}
        _converged(c, "conductivity", warnings)
        if maps and c.fields is not None:
            out_maps["heat_flux"] = _image_plane(c.fields.flux_magnitude("x"))
        del c                                   # its fields before the stiffness solve
    stiff = None
    if "elasticity" in props or "expansion" in props:
        say("solving for the effective stiffness")
        stiff = elasticity(labels, mats, plane=plane, method=method,
                           tol=stiffness_tolerance(tol, criterion) if "expansion" in props
                           else tol, fields=maps and "elasticity" in props,
                           criterion=criterion)
        _converged(stiff, "elasticity", warnings)
    if "elasticity" in props:
        block["elasticity"] = _elastic_block(stiff, two_d)
        if maps and stiff.fields is not None:
            out_maps["von_mises"] = _image_plane(stiff.fields.von_mises_uniaxial("x"))
    if "expansion" in props:
        say("the effective thermal expansion from the strain localisation")
        x = expansion(labels, mats, plane=plane, method=method, tol=tol, stiffness=stiff,
                      criterion=criterion)
        _converged(x, "expansion", warnings)
        block["expansion"] = {"tensor_per_K": x.tensor, "mean_per_K": x.mean(),
                              "axial_per_K": x.axial, "anisotropy": x.anisotropy(),
                              "solver": x.facts.to_dict()}
        if two_d:
            block["expansion"]["scheme_comparable"] = {
                "mean_per_K": x.mean() if plane == "generalized-plane-strain" else None}
    return Effective(block=block, warnings=tuple(warnings), maps=out_maps)


def _image_plane(values: np.ndarray) -> np.ndarray:
    """A solver field (x, y[, z]) as an image (row = y, column = x); the middle z slice of
    a volume."""
    image = values.T
    return image if image.ndim == 2 else image[image.shape[0] // 2]


def _elastic_block(e, two_d: bool) -> dict:
    iso = e.isotropic()
    out = {"stiffness_GPa": e.stiffness, "youngs_modulus_GPa": iso.youngs_modulus,
           "poisson_ratio": iso.poisson_ratio, "bulk_modulus_GPa": iso.bulk_modulus,
           "shear_modulus_GPa": iso.shear_modulus, "anisotropy": e.anisotropy(),
           "plane": e.plane, "solver": e.facts.to_dict()}
    if two_d:
        out["bulk_modulus_meaning"] = "in-plane (areal) bulk modulus of the stiffness shown"
    if e.prismatic_stiffness is not None:
        P = np.asarray(e.prismatic_stiffness)
        axial = e.axial_moduli()
        out["prismatic_stiffness_GPa"] = P
        out["axial"] = {"youngs_modulus_GPa": axial["youngs_modulus"],
                        "poisson_ratio": axial["poisson_ratio"],
                        "shear_modulus_GPa": axial["shear_modulus"]}
        k_t, g_t = tensors.isotropic_projection(P[np.ix_([0, 1, 5], [0, 1, 5])])
        out["scheme_comparable"] = {
            "bulk_modulus_GPa": k_t, "shear_modulus_GPa": g_t,
            "youngs_modulus_GPa": iso.youngs_modulus, "poisson_ratio": iso.poisson_ratio,
            "meaning": "transverse plane-strain bulk modulus k_T, transverse shear G_T, and "
                       "E_T, ν_TT of the free prism: the quantities the 2D (cylinder) schemes "
                       "give"}
    elif two_d:
        out["scheme_comparable"] = ({"bulk_modulus_GPa": iso.bulk_modulus,
                                     "shear_modulus_GPa": iso.shear_modulus}
                                    if e.plane == "plane-strain" else {})
    return out


def _converged(res, what: str, warnings: list) -> None:
    if not res.converged:
        warnings.append(f"the {what} solver ({res.method}) stopped before reaching its "
                        f"tolerance after {res.iterations} iterations; treat the {what} as "
                        "approximate, or try method = \"fe\"")
