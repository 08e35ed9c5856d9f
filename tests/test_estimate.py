"""Tests of polisect.apps.estimate: phases typed on the command line to the schemes table."""

import json

import pytest

from polisect import InputError
from polisect.apps.estimate import parse_hollow_spec, parse_phase_spec, run_estimate


def test_parse_phase_spec_forms():
    """Library name, library name with overrides, own values, per cent (common practice,
    no source)."""
    name, m, f = parse_phase_spec("alumina:0.6")
    assert (name, m.youngs_modulus, f) == ("alumina", 416.0, 0.6)
    _, m2, f2 = parse_phase_spec("alumina:60%:E=380,k=25")
    assert (m2.youngs_modulus, m2.conductivity, m2.poisson_ratio, f2) == (380.0, 25.0, 0.231, 0.6)
    _, m3, _ = parse_phase_spec("binder:0.2:k=1.2,E=70,nu=0.2,alpha=8e-6")
    assert (m3.conductivity, m3.youngs_modulus, m3.poisson_ratio, m3.expansion) == (1.2, 70.0, 0.2, 8e-6)
    assert parse_hollow_spec(" alumina : 0.8") == ("alumina", 0.8)


@pytest.mark.parametrize("spec,text", [
    ("alumina", "NAME:FRACTION"), (":0.5", "NAME:FRACTION"), ("alumina:x", "not a number"),
    ("alumina:1.5", "outside 0..1"), ("alumna:0.5", "did you mean alumina"),
    ("alumina:0.5:q=3", "KEY=VALUE"), ("alumina:0.5:E", "KEY=VALUE"), ("alumina:0.5:E=abc", "not a number"),
    ("alumina:0.5:E=1,E=2", "twice"), ("x:0.5:nu=0.7,E=3", "outside"), ("x:0.5:alpha=7", "implausibly large"),
    ("", "empty")])
def test_parse_phase_spec_errors(spec, text):
    """Malformed --phase values raise InputError naming the problem (common practice, no
    source)."""
    with pytest.raises(InputError, match=text):
        parse_phase_spec(spec)


def test_run_estimate_outputs(tmp_path):
    """`polisect estimate` text, JSON to stdout and JSON to a file (common practice, no
    source); fractions not summing to 1 say by how much."""
    specs = ["alumina:0.6", "silicon-carbide:0.3", "air:0.1"]
    table = run_estimate(specs, "alumina", False, [], None)
    assert "mori-tanaka" in table and "matrix: alumina" in table
    d = json.loads(run_estimate(specs, "alumina", True, [], "-"))
    assert d["dim"] == 2 and "composite-cylinders" not in d["schemes"]
    out = tmp_path / "est.json"
    text = run_estimate(["mullite:0.7", "alumina:0.3"], None, False, ["alumina:0.8"], str(out))
    assert str(out) in text
    saved = json.loads(out.read_text())
    assert saved["matrix"] == "mullite" and "generalized-self-consistent" in saved["schemes"]
    with pytest.raises(InputError, match="0.05 short of 1"):
        run_estimate(["alumina:0.6", "air:0.35"], None, False, [], None)
    with pytest.raises(InputError, match="no phases"):
        run_estimate([], None, False, [], None)
    with pytest.raises(InputError, match="twice"):
        run_estimate(["alumina:0.6", "mullite:0.4"], "mullite", False, ["alumina:0.5", "alumina:0.6"], None)
    with pytest.raises(InputError, match="NAME:RATIO"):
        run_estimate(["alumina:0.6", "mullite:0.4"], "mullite", False, ["alumina"], None)
