"""Properties: effective properties of a phase map — the pixel/voxel solvers (`solve`),
the analytical bounds and mean-field estimates (`schemes`), thermal-shock indices, and
the typed records of effective properties."""
