"""Tests of the run configuration reader."""

import pytest

from polisect import InputError
from polisect.read.config import config_from_dict, load_config, quick_config

BASE = {"segment": {"classes": 3},
        "phase": [{"label": 0, "material": "air", "name": "pore"},
                  {"label": 1, "material": "aluminium"},
                  {"label": 2, "material": "silicon-carbide", "name": "SiC",
                   "particles": True, "conductivity": 150.0}]}


def test_library_material_with_override():
    cfg = config_from_dict(BASE)
    sic = cfg.phase(2)
    assert sic.name == "SiC"
    assert sic.material.conductivity == 150.0
    assert sic.material.youngs_modulus == 415.0
    assert "overridden" in sic.material.source


def test_defaults():
    cfg = config_from_dict({})
    assert cfg.image.kind == "grayscale"
    assert cfg.solve.tolerance == 1e-6
    assert cfg.solve.plane == "generalized-plane-strain"


@pytest.mark.parametrize("data, words", [
    ({"segment": {"clases": 3}}, "unknown key 'clases'.*classes"),
    ({"imgae": {}}, "unknown key 'imgae'.*image"),
    ({"phase": [{"label": 0, "material": "air", "colour": "#000000"}]}, "unknown key 'colour'"),
    ({"phase": [{"label": 0, "material": "unobtainium"}]}, "unknown material"),
    ({"phase": [{"label": 0, "conductivity": -2.0, "youngs_modulus": 1.0,
                 "poisson_ratio": 0.2, "expansion": 1e-6}]}, "negative"),
    ({"phase": [{"label": 0, "material": "alumina", "poisson_ratio": 0.5}]}, "Poisson"),
    ({"phase": [{"label": 0, "material": "air"}, {"label": 0, "material": "alumina"}]},
     "share a label"),
    ({"phase": [{"label": 0, "material": "alumina"}, {"label": 1, "material": "alumina"}]},
     "share the name alumina"),
    ({"solve": {"method": "ffft"}}, "did you mean 'fft'"),
    ({"solve": {"properties": ["conductivity", "viscosity"]}}, "viscosity"),
    ({"image": {"kind": "palette"}, "phase": [{"label": 0, "material": "air"}]}, "color"),
    ({"segment": {"method": "thresholds"}}, "thresholds"),
    ({"phase": [{"label": 0, "conductivity": 1.0}]}, "youngs_modulus"),
])
def test_bad_configs_say_what_to_fix(data, words):
    with pytest.raises(InputError, match=words):
        config_from_dict(data)


def test_load_config_reports_file_and_line(tmp_path):
    p = tmp_path / "run.toml"
    p.write_text("[segment]\nclasses = = 3\n")
    with pytest.raises(InputError, match="run.toml: not valid TOML"):
        load_config(p)


def test_load_config_missing_file(tmp_path):
    with pytest.raises(InputError, match="not found"):
        load_config(tmp_path / "nope.toml")


def test_quick_config_from_command_line_shortcuts():
    cfg = quick_config(classes=3, assign="0=air,1=alumina,2=zirconia", pixel_size_um=0.5)
    assert [p.material.name for p in cfg.phases] == ["air", "alumina", "zirconia"]
    assert cfg.segment.classes == 3
    assert cfg.image.pixel_size_um == 0.5


def test_quick_config_bad_assign():
    with pytest.raises(InputError, match="LABEL=MATERIAL"):
        quick_config(assign="air,alumina")
