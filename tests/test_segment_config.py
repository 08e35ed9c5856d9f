"""Tests of the [segment] and [image] keys of polisect.read.config used by polisect.segment."""

import pytest

from polisect.core.errors import InputError
from polisect.read.config import config_from_dict
from polisect.segment.thresholds import default_min_feature_px


def test_defaults_identical_for_every_entry_point():
    """One default: crop "auto", denoise radius and smallest feature "auto" (resolved from
    the noise by polisect.segment), corrections "auto"."""
    seg = config_from_dict({}).segment
    assert config_from_dict({}).image.crop_bottom_px == "auto"
    assert (seg.denoise_px, seg.min_feature_px) == ("auto", "auto")
    assert (seg.shading, seg.stripes, seg.speckle, seg.scratches) == ("auto",) * 4
    assert [default_min_feature_px(r) for r in (1, 1.5, 2)] == [13, 20, 29]


def test_trained_keys():
    """method = "trained" needs annotations or a model, not both; they need that method."""
    ok = config_from_dict({"segment": {"method": "trained", "model": "lot.npz"}})
    assert ok.segment.model == "lot.npz"
    with pytest.raises(InputError, match="not both"):
        config_from_dict({"segment": {"method": "trained"}})
    with pytest.raises(InputError, match="not both"):
        config_from_dict({"segment": {"method": "trained", "model": "a.npz",
                                      "annotations": "s.png"}})
    with pytest.raises(InputError, match="trained"):
        config_from_dict({"segment": {"annotations": "s.png"}})


@pytest.mark.parametrize("key,value", [("shading", "yes"), ("stripes", "diagonal"),
                                       ("speckle", 1), ("scratches", "off"),
                                       ("denoise_px", 0.5), ("min_feature_px", -1),
                                       ("min_feature_px", 2.5)])
def test_bad_values(key, value):
    """Bad correction options and defaults are refused, naming the key."""
    with pytest.raises(InputError, match=key):
        config_from_dict({"segment": {key: value}})
