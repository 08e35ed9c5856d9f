"""polisect: polished sections of particle composites to trustworthy numbers.

A polished section (SEM or optical micrograph, labelled phase map or voxel stack) goes
in; phase fractions, particle statistics and effective conductivity, thermal expansion
and stiffness come out, with analytical bounds beside them and a statement of how far
the numbers can be trusted.

The public face:

* `analyze` — one section (file or array) to an `Analysis` whose ``.result`` is the typed
  `Result`; `run_section` also writes the outputs (JSON, CSV, report, phase map);
* `load_config` / `config_from_dict` — the run configuration (TOML file or dict);
* `Result`, `PhaseMap`, `Material` and the material library (`library`, `get_material`);
* `read_result` / `result_to_dict` — a result's JSON file or form, and back;
* `InputError` — raised for bad input; its message says what to fix.

Examples
--------
>>> import numpy as np
>>> import polisect
>>> labels = np.zeros((64, 64), dtype=np.int32); labels[:, 32:] = 1   # two layers
>>> cfg = polisect.config_from_dict({
...     "image": {"kind": "labels"},
...     "phase": [{"label": 0, "name": "matrix", "conductivity": 1.0},
...               {"label": 1, "name": "layer", "conductivity": 3.0}],
...     "solve": {"properties": ["conductivity"], "fields": False}})
>>> k = polisect.analyze(labels, cfg).result.effective.conductivity.tensor
>>> round(float(k[1, 1]), 4), round(float(k[0, 0]), 4)   # along and across the layers
(2.0, 1.5)
"""

from .core.errors import InputError
from .core.materials import Material, get_material, library

__version__ = "0.1.0"

_LAZY = {
    "analyze": ("polisect.pipeline.analysis", "analyze"),
    "Analysis": ("polisect.pipeline.analysis", "Analysis"),
    "Result": ("polisect.pipeline.result", "Result"),
    "PhaseMap": ("polisect.core.phasemap", "PhaseMap"),
    "Phase": ("polisect.core.phasemap", "Phase"),
    "load_config": ("polisect.read.config", "load_config"),
    "config_from_dict": ("polisect.read.config", "config_from_dict"),
    "run_section": ("polisect.apps.run", "run_section"),
    "read_result": ("polisect.present.record", "read_result"),
    "result_to_dict": ("polisect.present.record", "to_dict"),
}

__all__ = ["InputError", "Material", "library", "get_material", "__version__", *_LAZY]


def __getattr__(name):
    """The heavier parts of the public face are imported on first use (PEP 562), so that
    ``import polisect`` and the command line start quickly."""
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        value = getattr(importlib.import_module(module), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'polisect' has no attribute {name!r}")
