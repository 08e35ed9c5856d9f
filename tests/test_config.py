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
    ({"uncertainty": {"segmentation": True}}, "segmentation.*conductivity, all, none"),
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


def _bad_values():
    """Per key and class of bad input: wrong type, non-finite, absurd size, out of range."""
    from polisect.read.config import _VALUES

    for (section, key), rule in _VALUES.items():
        if rule[0] == "bool":
            cases = {"wrong type": "yes", "number for a flag": 1}
        else:
            cases = {"wrong type": "3", "list": [1.0], "nan": float("nan"),
                     "inf": float("inf"), "absurd size": 1e300, "below range": -1}
        for klass, value in cases.items():
            yield pytest.param(section, key, value, id=f"{section}.{key}-{klass}")


@pytest.mark.parametrize("section, key, value", list(_bad_values()))
def test_every_key_refuses_each_class_of_bad_value(section, key, value):
    """Common practice (no source): every key is checked before any work, one line each."""
    with pytest.raises(InputError, match=rf"\[{section}\] {key} = ") as err:
        config_from_dict({section: {key: value}})
    assert "\n" not in str(err.value)


@pytest.mark.parametrize("data, words", [
    ({"image": {"pixel_size_um": [0.5, 0.5]}}, "pixel_size_um"),
    ({"image": {"pixel_size_um": "0.5"}}, "pixel_size_um"),
    ({"image": {"crop_bottom_px": True}}, "crop_bottom_px"),
    ({"image": {"crop_bottom_px": 10 ** 9}}, "crop_bottom_px"),
    ({"image": {"crop_bottom_px": "lots"}}, "crop_bottom_px"),
    ({"image": {"kind": ["grayscale"]}}, "kind"),
    ({"segment": {"method": "thresholds", "thresholds": ["a", "b"]}}, "thresholds"),
    ({"segment": {"method": "thresholds", "thresholds": [100, float("nan")]}}, "thresholds"),
    ({"segment": {"method": "thresholds", "thresholds": [150, 100]}}, "increasing"),
    ({"segment": {"method": "thresholds", "thresholds": list(range(1, 200))}}, "1 to 7"),
    ({"segment": {"thresholds": "100"}}, "must be a list"),
    ({"solve": {"properties": [1]}}, "properties"),
    ({"phase": [{"label": True, "material": "air"}]}, "label"),
    ({"phase": [{"label": 10 ** 9, "material": "air"}]}, "label"),
    ({"phase": [{"label": 0, "material": 3}]}, "material = 3"),
    ({"phase": [{"label": 0, "material": "air", "name": ["x"]}]}, "name"),
    ({"phase": [{"label": 0, "material": "air", "name": "x" * 500}]}, "80 characters"),
    ({"phase": [{"label": 0, "material": "air", "particles": "yes"}]}, "particles"),
    ({"phase": [{"label": 0, "material": "air", "split_touching": 1}]}, "split_touching"),
    ({"phase": [{"label": 0, "material": "alumina", "conductivity": "30"}]}, "conductivity"),
    ({"phase": [{"label": 0, "material": "alumina", "conductivity": 1e300}]}, "conductivity"),
    ({"phase": [{"label": 0, "material": "alumina", "youngs_modulus": float("inf")}]},
     "youngs_modulus"),
    ({"phase": [{"label": 0, "material": "alumina", "expansion": float("nan")}]}, "expansion"),
    ({"phase": [{"label": 0, "material": "alumina", "expansion": 5.0}]}, "expansion"),
])
def test_structured_keys_refuse_bad_values(data, words):
    """Common practice (no source): lists, phases and overrides are checked like scalars."""
    with pytest.raises(InputError, match=words) as err:
        config_from_dict(data)
    assert "\n" not in str(err.value)


def test_issue_examples_of_bad_values_from_toml(tmp_path):
    """Common practice (no source): the probe's inputs give exit-2 errors, not tracebacks."""
    for text in ("[image]\npixel_size_um = 1e300\n", "[solve]\ntolerance = \"1e-6\"\n",
                 "[segment]\nfields = \"16\"\n", "[segment]\ndenoise_px = 1e6\n",
                 "[image]\npixel_size_um = nan\n"):
        p = tmp_path / "run.toml"
        p.write_text(text)
        with pytest.raises(InputError, match="run.toml: "):
            load_config(p)


def test_valid_edge_values_are_accepted():
    """Common practice (no source): the ends of each range are accepted."""
    cfg = config_from_dict({"image": {"pixel_size_um": 1e-3, "crop_bottom_px": "auto"},
                            "segment": {"denoise_px": 25, "color_tolerance": 0, "fields": 4},
                            "solve": {"tolerance": 0.1, "voxels": 16, "realizations": 1}})
    assert cfg.segment.denoise_px == 25 and cfg.solve.tolerance == 0.1


def test_thresholds_checked_against_grey_range():
    """Common practice (no source): thresholds outside the grey range leave a class empty."""
    from polisect.read.config import check_grey_range

    cfg = config_from_dict({"segment": {"method": "thresholds", "thresholds": [60, 300]}})
    warnings = check_grey_range(cfg, 0, 255)
    assert len(warnings) == 1 and "300" in warnings[0]
    assert check_grey_range(config_from_dict({"segment": {"classes": 3}}), 0, 255) == []
    outside = config_from_dict({"segment": {"method": "thresholds", "thresholds": [300, 400]}})
    with pytest.raises(InputError, match="every pixel would be one phase"):
        check_grey_range(outside, 0, 255)


def test_any_value_of_any_key_is_accepted_or_refused_clearly():
    """Common practice (no source): whatever a TOML file holds, reading it either succeeds or
    raises one `InputError`; never another exception (a traceback)."""
    from hypothesis import given, settings, strategies as st

    from polisect.read.config import _PHASE_KEYS, _SECTIONS

    keys = [(name, f.name) for name, cls in _SECTIONS.items()
            for f in __import__("dataclasses").fields(cls)]
    values = (st.none() | st.booleans() | st.integers(-10 ** 20, 10 ** 20) | st.floats()
              | st.text(max_size=5) | st.lists(st.integers(-300, 300) | st.floats(), max_size=9)
              | st.dictionaries(st.text(max_size=3), st.integers(), max_size=2))

    keys += [("phase", k) for k in sorted(_PHASE_KEYS)]

    @settings(max_examples=600, deadline=None)
    @given(st.sampled_from(keys), values)
    def check(key, value):
        section, name = key
        data = {section: {name: value}} if value is not None else {}
        if section == "phase":
            data = {"phase": [{"label": 1, "material": "alumina", name: value}]}
        try:
            config_from_dict(data)
        except InputError as exc:
            assert "\n" not in str(exc)

    check()


def test_validate_rechecks_a_config_changed_after_reading():
    """Common practice (no source): options applied after reading (command line) are checked
    by the same rules before any work."""
    import dataclasses

    from polisect.read.config import validate

    cfg = config_from_dict({})
    validate(cfg)
    bad = dataclasses.replace(cfg, solve=dataclasses.replace(cfg.solve, realizations=0))
    with pytest.raises(InputError, match=r"\[solve\] realizations = 0"):
        validate(bad)
