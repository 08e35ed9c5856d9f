"""Model3D: a 3D model from a 2D section — sphere packings, reconstruction and 3D solves
of the section's statistics, and the synthetic microstructure renderer."""
