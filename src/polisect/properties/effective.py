"""Effective properties of a `PhaseMap`: the solvers run and their results as `Effective`.

The solvers take arrays indexed (x, y[, z]); an image is indexed (row = y, column = x),
so the labels are transposed on the way in and the field maps on the way out. Every
number is labelled with the model it belongs to: a 2D section solved in 2D describes a
prismatic structure (the section extruded along the viewing direction).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Callable

import numpy as np

from ..core import tensors
from ..core.phasemap import PhaseMap
from .sanity import check_result, fractions_of, refusals
from .records import (AxialModuli, ComparableModuli, Conductivity, Effective, Elasticity,
                      Expansion, Solver)
from .solve import SolverFacts, conductivity, elasticity, expansion
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


AXES_2D = "x = image columns (left to right), y = image rows (top to bottom)"


@dataclass(frozen=True, eq=False)
class Solved:
    """The effective properties, the warnings the solves raised, per-pixel maps for the
    report (image-indexed arrays), why a physically meaningless result was refused
    (`polisect.properties.sanity`; the refused property is left out of ``effective``), and
    on request the solver results holding the solved fluctuations (``starts``: property →
    result without fields), the start of a warm solve of the same labels."""

    effective: Effective
    warnings: tuple[str, ...] = ()
    maps: dict = field(default_factory=dict)
    refused: tuple[str, ...] = ()
    starts: dict = field(default_factory=dict)


def solver_record(facts: SolverFacts) -> Solver:
    """The `Solver` record of a solve: seconds to 0.1 ms, residuals to four digits."""
    return Solver(facts.method, facts.iterations, round(facts.seconds, 4), facts.tolerance,
                  facts.converged,
                  tuple(tuple(float(f"{v:.3e}") for v in r) for r in facts.residuals))


def model_words(ndim: int, plane: str) -> str:
    """Which model the numbers of a solved `PhaseMap` describe."""
    return (f"2D section as a prismatic structure, {PLANE_WORDS[plane]}" if ndim == 2
            else "3D volume")


def solve_effective(phasemap: PhaseMap, properties, *, method: str = "auto",
                    tol: float = 1e-6, plane: str = "generalized-plane-strain",
                    maps: bool = True, progress: Callable[[str], None] | None = None,
                    criterion: str = "energy", start: Solved | None = None,
                    keep_fluctuations=False) -> Solved:
    """Run the solvers asked for on a phase map.

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
    start : Solved, optional
        A solve of the same labels with other phase properties (another temperature) made
        with *keep_fluctuations*: its fluctuations start the solvers (warm start,
        `polisect.properties.solve.cg`; same answer to *tol*, fewer iterations).
    keep_fluctuations : bool or collection of {'conductivity', 'elasticity'}
        Keep the solved fluctuations in ``Solved.starts`` (float32: about 4 bytes per pixel,
        load case and component): of every solve (True), or of the physics named.

    Returns
    -------
    Solved
    """
    say = progress or (lambda msg: None)
    props = tuple(properties)
    two_d = phasemap.ndim == 2
    labels = solver_labels(phasemap.labels)
    mats = phasemap.materials
    warnings: list[str] = []
    refused: list[str] = []
    out_maps: dict[str, np.ndarray] = {}
    c_rec = e_rec = x_rec = None
    fractions = fractions_of(labels)
    before = start.starts if start is not None else {}
    starts: dict = {}
    keep = ({"conductivity", "elasticity"} if keep_fluctuations is True
            else set(keep_fluctuations or ()))

    def sane(result) -> bool:
        """Warnings of the sanity checks kept; False when the result must be refused."""
        findings = check_result(result, mats, fractions)
        warnings.extend(f.message for f in findings if f.level != "refuse")
        refused.extend(refusals(findings))
        return not refusals(findings)

    if "conductivity" in props:
        say("solving for the effective conductivity")
        c = conductivity(labels, mats, method=method, tol=tol, fields=["x"] if maps else False,
                         criterion=criterion, start=before.get("conductivity"),
                         keep_fluctuations="conductivity" in keep)
        if "conductivity" in keep:
            starts["conductivity"] = replace(c, fields=None)
        _converged(c, "conductivity", warnings)
        if sane(c):
            c_rec = Conductivity(c.tensor, c.mean(), c.anisotropy(), solver_record(c.facts))
        if c_rec is not None and maps and c.fields is not None:
            out_maps["heat_flux"] = _image_plane(c.fields.flux_magnitude("x"))
        del c                                   # its fields before the stiffness solve
    stiff = None
    if "elasticity" in props or "expansion" in props:
        say("solving for the effective stiffness")
        stiff = elasticity(labels, mats, plane=plane, method=method,
                           tol=stiffness_tolerance(tol, criterion) if "expansion" in props
                           else tol, fields=maps and "elasticity" in props,
                           criterion=criterion, start=before.get("elasticity"),
                           keep_fluctuations="elasticity" in keep,
                           field_dtype=np.float32)        # the map is drawn, not computed on
        if "elasticity" in keep:
            starts["elasticity"] = replace(stiff, fields=None, phase_strains=None)
        _converged(stiff, "elasticity", warnings)
    stiff_ok = stiff is not None and sane(stiff)
    if "elasticity" in props and stiff_ok:
        e_rec = _elasticity(stiff, two_d)
        if maps and stiff.fields is not None:
            out_maps["von_mises"] = _image_plane(stiff.fields.von_mises_uniaxial("x"))
    x = None
    if "expansion" in props and stiff_ok:
        say("the effective thermal expansion from the strain localisation")
        x = expansion(labels, mats, plane=plane, method=method, tol=tol, stiffness=stiff,
                      criterion=criterion)
        _converged(x, "expansion", warnings)
    if x is not None and sane(x):
        x_rec = Expansion(x.tensor, x.mean(), x.axial, x.anisotropy(), solver_record(x.facts),
                          has_comparable=two_d,
                          comparable_mean=(x.mean() if two_d and plane == "generalized-plane-strain"
                                           else None))
    effective = Effective(phasemap.ndim, plane if two_d else None,
                          model_words(phasemap.ndim, plane), PRISMATIC_NOTE if two_d else None,
                          AXES_2D if two_d else AXES_2D + ", z = slices", c_rec, e_rec, x_rec)
    return Solved(effective, tuple(warnings), out_maps, tuple(refused), starts)


def solver_labels(labels: np.ndarray) -> np.ndarray:
    """Image-indexed labels (row = y, column = x[, slice = z]) as the solvers take them,
    indexed (x, y[, z])."""
    return np.ascontiguousarray(np.asarray(labels).T)


def _image_plane(values: np.ndarray) -> np.ndarray:
    """A solver field (x, y[, z]) as an image (row = y, column = x); the middle z slice of
    a volume."""
    image = values.T
    return image if image.ndim == 2 else image[image.shape[0] // 2]


def _elasticity(e, two_d: bool) -> Elasticity:
    iso = e.isotropic()
    prismatic = axial = comparable = None
    if e.prismatic_stiffness is not None:
        prismatic = np.asarray(e.prismatic_stiffness)
        a = e.axial_moduli()
        axial = AxialModuli(a["youngs_modulus"], a["poisson_ratio"], a["shear_modulus"])
        k_t, g_t = tensors.isotropic_projection(prismatic[np.ix_([0, 1, 5], [0, 1, 5])])
        comparable = ComparableModuli(
            k_t, g_t, iso.youngs_modulus, iso.poisson_ratio,
            "transverse plane-strain bulk modulus k_T, transverse shear G_T, and E_T, ν_TT of "
            "the free prism: the quantities the 2D (cylinder) schemes give")
    elif two_d:
        comparable = (ComparableModuli(iso.bulk_modulus, iso.shear_modulus)
                      if e.plane == "plane-strain" else ComparableModuli())
    return Elasticity(e.stiffness, iso.youngs_modulus, iso.poisson_ratio, iso.bulk_modulus,
                      iso.shear_modulus, e.anisotropy(), e.plane, solver_record(e.facts),
                      "in-plane (areal) bulk modulus of the stiffness shown" if two_d else None,
                      prismatic, axial, comparable)


def _converged(res, what: str, warnings: list) -> None:
    if not res.converged:
        warnings.append(f"the {what} solver ({res.method}) stopped before reaching its "
                        f"tolerance after {res.iterations} iterations; treat the {what} as "
                        "approximate, or try method = \"fe\"")
