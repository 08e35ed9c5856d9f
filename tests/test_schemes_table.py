"""The estimate table (polisect.present.schemes_table): one precision for every number."""

import re

from polisect import Material
from polisect.present.schemes_table import cell, schemes_table
from polisect.properties.schemes import evaluate


def _significant(text: str) -> int:
    digits = text.replace("-", "").replace(".", "").replace(" ", "").lstrip("0")
    return len(digits)


def test_every_number_has_four_significant_digits_and_units_in_headings():
    """Every entry of the table shows 4 significant digits, trailing zeros kept (not the
    mixed '174' beside '0.9084' of issue 18); headings carry the units and expansion reads
    in 10⁻⁶/K (common practice, no source). The HS lower bound of k = 2, 5 at f = 0.5 is
    2 + 0.5/(1/3 + 0.5/6) = 3.2 (Hashin & Shtrikman, J. Appl. Phys. 33 (1962) 3125)."""
    a = Material(conductivity=2.0, youngs_modulus=70.0, poisson_ratio=0.33, expansion=23e-6,
                 name="a")
    b = Material(conductivity=5.0, youngs_modulus=410.0, poisson_ratio=0.14, expansion=4e-6,
                 name="b")
    result = evaluate([("a", a, 0.5), ("b", b, 0.5)], matrix="a")
    table = schemes_table(result)
    lines = table.splitlines()
    head = next(line for line in lines if line.startswith("scheme"))
    for words in ("k (W/(m·K))", "K (GPa)", "G (GPa)", "E (GPa)", "ν", "α (10⁻⁶/K)"):
        assert words in head
    lower = next(line for line in lines if line.startswith("lower bound"))
    assert lower.split()[2] == "3.200"
    numbers = [token for line in lines if line.startswith(("lower", "upper", "mori", "voigt"))
               for token in line.split()[2 if line.startswith(("lower", "upper")) else 1:]
               if re.fullmatch(r"-?\d+(\.\d+)?", token) and token != "0"]
    assert numbers and all(_significant(t) == 4 for t in numbers)
    mt = result.scheme("mori-tanaka").expansion
    assert cell("expansion", mt) == f"{mt * 1e6:.4g}" or float(cell("expansion", mt)) == \
        float(f"{mt * 1e6:.4g}")
    assert "e-0" not in table and "e+0" not in table


def test_missing_values_show_as_a_dash():
    """A property a scheme cannot give is shown as '–', not 0 or 'None' (common practice,
    no source)."""
    r = evaluate([("a", Material(conductivity=2.0, name="a"), 0.5),
                  ("b", Material(conductivity=5.0, name="b"), 0.5)])
    table = schemes_table(r)
    assert "None" not in table and "–" in table
    assert cell("youngs_modulus", None) == "–"
