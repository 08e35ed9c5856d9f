"""Measure: what the phase map shows directly — phase fractions with their intervals,
particles and their statistics, stereology (2D → 3D), two-point correlation; and their
summaries as they go into the result."""
