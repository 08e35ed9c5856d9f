"""Trust: how far the numbers hold — the window-size study (is the image big enough?),
section-to-section statistics, and their verdicts in words."""
