"""The window study's findings in plain words (stored in the result as its verdicts)."""

from __future__ import annotations

from ..core.quantities import quantity_label
from .sectionstats import sig


def quantity_words(key: str) -> str:
    """Words for a headline column (`polisect.core.quantities.quantity_label`)."""
    return quantity_label(key)[0]


def size_words(measure: float, ndim: int, pixel_um: float | None) -> str:
    side = measure ** (1.0 / ndim)
    shape = " × ".join([length_words(side, pixel_um)] * ndim)
    return shape


def length_words(px: float, pixel_um: float | None) -> str:
    if not pixel_um:
        return f"{sig(px, 3)} px"
    um = px * pixel_um
    return f"{sig(um / 1000.0, 3)} mm" if um >= 1000 else f"{sig(um, 3)} µm"


def percent_words(fraction: float) -> str:
    return f"±{sig(fraction * 100.0)} %"


def need_words(q, area: float, ndim: int, pixel_um: float | None) -> str:
    ratio = (q.required_area_px / area) ** (1.0 / ndim)
    return (f"an image of {size_words(q.required_area_px, ndim, pixel_um)} "
            f"({sig(ratio)}× the side of this one) or {q.images_needed} images of this size")


def overall_verdict(quantities, target, confidence, notes, area, ndim, pixel_um) -> str:
    fitted = [q for q in quantities.values() if q.supported_error_pct is not None]
    if not fitted:
        return "No window study was possible: " + ("; ".join(notes) or "no quantity varies")
    tgt = f"{percent_words(target)} at {confidence * 100:g} % confidence"
    short = [q for q in fitted if q.enough is False]
    if not short:
        worst = max(fitted, key=lambda q: q.supported_error_pct)
        return (f"This image is large enough for {tgt} on every quantity measured (the "
                f"largest error is {percent_words(worst.supported_error_pct / 100.0)}, on "
                f"{quantity_words(worst.key)}).")
    listed = ", ".join(f"{quantity_words(q.key)} ({percent_words(q.supported_error_pct / 100.0)})"
                       for q in short)
    worst = max(short, key=lambda q: q.required_area_px)
    return (f"This image is not large enough for {tgt} on {listed}. The most demanding, "
            f"{quantity_words(worst.key)}, needs {need_words(worst, area, ndim, pixel_um)}.")
