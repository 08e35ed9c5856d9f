"""Segmentation uncertainty: how far each phase fraction moves when the class boundaries move.

A phase map has a second source of error beside the sampling of the section: every pixel
near a class boundary could have gone either way. `BoundaryUncertainty` holds, for every
such pixel, the class it would take on the other side of the boundary, and gives

* per phase, its fraction with the boundary pixels given to it (*high*) and taken from it
  (*low*), all other pixels unchanged;
* the perturbed phase maps themselves (`BoundaryUncertainty.maps`), to re-solve the
  effective properties on, or to bound them.

Which pixels count as near a boundary is stated in *perturbation*: for thresholds, the
pixels within ±δ grey levels of a threshold; for a trained classifier, the pixels whose
most probable class has a probability below a level, with their second most probable
class as the alternative.

Examples
--------
>>> import numpy as np
>>> from polisect.segment.uncertainty import BoundaryUncertainty
>>> labels = np.array([[0, 0, 1, 1]]); alternative = np.array([[-1, 1, 0, -1]])
>>> u = BoundaryUncertainty.from_alternatives(labels, alternative, "example")
>>> u.fractions[0]
(0.5, 0.25, 0.75)
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Iterator

import numpy as np

__all__ = ["BoundaryUncertainty", "threshold_alternatives"]


@dataclass(frozen=True, eq=False)
class BoundaryUncertainty:
    """Fractions under a stated movement of the class boundaries.

    Attributes
    ----------
    perturbation : str
        What was moved and by how much (for the report).
    fractions : dict label → (nominal, low, high)
        Pixel fraction of every phase, and its extremes with the boundary pixels taken
        from it or given to it.
    labels : ndarray of int32
        The nominal phase map.
    alternative : ndarray of int32
        The other class of every boundary pixel, −1 elsewhere.
    """

    perturbation: str
    fractions: dict
    labels: np.ndarray
    alternative: np.ndarray

    @classmethod
    def from_alternatives(cls, labels, alternative, perturbation) -> "BoundaryUncertainty":
        """Build from the nominal map and the alternative class of every boundary pixel."""
        labels = np.asarray(labels).astype(np.int32)
        alternative = np.asarray(alternative).astype(np.int32)
        n = labels.size
        out = {}
        swing = alternative >= 0
        for v in np.unique(labels).tolist() + sorted(set(np.unique(alternative[swing]).tolist())
                                                     - set(np.unique(labels).tolist())):
            nominal = int(np.count_nonzero(labels == v)) / n
            out[int(v)] = (nominal, nominal - int(np.count_nonzero((labels == v) & swing)) / n,
                           nominal + int(np.count_nonzero(alternative == v)) / n)
        return cls(perturbation, out, labels, alternative)

    @property
    def boundary_share(self) -> float:
        """Share of the pixels that could go either way."""
        return float(np.mean(self.alternative >= 0))

    def maps(self) -> Iterator[tuple[str, int, np.ndarray]]:
        """The perturbed phase maps, two per phase: ``(description, label, labels)``.

        For each phase, one map with every boundary pixel whose alternative is that
        phase given to it ("grown"), and one with every boundary pixel of that phase given
        to its alternative ("shrunk"). Solving the effective properties on each gives
        their range under the stated perturbation.
        """
        swing = self.alternative >= 0
        for v in sorted(self.fractions):
            grown = np.where(self.alternative == v, v, self.labels).astype(np.int32)
            yield f"phase {v} grown ({self.perturbation})", v, grown
            shrunk = np.where((self.labels == v) & swing, self.alternative,
                              self.labels).astype(np.int32)
            yield f"phase {v} shrunk ({self.perturbation})", v, shrunk


def threshold_alternatives(grey: np.ndarray, labels: np.ndarray, thresholds, delta: float
                           ) -> np.ndarray:
    """The class across the nearest threshold for pixels within *delta* of it, else −1.

    Only pixels whose label is the class their grey level falls in are perturbed (pixels
    reassigned by the clean-up keep their label).
    """
    grey = np.asarray(grey, float)
    t = np.asarray(thresholds, float)
    raw = np.digitize(grey, t, right=True)
    nearest = np.abs(grey[..., None] - t).argmin(-1)
    close = np.abs(grey - t[nearest]) <= delta
    other = np.where(raw <= nearest, nearest + 1, nearest)
    return np.where(close & (raw == labels), other, -1).astype(np.int32)
