"""The words a run configuration chooses from, each defined once.

The configuration checks its values against these; the rooms that act on them (solvers,
segmentation, window study, the page) take them from here.
"""

IMAGE_KINDS = ("grayscale", "labels", "palette")
SEGMENT_METHODS = ("multi-otsu", "thresholds", "trained")
DENOISERS = ("median", "nl-means", "none")
SEGMENT_CORRECTIONS = {"shading": ("auto", "none"), "stripes": ("auto", "columns", "rows", "none"),
                       "speckle": ("auto", "none"), "scratches": ("auto", "none")}
SOLVE_PROPERTIES = ("conductivity", "elasticity", "expansion")
SOLVE_METHODS = ("auto", "fft", "fe", "ms")
PLANES = ("generalized-plane-strain", "plane-strain", "plane-stress")
WINDOW_EDGES = ("periodic", "mirror")
SEGMENTATION_TERMS = ("conductivity", "all", "none")
"""`[uncertainty] segmentation`: the effective properties given a segmentation term."""
MEASURED_PROPERTIES = {"conductivity": "W/(m·K)", "youngs_modulus": "GPa", "shear_modulus": "GPa",
                       "expansion": "1/K", "mean_expansion": "1/K"}
"""Properties a lab measures that ``[[measured]]`` may give, with the unit of each."""
