"""Tests of the `polisect train` verb (polisect.apps.cli, the train functions)."""

import numpy as np

from polisect.apps.cli import main
from polisect.model3d.defects import Defects, render_micrograph
from polisect.model3d.synth import rsa_discs
from polisect.read.image import write_tiff
from polisect.segment import Segmenter


def test_train_writes_a_model(tmp_path, capsys):
    """Two banded images with strokes (stored size, band rows included) give a model file
    with both labels; a mismatched count exits with 2."""
    paths, anns = [], []
    for seed in (1, 2):
        truth = rsa_discs((120, 120), 0.3, 6.0, seed=seed).labels
        r = render_micrograph(truth, {0: 0.3, 1: 0.7}, Defects(noise_sd=0.05, info_band_px=16),
                              seed=seed)
        img = tmp_path / f"s{seed}.tif"
        write_tiff(img, r.image)
        rng = np.random.default_rng(seed)
        strokes = np.zeros(r.image.shape, np.uint8)
        strokes[:120] = np.where(rng.random(truth.shape) < 0.02, truth + 1, 0)
        ann = tmp_path / f"s{seed}_strokes.tif"
        write_tiff(ann, strokes)
        paths.append(str(img))
        anns.append(str(ann))
    out = tmp_path / "lot.npz"
    assert main(["train", *paths, "--annotations", *anns, "--out", str(out)]) == 0
    assert Segmenter.load(out).labels == (0, 1)
    assert "wrote" in capsys.readouterr().out
    assert main(["train", *paths, "--annotations", anns[0], "--out", str(out)]) == 2
