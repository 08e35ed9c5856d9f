"""`polisect serve`: a local web page to analyse one section without writing a config file.

Drop an image, check the phase map on its histogram, give each phase a material, run,
and read or download the report. The page is plain HTML, CSS and JavaScript shipped in
the package (no network needed); the server is `polisect.apps.serve.server`, the work runs in
child processes (`polisect.apps.serve.jobs`, `polisect.apps.serve.work`), and every run is written to
the output folder exactly as ``polisect analyze`` writes it.
"""

from .server import serve

__all__ = ["serve"]
