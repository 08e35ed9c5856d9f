"""The page's settings as a run configuration: the choices the page offers, and the TOML.

The page sends its settings in the shape of the TOML file (``image``, ``segment``,
``phase`` list, ``solve``). They are written as TOML with `tomli_w` and read back with
`polisect.config.config_from_dict`, so the page is checked by exactly the rules a config
file is checked by, and the file offered for download is the one the run used.

Examples
--------
>>> text = run_config_toml({"segment": {"classes": 2},
...                         "phase": [{"label": 0, "material": "air"},
...                                   {"label": 1, "material": "alumina"}]}, "s1")
>>> print(text.splitlines()[-2])
label = 1
"""

from __future__ import annotations

import importlib.util
import time

import tomli_w

from ..config import DENOISERS, PLANES, SOLVE_PROPERTIES, config_from_dict, tomllib
from ..errors import InputError
from ..materials import PROPERTIES, library
from .work import MAX_CLASSES


def page_options() -> dict:
    """What the page offers: the material library, properties, 2D models, denoisers."""
    materials = [{"key": key, "description": m.source,
                  **{p: getattr(m, p) for p in PROPERTIES if _is_number(getattr(m, p))}}
                 for key, m in library().items()]
    return {"materials": materials, "properties": list(SOLVE_PROPERTIES), "planes": list(PLANES),
            "denoisers": list(DENOISERS), "max_classes": MAX_CLASSES,
            "estimate_3d": importlib.util.find_spec("polisect.reconstruct") is not None}


def _is_number(value) -> bool:
    """Whether *value* is a plain number (library tensors are not offered in the page)."""
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def run_config_toml(settings, stem: str) -> str:
    """The TOML text of the page's *settings* for the image *stem*, checked as a config file.

    ``None`` values mean "the default" and are left out.

    Raises
    ------
    InputError
        When the settings are not a table or break a rule of the configuration (its
        message names the key, as for a config file).
    """
    if not isinstance(settings, dict):
        raise InputError("the run settings are missing; fill in the phases and press Run")
    clean = _drop_none(settings)
    try:
        body = tomli_w.dumps(clean)
    except (TypeError, ValueError) as exc:
        raise InputError(f"the run settings hold a value TOML cannot store ({exc})") from None
    text = (f"# polisect run configuration for {stem}, written by `polisect serve` on "
            f"{time.strftime('%Y-%m-%d %H:%M')}.\n"
            f"# Repeat the run with:  polisect analyze {stem}.<ext> --config config.toml\n\n"
            + body)
    try:
        config_from_dict(tomllib.loads(text), source="page", raw=text)
    except TypeError as exc:
        raise InputError(f"a run setting has the wrong type ({exc})") from None
    return text


def _drop_none(value):
    if isinstance(value, dict):
        return {str(k): _drop_none(v) for k, v in value.items() if v is not None}
    if isinstance(value, list):
        return [_drop_none(v) for v in value if v is not None]
    return value
