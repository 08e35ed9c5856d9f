"""The page's settings as a run configuration: the choices the page offers, and the TOML.

The page sends its settings in the shape of the TOML file (``image``, ``segment``,
``phase`` list, ``solve``). `run_config_toml` writes them as TOML in the layout of the
documented config files (``[section]`` tables, one ``[[phase]]`` table per phase) and
reads the text back with `polisect.read.config.config_from_dict`, so the page is checked by
exactly the rules a config file is checked by, and the file offered for download is the
one the run used.

The writer is a small one for this shape (tables of plain values and one array of
tables), not a general TOML writer: nested tables inside a section are refused. It
follows TOML 1.0.0 for keys, basic strings (escapes), integers, floats, booleans and
arrays.

Examples
--------
>>> text = run_config_toml({"segment": {"classes": 2},
...                         "phase": [{"label": 0, "material": "air"},
...                                   {"label": 1, "material": "alumina"}]}, "s1.tif")
>>> print(text[text.index("[segment]"):])
[segment]
classes = 2
<BLANKLINE>
[[phase]]
label = 0
material = "air"
<BLANKLINE>
[[phase]]
label = 1
material = "alumina"
<BLANKLINE>

References
----------
.. [1] Preston-Werner, T. et al. (2021). TOML v1.0.0. https://toml.io/en/v1.0.0
"""

from __future__ import annotations

import importlib.util
import math
import re
import time

from ...core.choices import DENOISERS, PLANES, SOLVE_PROPERTIES
from ...read.config import config_from_dict, tomllib
from ...core.errors import InputError
from ...core.materials import PROPERTIES, library
from .work import MAX_CLASSES

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")
_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f",
            "\r": "\\r"}


def page_options() -> dict:
    """What the page offers: the material library, properties, 2D models, denoisers."""
    materials = [{"key": key, "description": m.source,
                  **{p: getattr(m, p) for p in PROPERTIES if _is_number(getattr(m, p))}}
                 for key, m in library().items()]
    return {"materials": materials, "properties": list(SOLVE_PROPERTIES), "planes": list(PLANES),
            "denoisers": list(DENOISERS), "max_classes": MAX_CLASSES,
            "estimate_3d": importlib.util.find_spec("polisect.model3d.reconstruct") is not None}


def _is_number(value) -> bool:
    """Whether *value* is a plain number (library tensors are not offered in the page)."""
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def run_config_toml(settings, image: str, *, command: str | None = None) -> str:
    """The TOML text of the page's *settings* for the file *image*, checked as a config file.

    ``None`` values mean "the default" and are left out. *command* is the command line
    the header suggests (default: ``polisect analyze IMAGE --config config.toml``).

    Raises
    ------
    InputError
        When the settings are not a table, hold a value TOML cannot store, or break a rule
        of the configuration (its message names the key, as for a config file).
    """
    if not isinstance(settings, dict):
        raise InputError("the run settings are missing; fill in the phases and press Run")
    text = (f"# polisect run configuration for {_comment(image)}, written by `polisect serve` "
            f"on {time.strftime('%Y-%m-%d %H:%M')}.\n"
            f"# Repeat the run with:  "
            f"{_comment(command or f'polisect analyze {image} --config config.toml')}\n\n"
            + toml_text(_drop_none(settings)))
    try:
        config_from_dict(tomllib.loads(text), source="page", raw=text)
    except TypeError as exc:
        raise InputError(f"a run setting has the wrong type ({exc})") from None
    return text


def toml_text(data: dict) -> str:
    """TOML for a table of plain values, tables of plain values and arrays of such tables."""
    plain = [(k, v) for k, v in data.items() if not _is_table(v) and not _is_tables(v)]
    lines = [f"{_key(k)} = {_value(v, k)}" for k, v in plain]
    if lines:
        lines.append("")
    for k, v in data.items():
        if _is_table(v):
            lines += [f"[{_key(k)}]", *_body(v, k), ""]
        elif _is_tables(v):
            for table in v:
                lines += [f"[[{_key(k)}]]", *_body(table, k), ""]
    return "\n".join(lines).rstrip("\n") + "\n" if lines else ""


def _is_table(value) -> bool:
    return isinstance(value, dict)


def _is_tables(value) -> bool:
    return isinstance(value, list) and bool(value) and all(isinstance(t, dict) for t in value)


def _body(table: dict, where: str) -> list[str]:
    return [f"{_key(k)} = {_value(v, f'{where}.{k}')}" for k, v in table.items()]


def _key(key) -> str:
    key = str(key)
    return key if _BARE_KEY.fullmatch(key) else _string(key)


def _string(text: str) -> str:
    out = []
    for ch in text:
        code = ord(ch)
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif 0xD800 <= code <= 0xDFFF:
            raise InputError(f"the text {text[:40]!r} holds a broken character (a lone UTF-16 "
                             "surrogate); retype it")
        elif code < 0x20 or code == 0x7F:
            out.append(f"\\u{code:04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _value(value, where: str) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise InputError(f"{where} = {value}: give a finite number")
        return repr(value)
    if isinstance(value, str):
        return _string(value)
    if isinstance(value, list):
        return "[" + ", ".join(_value(v, where) for v in value) + "]"
    raise InputError(f"{where}: a run setting must be a number, text, true/false or a list of "
                     "those")


def _comment(text: str) -> str:
    """*text* made safe for one comment line."""
    return re.sub(r"[\x00-\x1f\x7f]", "?", text)


def _drop_none(value):
    if isinstance(value, dict):
        return {str(k): _drop_none(v) for k, v in value.items() if v is not None}
    if isinstance(value, list):
        return [_drop_none(v) for v in value if v is not None]
    return value
