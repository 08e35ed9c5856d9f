"""``polisect estimate``: phases typed on the command line, to the schemes table or JSON.

A phase is ``NAME:FRACTION`` for a library material, or
``NAME:FRACTION:k=..,E=..,nu=..,alpha=..`` for one's own values (a library name with
some of these keys overrides those properties). Units: k W/(m·K), E GPa, alpha 1/K.
"""

from __future__ import annotations

import json

from ..core.atomic import atomic_write_text
from ..core.errors import InputError
from ..core.materials import Material, get_material
from ..present.record import estimate_to_dict
from ..present.schemes_table import schemes_table
from ..properties.schemes import evaluate

_KEYS = {"k": "conductivity", "conductivity": "conductivity",
         "e": "youngs_modulus", "youngs_modulus": "youngs_modulus",
         "nu": "poisson_ratio", "poisson_ratio": "poisson_ratio",
         "alpha": "expansion", "expansion": "expansion"}
_FORM = "NAME:FRACTION or NAME:FRACTION:k=..,E=..,nu=..,alpha=.. (k W/(m·K), E GPa, alpha 1/K)"


def _fraction(text: str, what: str) -> float:
    raw = text.strip()
    try:
        value = float(raw[:-1]) / 100.0 if raw.endswith("%") else float(raw)
    except ValueError:
        raise InputError(f"{what}: {text!r} is not a number") from None
    return value


def _properties(text: str, spec: str) -> dict:
    props = {}
    for item in filter(None, (s.strip() for s in text.split(","))):
        key, sep, value = item.partition("=")
        field = _KEYS.get(key.strip().lower())
        if not sep or field is None:
            raise InputError(f"phase {spec!r}: {item!r} is not KEY=VALUE with KEY one of k, E, "
                             "nu, alpha")
        if field in props:
            raise InputError(f"phase {spec!r}: {key.strip()} is given twice")
        try:
            props[field] = float(value)
        except ValueError:
            raise InputError(f"phase {spec!r}: {key.strip()}={value!r} is not a number") from None
    alpha = props.get("expansion")
    if alpha is not None and abs(alpha) > 1e-3:
        raise InputError(f"phase {spec!r}: alpha={alpha:g} 1/K is implausibly large; give the "
                         f"expansion in 1/K, e.g. alpha={alpha:g}e-6")
    return props


def parse_phase_spec(spec: str) -> tuple[str, Material, float]:
    """Parse one ``--phase`` argument into ``(name, Material, fraction)``.

    Parameters
    ----------
    spec : str
        ``alumina:0.6`` (library material), ``alumina:0.6:E=380`` (library material with
        overrides) or ``binder:0.2:k=1.2,E=70,nu=0.2,alpha=8e-6`` (own values; keys k,
        E, nu, alpha, any of them may be left out). The fraction may be given in per cent
        (``60%``).

    Returns
    -------
    (name, Material, fraction)

    Raises
    ------
    InputError
        A malformed spec, a number that is not one, an unknown key, an unknown material
        without own values (the message lists close library names), or a property value
        that is not physical.

    Examples
    --------
    >>> name, mat, f = parse_phase_spec("alumina:0.6")
    >>> name, mat.youngs_modulus, f
    ('alumina', 416.0, 0.6)
    >>> parse_phase_spec("glue:0.1:k=0.2,E=3,nu=0.35,alpha=60e-6")[1].conductivity
    0.2
    """
    if not isinstance(spec, str) or not spec.strip():
        raise InputError(f"empty phase: give {_FORM}")
    parts = spec.strip().split(":", 2)
    name = parts[0].strip()
    if not name or len(parts) < 2:
        raise InputError(f"phase {spec!r}: give {_FORM}, e.g. alumina:0.6")
    fraction = _fraction(parts[1], f"phase {spec!r}: fraction")
    if not (0.0 <= fraction <= 1.0):
        raise InputError(f"phase {spec!r}: fraction {fraction:g} is outside 0..1")
    props = _properties(parts[2], spec) if len(parts) == 3 else {}
    try:
        base = get_material(name)
    except InputError as err:
        if not props:
            raise InputError(f"{err}; or give its properties as {name}:{parts[1].strip()}:"
                             "k=..,E=..,nu=..,alpha=..") from None
        return name, Material(name=name, source="given on the command line", **props), fraction
    if props:
        base = base.replace(source=f"{base.source}; {', '.join(props)} given on the command line",
                            **props)
    return name, base, fraction


def parse_hollow_spec(spec: str) -> tuple[str, float]:
    """Parse one ``--hollow NAME:RATIO`` argument (inner/outer diameter ratio, 0..1).

    Examples
    --------
    >>> parse_hollow_spec("alumina:0.8")
    ('alumina', 0.8)
    """
    name, sep, ratio = str(spec).partition(":")
    if not sep or not name.strip():
        raise InputError(f"hollow {spec!r}: give NAME:RATIO, the inner/outer diameter ratio of "
                         "the hollow particles of phase NAME, e.g. alumina:0.8")
    value = _fraction(ratio, f"hollow {spec!r}: ratio")
    if not (0.0 <= value < 1.0):
        raise InputError(f"hollow {spec!r}: ratio {value:g} must be at least 0 and less than 1")
    return name.strip(), value


def run_estimate(phase_specs: list[str], matrix: str | None, two_d: bool,
                 hollow_specs: list[str], json_out: str | None) -> str:
    """What ``polisect estimate`` prints.

    Parameters
    ----------
    phase_specs : list of str
        ``--phase`` arguments (see `parse_phase_spec`).
    matrix : str or None
        ``--matrix``; by default the phase with the largest fraction.
    two_d : bool
        ``--2d``: circular cylinders in their transverse plane instead of spheres.
    hollow_specs : list of str
        ``--hollow NAME:RATIO`` arguments.
    json_out : str or None
        ``--json``: ``"-"`` returns the JSON text instead of the table; a path writes the
        JSON there (atomically) and returns the table.

    Returns
    -------
    str

    Raises
    ------
    InputError
        Any bad argument, fractions that do not sum to 1 (the message says by how much).
    """
    if not phase_specs:
        raise InputError(f"no phases: give --phase {_FORM} for every phase")
    phases = [parse_phase_spec(s) for s in phase_specs]
    hollow = {}
    for spec in hollow_specs or []:
        name, ratio = parse_hollow_spec(spec)
        if name in hollow:
            raise InputError(f"hollow phase {name!r} is given twice")
        hollow[name] = ratio
    result = evaluate(phases, matrix=matrix, dim=2 if two_d else 3, hollow=hollow)
    text = json.dumps(estimate_to_dict(result), indent=2)
    if json_out == "-":
        return text
    table = schemes_table(result)
    if json_out:
        atomic_write_text(json_out, text + "\n")
        table += f"\n\nJSON written to {json_out}"
    return table
