"""Segment: a micrograph into a phase map — grey-level thresholds and colour palettes
(corrections before, quality checks after)."""
